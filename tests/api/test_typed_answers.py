"""Each answer the API gives matches the shape its schema documents: every documented key there with its type,
no undocumented key, nested shapes included (a `DictField` no longer hides them)."""

import re
from typing import Any

import jsonschema
import pytest
from drf_spectacular.generators import SchemaGenerator

from accounts.services import api_token_issue
from tests.factories.inspections import filter_form, r
from tests.tenancy.world import World, build

pytestmark = pytest.mark.django_db


def _json_schema(node: Any) -> Any:
    """OpenAPI 3.0's schema objects as JSON Schema: `nullable` becomes a null alternative, and an object with
    named properties takes no others."""
    if isinstance(node, list):
        return [_json_schema(n) for n in node]
    if not isinstance(node, dict):
        return node
    out = {k: _json_schema(v) for k, v in node.items() if k not in ("nullable", "readOnly", "writeOnly")}
    if out.get("type") == "object" and "properties" in out and "additionalProperties" not in out:
        out["additionalProperties"] = False
    if node.get("nullable"):
        out = {"anyOf": [out, {"type": "null"}]}
    return out


@pytest.fixture
def world() -> World:
    return build()


@pytest.fixture
def documented() -> dict[str, Any]:
    schema: dict[str, Any] = SchemaGenerator().get_schema(request=None, public=True)  # type: ignore[no-untyped-call]
    return schema


def _check(documented: dict[str, Any], method: str, template: str, response: Any) -> None:
    assert response.status_code < 300, (method, template, response.status_code, response.content[:300])
    answer = documented["paths"][template][method]["responses"][str(response.status_code)]
    body_schema = answer["content"]["application/json"]["schema"]
    root = {**_json_schema(body_schema), "components": _json_schema(documented["components"])}
    jsonschema.validate(response.json(), root)


def _path(template: str, ids: dict[str, object]) -> str:
    return re.sub(r"\{(\w+)\}", lambda m: str(ids[m[1]]), template)


def test_every_read_answers_in_its_documented_shape(world: World, documented: dict[str, Any], client: Any) -> None:
    """Every GET answering JSON, called by a supervisor on the records of their organisation, fits its schema."""
    from tests.security.test_api_fuzz import real_ids

    token = api_token_issue(user=world.supervisor).key
    ids = real_ids(world)
    checked = []
    for template, ops in documented["paths"].items():
        get = ops.get("get")
        if get is None or "application/json" not in get["responses"].get("200", {}).get("content", {}):
            continue
        response = client.get(_path(template, ids.get(template, {})), HTTP_AUTHORIZATION=f"Token {token}")
        _check(documented, "get", template, response)
        checked.append(template)
    assert {"/api/accounts/me/", "/api/inspections/{id}/", "/api/scheduling/today/"} <= set(checked)


def test_sync_and_amendment_answers_are_in_their_documented_shape(
    world: World, documented: dict[str, Any], api_client: Any
) -> None:
    """The sync answer (results with flags, evaluation, findings) and an amendment's (changes, findings) fit."""
    a = world.a
    api_client.force_authenticate(a.technician)
    synced = api_client.post("/api/inspections/sync/", {"forms": [filter_form(a.open_work_order)]}, format="json")
    _check(documented, "post", "/api/inspections/sync/", synced)
    api_client.force_authenticate(world.supervisor)
    body = {
        "reason": "gauge read wrong way round",
        "unit_system": "si",
        "readings": [r("filter_check.dp", 240, a.component)],
    }
    amended = api_client.post(f"/api/inspections/{a.inspection.pk}/amendments/", body, format="json")
    _check(documented, "post", "/api/inspections/{id}/amendments/", amended)
    _check(documented, "get", "/api/inspections/{id}/", api_client.get(f"/api/inspections/{a.inspection.pk}/"))
