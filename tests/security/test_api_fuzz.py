"""Property-based API fuzzing with schemathesis against Plenum's own OpenAPI schema.

Every operation in ``/api/schema/`` is called with generated input by a
signed-in supervisor whose organisation holds data (sites, a unit with
components, work orders, a synced inspection, a photo, a report). Operations
with ids in their path are called twice per example: with the generated ids
and with the ids of real records, so the generated bodies reach the code
behind the lookup. No response may be a server error; every 4xx carries a
message, is documented in the schema, and a 400 names the field it is about. Examples are bounded so the
whole run stays well under a minute.
"""

import urllib.parse

import pytest
import schemathesis
from django.core import signals
from django.core.handlers.wsgi import WSGIHandler
from django.db import close_old_connections
from django.urls import Resolver404, resolve
from hypothesis import HealthCheck, settings
from schemathesis.specs.openapi.checks import status_code_conformance

from accounts.services import api_token_issue
from frontend.calculators import CALCULATORS
from inventory.csv_io import KINDS
from tests.tenancy.world import World, build

EXAMPLES = 8


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
    }
    for suffix in ("", "amendments/", "resolve-flag/", "verify/"):
        out[f"/api/inspections/{{id}}/{suffix}"] = {"id": a.inspection.pk}
    for suffix in ("", "approve/", "assign/", "schedule/", "transition/"):
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
