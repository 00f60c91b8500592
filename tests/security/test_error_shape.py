"""Every API refusal has one flat shape: ``errors`` maps a dotted field path to plain sentences, and ``detail``
names them without Python's repr (a nested field used to read "values: {'t_outdoor_c': [ErrorDetail(...)]}")."""

from typing import Any

import pytest
from drf_spectacular.generators import SchemaGenerator

from accounts.api_errors import ErrorOutput
from config.api import error_body, flat_errors
from tests.factories.accounts import OrganisationFactory, make_person

pytestmark = pytest.mark.django_db


def test_nested_errors_flatten_to_dotted_fields():
    assert flat_errors({"values": {"t": ["bad"]}, "forms": [{}, {"x": ["no"]}], "n": "one"}) == {
        "values.t": ["bad"],
        "forms.1.x": ["no"],
        "n": ["one"],
    }


def test_a_nested_refusal_reads_plainly(api_client):
    person = make_person(organisation=OrganisationFactory(), role="technician")
    api_client.force_authenticate(person)
    res = api_client.post(
        "/api/calc/oa-temperatures/",
        data='{"values": {"t_outdoor_c": 1e309, "t_return_c": 22, "t_mixed_c": 15}}',
        content_type="application/json",
    )
    assert res.status_code == 400, res.content
    body = res.json()
    assert "ErrorDetail" not in body["detail"] and "{" not in body["detail"], body
    assert all(isinstance(v, list) and all(isinstance(m, str) for m in v) for v in body["errors"].values()), body


# The shapes a documented refusal may have: the one error shape, one built on it, a refused file's rows, a refused
# Brick model's problems, and a stale version's 409 (the current version instead of field errors).
ERROR_SHAPES = {"ErrorOutput", "AssignmentWarningOutput", "RowErrorsOutput", "BrickProblemsOutput", "ConflictOutput"}


def _schema() -> dict[str, Any]:
    schema: dict[str, Any] = SchemaGenerator().get_schema(request=None, public=True)  # type: ignore[no-untyped-call]
    return schema


def test_the_documented_error_shape_is_the_body_the_api_builds() -> None:
    """The schema's error shape has exactly the keys of ``config.api.error_body``, every one present, and
    ``errors`` maps each field to its sentences."""
    body = error_body(detail="Grace days: 366 is not allowed", errors={"grace_days": ["allowed: 0 to 365"]})
    assert dict(ErrorOutput(body).data) == body
    documented = _schema()["components"]["schemas"]["ErrorOutput"]
    assert sorted(documented["properties"]) == sorted(documented["required"]) == sorted(body)
    assert documented["properties"]["errors"]["additionalProperties"] == {"type": "array", "items": {"type": "string"}}


def test_every_documented_refusal_uses_one_of_the_shared_error_shapes() -> None:
    """Each 4xx in the schema names a shared error shape, and no other component restates the error shape (a
    `detail` with an `errors` map) under its own name."""
    schema = _schema()
    named = set()
    for ops in schema["paths"].values():
        for op in ops.values():
            for code, response in op.get("responses", {}).items():
                if str(code).startswith("4"):
                    named |= {c["schema"]["$ref"].rsplit("/", 1)[-1] for c in response.get("content", {}).values()}
    assert named <= ERROR_SHAPES, named - ERROR_SHAPES
    copies = {
        name
        for name, component in schema["components"]["schemas"].items()
        if component.get("properties", {}).get("detail")
        and component["properties"].get("errors", {}).get("type") == "object"
    }
    assert copies == {"ErrorOutput", "AssignmentWarningOutput"}
