"""Settings of a benchmark run: the app's base settings against a throwaway database.

``DATABASE_URL`` is set by the harness to the run's own database (a temporary
SQLite file, or a ``plenum_bench_<pid>`` PostgreSQL database it creates and drops).
"""

import os
import tempfile
from pathlib import Path

from config.settings.base import *  # noqa: F403

DEBUG = False
ROOT_URLCONF = "bench.urls"
WSGI_APPLICATION = "bench.wsgi.application"
PASSWORD_HASHERS = ["django.contrib.auth.hashers.MD5PasswordHasher"]
EMAIL_BACKEND = "django.core.mail.backends.locmem.EmailBackend"
AXES_ENABLED = False
# Tasks run in-process, as in the embedded default; a developer's broker is never used by a benchmark.
CELERY_BROKER_URL = ""
CELERY_TASK_ALWAYS_EAGER = True
_scratch = Path(os.environ.get("BENCH_SCRATCH") or tempfile.gettempdir()) / "plenum-bench"
MEDIA_ROOT = _scratch / "media"
STATIC_ROOT = _scratch / "static"
STATIC_ROOT.mkdir(parents=True, exist_ok=True)
STORAGES = {
    "default": {"BACKEND": "django.core.files.storage.FileSystemStorage"},
    "staticfiles": {"BACKEND": "django.contrib.staticfiles.storage.StaticFilesStorage"},
}
LOGGING = {
    "version": 1,
    "disable_existing_loggers": False,
    "handlers": {"console": {"class": "logging.StreamHandler"}},
    "root": {"handlers": ["console"], "level": "WARNING"},
}

if os.environ.get("BENCH_PROFILE"):  # per-request profiles for finding where time goes (bench/profiling.py)
    MIDDLEWARE = ["bench.profiling.ProfileMiddleware", *MIDDLEWARE]  # noqa: F405
