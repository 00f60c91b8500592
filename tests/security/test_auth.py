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
    env = {
        **os.environ,
        "DJANGO_SETTINGS_MODULE": "config.settings.production",
        "DJANGO_SECRET_KEY": secrets.token_urlsafe(50),
        "DJANGO_ALLOWED_HOSTS": "plenum.example.invalid",
    }
    result = subprocess.run(
        [sys.executable, "manage.py", "check", "--deploy", "--fail-level", "WARNING"],
        cwd=ROOT, env=env, capture_output=True, text=True, timeout=120,
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
