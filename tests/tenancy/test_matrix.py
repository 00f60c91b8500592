"""A generated tenancy matrix: every URL pattern × every role × our own and another organisation and site.

Every route of ``get_resolver()`` is called, for each role, with the records a
person in that role must not see filled into its path (another organisation's
ids, and for technicians and property managers our own other site's), every
method it answers, and hostile query parameters (``?site=<their id>``,
``?search=<their name>`` …). Nothing may leak: the answer is a refusal
(401/403/404/405, a redirect to sign in), or a page whose body names none of the
forbidden records. A new route with path parameters that this file does not
know how to fill fails the test, so future routes are covered too.
"""

from __future__ import annotations

import re
import secrets
from collections.abc import Callable

import pytest
from django.test import Client
from django.urls import URLPattern, URLResolver, get_resolver

from accounts.models import Role
from frontend.calculators import CALCULATORS
from inspections.models import Amendment, Finding, Inspection, Photo
from inventory.csv_io import KINDS
from inventory.models import AHU, Building, Component, Site
from reports.models import Report
from scheduling.models import TaskDefinition, WorkOrder
from tests.tenancy.world import Corner, World, build, filter_form

pytestmark = pytest.mark.usefixtures("clock")  # the world's work is dated the clock's today

ROLES = [Role.TECHNICIAN, Role.SUPERVISOR, Role.PROPERTY_MANAGER, Role.ADMIN, "anonymous"]
REFUSED = {401, 403, 404, 405}
TEXT_TYPES = ("text/", "application/json", "image/svg+xml", "application/javascript", "application/xml")

# How to fill each route's path parameters from the records of a forbidden corner.
# A value that is not a tenant's record (a CSV kind, a calculator name, a task code of
# the shipped library) is a constant: the body must still name nothing forbidden.
Fill = dict[str, Callable[[Corner], object]]
FILL: dict[str, Fill] = {
    "inventory_api:site-detail": {"pk": lambda c: c.site.pk},
    "inventory_api:building-detail": {"pk": lambda c: c.building.pk},
    "inventory_api:ahu-detail": {"pk": lambda c: c.ahu.pk},
    "inventory_api:ahu-tree": {"pk": lambda c: c.ahu.pk},
    "inventory_api:component-detail": {"pk": lambda c: c.component.pk},
    "inventory_api:import": {"kind": lambda c: KINDS[0] if isinstance(KINDS, list | tuple) else next(iter(KINDS))},
    "inventory_api:export": {"kind": lambda c: KINDS[0] if isinstance(KINDS, list | tuple) else next(iter(KINDS))},
    "inventory_api:import-job": {"public_id": lambda c: c.import_job.public_id},
    "scheduling_api:work-order": {"public_id": lambda c: c.open_work_order.public_id},
    "scheduling_api:work-order-assign": {"public_id": lambda c: c.open_work_order.public_id},
    "scheduling_api:work-order-transition": {"public_id": lambda c: c.open_work_order.public_id},
    "scheduling_api:work-order-schedule": {"public_id": lambda c: c.open_work_order.public_id},
    "scheduling_api:work-order-approve": {"public_id": lambda c: c.open_work_order.public_id},
    "scheduling_api:work-order-reject": {"public_id": lambda c: c.open_work_order.public_id},
    "scheduling_api:task": {"code": lambda c: "filter_check"},
    "inspections_api:checklist": {"public_id": lambda c: c.open_work_order.public_id},
    "inspections_api:photo": {"client_uuid": lambda c: c.photo.client_uuid},
    "inspections_api:photo-thumb": {"client_uuid": lambda c: c.photo.client_uuid},
    "inspections_api:detail": {"pk": lambda c: c.inspection.pk},
    "inspections_api:amend": {"pk": lambda c: c.inspection.pk},
    "inspections_api:resolve-flag": {"pk": lambda c: c.inspection.pk},
    "inspections_api:verify": {"pk": lambda c: c.inspection.pk},
    "reports_api:detail": {"public_id": lambda c: c.report.public_id},
    "reports:download": {"public_id": lambda c: c.report.public_id},
    "inventory:label": {"code": lambda c: c.ahu.label_code},
    "inventory:label-qr": {"code": lambda c: c.ahu.label_code},
    "frontend:unit": {"code": lambda c: c.ahu.label_code},
    "frontend:checklist": {"public_id": lambda c: c.open_work_order.public_id},
    "frontend:checklist_result": {"public_id": lambda c: c.work_order.public_id},
    "frontend:verify": {"public_id": lambda c: c.work_order.public_id},
    "frontend:amend": {"public_id": lambda c: c.work_order.public_id},
    "frontend:start_visit": {"public_id": lambda c: c.work_order.public_id},
    "frontend:assign": {"public_id": lambda c: c.open_work_order.public_id},
    "frontend:registry_unit": {"pk": lambda c: c.ahu.pk},
    "frontend:registry_unit_edit": {"pk": lambda c: c.ahu.pk},
    "frontend:registry_rules": {"pk": lambda c: c.ahu.pk},
    "frontend:registry_unit_qr": {"pk": lambda c: c.ahu.pk, "fmt": lambda c: "png"},
    "frontend:registry_export": {"kind": lambda c: "ahus"},
    "frontend:registry_component_edit": {"pk": lambda c: c.component.pk},
    "frontend:registry_site": {"pk": lambda c: c.site.pk},
    "frontend:registry_building_new": {"pk": lambda c: c.site.pk},
    "frontend:registry_building_edit": {"pk": lambda c: c.building.pk},
    "frontend:registry_unit_move": {"pk": lambda c: c.ahu.pk},
    "frontend:registry_unit_retire": {"pk": lambda c: c.ahu.pk},
    "frontend:registry_component_new": {"pk": lambda c: c.ahu.pk},
    "frontend:registry_component_retire": {"pk": lambda c: c.component.pk},
    "frontend:dashboard_site": {"pk": lambda c: c.site.pk},
    "frontend:work_frost": {"site_pk": lambda c: c.site.pk},
    "frontend:manager_unit": {"pk": lambda c: c.ahu.pk},
    # The corner's filter check passes (no finding): any finding of its unit, else an id nobody has.
    "frontend:manager_finding": {
        "pk": lambda c: Finding.objects.filter(ahu=c.ahu).values_list("pk", flat=True).first() or 2**31 - 1
    },
    "frontend:person_edit": {"pk": lambda c: c.technician.pk},
    "frontend:calc_api": {"name": lambda c: next(iter(CALCULATORS))},
    "automation_api:point-detail": {"pk": lambda c: probe_point(c).pk},
    "automation_api:site-trends": {"pk": lambda c: c.site.pk},
    "automation_api:site-brick": {"pk": lambda c: c.site.pk},
    "automation_api:trend-job": {"public_id": lambda c: probe_trend_job(c).public_id},
    "frontend:fault": {"pk": lambda c: probe_fault(c).pk},
    "frontend:unit_trends": {"pk": lambda c: c.ahu.pk},
    "frontend:site_points": {"pk": lambda c: c.site.pk},
}
# Component labels open the same views as unit labels: try both.
ALSO = {
    "inventory:label": {"code": lambda c: c.component.label_code},
    "inventory:label-qr": {"code": lambda c: c.component.label_code},
    "frontend:unit": {"code": lambda c: c.component.label_code},
}
# The calendar feed's token *is* the key (a capability URL, like a private calendar link):
# whoever holds it gets the feed, so it is tried with guessed and revoked tokens instead.
# A password-reset link is the same kind of key (tests/security/test_signin.py tries wrong and used ones).
CAPABILITY = {"scheduling:calendar", "accounts:password_reset_confirm", "accounts:invitation_confirm"}
# Not called with POST: they change the caller's own session, not anybody's records.
NO_POST = {"frontend:logout", "frontend:login"}

# POST bodies that name a forbidden record, for routes that create things without an id in the path.
Hostile = Callable[[Corner, World], tuple[dict, str]]
HOSTILE: dict[str, Hostile | None] = {
    "inventory_api:site-list": lambda c, w: (
        {"organisation": c.site.organisation.slug, "code": "hijack", "name": "Hijack", "latitude": 1, "longitude": 1},
        "json",
    ),
    "inventory_api:building-list": lambda c, w: ({"site": c.site.pk, "code": "hijack", "name": "Hijack"}, "json"),
    "inventory_api:ahu-list": lambda c, w: ({"building": c.building.pk, "tag": "AHU-HIJACK"}, "json"),
    "inventory_api:component-list": lambda c, w: (
        {"ahu": c.ahu.pk, "kind": "damper", "name": "Hijack", "specs": {"role": "outdoor"}},
        "json",
    ),
    "inventory_api:import": lambda c, w: (
        {"organisation": c.site.organisation.slug, "file": _csv_upload()},
        "multipart",
    ),
    "scheduling_api:meter-readings": lambda c, w: (
        {"unit_label": c.ahu.label_code, "hours": 99999, "taken_at": "2025-01-01T00:00:00Z"},
        "json",
    ),
    "inspections_api:sync": lambda c, w: ({"forms": [filter_form(c.open_work_order)]}, "json"),
    "inspections_api:photo-upload": lambda c, w: (
        {
            "work_order": str(c.open_work_order.public_id),
            "client_uuid": "5d0c5f5e-0000-4000-8000-000000000001",
            "file": _image_upload(),
        },
        "multipart",
    ),
    "reports_api:create": lambda c, w: (
        {"kind": "inspection", "parameters": {"work_order": str(c.work_order.public_id)}},
        "json",
    ),
    # The rest create nothing that belongs to a site: a token, a feed, a calculation.
    "accounts_api:token": None,
    "scheduling_api:calendar-feed": None,
    "bench-baseline": None,
    # A redirect to the API docs (any method): nothing is created.
    "api-redoc": None,
    # Asks for an e-mail to the address's owner, whoever asks, with the same answer whether it exists or not.
    "accounts:password_reset": None,
    "automation_api:point-list": lambda c, w: (
        {"ahu": c.ahu.pk, "name": "HIJACK", "brick_class": "Supply_Air_Temperature_Sensor"},
        "json",
    ),
    "automation_api:brick-import": lambda c, w: (
        {"organisation": c.site.organisation.slug, "file": brick_upload(c)},
        "multipart",
    ),
}


def probe_point(c: Corner):
    """A mapped automation point of the corner's unit (made on first use; its name carries the unit's tag)."""
    from automation.models import Point

    point, _ = Point.objects.get_or_create(
        ahu=c.ahu, name=f"{c.ahu.tag}.SAT", defaults={"brick_class": "Supply_Air_Temperature_Sensor", "unit": "DEG_C"}
    )
    return point


def probe_fault(c: Corner):
    """An open fault of the corner's unit, as the judging writes one (made on first use; titled with the tag)."""
    from django.utils import timezone

    from automation.fault_models import Fault

    now = timezone.now()
    fault, _ = Fault.objects.get_or_create(
        ahu=c.ahu,
        code="FC6",
        state=Fault.State.OPEN,
        defaults={
            "title": f"Probe fault of {c.ahu.tag}",
            "section": "probe",
            "first_seen_at": now,
            "last_seen_at": now,
        },
    )
    return fault


def probe_trend_job(c: Corner):
    """A finished trend import job of the corner's site."""
    from automation.models import TrendImportJob

    job, _ = TrendImportJob.objects.get_or_create(
        site=c.site,
        defaults={"organisation": c.site.organisation, "layout": "wide", "status": "done", "file_name": c.site.code},
    )
    return job


def brick_upload(c: Corner, code: str = "probe-brick"):
    """The corner's site as a Brick model (Turtle) under a new site code, as a file to upload."""
    from django.core.files.uploadedfile import SimpleUploadedFile

    from automation.brick import site_brick_turtle

    text = site_brick_turtle(site=c.site).replace(f'plenum:code "{c.site.code}"', f'plenum:code "{code}"')
    return SimpleUploadedFile("site.ttl", text.encode(), content_type="text/turtle")


def _csv_upload():
    from django.core.files.uploadedfile import SimpleUploadedFile

    return SimpleUploadedFile("sites.csv", b"code,name\nhijack,Hijack\n", content_type="text/csv")


def _image_upload():
    from django.core.files.uploadedfile import SimpleUploadedFile

    from tests.factories.inspections import image_bytes

    return SimpleUploadedFile("p.jpg", image_bytes(), content_type="image/jpeg")


def routes():
    """(route, name, pattern) for every URL pattern outside the Django admin."""

    def walk(patterns, prefix: str, ns: str | None):
        for p in patterns:
            if isinstance(p, URLResolver):
                if p.namespace == "admin":
                    continue
                inner = ":".join(x for x in (ns, p.namespace) if x) or None
                yield from walk(p.url_patterns, prefix + str(p.pattern), inner)
            elif isinstance(p, URLPattern):
                name = f"{ns}:{p.name}" if ns and p.name else p.name or str(p.pattern)
                yield prefix + str(p.pattern), name, p

    return list(walk(get_resolver().url_patterns, "", None))


PARAM = re.compile(r"<(?:(?P<conv>\w+):)?(?P<name>\w+)>")


def _params(route: str) -> list[str]:
    return [m["name"] for m in PARAM.finditer(route)]


def _url(route: str, values: dict) -> str:
    return "/" + PARAM.sub(lambda m: str(values[m["name"]]), route)


def _methods(pattern: URLPattern, name: str) -> list[str]:
    view = getattr(pattern.callback, "view_class", None) or getattr(pattern.callback, "cls", None)
    if view is not None:
        methods = [m for m in ("get", "post", "patch", "put", "delete") if hasattr(view, m)]
    else:
        methods = ["get", "post"]
    return [m for m in methods if not (m == "post" and name in NO_POST)]


def _client(world: World, role: str) -> Client:
    client = Client(raise_request_exception=False)
    user = world.person(role)
    if user is not None:
        client.force_login(user)
    return client


def _body_text(response) -> str:
    kind = response.get("Content-Type", "")
    if not any(t in kind for t in TEXT_TYPES):
        return ""
    content = b"".join(response.streaming_content) if response.streaming else response.content
    return content.decode("utf-8", "replace")


def _leaks(response, corners: list[Corner], sent: str = "") -> list[str]:
    """Forbidden names in the body, except those the request itself sent (an error may quote the input)."""
    text = _body_text(response)
    return [m for c in corners for m in c.markers if m and m in text and m not in sent]


def _snapshot(world: World) -> dict:
    """Everything a forbidden request could have changed."""
    return {
        "sites": list(Site.objects.order_by("pk").values()),
        "buildings": list(Building.objects.order_by("pk").values()),
        "ahus": list(AHU.objects.order_by("pk").values()),
        "components": list(Component.objects.order_by("pk").values("pk", "name", "specs", "ahu_id")),
        "work_orders": list(
            WorkOrder.objects.order_by("pk").values("pk", "state", "assignee_id", "version", "approval", "ahu_id")
        ),
        "inspections": list(Inspection.objects.order_by("pk").values("pk", "state", "flag_resolved_at", "verified_at")),
        "amendments": Amendment.objects.count(),
        "photos": Photo.objects.count(),
        "reports": Report.objects.count(),
        # A supervisor may change our own rules; theirs must stay as they are.
        "tasks": list(TaskDefinition.objects.filter(organisation=world.theirs).values("code", "interval_value")),
    }


GENERIC_BODY = {
    "version": 1,
    "to_state": "cancelled",
    "reason": "tenancy probe",
    "note": "tenancy probe",
    "name": "Hijacked",
    "tag": "AHU-HIJACKED",
    "interval_value": 1,
    "values": {},
}


@pytest.fixture
def world(db) -> World:
    return build()


def _query_attacks(c: Corner) -> list[dict]:
    return [
        {"site": c.site.pk},
        {"site": c.site.code},
        {"site_code": c.site.code},
        {"search": c.site.name[:6]},
        {"search": c.ahu.label_code},
        {"unit": c.ahu.label_code},
        {"organisation": c.site.organisation.slug},
        {"ahu": c.ahu.pk},
        {"building": c.building.pk},
        {"work_order": str(c.work_order.public_id)},
    ]


def test_every_route_with_parameters_has_a_fill_rule():
    """A new route with path parameters fails here until the matrix knows how to fill it."""
    unknown = [
        f"{name} ({route})"
        for route, name, _ in routes()
        if _params(route) and name not in FILL and name not in CAPABILITY
    ]
    assert not unknown, "add these routes to tests/tenancy/test_matrix.py FILL: " + ", ".join(unknown)


def test_every_creating_route_has_a_hostile_body():
    """A new route that takes a POST without an id in its path needs a body naming another tenant's record."""
    unknown = [
        f"{name} ({route})"
        for route, name, p in routes()
        if not _params(route)
        and "post" in _methods(p, name)
        and name not in HOSTILE
        and name not in NO_POST
        and (getattr(p.callback, "view_class", None) or getattr(p.callback, "cls", None))
    ]
    assert not unknown, "add these routes to tests/tenancy/test_matrix.py HOSTILE: " + ", ".join(unknown)


def test_no_media_files_are_served_without_a_check():
    """Uploaded files (photos, signatures, PDFs) are reachable only through views that check access."""
    assert not [route for route, _, _ in routes() if route.startswith("media")]


@pytest.mark.parametrize("role", ROLES)
def test_nothing_of_another_organisation_or_site_leaks(world, role):
    """For one role: every route, filled with forbidden ids, with every method and hostile filters."""
    corners = world.forbidden_for(role)
    before = _snapshot(world)
    problems: list[str] = []
    client = _client(world, role)
    for route, name, pattern in routes():
        params = _params(route)
        if name in CAPABILITY or (params and name not in FILL):
            continue  # unknown routes fail test_every_route_with_parameters_has_a_fill_rule
        methods = _methods(pattern, name)
        for corner in corners:
            fills = [FILL[name], ALSO[name]] if name in ALSO else [FILL.get(name, {})]
            for fill in fills:
                url = _url(route, {p: fill[p](corner) for p in params})
                names_record = bool(params) and name not in {
                    "inventory_api:import",
                    "inventory_api:export",
                    "frontend:registry_export",
                    "scheduling_api:task",
                    "frontend:calc_api",
                }
                for method in methods:
                    if method == "get":
                        variants = [{}] if names_record else [{}, *_query_attacks(corner)]
                        for query in variants:
                            res = client.get(url, query)
                            # A page may repeat the query it was given; that is an echo, not a leak.
                            problems += _judge(res, f"GET {url} {query}", names_record, corners, role, repr(query))
                        continue
                    hostile = HOSTILE.get(name) if not params else None
                    if hostile is not None and corner is not world.x:
                        # Inside our organisation a technician may send a form for any of its work orders
                        # (stored and flagged, never dropped: inspections/SYNC.md); the bodies name their records.
                        continue
                    if hostile is not None:
                        body, fmt = hostile(corner, world)
                        if fmt == "json":
                            res = client.post(url, body, content_type="application/json")
                        else:
                            res = client.post(url, body)
                        problems += _judge_create(res, f"POST {url}", name, corners, role, repr(body))
                        continue
                    call = getattr(client, method)
                    res = call(url, GENERIC_BODY, content_type="application/json")
                    problems += _judge(res, f"{method.upper()} {url}", names_record, corners, role)
                    if name.startswith("frontend:") and method == "post":
                        res = client.post(url, {k: str(v) for k, v in GENERIC_BODY.items() if k != "values"})
                        problems += _judge(res, f"POST(form) {url}", names_record, corners, role)
    assert not problems, "\n".join(problems[:40])
    after = _snapshot(world)
    for key in before:
        assert before[key] == after[key] or (key == "work_orders" and _only_own_changed(before, after, corners)), (
            f"{role}: forbidden requests changed {key}"
        )


def _only_own_changed(before, after, corners) -> bool:
    """Our supervisor may legitimately change our own work through the generic body (cancel it, or plan the
    organisation's work, which may add tasks to our open visits); the work of corners the role may not see
    does not move."""
    forbidden = {c.open_work_order.pk for c in corners} | {c.work_order.pk for c in corners}
    old = {r["pk"]: r for r in before["work_orders"]}
    return all(old.get(r["pk"]) == r for r in after["work_orders"] if r["pk"] in forbidden)


def _judge(res, what: str, names_record: bool, corners, role, sent: str = "") -> list[str]:
    if res.status_code >= 500:
        return [f"{role}: {what} -> {res.status_code}"]
    if names_record and res.status_code not in REFUSED and not (role == "anonymous" and res.status_code == 302):
        return [f"{role}: {what} -> {res.status_code}; a forbidden record must be refused"]
    leaked = _leaks(res, corners, sent)
    return [f"{role}: {what} -> {res.status_code} shows {leaked}"] if leaked else []


def _judge_create(res, what: str, name: str, corners, role, sent: str) -> list[str]:
    if res.status_code >= 500:
        return [f"{role}: {what} -> {res.status_code}"]
    if name == "inspections_api:sync" and res.status_code == 200:
        statuses = [x["status"] for x in res.json()["results"]]
        return [] if statuses == ["refused"] else [f"{role}: {what} stored a form of another organisation"]
    if 200 <= res.status_code < 300:
        return [f"{role}: {what} -> {res.status_code}; creating into a forbidden record must be refused"]
    leaked = _leaks(res, corners, sent)
    return [f"{role}: {what} -> {res.status_code} shows {leaked}"] if leaked else []


def test_sequential_ids_of_another_organisation_are_refused(world):
    """Routes with a numeric id check access on every object: every id the person may not see is refused."""
    from automation.models import Point
    from automation.selectors import points_visible_to
    from inspections.selectors import findings_visible_to, inspections_visible_to
    from inventory.selectors import ahus_visible_to, buildings_visible_to, components_visible_to, sites_visible_to

    models = {
        "inventory_api:site-detail": (Site, sites_visible_to),
        "inventory_api:building-detail": (Building, buildings_visible_to),
        "inventory_api:ahu-detail": (AHU, ahus_visible_to),
        "inventory_api:ahu-tree": (AHU, ahus_visible_to),
        "inventory_api:component-detail": (Component, components_visible_to),
        "inspections_api:detail": (Inspection, inspections_visible_to),
        "frontend:registry_unit": (AHU, ahus_visible_to),
        "frontend:registry_component_edit": (Component, components_visible_to),
        "frontend:dashboard_site": (Site, sites_visible_to),
        "frontend:manager_unit": (AHU, ahus_visible_to),
        "frontend:manager_finding": (Finding, findings_visible_to),
        "automation_api:point-detail": (Point, points_visible_to),
        "automation_api:site-brick": (Site, sites_visible_to),
    }
    int_routes = [(route, name) for route, name, _ in routes() if "<int:" in route]
    unknown = [name for _, name in int_routes if name not in models and name not in FILL]
    assert not unknown
    problems = []
    for role in (Role.TECHNICIAN, Role.PROPERTY_MANAGER, Role.SUPERVISOR):
        user = world.person(role)
        client = _client(world, role)
        for route, name in int_routes:
            if name not in models:
                continue
            model, visible_to = models[name]
            visible = set(visible_to(user=user).values_list("pk", flat=True))
            # Every id that exists, and two beyond each end. On PostgreSQL ids keep counting across the run's
            # earlier tests (sequences are not reset), so starting at 1 would only add requests for nothing.
            top = model.objects.order_by("-pk").values_list("pk", flat=True).first() or 0
            low = model.objects.order_by("pk").values_list("pk", flat=True).first() or 1
            for pk in range(max(1, low - 2), top + 3):
                if pk in visible:
                    continue
                res = client.get(_url(route, {"pk": pk}))
                if res.status_code not in REFUSED:
                    problems.append(f"{role}: GET {_url(route, {'pk': pk})} -> {res.status_code}")
    assert not problems, "\n".join(problems)


def test_public_ids_in_urls_are_random(world):
    """Work orders, reports, photos and inspections' forms are named by random UUIDs, label codes by random text."""
    for obj in (world.a.work_order, world.a.report, world.a.photo, world.a.inspection):
        value = getattr(obj, "public_id", None) or obj.client_uuid
        assert value.version == 4
    codes = [world.a.ahu.label_code, world.b.ahu.label_code, world.x.ahu.label_code]
    assert len(set(codes)) == 3 and all(len(c) >= 7 for c in codes)


def test_calendar_feed_answers_only_its_own_unrevoked_token(world):
    """A guessed or revoked calendar token is a 404; the token carries at least 256 bits of randomness."""
    from scheduling.services import calendar_feed_issue

    client = Client()
    token = world.x.feed.token
    assert len(token) >= 43  # token_urlsafe(32): 32 random bytes
    assert client.get(f"/calendar/{token}.ics").status_code == 200
    assert client.get(f"/calendar/{secrets.token_urlsafe(32)}.ics").status_code == 404
    assert client.get(f"/calendar/{token[:-1]}.ics").status_code == 404
    calendar_feed_issue(user=world.x.technician)  # revokes the old one
    assert client.get(f"/calendar/{token}.ics").status_code == 404
    # The feed of our technician shows only our technician's own visits.
    mine = calendar_feed_issue(user=world.technician)
    body = client.get(f"/calendar/{mine.token}.ics").content.decode()
    assert world.a.ahu.tag in body
    assert not [m for c in (world.b, world.x) for m in c.markers if m in body]


def test_django_admin_is_closed_to_people_who_are_not_staff(world):
    """Every role of the app (none is staff) is sent to the admin's login, even for another tenant's record."""
    from django.contrib import admin
    from django.urls import reverse

    for role in ROLES:
        client = _client(world, role)
        urls = [reverse("admin:index")]
        for model in admin.site._registry:
            info = (model._meta.app_label, model._meta.model_name)
            urls.append(reverse("admin:{}_{}_changelist".format(*info)))
            first = model.objects.order_by("-pk").first()
            if first is not None:
                urls.append(reverse("admin:{}_{}_change".format(*info), args=[first.pk]))
        for url in urls:
            res = client.get(url)
            assert res.status_code == 302 and "/admin/login/" in res["Location"], (role, url, res.status_code)
