"""Who may write what: every write route × every role × our own and another organisation.

Every URL pattern whose view takes POST, PUT, PATCH or DELETE (API views by their methods, page
views unless they are limited to reading methods) must appear in ``WRITES``, the one table of
this file that says who may use it. A new write route that is not in the table fails
``test_every_write_route_is_in_the_table``.

For each route and role the request is made with a body that would really write (the records
of our site A, or of the other organisation's site), inside a savepoint that is rolled back, and
the whole database is compared before and after:

- a role the table allows, on our own records: the answer is a success and something was stored;
- a role the table does not allow, on our own records: 403 with a message (the API's JSON error
  shape under ``/api/``), and nothing changed;
- anybody, on another organisation's records: 403 or 404 (or 400 naming the field, when the
  record is named in the body rather than the address), and nothing changed.

Property managers write nothing but their own session and credentials (sign-in and out,
password, API token, calendar address); asking for a PDF record of what they may read is a read.
"""

from __future__ import annotations

import datetime as dt
import uuid
from collections.abc import Callable
from dataclasses import dataclass, field

import pytest
from django.apps import apps
from django.db import transaction
from django.test import Client
from django.utils import timezone

from accounts.models import Role
from inspections.models import Inspection
from inspections.selectors import checklist_for
from reports.models import Report
from scheduling.models import MeterReading, WorkOrder
from tests.factories.scheduling import WorkOrderFactory
from tests.tenancy.test_matrix import FILL, PARAM, _image_upload, brick_upload, probe_point, routes
from tests.tenancy.world import PASSWORD, Corner, World, build, filter_form

TECHNICIAN, SUPERVISOR, PM, ADMIN = Role.TECHNICIAN, Role.SUPERVISOR, Role.PROPERTY_MANAGER, Role.ADMIN
pytestmark = pytest.mark.usefixtures("clock")  # the world's work is dated the clock's today

ROLES = (TECHNICIAN, SUPERVISOR, PM, ADMIN)
MANAGERS = frozenset({SUPERVISOR, ADMIN})
FIELD = frozenset({TECHNICIAN, SUPERVISOR, ADMIN})  # the people who do the work; property managers read
EVERYONE = frozenset(ROLES)
WRITE_METHODS = ("post", "put", "patch", "delete")


@dataclass(frozen=True)
class Call:
    """One request: the address's parameters, the body and how it is sent (json, form or multipart)."""

    params: dict = field(default_factory=dict)
    body: dict = field(default_factory=dict)
    fmt: str = "json"


@dataclass(frozen=True)
class Write:
    """Who may use one write route, and a request that really writes into a corner's records.

    kind: "record" writes a tenant's records (the roles in ``who`` of the record's organisation may);
    "self" changes only the person's own session or credentials (everyone signed in may);
    "none" answers without writing anything (a calculation, a page that treats POST as GET).
    in_body: the record is named in the body, so another organisation's may be a 400 naming the field.
    per_form: refusals of another organisation's records come per form in a 200 answer (the sync batch).
    own_org_only: the route writes into the person's own organisation, whatever the address says.
    session: what the person's session holds before the request (a step begun on an earlier page).
    """

    who: frozenset
    call: Callable[[World, Corner], Call] | None = None
    kind: str = "record"
    in_body: bool = False
    per_form: bool = False
    own_org_only: bool = False
    session: Callable[[World, Corner], dict] | None = None


# ---------------------------------------------------------------------------
# Requests that write
# ---------------------------------------------------------------------------
def _other_technician(w: World, c: Corner) -> str:
    return w.b.technician.username if c is not w.x else c.technician.username


def _pending_corrective(c: Corner) -> WorkOrder:
    return WorkOrderFactory(
        ahu=c.ahu,
        organisation=c.site.organisation,
        kind=WorkOrder.Kind.CORRECTIVE,
        approval=WorkOrder.Approval.PENDING,
        state=WorkOrder.State.PLANNED,
        title="Probe corrective work",
        due_date=timezone.localdate() + dt.timedelta(days=7),
    )


def _flagged(c: Corner) -> Inspection:
    Inspection.objects.filter(pk=c.inspection.pk).update(
        flags=[{"code": "work_order_reassigned", "reason": "probe"}], flag_resolved_at=None
    )
    return c.inspection


def _wo(c: Corner, **body) -> Call:
    wo = c.open_work_order
    wo.refresh_from_db()
    return Call({"public_id": wo.public_id}, {"version": wo.version, **body})


def _checklist_post(w: World, c: Corner) -> Call:
    """The checklist page's plain form, filled with a complete filter check."""
    from frontend.checklist_form import form_sections

    wo = c.open_work_order
    data = checklist_for(work_order=wo, user=c.technician)
    values = {(x["item"], x["component"]): x["value"] for x in filter_form(wo)["readings"]}
    post = {"signature_name": "Probe Person", "client_uuid": str(uuid.uuid4())}
    for section in form_sections(data):
        for item in section["items"]:
            key = (item["key"], item["component_code"] or None)
            if key in values:
                post[item["name"]] = str(values[key])
    return Call({"public_id": wo.public_id}, post, "form")


def _unit_edit(w: World, c: Corner) -> Call:
    from frontend.views.registry_units import unit_form_initial

    ahu = c.ahu
    post = {
        k: "1" if v is True else "" if v in (None, False) else str(v)
        for k, v in unit_form_initial(ahu=ahu, system="si").items()
    }
    post["location"] = "Roof, north end"
    return Call({"pk": ahu.pk}, post, "form")


def _unit_move(c: Corner) -> Call:
    """Move the corner's unit to a second building of its own site (made here; rolled back with the request)."""
    from tests.factories.inventory import BuildingFactory

    annex = BuildingFactory(site=c.site, name="Probe annex", code="probe-annex")
    return Call({"pk": c.ahu.pk}, {"building": str(annex.pk)}, "form")


def _component_edit(w: World, c: Corner) -> Call:
    from frontend.specs_form import spec_initial

    values = spec_initial(component=c.component, system="si")
    post = {f"spec_{k}": "" if v is None else str(v) for k, v in values.items()}
    post["name"] = "Final filters (renamed)"
    return Call({"pk": c.component.pk}, post, "form")


def _csv(c: Corner) -> Call:
    from django.core.files.uploadedfile import SimpleUploadedFile

    text = b"code,name,latitude,longitude,time_zone\nprobe-yard,Probe Yard,53.1,9.9,Europe/Berlin\n"
    upload = SimpleUploadedFile("sites.csv", text, content_type="text/csv")
    return Call({"kind": "sites"}, {"organisation": c.site.organisation.slug, "file": upload}, "multipart")


def _trend_csv(c: Corner) -> Call:
    from django.core.files.uploadedfile import SimpleUploadedFile

    text = f"timestamp,{probe_point(c).name}\n2025-06-02 08:00,16.5\n".encode()
    upload = SimpleUploadedFile("trend.csv", text, content_type="text/csv")
    return Call({"pk": c.site.pk}, {"layout": "wide", "units": "si", "file": upload}, "multipart")


def _reading(c: Corner) -> Call:
    return Call(
        body={"unit_label": c.ahu.label_code, "hours": 1500, "taken_at": timezone.now().isoformat()},
    )


def _amend(c: Corner) -> Call:
    reading = {"item": "filter_check.dp", "component": c.component.label_code, "value": 120, "note": ""}
    return Call(
        {"pk": c.inspection.pk}, {"reason": "typed in the wrong box", "unit_system": "si", "readings": [reading]}
    )


def _person_seen(person) -> str:
    """The person page's hidden state field (a form read from the page), for a person of one organisation."""
    from accounts.models import Membership
    from accounts.services import person_state

    return person_state(membership=Membership.objects.select_related("user").get(user=person))


def _login(w: World, c: Corner) -> Call:
    return Call(body={"username": "nobody-here", "password": PASSWORD}, fmt="form")


# ---------------------------------------------------------------------------
# THE table: every write route and who may use it. A route missing here fails the test.
# ---------------------------------------------------------------------------
WRITES: dict[tuple[str, str], Write] = {
    # Own credentials and session: everyone signed in, property managers too.
    ("accounts_api:token", "post"): Write(EVERYONE, kind="self"),
    ("accounts_api:token", "delete"): Write(EVERYONE, kind="self"),
    ("scheduling_api:calendar-feed", "post"): Write(EVERYONE, kind="self"),
    ("frontend:login", "post"): Write(EVERYONE, _login, kind="self"),
    ("frontend:profile", "post"): Write(
        EVERYONE, lambda w, c: Call(body={"action": "units", "unit_system": "us"}, fmt="form"), kind="self"
    ),
    ("frontend:logout", "post"): Write(EVERYONE, kind="self"),
    ("accounts:password_reset", "post"): Write(
        EVERYONE, lambda w, c: Call(body={"email": "x@example.invalid"}, fmt="form"), kind="self"
    ),
    ("accounts:password_reset_confirm", "post"): Write(
        EVERYONE, lambda w, c: Call({"uidb64": "MQ", "token": "set-password"}, {}, "form"), kind="self"
    ),
    ("accounts:invitation_confirm", "post"): Write(
        EVERYONE, lambda w, c: Call({"uidb64": "MQ", "token": "set-password"}, {}, "form"), kind="self"
    ),
    ("accounts:invitation_confirm", "put"): Write(
        EVERYONE, lambda w, c: Call({"uidb64": "MQ", "token": "set-password"}, {}, "form"), kind="self"
    ),
    # Django's form views answer PUT as POST.
    ("frontend:login", "put"): Write(EVERYONE, kind="self"),
    ("accounts:password_reset", "put"): Write(EVERYONE, kind="self"),
    ("accounts:password_reset_confirm", "put"): Write(
        EVERYONE, lambda w, c: Call({"uidb64": "MQ", "token": "set-password"}, {}, "form"), kind="self"
    ),
    # The registry: supervisors and admins of the organisation.
    ("inventory_api:site-list", "post"): Write(
        MANAGERS,
        lambda w, c: Call(
            body={
                "organisation": c.site.organisation.slug,
                "code": "probe",
                "name": "Probe Yard",
                "latitude": 1,
                "longitude": 1,
            }
        ),
        in_body=True,
    ),
    ("inventory_api:site-detail", "patch"): Write(MANAGERS, lambda w, c: Call({"pk": c.site.pk}, {"name": "Renamed"})),
    ("inventory_api:building-list", "post"): Write(
        MANAGERS, lambda w, c: Call(body={"site": c.site.pk, "code": "probe-b", "name": "Probe Hall"}), in_body=True
    ),
    ("inventory_api:building-detail", "patch"): Write(
        MANAGERS, lambda w, c: Call({"pk": c.building.pk}, {"name": "Renamed Hall"})
    ),
    ("inventory_api:ahu-list", "post"): Write(
        MANAGERS,
        lambda w, c: Call(
            body={
                "building": c.building.pk,
                "tag": "AHU-PROBE-01",
                "design_supply_airflow_m3s": 2.0,
                "design_min_oa_fraction": 0.2,
            }
        ),
        in_body=True,
    ),
    ("inventory_api:ahu-detail", "patch"): Write(MANAGERS, lambda w, c: Call({"pk": c.ahu.pk}, {"location": "Roof"})),
    ("inventory_api:component-list", "post"): Write(
        MANAGERS,
        lambda w, c: Call(
            body={
                "ahu": c.ahu.pk,
                "kind": "damper",
                "name": "Probe damper",
                "specs": {"role": "outdoor", "actuator": "modulating", "stroke_time_s": 90},
            }
        ),
        in_body=True,
    ),
    ("inventory_api:component-detail", "patch"): Write(
        MANAGERS, lambda w, c: Call({"pk": c.component.pk}, {"name": "Renamed filters"})
    ),
    # A part no record points to (one named by readings is kept: 400).
    ("inventory_api:component-detail", "delete"): Write(
        MANAGERS, lambda w, c: Call({"pk": c.ahu.components.get(name="Intake screen").pk})
    ),
    ("inventory_api:import", "post"): Write(MANAGERS, lambda w, c: _csv(c), in_body=True),
    # The point map, trends and Brick models of a site (automation/api.py): supervisors and admins.
    ("automation_api:point-list", "post"): Write(
        MANAGERS,
        lambda w, c: Call(body={"ahu": c.ahu.pk, "name": "PROBE.SAT", "brick_class": "Supply_Air_Temperature_Sensor"}),
        in_body=True,
    ),
    ("automation_api:point-detail", "patch"): Write(
        MANAGERS, lambda w, c: Call({"pk": probe_point(c).pk}, {"name": "PROBE.RENAMED"})
    ),
    ("automation_api:point-detail", "delete"): Write(MANAGERS, lambda w, c: Call({"pk": probe_point(c).pk})),
    ("automation_api:site-trends", "post"): Write(MANAGERS, lambda w, c: _trend_csv(c)),
    # The site's point-map page posts a trend file to the same service (frontend/views/automation_points.py).
    ("frontend:site_points", "post"): Write(MANAGERS, lambda w, c: _trend_csv(c)),
    ("automation_api:brick-import", "post"): Write(
        MANAGERS,
        lambda w, c: Call(body={"organisation": c.site.organisation.slug, "file": brick_upload(c)}, fmt="multipart"),
        in_body=True,
    ),
    ("frontend:registry_unit_edit", "post"): Write(MANAGERS, _unit_edit),
    ("frontend:registry_component_edit", "post"): Write(MANAGERS, _component_edit),
    # Registry pages: add, move and retire (frontend/views/registry_*.py); supervisors and admins.
    ("frontend:registry_site_new", "post"): Write(
        MANAGERS,
        lambda w, c: Call(
            body={"name": "Probe Yard", "latitude": "53.1", "longitude": "9.9", "time_zone": "Europe/Berlin"},
            fmt="form",
        ),
        own_org_only=True,
    ),
    ("frontend:registry_site", "post"): Write(
        MANAGERS,
        lambda w, c: Call(
            {"pk": c.site.pk},
            {
                "name": c.site.name,
                "latitude": str(c.site.latitude),
                "longitude": str(c.site.longitude),
                "time_zone": c.site.time_zone,
                "access_notes": "Keys at reception",
            },
            "form",
        ),
    ),
    ("frontend:registry_building_new", "post"): Write(
        MANAGERS, lambda w, c: Call({"pk": c.site.pk}, {"name": "Probe Annex"}, "form")
    ),
    ("frontend:registry_building_edit", "post"): Write(
        MANAGERS,
        lambda w, c: Call(
            {"pk": c.building.pk}, {"name": c.building.name, "floors": "7", "site": str(c.site.pk)}, "form"
        ),
    ),
    ("frontend:registry_unit_new", "post"): Write(
        MANAGERS,
        lambda w, c: Call(
            body={
                "building": str(c.building.pk),
                "tag": "AHU-PROBE",
                "design_supply_airflow_m3s": "1500",
                "design_min_oa_fraction": "30",
                "ventilation_zones": "single_zone",
                "air_distribution": "ceiling_supply_cool",
                "heat_recovery": "none",
            },
            fmt="form",
        ),
        in_body=True,
    ),
    ("frontend:registry_unit_move", "post"): Write(MANAGERS, lambda w, c: _unit_move(c)),
    ("frontend:registry_unit_retire", "post"): Write(
        MANAGERS, lambda w, c: Call({"pk": c.ahu.pk}, {"reason": "probe"}, "form")
    ),
    ("frontend:registry_component_new", "post"): Write(
        MANAGERS,
        lambda w, c: Call(
            {"pk": c.ahu.pk},
            {
                "kind": "damper",
                "name": "Probe damper",
                "spec_role": "outdoor",
                "spec_actuator": "modulating",
                "spec_stroke_time_s": "90",
            },
            "form",
        ),
    ),
    ("frontend:registry_component_retire", "post"): Write(
        MANAGERS, lambda w, c: Call({"pk": c.component.pk}, {"reason": "probe"}, "form")
    ),
    ("frontend:registry_rules", "post"): Write(
        MANAGERS,
        lambda w, c: Call({"pk": c.ahu.pk}, {"task_code": "filter_check", "enabled": "0", "reason": "probe"}, "form"),
    ),
    ("scheduling_api:task", "patch"): Write(
        MANAGERS, lambda w, c: Call({"code": "filter_check"}, {"interval_value": 2}), own_org_only=True
    ),
    # Rules in the pages (the organisation's; a unit's are registry_rules above) and the registry's CSV import:
    # checking a file stores nothing (the checked file waits in the person's session); confirming imports it.
    ("frontend:rules", "post"): Write(
        MANAGERS,
        lambda w, c: Call(
            body={
                "task_code": "filter_check",
                "action": "numbers",
                "interval_value": "2",
                "interval_unit": "months",
                "grace_days": "7",
                "reason": "probe",
            },
            fmt="form",
        ),
        own_org_only=True,
    ),
    ("frontend:registry_files", "post"): Write(
        frozenset(),
        lambda w, c: Call(body={"kind": "sites", "file": _csv(c).body["file"]}, fmt="multipart"),
        kind="none",
    ),
    ("frontend:registry_import_confirm", "post"): Write(
        MANAGERS,
        lambda w, c: Call(body={"token": "probe-check"}, fmt="form"),
        own_org_only=True,
        session=lambda w, c: {
            "registry_csv_checked": {
                "token": "probe-check",
                "kind": "sites",
                "org": c.site.organisation.pk,
                "text": "code,name,latitude,longitude,time_zone\nprobe-yard,Probe Yard,53.1,9.9,Europe/Berlin\n",
                "name": "probe.csv",
            }
        },
    ),
    # Planning and approving work: supervisors and admins.
    ("scheduling_api:work-order-assign", "post"): Write(
        # Confirmed past any warning (skills, capacity, due date): the probe asks who may write, not what warns.
        MANAGERS,
        lambda w, c: _wo(c, assignee=_other_technician(w, c), confirm_warnings=True),
    ),
    ("scheduling_api:work-order-schedule", "post"): Write(
        MANAGERS, lambda w, c: _wo(c, scheduled_for=(timezone.localdate() + dt.timedelta(days=3)).isoformat())
    ),
    ("scheduling_api:work-order-approve", "post"): Write(
        MANAGERS,
        lambda w, c: (lambda wo: Call({"public_id": wo.public_id}, {"version": wo.version}))(_pending_corrective(c)),
    ),
    ("scheduling_api:work-order-reject", "post"): Write(
        MANAGERS,
        lambda w, c: (lambda wo: Call({"public_id": wo.public_id}, {"version": wo.version, "reason": "not needed"}))(
            _pending_corrective(c)
        ),
    ),
    ("frontend:assign", "post"): Write(
        MANAGERS,
        lambda w, c: (
            lambda call: Call(
                call.params,
                {"assignee": str(w.b.technician.pk), **call.body, "week": "", "confirm_warnings": "1"},
                "form",
            )
        )(_wo(c)),
    ),
    ("frontend:corrective", "post"): Write(
        MANAGERS,
        lambda w, c: Call(
            body={"work_order": str(_pending_corrective(c).public_id), "decision": "approve"}, fmt="form"
        ),
        in_body=True,
    ),
    ("frontend:verify", "post"): Write(
        MANAGERS,
        lambda w, c: Call({"public_id": c.work_order.public_id}, {"version": str(c.work_order.version)}, "form"),
    ),
    ("inspections_api:verify", "post"): Write(MANAGERS, lambda w, c: Call({"pk": c.inspection.pk})),
    ("inspections_api:resolve-flag", "post"): Write(
        MANAGERS, lambda w, c: Call({"pk": _flagged(c).pk}, {"note": "checked with the technician"})
    ),
    ("frontend:flagged", "post"): Write(
        MANAGERS,
        lambda w, c: Call(body={"inspection": str(_flagged(c).pk), "note": "checked"}, fmt="form"),
        in_body=True,
    ),
    # Work beyond the plan (frontend/views/work_pages.py): a call-out for a unit named in the body; a frost check.
    ("frontend:work_new", "post"): Write(
        MANAGERS,
        lambda w, c: Call(
            body={
                "unit": str(c.ahu.pk),
                "kind": "call_out",
                "title": "Probe call-out",
                "priority": "high",
                "due_date": (timezone.localdate() + dt.timedelta(days=2)).isoformat(),
                "due_time": "12:00",
                "task_name": "Look at the unit",
                "task_minutes": "30",
                "task_skill": "mechanical",
            },
            fmt="form",
        ),
        in_body=True,
    ),
    ("frontend:plan_now", "post"): Write(MANAGERS, lambda w, c: Call({}, {}, "form"), own_org_only=True),
    ("frontend:work_frost", "post"): Write(MANAGERS, lambda w, c: Call({"site_pk": c.site.pk}, {}, "form")),
    # Field work: technicians (their own work where it says so), supervisors and admins; never property managers.
    # Starting work: the technician assigned to it (site A's open work is our technician's).
    ("scheduling_api:work-order-transition", "post"): Write(
        FIELD, lambda w, c: _wo(c, to_state="in_progress", reason="")
    ),
    ("scheduling_api:meter-readings", "post"): Write(FIELD, lambda w, c: _reading(c), in_body=True),
    ("inspections_api:sync", "post"): Write(
        FIELD, lambda w, c: Call(body={"forms": [filter_form(c.open_work_order)]}), in_body=True, per_form=True
    ),
    ("inspections_api:photo-upload", "post"): Write(
        FIELD,
        lambda w, c: Call(
            body={
                "work_order": str(c.open_work_order.public_id),
                "client_uuid": str(uuid.uuid4()),
                "file": _image_upload(),
            },
            fmt="multipart",
        ),
        in_body=True,
    ),
    ("frontend:checklist", "post"): Write(FIELD, _checklist_post),
    # The phone's "Start visit": only the technician the visit is assigned to (frontend/views/visit_start.py).
    ("frontend:start_visit", "post"): Write(
        frozenset({TECHNICIAN}), lambda w, c: (lambda call: Call(call.params, call.body, "form"))(_wo(c))
    ),
    # Amending a signed form: the technician who signed it (site A's was ours) or a supervisor of the site.
    ("inspections_api:amend", "post"): Write(FIELD, lambda w, c: _amend(c)),
    ("frontend:amend", "post"): Write(
        FIELD,
        lambda w, c: Call(
            {"public_id": c.work_order.public_id},
            {
                "inspection": str(c.inspection.pk),
                "item": f"filter_check.dp|{c.component.label_code}",
                "value": "120",
                "reason": "typed in the wrong box",
                "note": "",
            },
            "form",
        ),
    ),
    # PDF records of what the person may read: a read, open to everyone who sees the record.
    ("reports_api:create", "post"): Write(
        EVERYONE,
        lambda w, c: Call(body={"kind": "inspection", "parameters": {"work_order": str(c.work_order.public_id)}}),
        in_body=True,
    ),
    ("frontend:record_request", "post"): Write(
        EVERYONE,
        lambda w, c: Call(body={"kind": "inspection", "work_order": str(c.work_order.public_id)}, fmt="form"),
        in_body=True,
    ),
    # People of the organisation: administrators only (invite; role, capacity, skills of someone of the site's
    # organisation; another organisation's person is not found).
    ("frontend:people", "post"): Write(
        frozenset({ADMIN}),
        lambda w, c: Call(
            body={
                "name": "Probe Person",
                "email": "probe.person@example.invalid",
                "role": "technician",
                "capacity": "6",
                "skills": ["electrical"],
            },
            fmt="form",
        ),
        own_org_only=True,
    ),
    ("frontend:person_edit", "post"): Write(
        frozenset({ADMIN}),
        lambda w, c: Call(
            {"pk": c.technician.pk},
            {"action": "save", "role": "technician", "capacity": "6.5", "seen": _person_seen(c.technician)},
            "form",
        ),
    ),
    # Answer a POST without writing anything: calculations and pages that only read.
    ("frontend:calc_api", "post"): Write(frozenset(), kind="none"),
    ("frontend:calculator", "post"): Write(frozenset(), kind="none"),
    ("frontend:home", "post"): Write(frozenset(), kind="none"),
    ("frontend:board", "post"): Write(frozenset(), kind="none"),
    ("frontend:registry", "post"): Write(frozenset(), kind="none"),
    ("frontend:registry_unit", "post"): Write(frozenset(), kind="none"),
    ("frontend:findings", "post"): Write(frozenset(), kind="none"),
    ("inventory:label", "post"): Write(frozenset(), kind="none"),
    ("inventory:label-qr", "post"): Write(frozenset(), kind="none"),
}


def _accepted_methods(callback) -> set[str] | None:
    """The methods a function view is limited to by ``require_http_methods`` (and kin), else None (any)."""
    fn = callback
    while fn is not None:
        code = getattr(fn, "__code__", None)
        if code is not None and "request_method_list" in code.co_freevars:
            cell = fn.__closure__[code.co_freevars.index("request_method_list")]
            return {m.lower() for m in cell.cell_contents}
        fn = getattr(fn, "__wrapped__", None)
    return None


def write_routes() -> list[tuple[str, str, str]]:
    """(route, name, method) of every write the URL patterns answer, outside the Django admin."""
    out = []
    for route, name, pattern in routes():
        if route.startswith("api/schema") or route.startswith("api/docs") or route.startswith("api/redoc"):
            continue
        view = getattr(pattern.callback, "view_class", None) or getattr(pattern.callback, "cls", None)
        if view is not None:
            methods = [m for m in WRITE_METHODS if hasattr(view, m) and m in view.http_method_names]
        else:
            accepted = _accepted_methods(pattern.callback)
            methods = [m for m in WRITE_METHODS[:1] if accepted is None or m in accepted]
        out += [(route, name, m) for m in methods]
    return out


def test_every_write_route_is_in_the_table():
    """A new route that takes a write (API method or page POST) fails here until WRITES says who may use it."""
    found = {(name, method) for _, name, method in write_routes()}
    missing = sorted(found - set(WRITES))
    assert not missing, "add these write routes to WRITES in tests/tenancy/test_write_matrix.py: " + ", ".join(
        f"{n} {m.upper()}" for n, m in missing
    )
    stale = sorted(set(WRITES) - found)
    assert not stale, f"WRITES names routes that no longer take that write: {stale}"


@pytest.fixture
def world(db) -> World:
    return build()


SKIP_MODELS = {"accounts.changestamp", "sessions.session"}


def _snapshot() -> dict:
    """Every row the project stores, to tell whether a request changed anything at all."""
    out = {}
    for model in apps.get_models():
        label = model._meta.label_lower
        if model._meta.app_label not in {"accounts", "inventory", "scheduling", "inspections", "automation", "reports"}:
            continue
        if label in SKIP_MODELS:
            continue
        rows = model.objects.order_by("pk").values()
        out[label] = [{k: v for k, v in r.items() if k != "last_login"} for r in rows]
    return out


def _changed(before: dict, after: dict) -> list[str]:
    return [label for label in before if before[label] != after[label]]


def _request(client: Client, route: str, method: str, call: Call):
    url = "/" + PARAM.sub(lambda m: str(call.params[m["name"]]), route)
    if call.fmt == "json":
        return getattr(client, method)(url, call.body, content_type="application/json")
    if method == "post":
        return client.post(url, call.body)  # form or multipart: the test client encodes both
    return getattr(client, method)(url)


def _default_call(name: str, route: str, corner: Corner) -> Call:
    params = {m["name"]: FILL[name][m["name"]](corner) for m in PARAM.finditer(route)} if name in FILL else {}
    return Call(params, {}, "form")


def _attempt(world: World, role: str, route: str, name: str, method: str, corner: Corner):
    """(response, tables changed) of one request inside a savepoint that is then rolled back."""
    spec = WRITES[(name, method)]
    client = Client(raise_request_exception=False)
    client.force_login(world.person(role))
    if spec.session is not None:
        session = client.session
        session.update(spec.session(world, corner))
        session.save()
    with transaction.atomic():
        call = spec.call(world, corner) if spec.call else _default_call(name, route, corner)
        before = _snapshot()
        response = _request(client, route, method, call)
        after = _snapshot()
        transaction.set_rollback(True)
    return response, _changed(before, after)


def _is_api(route: str) -> bool:
    return route.startswith("api/")


def _refusal_shape(route: str, response) -> str | None:
    """What is wrong with a refusal's body: under /api/ the one JSON error shape with a sentence."""
    if not _is_api(route):
        return None
    try:
        body = response.json()
    except ValueError:
        return "not JSON"
    if set(body) != {"detail", "errors"} or not str(body["detail"]).strip():
        return f"not the error shape: {body}"
    return None


def _judge(world: World, role: str, route: str, name: str, method: str, side: str) -> list[str]:
    spec = WRITES[(name, method)]
    corner = world.a if side == "ours" else world.x
    response, changed = _attempt(world, role, route, name, method, corner)
    what = f"{role} {method.upper()} /{route} ({side})"
    status = response.status_code
    if status >= 500:
        return [f"{what} -> {status}"]
    if spec.kind == "none":
        return [f"{what} changed {changed}"] if changed else []
    if spec.kind == "self":
        return [f"{what} -> {status}; the person's own session and credentials are theirs"] if status >= 400 else []
    if side == "ours" and role in spec.who:
        if status >= 400 or not changed:
            return [f"{what} -> {status}, changed {changed}: this role may write here"]
        return []
    problems = [f"{what} changed {changed}"] if changed else []
    if side == "ours":
        if status != 403:
            problems.append(f"{what} -> {status}; a record the person may only read is refused with 403")
        elif shape := _refusal_shape(route, response):
            problems.append(f"{what}: refusal {shape}")
        return problems
    refused = {403, 404} | ({400} if spec.in_body else set())
    if spec.per_form and status == 200:
        if {r["status"] for r in response.json()["results"]} != {"refused"}:
            problems.append(f"{what} stored a form of another organisation")
    elif status not in refused:
        problems.append(f"{what} -> {status}; another organisation's record is refused with {sorted(refused)}")
    elif shape := _refusal_shape(route, response):
        problems.append(f"{what}: refusal {shape}")
    return problems


@pytest.mark.parametrize("role", ROLES)
def test_who_may_write_what(world, role):
    """For one role: every write route on our own site A and on the other organisation's site."""
    problems: list[str] = []
    for route, name, method in write_routes():
        spec = WRITES.get((name, method))
        if spec is None:
            continue  # test_every_write_route_is_in_the_table names it
        sides = ["ours"] if spec.kind != "record" or spec.own_org_only else ["ours", "theirs"]
        for side in sides:
            problems += _judge(world, role, route, name, method, side)
    assert not problems, "\n".join(problems)


def test_a_property_manager_cannot_record_a_meter_reading(world):
    """Scenario: the property manager (read-only) posts a bogus high run-hour reading for their own site's unit.

    It is refused with 403 and a message; nothing is stored, so the technician's true reading afterwards is
    accepted (a bogus high one would have refused it as running backwards and moved the schedule)."""
    ahu = world.a.ahu
    count = MeterReading.objects.filter(ahu=ahu).count()
    manager = Client()
    manager.force_login(world.manager)
    res = manager.post(
        "/api/scheduling/meter-readings/",
        {"unit_label": ahu.label_code, "hours": 99999, "taken_at": timezone.now().isoformat()},
        content_type="application/json",
    )
    assert res.status_code == 403
    body = res.json()
    assert set(body) == {"detail", "errors"} and "property managers" in body["detail"]
    assert MeterReading.objects.filter(ahu=ahu).count() == count
    technician = Client()
    technician.force_login(world.technician)
    res = technician.post(
        "/api/scheduling/meter-readings/",
        {"unit_label": ahu.label_code, "hours": 1300, "taken_at": timezone.now().isoformat()},
        content_type="application/json",
    )
    assert res.status_code == 201, res.content
    assert MeterReading.objects.filter(ahu=ahu).count() == count + 1


def test_a_technician_moves_only_their_own_work_and_only_to_start_or_finish(world):
    """A technician may start their own assigned work but not cancel it, nor start a colleague's (403)."""
    own = world.a.open_work_order
    colleagues = WorkOrderFactory(
        ahu=world.a.ahu,
        organisation=world.ours,
        assignee=world.b.technician,
        state=WorkOrder.State.ASSIGNED,
        title="A colleague's visit",
        due_date=own.due_date,
    )
    client = Client()
    client.force_login(world.technician)
    for wo, to_state in ((own, "cancelled"), (colleagues, "in_progress")):
        url = f"/api/scheduling/work-orders/{wo.public_id}/transition/"
        res = client.post(
            url, {"to_state": to_state, "version": wo.version, "reason": "x"}, content_type="application/json"
        )
        assert res.status_code == 403 and res.json()["detail"], res.content
        assert WorkOrder.objects.get(pk=wo.pk).state == WorkOrder.State.ASSIGNED


def test_reports_are_records_of_what_the_person_reads(world):
    """Asking for a PDF of a visible work order is open to the property manager; of a hidden one it is a 404."""
    client = Client()
    client.force_login(world.manager)
    for corner, expected in ((world.a, 202), (world.b, 404)):
        res = client.post(
            "/api/reports/",
            {"kind": "inspection", "parameters": {"work_order": str(corner.work_order.public_id)}},
            content_type="application/json",
        )
        assert res.status_code == expected
    assert Report.objects.filter(requested_by=world.manager).count() == 1
