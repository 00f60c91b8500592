"""Error answers: pages in the app's look, JSON in the API's one shape, never Django's debug or bare pages."""

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest
from django.test import Client, RequestFactory, override_settings

from accounts.models import Role
from accounts.services import api_token_issue
from config import errors
from tests.factories import OrganisationFactory, make_person

ROOT = Path(__file__).resolve().parents[2]


def _is_error_shape(response, status: int) -> dict:
    assert response.status_code == status
    assert response["Content-Type"].startswith("application/json")
    body = json.loads(response.content)
    assert set(body) == {"detail", "errors"} and body["detail"] and body["errors"] == {}
    return body


@pytest.mark.django_db
def test_an_unknown_page_address_shows_the_apps_404_page(client, django_assert_num_queries):
    """A mistyped page address answers 404 with the app's page: its header, a way home, a way to sign in;
    the page reads nothing from the database, so it cannot fail where the database is the trouble."""
    with django_assert_num_queries(0):
        response = client.get("/regsitry/")
    assert response.status_code == 404
    html = response.content.decode()
    assert "Page not found" in html and 'class="brand"' in html and "/static/frontend/css/app.css" in html
    assert 'href="/login/"' in html
    assert "Django" not in html and "Traceback" not in html


@pytest.mark.django_db
def test_a_page_not_open_to_the_role_shows_the_apps_403_page(client):
    """A technician opening the supervisor's board gets the app's 403 page, not a bare one."""
    client.force_login(make_person(organisation=OrganisationFactory(), role=Role.TECHNICIAN))
    response = client.get("/board/")
    assert response.status_code == 403
    html = response.content.decode()
    assert "Not open to you" in html and 'class="brand"' in html and 'href="/"' in html


@pytest.mark.django_db
def test_an_unknown_api_address_answers_json_404(client):
    """A mistyped API address answers 404 in the API's error shape, pointing at the list of addresses."""
    body = _is_error_shape(client.get("/api/scheduling/work-order/"), 404)
    assert "/api/docs/" in body["detail"]


def test_the_500_page_renders_without_a_request_context_or_database():
    """The 500 page comes from a template that needs neither the request's context nor the database.

    The test has no database access (pytest-django refuses it without the mark), so any query would fail it.
    """
    response = errors.server_error(RequestFactory().get("/today/"))
    html = response.content.decode()
    assert response.status_code == 500
    assert "Something went wrong" in html and "/static/frontend/css/app.css" in html and 'href="/"' in html


def test_an_api_500_answers_json():
    """An API path that fails answers 500 in the API's error shape (the handler alone, no database)."""
    _is_error_shape(errors.server_error(RequestFactory().get("/api/scheduling/board/")), 500)


@pytest.mark.django_db
@override_settings(ROOT_URLCONF="tests.security.boom_urls")
def test_a_failing_view_gives_the_500_page_or_json():
    """A bug in a page gives the app's 500 page; a bug in an API view gives JSON 500, never a traceback."""
    client = Client(raise_request_exception=False)
    page = client.get("/boom/")
    assert page.status_code == 500 and "Something went wrong" in page.content.decode()
    assert "a bug in a page" not in page.content.decode()
    body = _is_error_shape(client.get("/api/boom/"), 500)
    assert "a bug" not in body["detail"]


@pytest.mark.django_db
@override_settings(DATA_UPLOAD_MAX_MEMORY_SIZE=4096)
def test_too_large_a_body_on_the_api_answers_json_413(api_client):
    """A body over DATA_UPLOAD_MAX_MEMORY_SIZE gets 413 in the API's error shape, whatever reads it."""
    user = make_person(organisation=OrganisationFactory(), role=Role.SUPERVISOR)
    api_client.credentials(HTTP_AUTHORIZATION=f"Token {api_token_issue(user=user).key}")
    big = json.dumps({"forms": [], "name": "x" * 8000})
    for url in ("/api/inspections/sync/", "/api/inventory/sites/", "/api/scheduling/calendar-feed/"):
        body = _is_error_shape(api_client.post(url, big, content_type="application/json"), 413)
        assert "at most 4096 bytes" in body["detail"]
    # A multipart form whose fields (not files) are too large: Django's own check, answered the same way.
    form = api_client.post("/api/inventory/sites/", {"name": "x" * 8000}, format="multipart")
    _is_error_shape(form, 413)


@pytest.mark.django_db
@override_settings(DATA_UPLOAD_MAX_MEMORY_SIZE=4096)
def test_too_large_a_form_on_a_page_answers_the_413_page(client):
    """A page form over the limit gets the app's 413 page, not a bare 400."""
    response = client.post("/login/", {"username": "x" * 8000, "password": "y"})
    assert response.status_code == 413
    assert "Too much at once" in response.content.decode()


def _local_debug(env_extra: dict) -> bool:
    env = {k: v for k, v in os.environ.items() if not k.startswith("DJANGO_")}
    env.update({"DJANGO_SETTINGS_MODULE": "config.settings.local", **env_extra})
    probe = "import django; django.setup(); from django.conf import settings; print(settings.DEBUG)"
    result = subprocess.run(
        [sys.executable, "-c", probe], cwd=ROOT, env=env, capture_output=True, text=True, timeout=120
    )
    assert result.returncode == 0, result.stderr
    return result.stdout.strip().splitlines()[-1] == "True"


def test_the_demo_runs_without_debug_pages_unless_asked():
    """`make run` (config.settings.local) shows the app's error pages; DJANGO_DEBUG=1 brings Django's back."""
    assert _local_debug({}) is False
    assert _local_debug({"DJANGO_DEBUG": "1"}) is True


@pytest.mark.django_db
@pytest.mark.parametrize("token", [None, "not-the-token"])
def test_a_form_sent_without_a_good_csrf_token_shows_the_apps_403_page(token):
    """A form from an expired page (or none at all) is refused with the app's 403 page, which says the page may
    have expired, in the app's look, with no inline style for the Content-Security-Policy to block."""
    client = Client(enforce_csrf_checks=True)
    client.force_login(make_person(organisation=OrganisationFactory(), role=Role.SUPERVISOR))
    post = {"inspection": "1", "note": "checked"}
    if token is not None:
        post["csrfmiddlewaretoken"] = token
    response = client.post("/flagged/", post)
    assert response.status_code == 403
    html = response.content.decode()
    assert "Not open to you" in html and "expired" in html and 'class="brand"' in html
    assert "style=" not in html and "<style" not in html and "CSRF verification failed" not in html
