"""Property-based API fuzzing with schemathesis against Plenum's own OpenAPI schema.

Every operation in the schema is called with generated input by a signed-in
supervisor holding data: no response may be a server error, and every
documented 4xx carries a message.
"""

import pytest
import schemathesis
from django.core.handlers.wsgi import WSGIHandler
from hypothesis import HealthCheck, settings

from accounts.models import Role
from accounts.services import api_token_issue
from tests.factories import OrganisationFactory, make_full_unit, make_person


@pytest.fixture
def api_schema(db):
    org = OrganisationFactory()
    make_full_unit(building__site__organisation=org)
    supervisor = make_person(organisation=org, role=Role.SUPERVISOR)
    token = api_token_issue(user=supervisor)
    schema = schemathesis.from_wsgi("/api/schema/", WSGIHandler(), headers={"Authorization": f"Token {token.key}"})
    return schema


schema = schemathesis.from_pytest_fixture("api_schema")


@schema.parametrize()
@settings(max_examples=8, deadline=None, suppress_health_check=list(HealthCheck), derandomize=True)
def test_no_server_errors(case):
    """No endpoint answers 5xx to any generated input, and a 4xx says what was wrong."""
    response = case.call_wsgi()
    assert response.status_code < 500, f"{case.method} {case.formatted_path} -> {response.status_code}"
    if 400 <= response.status_code < 500 and response.status_code != 404 and response.get_data():
        body = response.get_json(silent=True)
        assert body, f"{case.method} {case.formatted_path}: a {response.status_code} without a JSON message"
