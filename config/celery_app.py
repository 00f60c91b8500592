"""Celery application. With no broker configured, tasks run in-process (eager)."""

import os

from celery import Celery

os.environ.setdefault("DJANGO_SETTINGS_MODULE", "config.settings.local")

app = Celery("plenum")
app.config_from_object("django.conf:settings", namespace="CELERY")
app.autodiscover_tasks()
