"""Every API refusal has one flat shape: ``errors`` maps a dotted field path to plain sentences, and ``detail``
names them without Python's repr (a nested field used to read "values: {'t_outdoor_c': [ErrorDetail(...)]}")."""

import pytest

from config.api import flat_errors
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
