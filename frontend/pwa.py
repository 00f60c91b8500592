"""The installable shell: web app manifest and service worker script.

The service worker's cache name carries ``VERSION`` plus a digest of the
precached files, so any change to the shell installs a new cache and the
old one is deleted on activate.

A shared phone: the day's pages are kept in one data cache per person, named
by ``person_key`` (a keyed digest of the user, never the id itself). The page
tells the worker whose it is; the worker drops every other person's cache, and
sign-out drops them all. Finished forms are not in any cache: they stay in the
outbox (IndexedDB), each marked with the same key, and are sent only while that
person is signed in.
"""

import hashlib
import json
from functools import lru_cache
from pathlib import Path

from django.conf import settings
from django.contrib.staticfiles import finders
from django.templatetags.static import static
from django.urls import reverse
from django.utils.crypto import salted_hmac

VERSION = "1"
SW_TEMPLATE = Path(__file__).resolve().parent / "sw_template.js"

SHELL_STATIC = (
    "frontend/css/app.css",
    "frontend/js/app.js",
    "frontend/js/outbox.js",
    "frontend/js/sync.js",
    "frontend/js/checklist.js",
    "frontend/js/limits.js",
    "frontend/js/numbers.js",
    "frontend/js/meter.js",
    "frontend/js/formcheck.js",
    "frontend/js/formnav.js",
    "frontend/js/drafts.js",
    "frontend/js/evaluate.js",
    "frontend/js/units.js",
    "frontend/js/calculator.js",
    "frontend/js/calc.js",
    "frontend/js/signature.js",
    "frontend/icons/icon-192.png",
    "frontend/icons/icon-512.png",
    "frontend/icons/maskable-192.png",
    "frontend/icons/maskable-512.png",
)


def person_key(*, user) -> str:
    """The name this phone keeps a person's pages and forms under: stable per user, not guessable from the id."""
    return salted_hmac("plenum.frontend.pwa.person", str(user.pk)).hexdigest()[:24]


def precache_urls() -> list[str]:
    """Everything the shell needs to start with no network."""
    return [reverse("frontend:offline"), reverse("frontend:manifest"), *(static(p) for p in SHELL_STATIC)]


def shell_digest() -> str:
    # In development the shell changes under a running server; elsewhere it is fixed per deploy.
    if settings.DEBUG:
        return _digest.__wrapped__()
    return _digest()


@lru_cache(maxsize=1)
def _digest() -> str:
    digest = hashlib.sha256()
    for path in SHELL_STATIC:
        found = finders.find(path)
        if found:
            with open(found, "rb") as fh:
                digest.update(fh.read())
    digest.update(SW_TEMPLATE.read_bytes())
    return digest.hexdigest()[:10]


def service_worker_source() -> str:
    template = SW_TEMPLATE.read_text(encoding="utf-8")
    return (
        template.replace("__VERSION__", json.dumps(f"{VERSION}-{shell_digest()}"))
        .replace("__PRECACHE__", json.dumps(precache_urls()))
        .replace("__STATIC_PREFIX__", json.dumps(static("")))
        .replace("__OFFLINE_URL__", json.dumps(reverse("frontend:offline")))
        .replace("__START_URLS__", json.dumps([reverse("frontend:start"), reverse("frontend:home")]))
        .replace("__TODAY_URL__", json.dumps(reverse("frontend:today")))
        .replace("__SIGN_OUT_URL__", json.dumps(reverse("frontend:logout")))
    )


def manifest() -> dict:
    return {
        "name": "Plenum",
        "short_name": "Plenum",
        "description": "Air handling unit maintenance: today's visits, checklists offline, records.",
        "id": "/",
        # Not "/" (it redirects by role): opened offline, the worker answers this address from the person's saved day.
        "start_url": reverse("frontend:start"),
        "scope": "/",
        "display": "standalone",
        "orientation": "any",
        "background_color": "#f6f5f0",
        "theme_color": "#24505f",
        "icons": [
            {"src": static("frontend/icons/icon-192.png"), "sizes": "192x192", "type": "image/png", "purpose": "any"},
            {"src": static("frontend/icons/icon-512.png"), "sizes": "512x512", "type": "image/png", "purpose": "any"},
            {
                "src": static("frontend/icons/maskable-192.png"),
                "sizes": "192x192",
                "type": "image/png",
                "purpose": "maskable",
            },
            {
                "src": static("frontend/icons/maskable-512.png"),
                "sizes": "512x512",
                "type": "image/png",
                "purpose": "maskable",
            },
        ],
    }
