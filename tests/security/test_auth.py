"""Authentication: throttling, revocable tokens, password rules, deploy checks."""

import os
import secrets
import subprocess
import sys
from pathlib import Path

import pytest
from django.contrib.auth.password_validation import validate_password
from django.core.exceptions import ValidationError
from django.test import override_settings

from accounts.models import Role
from accounts.services import api_token_issue, api_token_revoke
from tests.factories import OrganisationFactory, make_person

ROOT = Path(__file__).resolve().parents[2]


def test_production_settings_pass_deploy_check():
    """`manage.py check --deploy` is clean with the production settings."""
    # Browser tests in the same worker set DJANGO_ALLOW_ASYNC_UNSAFE; a deployment never has it.
    env = {
        **{k: v for k, v in os.environ.items() if not k.startswith("DJANGO_")},
        "DJANGO_SETTINGS_MODULE": "config.settings.production",
        "DJANGO_SECRET_KEY": secrets.token_urlsafe(50),
        "DJANGO_ALLOWED_HOSTS": "plenum.example.invalid",
    }
    result = subprocess.run(
        [sys.executable, "manage.py", "check", "--deploy", "--fail-level", "WARNING"],
        cwd=ROOT,
        env=env,
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert result.returncode == 0, result.stdout + result.stderr
    assert "no issues" in result.stdout


@pytest.mark.django_db
def test_revoked_token_is_refused(api_client):
    """An API token works until it is revoked; after that the same token gets 401."""
    user = make_person(organisation=OrganisationFactory(), role=Role.TECHNICIAN)
    token = api_token_issue(user=user)
    api_client.credentials(HTTP_AUTHORIZATION=f"Token {token.key}")
    assert api_client.get("/api/accounts/me/").status_code == 200
    api_token_revoke(user=user)
    assert api_client.get("/api/accounts/me/").status_code == 401


@pytest.mark.django_db
def test_weak_passwords_are_refused():
    """Short, common or all-numeric passwords are refused with a reason."""
    for weak in ["12345678", "password", "abc"]:
        with pytest.raises(ValidationError):
            validate_password(weak)


@pytest.mark.django_db
@override_settings(AXES_ENABLED=True, AXES_FAILURE_LIMIT=3)
def test_login_is_throttled_after_repeated_failures(client):
    """After three wrong passwords even the right one is refused for a while."""
    user = make_person(organisation=OrganisationFactory(), role=Role.TECHNICIAN)
    for _ in range(3):
        client.post("/login/", {"username": user.username, "password": "wrong-password"})
    response = client.post("/login/", {"username": user.username, "password": "pass-for-tests-123"})
    assert response.status_code == 429
    assert "_auth_user_id" not in client.session


PRODUCTION_PROBE = """
import json, django
django.setup()
from django.conf import settings as s
print(json.dumps({k: getattr(s, k) for k in (
    "DEBUG", "SESSION_COOKIE_SECURE", "CSRF_COOKIE_SECURE", "SESSION_COOKIE_HTTPONLY", "SECURE_SSL_REDIRECT",
    "SECURE_HSTS_SECONDS", "SECURE_CONTENT_TYPE_NOSNIFF", "X_FRAME_OPTIONS", "SESSION_COOKIE_SAMESITE",
    "CSRF_COOKIE_SAMESITE", "SECURE_PROXY_SSL_HEADER")}))
"""


def _production(env_extra: dict) -> subprocess.CompletedProcess:
    env = {k: v for k, v in os.environ.items() if not k.startswith("DJANGO_")}
    env.update({"DJANGO_SETTINGS_MODULE": "config.settings.production", **env_extra})
    return subprocess.run([sys.executable, "-c", PRODUCTION_PROBE], cwd=ROOT, env=env, capture_output=True,
                          text=True, timeout=120)  # fmt: skip


def test_production_cookies_are_secure_and_https_is_enforced():
    """In production the session and CSRF cookies go over HTTPS only, HSTS is on and DEBUG is off."""
    import json

    result = _production({"DJANGO_SECRET_KEY": secrets.token_urlsafe(50), "DJANGO_ALLOWED_HOSTS": "plenum.invalid"})
    assert result.returncode == 0, result.stderr
    s = json.loads(result.stdout.strip().splitlines()[-1])
    assert s["DEBUG"] is False
    assert s["SESSION_COOKIE_SECURE"] is True and s["CSRF_COOKIE_SECURE"] is True
    assert s["SESSION_COOKIE_HTTPONLY"] is True
    assert s["SESSION_COOKIE_SAMESITE"] in ("Lax", "Strict") and s["CSRF_COOKIE_SAMESITE"] in ("Lax", "Strict")
    assert s["SECURE_SSL_REDIRECT"] is True
    assert s["SECURE_HSTS_SECONDS"] >= 31536000
    assert s["SECURE_CONTENT_TYPE_NOSNIFF"] is True and s["X_FRAME_OPTIONS"] == "DENY"


def test_production_refuses_to_start_without_a_secret_key():
    """No DJANGO_SECRET_KEY in production: the settings refuse to load rather than use a default."""
    result = _production({})
    assert result.returncode != 0
    assert "DJANGO_SECRET_KEY" in result.stderr


@pytest.mark.django_db
def test_session_authenticated_api_posts_need_the_csrf_token():
    """A browser session may not POST to the API without the CSRF token; with it, it may; a token client need not."""
    from rest_framework.test import APIClient

    user = make_person(organisation=OrganisationFactory(), role=Role.TECHNICIAN)
    browser = APIClient(enforce_csrf_checks=True)
    assert browser.login(username=user.username, password="pass-for-tests-123")
    refused = browser.post("/api/scheduling/calendar-feed/", {}, format="json")
    assert refused.status_code == 403
    assert "CSRF" in refused.json()["detail"]
    browser.get("/login/")  # the page sets the csrftoken cookie, as the PWA's pages do
    token = browser.cookies["csrftoken"].value
    allowed = browser.post("/api/scheduling/calendar-feed/", {}, format="json", HTTP_X_CSRFTOKEN=token)
    assert allowed.status_code == 201, allowed.content
    phone = APIClient(enforce_csrf_checks=True)
    phone.credentials(HTTP_AUTHORIZATION=f"Token {api_token_issue(user=user).key}")
    assert phone.post("/api/scheduling/calendar-feed/", {}, format="json").status_code == 201


@pytest.mark.django_db
def test_sync_by_session_needs_the_csrf_token():
    """The phone's sync endpoint, reached with the session cookie, refuses a cross-site POST without the token."""
    from rest_framework.test import APIClient

    user = make_person(organisation=OrganisationFactory(), role=Role.TECHNICIAN)
    browser = APIClient(enforce_csrf_checks=True)
    browser.login(username=user.username, password="pass-for-tests-123")
    assert browser.post("/api/inspections/sync/", {"forms": []}, format="json").status_code == 403
