"""Development on one machine: SQLite, eager Celery, e-mail printed to the console.

Debug is off unless ``DJANGO_DEBUG=1``, so the demo shows the app's own 404 and 500 pages as a
server would; with it on, Django's debug pages (tracebacks, the URL list) come back.
"""

from .base import *  # noqa: F403
from .base import env_bool

DEBUG = env_bool("DJANGO_DEBUG", False)

# Static files straight from the apps' folders, re-read when they change, with debug on or off
# (a server serves the collected copy instead).  https://whitenoise.readthedocs.io/en/stable/django.html
WHITENOISE_USE_FINDERS = True
WHITENOISE_AUTOREFRESH = True
