from django.apps import AppConfig


class SchedulingConfig(AppConfig):
    name = "scheduling"
    verbose_name = "Preventive maintenance and work orders"

    def ready(self) -> None:
        from accounts.signals import password_changed

        from .services import calendar_feeds_revoke_for_password

        password_changed.connect(
            calendar_feeds_revoke_for_password, dispatch_uid="scheduling.services.calendar_feeds_revoke_for_password"
        )
