"""Settings shared by every environment. Every value can come from the environment.

https://docs.djangoproject.com/en/5.2/ref/settings/
"""

import os
from pathlib import Path

import dj_database_url
from celery.schedules import crontab

BASE_DIR = Path(__file__).resolve().parent.parent.parent


def env_bool(name: str, default: bool) -> bool:
    raw = os.environ.get(name)
    if raw is None or raw == "":
        return default
    return raw.strip().lower() in {"1", "true", "yes", "on"}


def env_list(name: str, default: list[str]) -> list[str]:
    raw = os.environ.get(name)
    if not raw:
        return default
    return [item.strip() for item in raw.split(",") if item.strip()]


# ---------------------------------------------------------------------------
# Core  https://docs.djangoproject.com/en/5.2/ref/settings/#core-settings
# ---------------------------------------------------------------------------
SECRET_KEY = os.environ.get("DJANGO_SECRET_KEY", "plenum-development-key-not-for-production")
DEBUG = env_bool("DJANGO_DEBUG", False)
ALLOWED_HOSTS = env_list("DJANGO_ALLOWED_HOSTS", ["127.0.0.1", "localhost", "testserver"])
CSRF_TRUSTED_ORIGINS = env_list("DJANGO_CSRF_TRUSTED_ORIGINS", [])
CSRF_FAILURE_VIEW = "config.errors.csrf_failure"  # the app's 403 page (an expired page), not Django's

INSTALLED_APPS = [
    "django.contrib.admin",
    "django.contrib.auth",
    "django.contrib.contenttypes",
    "django.contrib.sessions",
    "django.contrib.messages",
    "whitenoise.runserver_nostatic",
    "django.contrib.staticfiles",
    "rest_framework",
    "rest_framework.authtoken",
    "django_filters",
    "drf_spectacular",
    "drf_spectacular_sidecar",
    "axes",
    "accounts",
    "inventory",
    "scheduling",
    "inspections",
    "automation",
    "reports",
    "frontend",
    "bench",  # benchmark generator command only; no models
]

MIDDLEWARE = [
    "django.middleware.security.SecurityMiddleware",
    "config.errors.ApiBodyLimitMiddleware",
    "config.query.QueryControlCharactersMiddleware",  # NUL in ?site= etc. was a PostgreSQL DataError (500)
    "whitenoise.middleware.WhiteNoiseMiddleware",
    "django.contrib.sessions.middleware.SessionMiddleware",
    "django.middleware.common.CommonMiddleware",
    "django.middleware.csrf.CsrfViewMiddleware",
    "django.contrib.auth.middleware.AuthenticationMiddleware",
    "django.contrib.messages.middleware.MessageMiddleware",
    "django.middleware.clickjacking.XFrameOptionsMiddleware",
    "csp.middleware.CSPMiddleware",
    "axes.middleware.AxesMiddleware",
]

ROOT_URLCONF = "config.urls"
WSGI_APPLICATION = "config.wsgi.application"

TEMPLATES = [
    {
        "BACKEND": "django.template.backends.django.DjangoTemplates",
        "DIRS": [],
        "APP_DIRS": True,
        "OPTIONS": {
            "context_processors": [
                "django.template.context_processors.request",
                "django.contrib.auth.context_processors.auth",
                "django.contrib.messages.context_processors.messages",
            ],
        },
    },
]

# ---------------------------------------------------------------------------
# Database  https://docs.djangoproject.com/en/5.2/ref/settings/#databases
# SQLite file by default; DATABASE_URL (postgres://...) in production.
# ---------------------------------------------------------------------------
DATABASES = {
    "default": dj_database_url.config(
        default=f"sqlite:///{BASE_DIR / 'db.sqlite3'}",
        conn_max_age=int(os.environ.get("DATABASE_CONN_MAX_AGE", "60")),
    )
}
if DATABASES["default"]["ENGINE"] == "django.db.backends.sqlite3":
    # The embedded database under a phone's sync and a page at once: a writer takes the lock when its
    # transaction begins (IMMEDIATE) and waits up to 20 s for another instead of failing "database is locked"
    # mid-way; WAL lets pages read while a form is stored. https://docs.djangoproject.com/en/5.2/ref/databases/#sqlite-notes
    DATABASES["default"].setdefault("OPTIONS", {}).update(
        {
            "timeout": 20,
            "transaction_mode": "IMMEDIATE",
            "init_command": "PRAGMA journal_mode=WAL; PRAGMA synchronous=NORMAL;",
        }
    )
DEFAULT_AUTO_FIELD = "django.db.models.BigAutoField"

# ---------------------------------------------------------------------------
# Authentication  https://docs.djangoproject.com/en/5.2/topics/auth/customizing/
# ---------------------------------------------------------------------------
AUTH_USER_MODEL = "accounts.User"
AUTHENTICATION_BACKENDS = [
    "axes.backends.AxesStandaloneBackend",
    "django.contrib.auth.backends.ModelBackend",
]
AUTH_PASSWORD_VALIDATORS = [
    {"NAME": "django.contrib.auth.password_validation.UserAttributeSimilarityValidator"},
    {"NAME": "django.contrib.auth.password_validation.MinimumLengthValidator"},
    {"NAME": "django.contrib.auth.password_validation.CommonPasswordValidator"},
    {"NAME": "django.contrib.auth.password_validation.NumericPasswordValidator"},
]
LOGIN_URL = "frontend:login"
LOGIN_REDIRECT_URL = "frontend:home"
LOGOUT_REDIRECT_URL = "frontend:login"

# Login throttling  https://django-axes.readthedocs.io/en/latest/4_configuration.html
AXES_FAILURE_LIMIT = int(os.environ.get("AXES_FAILURE_LIMIT", "5"))
AXES_COOLOFF_TIME = 0.25  # hours
# A lock holds one username from one address only, so nobody can lock a person out from elsewhere.
AXES_LOCKOUT_PARAMETERS = [["ip_address", "username"]]
AXES_RESET_ON_SUCCESS = True
AXES_VERBOSE = False
# The address comes from the trusted proxies' X-Forwarded-For (PLENUM_TRUSTED_PROXIES), not django-ipware.
AXES_CLIENT_IP_CALLABLE = "accounts.client_address.client_address"
AXES_LOCKOUT_CALLABLE = "accounts.views.locked_out"
# How many proxies in front of the server append to X-Forwarded-For (a TLS proxy: 1); 0 ignores the header.
PLENUM_TRUSTED_PROXIES = int(os.environ.get("PLENUM_TRUSTED_PROXIES", "0"))

# Password reset by e-mail: links last this long; each address and each client may ask this often per hour.
PASSWORD_RESET_TIMEOUT = int(os.environ.get("PLENUM_PASSWORD_RESET_SECONDS", str(3 * 3600)))
PLENUM_PASSWORD_RESETS_PER_HOUR = int(os.environ.get("PLENUM_PASSWORD_RESETS_PER_HOUR", "5"))

# ---------------------------------------------------------------------------
# Internationalisation  https://docs.djangoproject.com/en/5.2/topics/i18n/
# ---------------------------------------------------------------------------
LANGUAGE_CODE = "en-gb"
TIME_ZONE = "UTC"
USE_I18N = True
USE_TZ = True

# ---------------------------------------------------------------------------
# Static and media files  https://whitenoise.readthedocs.io/
# ---------------------------------------------------------------------------
STATIC_URL = "/static/"
STATIC_ROOT = Path(os.environ.get("DJANGO_STATIC_ROOT", BASE_DIR / "staticfiles"))
MEDIA_URL = "/media/"
MEDIA_ROOT = Path(os.environ.get("DJANGO_MEDIA_ROOT", BASE_DIR / "media"))
STORAGES = {
    "default": {"BACKEND": "django.core.files.storage.FileSystemStorage"},
    "staticfiles": {"BACKEND": "whitenoise.storage.CompressedStaticFilesStorage"},
}
DATA_UPLOAD_MAX_MEMORY_SIZE = 12 * 1024 * 1024

# ---------------------------------------------------------------------------
# REST framework  https://www.django-rest-framework.org/api-guide/settings/
# ---------------------------------------------------------------------------
REST_FRAMEWORK = {
    "DEFAULT_AUTHENTICATION_CLASSES": [
        # Token first, so an unauthenticated API call gets 401 with a WWW-Authenticate header.
        "rest_framework.authentication.TokenAuthentication",
        "rest_framework.authentication.SessionAuthentication",
    ],
    "DEFAULT_PERMISSION_CLASSES": ["rest_framework.permissions.IsAuthenticated"],
    "DEFAULT_SCHEMA_CLASS": "drf_spectacular.openapi.AutoSchema",
    "DEFAULT_FILTER_BACKENDS": ["django_filters.rest_framework.DjangoFilterBackend"],
    "DEFAULT_PAGINATION_CLASS": "rest_framework.pagination.LimitOffsetPagination",
    # JSON with a depth limit (config/parsers.py): a deeply nested body is a 400, not a RecursionError.
    "DEFAULT_PARSER_CLASSES": [
        "config.parsers.BoundedJSONParser",
        "rest_framework.parsers.FormParser",
        "rest_framework.parsers.MultiPartParser",
    ],
    "PAGE_SIZE": 100,
    "EXCEPTION_HANDLER": "config.api.exception_handler",
}
# Content-Security-Policy on every response (django-csp 4). Scripts and styles come only from our own
# static files: no inline <script>, no on*= handlers, no style="..." and no <style> in any template
# (tests/security/test_csp.py scans them). Signatures and photo previews are data: and blob: images.
# A view that needs more says so with a csp decorator beside it and a comment (see config/urls.py).
CONTENT_SECURITY_POLICY = {
    "DIRECTIVES": {
        "default-src": ["'self'"],
        "script-src": ["'self'"],
        "style-src": ["'self'"],
        "img-src": ["'self'", "data:", "blob:"],
        "font-src": ["'self'"],
        "connect-src": ["'self'"],
        "worker-src": ["'self'"],
        "manifest-src": ["'self'"],
        "frame-ancestors": ["'none'"],
        "base-uri": ["'self'"],
        "form-action": ["'self'"],
        "object-src": ["'none'"],
    },
}

SPECTACULAR_SETTINGS = {
    "TITLE": "Plenum API",
    "DESCRIPTION": "Asset registry, preventive maintenance and inspections for air handling units.",
    "VERSION": "1.0.0",
    "SERVE_INCLUDE_SCHEMA": False,
    "SWAGGER_UI_DIST": "SIDECAR",
    "SWAGGER_UI_FAVICON_HREF": "SIDECAR",
    "REDOC_DIST": "SIDECAR",
    "COMPONENT_SPLIT_REQUEST": True,
    # One name per choice set, so `check --deploy` stays free of drf-spectacular collision warnings.
    "ENUM_NAME_OVERRIDES": {
        "ComponentKindEnum": "inventory.models.ComponentKind",
        "UnitStatusEnum": "inventory.models.AHU.Status",
        "ReportKindEnum": "reports.models.Report.Kind",
        "WorkOrderStateEnum": "scheduling.models.WorkOrder.State",
        "WorkOrderKindEnum": "scheduling.models.WorkOrder.Kind",
        "TrendImportJobStatusEnum": "automation.models.TrendImportJob.Status",
        "FindingKindEnum": "inspections.models.Finding.Kind",
        "ChecklistItemKindEnum": "inspections.models.ChecklistItem.Kind",
        "FindingStateEnum": "inspections.models.Finding.State",
        "MeterReadingSourceEnum": "scheduling.models.MeterReading.Source",
        "OutdoorTemperatureSourceEnum": "scheduling.models.OutdoorTemperature.Source",
        "FindingSourceEnum": "inspections.models.Finding.Source",
    },
}

# ---------------------------------------------------------------------------
# Celery  https://docs.celeryq.dev/en/stable/userguide/configuration.html
# With no broker configured, tasks run in-process so the embedded default works.
# ---------------------------------------------------------------------------
CELERY_BROKER_URL = os.environ.get("CELERY_BROKER_URL", "")
CELERY_RESULT_BACKEND = os.environ.get("CELERY_RESULT_BACKEND", "") or None
CELERY_TASK_ALWAYS_EAGER = not CELERY_BROKER_URL
CELERY_TASK_EAGER_PROPAGATES = True
CELERY_TASK_ACKS_LATE = True
CELERY_TASK_REJECT_ON_WORKER_LOST = True
CELERY_WORKER_PREFETCH_MULTIPLIER = 1
CELERY_TIMEZONE = "UTC"
CELERY_BEAT_SCHEDULE: dict = {
    # scheduling: season starts from forecasts first, then the nightly generation, then overdue e-mails (UTC).
    "scheduling-nightly-seasons": {
        "task": "scheduling.nightly_seasons",
        "schedule": crontab(hour=1, minute=0),
        "options": {"expires": 3 * 3600},
    },
    "scheduling-nightly-generation": {
        "task": "scheduling.nightly_generation",
        "schedule": crontab(hour=2, minute=0),
        "options": {"expires": 3 * 3600},
    },
    "scheduling-daily-escalation": {
        "task": "scheduling.daily_escalation",
        "schedule": crontab(hour=6, minute=30),
        "options": {"expires": 3 * 3600},
    },
    "automation-nightly-trend-purge": {
        "task": "automation.trend_purge",
        "schedule": crontab(hour=3, minute=30),
        "options": {"expires": 3 * 3600},
    },
    # Yesterday's trends per site (run-hours, filter loading, faults), before the nightly generation of the next
    # night reads them; a site's "yesterday" is its own local day. automation.judging
    "automation-nightly-trends-judge": {
        "task": "automation.trends_judge_nightly",
        "schedule": crontab(hour=0, minute=30),
        "options": {"expires": 3 * 3600},
    },
    # Each minute: the BACnet devices whose poll interval has passed (nothing while PLENUM_BACNET_INTERFACE is empty).
    "automation-bacnet-poll": {
        "task": "automation.bacnet_poll",
        "schedule": 60.0,
        "options": {"expires": 55},
    },
}

# ---------------------------------------------------------------------------
# E-mail  https://docs.djangoproject.com/en/5.2/topics/email/
# ---------------------------------------------------------------------------
EMAIL_BACKEND = os.environ.get("DJANGO_EMAIL_BACKEND", "django.core.mail.backends.console.EmailBackend")
DEFAULT_FROM_EMAIL = os.environ.get("DJANGO_DEFAULT_FROM_EMAIL", "plenum@example.invalid")

# ---------------------------------------------------------------------------
# Plenum
# ---------------------------------------------------------------------------
PLENUM_PHOTO_MAX_BYTES = int(os.environ.get("PLENUM_PHOTO_MAX_BYTES", str(8 * 1024 * 1024)))
PLENUM_PHOTO_MAX_PIXELS = int(os.environ.get("PLENUM_PHOTO_MAX_PIXELS", str(40_000_000)))
PLENUM_FORECAST_URL = os.environ.get("PLENUM_FORECAST_URL", "")
PLENUM_PUBLIC_URL = os.environ.get("PLENUM_PUBLIC_URL", "http://127.0.0.1:8000")
# A technician sees a site while they have open work there, and for this many days after their last
# finished work there (the unit's history on the job); older assignments no longer grant it. inventory.selectors
PLENUM_TECHNICIAN_SITE_DAYS = int(os.environ.get("PLENUM_TECHNICIAN_SITE_DAYS", "90"))
# Polled API answers (today, board) kept per worker until a service moves a version they depend on, and
# never longer than this (the limit covers writes made outside the services); 0 turns the cache off.
# accounts/answers.py, accounts/changes.py
PLENUM_ANSWER_CACHE_SECONDS = int(os.environ.get("PLENUM_ANSWER_CACHE_SECONDS", "60"))
PLENUM_ANSWER_CACHE_BYTES = int(os.environ.get("PLENUM_ANSWER_CACHE_BYTES", str(32 * 1024 * 1024)))
# Building-automation trend samples older than this many days are deleted by the nightly purge. automation.tasks
PLENUM_TREND_RETENTION_DAYS = int(os.environ.get("PLENUM_TREND_RETENTION_DAYS", "800"))
# A fault found in the trends closes once the rules judged the unit's trends and did not find it for this many
# days (a week covers a weekly occupancy cycle; common practice). automation.judging
PLENUM_FAULT_CLOSE_AFTER_DAYS = int(os.environ.get("PLENUM_FAULT_CLOSE_AFTER_DAYS", "7"))
# BACnet/IP polling of mapped automation points (automation.polling): the poller's own address on the building
# network as bacpypes3 takes it, "192.168.10.5/24:47808" (host/prefix:port); empty switches polling off. The
# poller is a BACnet device itself: give it an instance no other device on the network has. Timeout per request.
PLENUM_BACNET_INTERFACE = os.environ.get("PLENUM_BACNET_INTERFACE", "")
PLENUM_BACNET_DEVICE_INSTANCE = int(os.environ.get("PLENUM_BACNET_DEVICE_INSTANCE", "4194000"))
PLENUM_BACNET_TIMEOUT_SECONDS = float(os.environ.get("PLENUM_BACNET_TIMEOUT_SECONDS", "5"))

LOGGING = {
    "version": 1,
    "disable_existing_loggers": False,
    "handlers": {"console": {"class": "logging.StreamHandler"}},
    "root": {"handlers": ["console"], "level": os.environ.get("DJANGO_LOG_LEVEL", "INFO")},
}
