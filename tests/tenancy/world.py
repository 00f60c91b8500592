"""Two invented organisations with every kind of record, for the tenancy, fuzzing, fault and backup tests.

``build()`` makes:

- **our** organisation: site A (granted to the property manager; the technician's
  work is here) and site B (another technician's work; neither the manager nor
  our technician may see it);
- **their** organisation: one site with the same kinds of records.

Each side has a full unit with components, an assigned work order with tasks,
a stored inspection (through the sync service), a photo, a finished report and
a technician's calendar feed. Names are distinctive so that a leak is easy to
spot in a response body.
"""

from __future__ import annotations

import datetime as dt
import uuid
from dataclasses import dataclass, field

from django.core.files.base import ContentFile
from django.utils import timezone

from accounts.models import Organisation, Role, User
from accounts.services import site_grant
from inspections.models import Inspection, Photo
from inspections.services import checklist_library_install, inspection_sync, photo_upload
from inventory.models import AHU, Building, Component, ImportJob, Site
from reports.models import Report
from scheduling.models import CalendarFeed, WorkOrder
from scheduling.services import calendar_feed_issue, task_library_install
from tests.factories.accounts import OrganisationFactory, make_person
from tests.factories.inspections import filter_form, image_bytes
from tests.factories.inventory import BuildingFactory, SiteFactory, make_full_unit
from tests.factories.scheduling import WorkOrderFactory, add_task

PASSWORD = "pass-for-tests-123"
# A minimal PDF body: the download only streams the stored bytes, so rendering one is not needed here.
PDF_BYTES = b"%PDF-1.4\n1 0 obj<<>>endobj\ntrailer<<>>\n%%EOF\n"


@dataclass
class Corner:
    """The records of one site: what a person who may not see that site must never get."""

    site: Site
    building: Building
    ahu: AHU
    component: Component
    work_order: WorkOrder
    inspection: Inspection
    photo: Photo
    report: Report
    technician: User
    feed: CalendarFeed
    open_work_order: WorkOrder
    markers: list[str] = field(default_factory=list)
    import_job: ImportJob | None = None  # of the corner's organisation; only its supervisors/admins see it


@dataclass
class World:
    ours: Organisation
    theirs: Organisation
    a: Corner  # our site A
    b: Corner  # our site B
    x: Corner  # their site
    technician: User  # ours, works on site A
    supervisor: User
    manager: User  # ours, granted site A only
    admin: User
    their_supervisor: User

    def person(self, role: str) -> User | None:
        return {
            Role.TECHNICIAN: self.technician,
            Role.SUPERVISOR: self.supervisor,
            Role.PROPERTY_MANAGER: self.manager,
            Role.ADMIN: self.admin,
            "anonymous": None,
        }[role]

    def forbidden_for(self, role: str) -> list[Corner]:
        """The corners a person in ``role`` (of our organisation) must not see."""
        if role in (Role.TECHNICIAN, Role.PROPERTY_MANAGER):
            return [self.x, self.b]
        return [self.x]


def _corner(*, org: Organisation, name: str, code: str, tag: str, technician: User, title: str) -> Corner:
    site = SiteFactory(organisation=org, name=name, code=code)
    building = BuildingFactory(site=site, name=f"{name} Hall", code=f"{code}-h")
    ahu = make_full_unit(building=building, tag=tag, area_served=f"{name} offices")
    final = ahu.components.get(name="Final filters")
    wo = WorkOrderFactory(
        ahu=ahu,
        organisation=org,
        assignee=technician,
        state=WorkOrder.State.ASSIGNED,
        title=title,
        due_date=timezone.localdate(),
    )
    add_task(wo, "filter_check", key="world")
    # A second, still open visit: the one the tenancy matrix tries to assign, move and approve.
    open_wo = WorkOrderFactory(
        ahu=ahu,
        organisation=org,
        assignee=technician,
        state=WorkOrder.State.ASSIGNED,
        title=f"{title} (next)",
        due_date=timezone.localdate() + dt.timedelta(days=30),
    )
    add_task(open_wo, "filter_check", key="world")
    photo, _ = photo_upload(user=technician, work_order=wo, client_uuid=uuid.uuid4(), data=image_bytes())
    [result] = inspection_sync(user=technician, forms=[filter_form(wo)])
    assert result["status"] in ("stored", "flagged"), result
    inspection = Inspection.objects.get(pk=result["inspection_id"])
    wo.refresh_from_db()
    report = Report.objects.create(
        organisation=org,
        kind=Report.Kind.INSPECTION,
        parameters={"work_order": str(wo.public_id)},
        site_ids=[site.pk],
        requested_by=technician,
        status=Report.Status.DONE,
        finished_at=timezone.now(),
        sha256="0" * 64,
        size_bytes=len(PDF_BYTES),
    )
    report.file.save(report.filename, ContentFile(PDF_BYTES), save=True)
    feed = calendar_feed_issue(user=technician)
    markers = [
        site.name,
        site.code,
        building.name,
        ahu.tag,
        ahu.label_code,
        final.label_code,
        wo.title,
        str(wo.public_id),
        str(open_wo.public_id),
        str(photo.client_uuid),
        str(report.public_id),
        ahu.area_served,
    ]
    job = ImportJob.objects.create(organisation=org, kind="ahus", file_name=f"{code}-units.csv", rows_total=1)
    markers.append(str(job.public_id))
    corner = Corner(site, building, ahu, final, wo, inspection, photo, report, technician, feed, open_wo, markers)
    corner.import_job = job
    return corner


def build() -> World:
    task_library_install()
    checklist_library_install()
    ours = OrganisationFactory(name="Brightwater Building Services", slug="brightwater")
    theirs = OrganisationFactory(name="Quillon Facility Care", slug="quillon")
    tech = make_person(organisation=ours, role=Role.TECHNICIAN, username="tess", first_name="Tess", last_name="Field")
    tech_b = make_person(organisation=ours, role=Role.TECHNICIAN, username="omar", first_name="Omar", last_name="Vent")
    tech_x = make_person(
        organisation=theirs, role=Role.TECHNICIAN, username="quentin", first_name="Quentin", last_name="Vantablack"
    )
    supervisor = make_person(
        organisation=ours, role=Role.SUPERVISOR, username="sara", first_name="Sara", last_name="Plan"
    )
    manager = make_person(
        organisation=ours, role=Role.PROPERTY_MANAGER, username="manu", first_name="Manu", last_name="Keeper"
    )
    admin = make_person(organisation=ours, role=Role.ADMIN, username="ada", first_name="Ada", last_name="Root")
    their_supervisor = make_person(
        organisation=theirs, role=Role.SUPERVISOR, username="quinn", first_name="Quinn", last_name="Overseer"
    )
    a = _corner(
        org=ours,
        name="Harbour House",
        code="harbour",
        tag="AHU-HH-01",
        technician=tech,
        title="Harbour quarterly service",
    )
    b = _corner(
        org=ours,
        name="Marrowgate Depot",
        code="marrowgate",
        tag="AHU-MG-44",
        technician=tech_b,
        title="Marrowgate belt round",
    )
    x = _corner(
        org=theirs,
        name="Vantablack Wharf",
        code="vantablack",
        tag="AHU-VW-97",
        technician=tech_x,
        title="Vantablack filter round",
    )
    b.markers.append("Marrowgate")
    x.markers += ["Quillon", "Vantablack", tech_x.username]
    site_grant(user=manager, site=a.site)
    return World(ours, theirs, a, b, x, tech, supervisor, manager, admin, their_supervisor)
