"""Test settings: fast hashing, in-memory e-mail, no throttling lockout between tests."""

import os
import tempfile
from pathlib import Path

from .base import *  # noqa: F403
from .base import BASE_DIR, DATABASES, STATIC_ROOT

DEBUG = False
PASSWORD_HASHERS = ["django.contrib.auth.hashers.MD5PasswordHasher"]
EMAIL_BACKEND = "django.core.mail.backends.locmem.EmailBackend"
MEDIA_ROOT = BASE_DIR / ".test-media" / os.environ.get("PYTEST_XDIST_WORKER", "main")
STORAGES = {
    "default": {"BACKEND": "django.core.files.storage.FileSystemStorage"},
    "staticfiles": {"BACKEND": "django.contrib.staticfiles.storage.StaticFilesStorage"},
}
AXES_ENABLED = os.environ.get("AXES_ENABLED_IN_TESTS", "") == "1"

# whitenoise warns on every request until the folder exists.
STATIC_ROOT.mkdir(parents=True, exist_ok=True)

# Tasks run in-process in tests even when CELERY_BROKER_URL is set (the PostgreSQL/Redis pass of
# .ci/run): the tests that need a real worker start one and send to it with ``send_task``.
CELERY_TASK_ALWAYS_EAGER = True

# The embedded database's tests run on a file, as `make run` does, not in memory: Django's live server (the
# browser tests) shares one in-memory connection between all its request threads, so two requests at once
# (a page and the phone's API call) tripped over each other's savepoints; with a file, each thread has its own
# connection and SQLite's locking, as in production. One file per process (pytest-django adds the xdist worker).
if DATABASES["default"]["ENGINE"] == "django.db.backends.sqlite3":
    DATABASES["default"]["TEST"] = {"NAME": str(Path(tempfile.gettempdir()) / f"plenum-test-{os.getpid()}.sqlite3")}
