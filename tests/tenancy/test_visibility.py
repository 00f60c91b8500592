"""One visibility rule per record: a work order, its checklist, forms, photos and reports are seen together.

A technician sees the sites where they have open work assigned, or work they finished within
``PLENUM_TECHNICIAN_SITE_DAYS`` days, and on those sites their colleagues' work too; an older
assignment no longer grants the site (README, Security and data safety, Tenancy).
"""

from __future__ import annotations

import datetime as dt
import uuid

import pytest
import time_machine
from django.core.files.base import ContentFile
from django.test import Client, override_settings
from django.utils import timezone

from accounts.models import Role
from inspections.models import Inspection
from inspections.services import inspection_sync, photo_upload
from inventory.selectors import sites_visible_to
from reports.models import Report
from scheduling.models import WorkOrder
from tests.factories.accounts import OrganisationFactory, make_person
from tests.factories.inspections import image_bytes
from tests.factories.inventory import BuildingFactory, SiteFactory, make_full_unit
from tests.factories.scheduling import WorkOrderFactory, add_task
from tests.tenancy.world import PDF_BYTES, build, filter_form

pytestmark = pytest.mark.usefixtures("clock")  # the world's work is dated the clock's today


@pytest.fixture
def world(db):
    return build()


def _colleagues_visit(world):
    """Omar's finished visit on site A (Tess's site): a work order, its form, a photo and its report."""
    omar = world.b.technician
    wo = WorkOrderFactory(
        ahu=world.a.ahu,
        organisation=world.ours,
        assignee=omar,
        state=WorkOrder.State.ASSIGNED,
        title="Omar's belt check at Harbour House",
        due_date=timezone.localdate(),
    )
    add_task(wo, "filter_check", key="world")
    photo, _ = photo_upload(user=omar, work_order=wo, client_uuid=uuid.uuid4(), data=image_bytes())
    [result] = inspection_sync(user=omar, forms=[filter_form(wo)])
    assert result["status"] in ("stored", "flagged"), result
    report = Report.objects.create(
        organisation=world.ours,
        kind=Report.Kind.INSPECTION,
        parameters={"work_order": str(wo.public_id)},
        site_ids=[world.a.site.pk],
        requested_by=omar,
        status=Report.Status.DONE,
        finished_at=timezone.now(),
        sha256="0" * 64,
        size_bytes=len(PDF_BYTES),
    )
    report.file.save(report.filename, ContentFile(PDF_BYTES), save=True)
    return wo, Inspection.objects.get(pk=result["inspection_id"]), photo, report


def _answers(user, wo, inspection, photo, report) -> dict[str, int]:
    client = Client()
    client.force_login(user)
    urls = {
        "work-order API": f"/api/scheduling/work-orders/{wo.public_id}/",
        "work-order page": f"/w/{wo.public_id}/",
        "checklist API": f"/api/inspections/work-orders/{wo.public_id}/checklist/",
        "inspection API": f"/api/inspections/{inspection.pk}/",
        "photo": f"/api/inspections/photos/{photo.client_uuid}/",
        "report": f"/api/reports/{report.public_id}/",
        "report download": f"/reports/{report.public_id}/download/",
    }
    return {name: client.get(url).status_code for name, url in urls.items()}


def test_a_technician_reads_a_colleagues_work_on_a_shared_site_the_same_way_everywhere(world):
    """Tess works on site A; Omar's visit there reads 200 on the work-order API and page, the checklist, the
    inspection, the photo and the report alike. A technician with work only on site B gets 404 from all."""
    records = _colleagues_visit(world)
    tess = _answers(world.technician, *records)
    assert set(tess.values()) == {200}, tess
    nils = make_person(organisation=world.ours, role=Role.TECHNICIAN, username="nils")
    WorkOrderFactory(
        ahu=world.b.ahu, organisation=world.ours, assignee=nils, state=WorkOrder.State.ASSIGNED, title="Nils at B"
    )
    elsewhere = _answers(nils, *records)
    assert set(elsewhere.values()) == {404}, elsewhere
    their = _answers(world.their_supervisor, *records)
    assert set(their.values()) == {404}, their


def _technician_with_one_finished_visit(*, finished: dt.datetime):
    org = OrganisationFactory()
    tech = make_person(organisation=org, role=Role.TECHNICIAN, username="ines")
    site = SiteFactory(organisation=org, name="Old Quay Stores", code="oldquay")
    ahu = make_full_unit(building=BuildingFactory(site=site), tag="AHU-OQ-01")
    with time_machine.travel(finished, tick=False):
        wo = WorkOrderFactory(
            ahu=ahu,
            organisation=org,
            assignee=tech,
            state=WorkOrder.State.COMPLETED,
            completed_at=finished,
            title="Old Quay filter round",
            due_date=finished.date(),
        )
    return tech, site, ahu, wo


@pytest.mark.django_db
@override_settings(PLENUM_TECHNICIAN_SITE_DAYS=90)
def test_an_assignment_that_ended_long_ago_no_longer_grants_the_site():
    """A technician whose only work on a site was finished 89 days ago still sees it; at 91 days the site, its
    units and its work orders are gone for them (404), on the API and the pages alike."""
    finished = dt.datetime(2026, 1, 12, 15, 0, tzinfo=dt.UTC)
    tech, site, ahu, wo = _technician_with_one_finished_visit(finished=finished)
    client = Client()
    client.force_login(tech)
    urls = [f"/api/scheduling/work-orders/{wo.public_id}/", f"/w/{wo.public_id}/", f"/l/{ahu.label_code}/"]
    with time_machine.travel(finished + dt.timedelta(days=89), tick=False):
        assert list(sites_visible_to(user=tech)) == [site]
        assert [client.get(u).status_code for u in urls[:2]] == [200, 200]
    with time_machine.travel(finished + dt.timedelta(days=91), tick=False):
        assert not sites_visible_to(user=tech).exists()
        assert [client.get(u).status_code for u in urls] == [404, 404, 404]
        assert client.get("/api/scheduling/work-orders/").json() == []


@pytest.mark.django_db
def test_open_work_grants_the_site_however_old_the_assignment():
    """Open work keeps its site visible however long ago it was assigned."""
    assigned = dt.datetime(2025, 6, 2, 8, 0, tzinfo=dt.UTC)
    org = OrganisationFactory()
    tech = make_person(organisation=org, role=Role.TECHNICIAN, username="ola")
    site = SiteFactory(organisation=org, code="longrun")
    ahu = make_full_unit(building=BuildingFactory(site=site), tag="AHU-LR-01")
    with time_machine.travel(assigned, tick=False):
        WorkOrderFactory(
            ahu=ahu, organisation=org, assignee=tech, state=WorkOrder.State.ASSIGNED, due_date=assigned.date()
        )
    with time_machine.travel(assigned + dt.timedelta(days=400), tick=False):
        assert list(sites_visible_to(user=tech)) == [site]


def test_the_tenancy_rules_work_states_are_the_work_orders_own():
    """sites_visible_to names work-order states by their stored values (the model lives above inventory);
    they stay the work order's open states and its finished ones, so a new state cannot slip past the rule."""
    from inventory import selectors

    assert set(selectors._OPEN_WORK) == set(WorkOrder.OPEN_STATES)
    assert set(selectors._DONE_WORK) == {WorkOrder.State.COMPLETED, WorkOrder.State.VERIFIED}
    assert set(WorkOrder.State.values) == set(selectors._OPEN_WORK) | set(selectors._DONE_WORK) | {
        WorkOrder.State.CANCELLED
    }
