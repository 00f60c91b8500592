"""Asking for reports, rendering them, and who may download them."""

import hashlib

import pytest
from django.core.exceptions import ValidationError
from django.http import Http404

from accounts.models import Role
from accounts.services import site_grant
from reports.models import Report
from reports.services import report_render, report_request
from tests.factories.accounts import OrganisationFactory, make_person
from tests.factories.inventory import AHUFactory, BuildingFactory, SiteFactory

from .conftest import pdf_bytes, pdf_text

pytestmark = pytest.mark.django_db


@pytest.fixture
def unit(site):
    return AHUFactory(building=BuildingFactory(site=site), tag="AHU-07")


@pytest.fixture
def foreign_unit():
    other = SiteFactory(organisation=OrganisationFactory(name="Elsewhere Facilities"), name="Elsewhere Depot")
    return AHUFactory(building=BuildingFactory(site=other))


def test_report_is_rendered_and_stored_with_checksum(supervisor, unit, make_report):
    """A finished report holds its PDF, the file's SHA-256, its size, page count and inputs."""
    report = make_report(user=supervisor, kind="labels", parameters={"units": [unit.pk]})
    data = pdf_bytes(report)
    assert data.startswith(b"%PDF-")
    assert report.sha256 == hashlib.sha256(data).hexdigest()
    assert report.size_bytes == len(data)
    assert report.page_count == 1
    assert report.parameters == {"units": [unit.pk], "components": [], "layout": "a4-3x8"}
    assert report.site_ids == [unit.building.site_id]
    assert report.finished_at >= report.created_at


def test_render_task_is_queued_only_after_commit(supervisor, unit, django_capture_on_commit_callbacks):
    """Nothing renders inside the request's transaction; the task runs once it commits."""
    with django_capture_on_commit_callbacks(execute=False) as callbacks:
        report = report_request(user=supervisor, kind="labels", parameters={"units": [unit.pk]})
    report.refresh_from_db()
    assert report.status == Report.Status.QUEUED
    assert len(callbacks) == 1
    callbacks[0]()
    report.refresh_from_db()
    assert report.status == Report.Status.DONE


def test_rendering_twice_is_harmless(supervisor, unit, make_report):
    """Running the render task again for a done report changes nothing."""
    report = make_report(user=supervisor, kind="labels", parameters={"units": [unit.pk]})
    again = report_render(report_id=report.pk)
    assert again.sha256 == report.sha256 and again.file.name == report.file.name


def test_same_inputs_give_same_text_and_bytes(supervisor, unit, make_report):
    """Rendering a stored report again gives the very same text (and, here, the same bytes)."""
    report = make_report(user=supervisor, kind="labels", parameters={"units": [unit.pk]})
    first_text, first_sha = pdf_text(report), report.sha256
    Report.objects.filter(pk=report.pk).update(status=Report.Status.QUEUED)
    report_render(report_id=report.pk)
    report.refresh_from_db()
    assert pdf_text(report) == first_text
    assert report.sha256 == first_sha


def test_unit_of_another_organisation_is_refused(supervisor, unit, foreign_unit):
    """A unit of another organisation is refused as not found, naming the field and id; nothing is stored."""
    with pytest.raises(Http404, match=rf"units: no unit with id {foreign_unit.pk}"):
        report_request(user=supervisor, kind="labels", parameters={"units": [unit.pk, foreign_unit.pk]})
    assert not Report.objects.exists()


def test_bad_inputs_name_the_field():
    """An unknown kind, a bad layout or a PDF/A label sheet are refused with the field named."""
    org = OrganisationFactory()
    user = make_person(organisation=org, role=Role.SUPERVISOR)
    unit = AHUFactory(building=BuildingFactory(site=SiteFactory(organisation=org)))
    with pytest.raises(ValidationError) as exc:
        report_request(user=user, kind="poster", parameters={})
    assert "kind" in exc.value.message_dict
    with pytest.raises(ValidationError) as exc:
        report_request(user=user, kind="labels", parameters={"units": [unit.pk], "layout": "b5"})
    assert "a4-3x8" in exc.value.message_dict["layout"][0]
    with pytest.raises(ValidationError) as exc:
        report_request(user=user, kind="labels", parameters={"units": [unit.pk]}, pdfa=True)
    assert "pdfa" in exc.value.message_dict


def test_api_creates_and_reports_state(api_client, supervisor, unit, django_capture_on_commit_callbacks):
    """POST /api/reports/ answers 202 with the public id; GET shows it done with a download address."""
    api_client.force_authenticate(supervisor)
    with django_capture_on_commit_callbacks(execute=True):
        response = api_client.post(
            "/api/reports/", {"kind": "labels", "parameters": {"units": [unit.pk]}}, format="json"
        )
    assert response.status_code == 202, response.content
    public_id = response.json()["public_id"]
    detail = api_client.get(f"/api/reports/{public_id}/").json()
    assert detail["status"] == "done"
    assert detail["download_url"].endswith(f"/reports/{public_id}/download/")
    assert len(detail["sha256"]) == 64


def test_api_refuses_foreign_unit_with_404(api_client, supervisor, foreign_unit):
    """Asking for a label sheet of another organisation's unit answers 404 naming the field."""
    api_client.force_authenticate(supervisor)
    response = api_client.post(
        "/api/reports/", {"kind": "labels", "parameters": {"units": [foreign_unit.pk]}}, format="json"
    )
    assert response.status_code == 404
    assert "units" in response.json()["detail"]


def test_api_bad_input_is_400_with_field(api_client, supervisor, unit):
    api_client.force_authenticate(supervisor)
    response = api_client.post("/api/reports/", {"kind": "labels", "parameters": {"units": ["x"]}}, format="json")
    assert response.status_code == 400
    assert "units" in response.json()["errors"]


def test_download_only_for_those_who_see_every_site(client, org, supervisor, unit, make_report):
    """The PDF downloads for its requester; a manager of another site and an outsider get 404."""
    report = make_report(user=supervisor, kind="labels", parameters={"units": [unit.pk]})
    url = report.get_absolute_url()
    client.force_login(supervisor)
    response = client.get(url)
    assert response.status_code == 200
    assert response["Content-Type"] == "application/pdf"
    assert b"".join(response.streaming_content).startswith(b"%PDF-")

    manager = make_person(organisation=org, role=Role.PROPERTY_MANAGER)
    site_grant(user=manager, site=SiteFactory(organisation=org))
    client.force_login(manager)
    assert client.get(url).status_code == 404
    site_grant(user=manager, site=unit.building.site)
    assert client.get(url).status_code == 200

    outsider = make_person(organisation=OrganisationFactory(), role=Role.SUPERVISOR)
    client.force_login(outsider)
    assert client.get(url).status_code == 404


def test_api_detail_hidden_from_other_tenants(api_client, supervisor, unit, make_report):
    report = make_report(user=supervisor, kind="labels", parameters={"units": [unit.pk]})
    api_client.force_authenticate(make_person(organisation=OrganisationFactory(), role=Role.ADMIN))
    assert api_client.get(f"/api/reports/{report.public_id}/").status_code == 404


def test_download_needs_sign_in(client, supervisor, unit, make_report):
    report = make_report(user=supervisor, kind="labels", parameters={"units": [unit.pk]})
    response = client.get(report.get_absolute_url())
    assert response.status_code == 302


@pytest.mark.parametrize(
    ("kind", "parameters", "field"),
    [
        ("labels", {"units": [2**70]}, "units"),
        ("labels", {"units": "UNIT", "layout": ["a4-3x8"]}, "layout"),
        ("compliance", {"unit_system": {"x": 1}}, "unit_system"),
        ("compliance", {"start": "last week"}, "start"),
        ("labels", {"units": [True]}, "units"),
        ("unit_history", {"unit": "UNIT", "start": "2025-05-01", "end": "2025-01-01"}, "end"),
        ("inspection", {}, "work_order"),
    ],
)
def test_odd_inputs_are_400_not_500(api_client, supervisor, unit, kind, parameters, field):
    """Huge ids, lists where a word is expected, booleans as ids, bad dates: a 400 naming the field, never a crash."""
    parameters = {k: ([unit.pk] if k == "units" else unit.pk) if v == "UNIT" else v for k, v in parameters.items()}
    api_client.force_authenticate(supervisor)
    response = api_client.post("/api/reports/", {"kind": kind, "parameters": parameters}, format="json")
    assert response.status_code == 400, response.content
    assert field in response.json()["errors"]


def test_api_client_downloads_with_its_token(org, supervisor, unit, foreign_unit, make_report):
    """The API's download_url serves the PDF to an API client sending 'Authorization: Token …' (no login page);
    a bad token gets 401, and a person who may not see the report gets 404 as on the page."""
    from rest_framework.test import APIClient

    from accounts.services import api_token_issue

    report = make_report(user=supervisor, kind="labels", parameters={"units": [unit.pk]})
    api = APIClient()
    api.credentials(HTTP_AUTHORIZATION=f"Token {api_token_issue(user=supervisor).key}")
    url = api.get(f"/api/reports/{report.public_id}/").json()["download_url"]
    response = api.get(url)
    assert response.status_code == 200, response.get("Location")
    assert b"".join(response.streaming_content).startswith(b"%PDF-")

    api.credentials(HTTP_AUTHORIZATION="Token " + "0" * 40)
    assert api.get(url).status_code == 401

    stranger = make_person(organisation=OrganisationFactory(name="Other Facilities"), role=Role.SUPERVISOR)
    api.credentials(HTTP_AUTHORIZATION=f"Token {api_token_issue(user=stranger).key}")
    assert api.get(url).status_code == 404


def test_asking_the_same_report_twice_while_it_is_made_gives_one_report(
    supervisor, unit, django_capture_on_commit_callbacks
):
    """A double tap or a resent form while the first is still queued: the same person asking the same report
    (same checked inputs) gets that report back, not a second row; other inputs, or a finished report, are new."""
    with django_capture_on_commit_callbacks(execute=False):
        first = report_request(user=supervisor, kind="labels", parameters={"units": [unit.pk]})
    with django_capture_on_commit_callbacks(execute=False):
        again = report_request(user=supervisor, kind="labels", parameters={"units": [unit.pk]})
    assert again.pk == first.pk and again.repeated and Report.objects.count() == 1
    with django_capture_on_commit_callbacks(execute=False):
        other = report_request(user=supervisor, kind="labels", parameters={"units": [unit.pk], "layout": "letter-3x10"})
    assert other.pk != first.pk and Report.objects.count() == 2
    report_render(report_id=first.pk)
    with django_capture_on_commit_callbacks(execute=False):
        later = report_request(user=supervisor, kind="labels", parameters={"units": [unit.pk]})
    assert later.pk not in (first.pk, other.pk)
