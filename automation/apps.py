from django.apps import AppConfig


class AutomationConfig(AppConfig):
    name = "automation"
    verbose_name = "Building automation"
