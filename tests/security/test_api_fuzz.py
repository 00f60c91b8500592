"""Property-based API fuzzing with schemathesis against Plenum's own OpenAPI schema.

Every operation in ``/api/schema/`` is called with generated input by a
signed-in supervisor whose organisation holds data (sites, a unit with
components, work orders, a synced inspection, a photo, a report). Operations
with ids in their path are called twice per example: with the generated ids
and with the ids of real records, so the generated bodies reach the code
behind the lookup. No response may be a server error; every 4xx carries a
message, is documented in the schema, and a 400 names the field it is about. Examples are bounded and
derandomized, so a failure reproduces.

Generated input alone never sends what a hostile client does (JSON cannot carry NaN, and a format strategy
may only give well-formed strings), so a deterministic mutator (tests/security/hostile.py) follows: every field
of a valid body of every operation and every query parameter, in turn, holds NaN, ±Infinity, 1e309, NUL and
control characters, years 1 and 9999, 2³¹ and 2⁶³, deep nesting or the wrong type. A refusal saves nothing
(row counts), is JSON with a message, and names the field; records a fair-but-odd value made are read back.
The forms and the CSV importers get the same values in test_form_fuzz.py and test_csv_fuzz.py.
"""

import datetime as dt
import urllib.parse
from collections.abc import Callable

import pytest
import schemathesis
from django.core import signals
from django.core.handlers.wsgi import WSGIHandler
from django.db import close_old_connections
from django.urls import Resolver404, resolve
from hypothesis import HealthCheck, settings
from hypothesis import strategies as st
from schemathesis.specs.openapi.checks import status_code_conformance

from accounts.services import api_token_issue
from frontend.calculators import CALCULATORS
from inventory.csv_io import KINDS
from tests.tenancy.test_matrix import probe_point, probe_trend_job
from tests.tenancy.world import World, build

EXAMPLES = 8
# Our date and date-time strategies below replace hypothesis-jsonschema's own on purpose.
pytestmark = pytest.mark.filterwarnings("ignore:Overriding standard format")

# Generated dates and times include the extreme ones (years 1 and 9999) beside ordinary ones. Formats can only
# give well-formed strings (hypothesis-jsonschema checks each against its format), so NUL, NaN, 1e309, wrong types
# and malformed dates are sent by the deterministic mutator below (test_no_server_error_for_any_hostile_value_...).
schemathesis.openapi.format("date", st.sampled_from(["0001-01-01", "9999-12-31"]) | st.dates().map(str))
schemathesis.openapi.format(
    "date-time",
    st.sampled_from(["0001-01-01T00:00:00+00:00", "9999-12-31T23:59:59+00:00"])
    | st.datetimes(timezones=st.just(dt.UTC)).map(lambda d: d.isoformat()),
)


@pytest.fixture
def fuzz_world(db) -> World:
    return build()


@pytest.fixture
def api_schema(fuzz_world):
    # Like Django's test client: a bare WSGIHandler would close the test's database connection after each
    # request (its transaction is not in autocommit), which on PostgreSQL ends the test's data.
    signals.request_started.disconnect(close_old_connections)
    signals.request_finished.disconnect(close_old_connections)
    token = api_token_issue(user=fuzz_world.supervisor)
    yield schemathesis.from_wsgi("/api/schema/", WSGIHandler(), headers={"Authorization": f"Token {token.key}"})
    signals.request_started.connect(close_old_connections)
    signals.request_finished.connect(close_old_connections)


schema = schemathesis.from_pytest_fixture("api_schema")


def real_ids(world: World) -> dict[str, dict[str, object]]:
    """Path parameters of real records of the supervisor's own organisation, by path template."""
    a = world.a
    wo = str(a.open_work_order.public_id)
    out = {
        "/api/calc/{name}/": {"name": next(iter(CALCULATORS))},
        "/api/inventory/export/{kind}/": {"kind": next(iter(KINDS))},
        "/api/inventory/import/{kind}/": {"kind": next(iter(KINDS))},
        "/api/inventory/import-jobs/{public_id}/": {"public_id": str(a.import_job.public_id)},
        "/api/inventory/sites/{id}/": {"id": a.site.pk},
        "/api/inventory/buildings/{id}/": {"id": a.building.pk},
        "/api/inventory/ahus/{id}/": {"id": a.ahu.pk},
        "/api/inventory/ahus/{id}/tree/": {"id": a.ahu.pk},
        "/api/inventory/components/{id}/": {"id": a.component.pk},
        "/api/reports/{public_id}/": {"public_id": str(a.report.public_id)},
        "/api/scheduling/tasks/{code}/": {"code": "filter_check"},
        "/api/inspections/photos/{client_uuid}/": {"client_uuid": str(a.photo.client_uuid)},
        "/api/inspections/photos/{client_uuid}/thumbnail/": {"client_uuid": str(a.photo.client_uuid)},
        "/api/inspections/work-orders/{public_id}/checklist/": {"public_id": wo},
        "/api/automation/points/{id}/": {"id": probe_point(a).pk},
        "/api/automation/sites/{id}/trends/": {"id": a.site.pk},
        "/api/automation/sites/{id}/brick/": {"id": a.site.pk},
        "/api/automation/trend-jobs/{public_id}/": {"public_id": str(probe_trend_job(a).public_id)},
    }
    for suffix in ("", "amendments/", "resolve-flag/", "verify/"):
        out[f"/api/inspections/{{id}}/{suffix}"] = {"id": a.inspection.pk}
    for suffix in ("", "approve/", "assign/", "reject/", "schedule/", "transition/"):
        out[f"/api/scheduling/work-orders/{{public_id}}/{suffix}"] = {"public_id": wo}
    return out


def _routed(path: str) -> bool:
    try:
        resolve(urllib.parse.unquote(path))
    except Resolver404:
        return False
    return True


def check_answer(case, response) -> None:
    what = f"{case.method} {case.formatted_path}"
    assert response.status_code < 500, f"{what} -> {response.status_code}: {response.get_data()[:500]!r}"
    if not 400 <= response.status_code < 500:
        return
    if response.status_code == 404 and not _routed(case.formatted_path):
        return  # an id the URL converter refuses (e.g. -1 for an integer): no view is reached
    # Every 4xx a view gives must be documented in its extend_schema.
    case.validate_response(response, checks=(status_code_conformance,))
    body = response.get_json(silent=True)
    assert isinstance(body, dict) and body.get("detail"), f"{what}: a {response.status_code} without a message"
    if response.status_code == 400 and "parse error" not in str(body["detail"]).lower():
        errors = body.get("errors")
        assert errors, f"{what}: a 400 that names no field: {body}"
        assert all(isinstance(k, str) and k for k in (errors if isinstance(errors, dict) else {"rows": 1})), body


def test_every_path_with_ids_has_real_ids(fuzz_world, api_schema):
    """A new operation with path parameters fails here until it is given ids of real records."""
    templated = {op.path for op in (r.ok() for r in api_schema.get_all_operations()) if "{" in op.path}
    assert templated - set(real_ids(fuzz_world)) == set()


@schema.parametrize()
@settings(max_examples=EXAMPLES, deadline=None, suppress_health_check=list(HealthCheck), derandomize=True)
def test_no_server_errors(case, fuzz_world):
    """No endpoint answers 5xx to any generated input, and a 4xx says what was wrong, naming the field."""
    check_answer(case, _call(case, fuzz_world))
    real = real_ids(fuzz_world).get(case.operation.path)
    if real:
        case.path_parameters = {**(case.path_parameters or {}), **real}
        check_answer(case, _call(case, fuzz_world))


def _call(case, world: World):
    # The fixtures are shared by every operation and the token routes revoke or rotate the token,
    # so each call carries the supervisor's current one (else everything after them would be a 401).
    token = api_token_issue(user=world.supervisor).key
    return case.call_wsgi(headers={"Authorization": f"Token {token}"})


# ---------------------------------------------------------------------------
# Hostile values, field by field (deterministic: every operation × every field × every hostile value)
# ---------------------------------------------------------------------------
# Tables whose row counts must not change when a request is refused (nothing half-saved).
COUNTED = (
    "inventory.Site",
    "inventory.Building",
    "inventory.AHU",
    "inventory.Component",
    "scheduling.WorkOrder",
    "scheduling.WorkOrderTask",
    "scheduling.MeterReading",
    "inspections.Inspection",
    "inspections.Reading",
    "inspections.Photo",
    "reports.Report",
)


def row_counts() -> dict[str, int]:
    """Rows of each COUNTED table, in one query (it runs after every refused request)."""
    from django.apps import apps
    from django.db import connection

    tables = [apps.get_model(label)._meta.db_table for label in COUNTED]
    sql = "SELECT " + ", ".join(f"(SELECT COUNT(*) FROM {connection.ops.quote_name(t)})" for t in tables)  # noqa: S608
    with connection.cursor() as cursor:
        cursor.execute(sql)
        return dict(zip(COUNTED, cursor.fetchone(), strict=True))


def _detail(client, path: str) -> dict:
    response = client.get(path)
    assert response.status_code == 200, (path, response.status_code)
    return response.json()


def _writable(schema_doc: dict, method: str, path: str) -> list[str]:
    content = schema_doc["paths"][path][method].get("requestBody", {}).get("content", {})
    ref = next(iter(content.values()))["schema"]["$ref"].rsplit("/", 1)[-1]
    return list(schema_doc["components"]["schemas"][ref]["properties"])


def valid_bodies(world: World, client, schema_doc: dict) -> dict[tuple[str, str], object]:
    """A valid JSON body for every operation that takes one, by (method, path template); a callable is read
    again before each call (a work order's version moves on when a hostile value is wrongly accepted)."""
    from frontend.calculators import CALCULATORS
    from scheduling.models import WorkOrder
    from tests.factories.inspections import r
    from tests.tenancy.world import filter_form

    a = world.a

    def registry(kind: str, pk: int, method: str, path: str, **changes) -> dict:
        shown = _detail(client, f"/api/inventory/{kind}/{pk}/")
        keep = _writable(schema_doc, method, path)
        return {k: v for k, v in {**shown, **changes}.items() if k in keep and v is not None}

    def version() -> int:
        return WorkOrder.objects.get(pk=a.open_work_order.pk).version

    made = iter(range(1, 10**6))

    def fresh(kind: str, pk: int, key: str) -> Callable[[], dict]:
        # A new code each call: a hostile value that is fair text (a date as a name) makes a record, and the
        # next call must not be refused only for repeating its code.
        shown = registry(kind, pk, "post", f"/api/inventory/{kind}/")
        return lambda: {**shown, key: f"fz{next(made)}"}

    bodies: dict[tuple[str, str], object] = {}
    for kind, pk, key in (
        ("sites", a.site.pk, "code"),
        ("buildings", a.building.pk, "code"),
        ("ahus", a.ahu.pk, "tag"),
        ("components", a.component.pk, "name"),
    ):
        bodies[("post", f"/api/inventory/{kind}/")] = fresh(kind, pk, key)
        one = f"/api/inventory/{kind}/{{id}}/"
        bodies[("patch", one)] = registry(kind, pk, "patch", one)
    assert next(iter(CALCULATORS)) == "oa-temperatures"  # the calculator real_ids() names
    bodies[("post", "/api/calc/{name}/")] = {"values": {"t_outdoor_c": 0, "t_return_c": 20, "t_mixed_c": 16}}
    bodies[("post", "/api/inspections/{id}/amendments/")] = {
        "reason": "gauge read wrong way round",
        "unit_system": "si",
        "readings": [r("filter_check.dp", 240, a.component)],
    }
    bodies[("post", "/api/inspections/{id}/resolve-flag/")] = {"note": "checked on site"}
    bodies[("post", "/api/inspections/sync/")] = lambda: {
        "forms": [filter_form(a.open_work_order)],
        "sent_at": "2025-01-01T08:00:00Z",
    }
    bodies[("post", "/api/reports/")] = {
        "kind": "inspection",
        "parameters": {"work_order": str(a.work_order.public_id)},
        "pdfa": False,
    }
    bodies[("post", "/api/scheduling/meter-readings/")] = {
        "unit_label": a.ahu.label_code,
        "component_label": "",
        "hours": 100,
        "taken_at": "2025-01-01T08:00:00Z",
        "is_reset": False,
    }
    bodies[("patch", "/api/scheduling/tasks/{code}/")] = {
        "interval_value": 3,
        "interval_unit": "months",
        "anchor": "completion",
        "grace_days": 7,
        "run_hours": 2000,
        "lead_days": 7,
        "estimated_minutes": 30,
        "enabled": True,
    }
    # A new point name each call, as for the registry: a wrongly accepted hostile value makes a point.
    bodies[("post", "/api/automation/points/")] = lambda: {
        "ahu": a.ahu.pk,
        "name": f"fz{next(made)}",
        "brick_class": "Supply_Air_Temperature_Sensor",
        "unit": "",
    }
    bodies[("patch", "/api/automation/points/{id}/")] = lambda: {"name": f"fz{next(made)}"}
    wo = "/api/scheduling/work-orders/{public_id}/"
    day = (a.open_work_order.due_date).isoformat()
    bodies[("post", wo + "approve/")] = lambda: {"version": version()}
    bodies[("post", wo + "reject/")] = lambda: {"version": version(), "reason": "not needed"}
    bodies[("post", wo + "assign/")] = lambda: {"version": version(), "assignee": a.technician.pk, "scheduled_for": day}
    bodies[("post", wo + "schedule/")] = lambda: {"version": version(), "scheduled_for": day}
    bodies[("post", wo + "transition/")] = lambda: {"version": version(), "to_state": "in_progress", "reason": "start"}
    return bodies


def _operations(schema_doc: dict):
    for path, ops in schema_doc["paths"].items():
        for method, op in ops.items():
            if method in ("get", "post", "put", "patch", "delete"):
                yield method, path, op


def _fill(path: str, world: World) -> str:
    params = real_ids(world).get(path, {})
    for key, value in params.items():
        path = path.replace("{" + key + "}", urllib.parse.quote(str(value)))
    return path


def _judge(
    what: str, response, field: str, before: dict[str, int], *, strict: bool = False, base_keys: frozenset = frozenset()
) -> list[str]:
    """What is wrong with the answer to one hostile request (an empty list when nothing is).

    A 400 must name a field. For a value no field takes (``strict``: NaN, ±Infinity, NUL, a list or object where
    a value is) it must name the field that holds it (or, nested, a key above it), or ``body`` when the JSON itself
    is refused; a fair value (a date as a note, -1) may be refused for what it means to another field. Fields the
    valid body is refused for anyway (``base_keys``: a state the record is not in) may be named instead."""
    problems = []
    status = response.status_code
    if status >= 500:
        return [f"{what} -> {status}: {response.content[:300]!r}"]
    if status >= 400:
        after = row_counts()
        if after != before:
            changed = {k: (before[k], after[k]) for k in after if after[k] != before[k]}
            problems.append(f"{what} -> {status} but rows changed: {changed}")
        try:
            body = response.json()
        except ValueError:
            return [*problems, f"{what} -> {status} is not JSON: {response.content[:200]!r}"]
        if not (isinstance(body, dict) and body.get("detail")):
            problems.append(f"{what} -> {status} without a message: {body!r:.300}")
        elif status == 400 and field != "(body)" and "parse error" not in str(body["detail"]).lower():
            errors = body.get("errors")
            names = [part for part in field.split(".") if not part.isdigit()]
            keys = " ".join(str(key) for key in errors) if isinstance(errors, dict) else ""
            if not (keys and all(isinstance(k, str) and k for k in errors)):
                problems.append(f"{what} -> 400 naming no field: {body!r:.300}")
            elif strict and not ({"body", *base_keys} & set(errors) or any(name in keys for name in names)):
                problems.append(f"{what} -> 400 naming another field than {field!r}: {body!r:.300}")
    return problems


def test_no_server_error_for_any_hostile_value_in_any_field(fuzz_world):
    """Each field of every JSON body and each query parameter of every operation, in turn, holds NaN, ±Infinity,
    1e309, NUL and control characters, years 1 and 9999, 2³¹ and 2⁶³, deep nesting or the wrong type: no answer
    is a 5xx, a refusal saves nothing (row counts unchanged) and is JSON with a message, and a 400 names the field.
    """
    from django.test import Client

    from tests.security.hostile import TEXT_VALUES, dumps, mutations, nonsense, replaced, value_at

    client = Client(raise_request_exception=False)
    client.force_login(fuzz_world.supervisor)
    schema_doc = client.get("/api/schema/", {"format": "json"}).json()
    bodies = valid_bodies(fuzz_world, client, schema_doc)
    problems: list[str] = []
    made: list[tuple[str, str]] = []  # (detail path, the hostile request that made it)
    counts = row_counts()
    for method, template, op in _operations(schema_doc):
        if template.startswith("/api/accounts/token/"):
            continue  # no body, no query; revoking would sign the client out (test_auth covers the route)
        path = _fill(template, fuzz_world)
        call = getattr(client, method)
        for param in (p["name"] for p in op.get("parameters", []) if p["in"] == "query"):
            for value in TEXT_VALUES:
                response = call(f"{path}?{urllib.parse.urlencode({param: value})}")
                problems += _judge(f"{method.upper()} {template} ?{param}={value!r:.40}", response, param, counts)
                counts = counts if response.status_code >= 400 else row_counts()
        content = op.get("requestBody", {}).get("content", {})
        if "application/json" not in content:
            continue
        assert (method, template) in bodies, f"{method.upper()} {template} has no valid body in valid_bodies()"
        base = bodies[(method, template)]
        # The sync's readings are fuzzed value by value in tests/inspections/test_sync_hostile.py; here to the form.
        depth = 3 if template == "/api/inspections/sync/" else 8
        probe = call(path, dumps(base() if callable(base) else base), content_type="application/json")
        assert probe.status_code < 500, f"{method.upper()} {template} with its valid body -> {probe.status_code}"
        counts = row_counts()
        base_keys = frozenset(probe.json().get("errors") or {}) if probe.status_code == 400 else frozenset()
        for where, value in mutations(base() if callable(base) else base, max_depth=depth):
            base_body = base() if callable(base) else base
            body = replaced(base_body, where, value)
            response = call(path, dumps(body), content_type="application/json")
            field = ".".join(map(str, where)) or "(body)"
            what = f"{method.upper()} {template} {field}={value!r:.40}"
            strict = nonsense(value, value_at(base_body, where) if where else None)
            problems += _judge(what, response, field, counts, strict=strict, base_keys=base_keys)
            counts = counts if response.status_code >= 400 else row_counts()
            if response.status_code == 201 and template.startswith("/api/inventory/"):
                made.append((f"{template}{response.json()['id']}/", what))
    assert made, "no hostile value was fair enough to make a record: the read-back below would read nothing new"
    problems += _read_back(client, schema_doc, fuzz_world, made)
    assert not problems, f"{len(problems)} problems:\n" + "\n".join(problems[:60])


def _read_back(client, schema_doc: dict, world: World, made: list[tuple[str, str]]) -> list[str]:
    """Create, then read: every record a hostile value made (a date as a name, control characters as a note...)
    is read back by its detail (and a unit by its tree, page and label page), and every list, export and page
    that shows records is read once more. None of them may answer 5xx."""
    from inventory.models import AHU

    problems = []
    reads = [(path, what) for path, what in made]
    reads += [(path + "tree/", what) for path, what in made if "/ahus/" in path]
    for path, what in made:
        if "/ahus/" in path:
            pk = int(path.rstrip("/").rsplit("/", 1)[-1])
            unit = AHU.objects.get(pk=pk)
            reads += [(f"/registry/unit/{pk}/", what), (f"/u/{unit.label_code}/", what)]
    for method, template, _op in _operations(schema_doc):
        if (method == "get" and "{" not in template) or template == "/api/inventory/export/{kind}/":
            for kind in KINDS if "{kind}" in template else ("",):
                reads.append((template.replace("{kind}", kind), "(after the hostile writes)"))
    reads += [(page, "(after the hostile writes)") for page in ("/board/", "/registry/", "/findings/", "/records/")]
    for path, what in reads:
        response = client.get(path)
        if response.status_code >= 500:
            problems.append(f"GET {path} of a record made by {what} -> {response.status_code}")
    return problems


def test_multipart_fields_refuse_hostile_values_without_a_server_error(fuzz_world):
    """The text fields of the two upload operations (a photo: its client id and work order; a registry CSV: its
    organisation, dry run and background switches), in turn, hold each hostile text beside a valid file: no 5xx,
    a refusal saves nothing and is JSON with a message."""
    import uuid

    from django.core.files.uploadedfile import SimpleUploadedFile
    from django.test import Client

    from tests.factories.inspections import image_bytes
    from tests.security.hostile import TEXT_VALUES

    a = fuzz_world.a
    uploads = {
        "/api/inspections/photos/": (
            fuzz_world.technician,
            lambda: {
                "file": SimpleUploadedFile("p.jpg", image_bytes(), content_type="image/jpeg"),
                "client_uuid": str(uuid.uuid4()),
                "work_order": str(a.open_work_order.public_id),
            },
        ),
        "/api/inventory/import/sites/": (
            fuzz_world.supervisor,
            lambda: {
                "file": SimpleUploadedFile("s.csv", b"code,name\r\n", content_type="text/csv"),
                "organisation": fuzz_world.ours.slug,
                "dry_run": "true",
                "background": "false",
            },
        ),
    }
    problems: list[str] = []
    for path, (person, valid) in uploads.items():
        client = Client(raise_request_exception=False)
        client.force_login(person)
        accepted = client.post(path, valid())
        assert accepted.status_code in (200, 201), (path, accepted.content[:300])  # the valid upload is taken
        for name in [n for n in valid() if n != "file"]:
            for value in TEXT_VALUES:
                counts = row_counts()
                response = client.post(path, {**valid(), name: value})
                problems += _judge(f"POST {path} {name}={value!r:.40}", response, name, counts)
    assert not problems, f"{len(problems)} problems:\n" + "\n".join(problems[:60])
