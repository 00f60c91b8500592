"""Query strings with NUL or other control characters are refused before any view reads them
(config.query.QueryControlCharactersMiddleware): PostgreSQL cannot hold NUL in text."""

import json

import pytest
from django.http import HttpResponse
from django.test import RequestFactory

from config.query import QueryControlCharactersMiddleware


def _answer(path: str, query: str):
    request = RequestFactory().get(f"{path}?{query}" if query else path)
    return QueryControlCharactersMiddleware(lambda r: HttpResponse("reached the view"))(request)


@pytest.mark.parametrize(
    "query", ["site=%00", "site=a%1Fb", "site=ok&site=%00", "site=%00&site=ok", "unit=1&state=%7F"]
)
def test_a_control_character_in_any_value_is_a_400_naming_the_parameter_in_the_apis_error_shape(query):
    """Every value counts, also a repeated parameter's earlier one; the answer is the API's one error shape."""
    response = _answer("/api/scheduling/work-orders/", query)
    assert response.status_code == 400
    body = json.loads(response.content)
    assert set(body) == {"detail", "errors"}
    (name,) = [k for k in ("site", "state") if k in body["errors"]]
    assert body["errors"][name] == [f"'{name}' contains control characters (such as NUL); remove them"]
    assert f"The address's '{name}' contains control characters" in body["detail"]


def test_a_control_character_in_a_parameter_name_is_named_as_the_query():
    """A name that itself holds a control character is reported under 'query'."""
    response = _answer("/api/inventory/sites/", "a%00b=1")
    assert response.status_code == 400
    assert list(json.loads(response.content)["errors"]) == ["query"]


def test_a_page_gets_a_plain_400():
    """Outside the API the refusal is a plain 400 naming the parameter."""
    response = _answer("/dashboard/", "site=%00")
    assert response.status_code == 400
    assert "'site' contains control characters" in response.content.decode()


@pytest.mark.parametrize("query", ["", "site=ALPHA&state=planned", "search=caf%C3%A9+tab+%25", "q=a%20b"])
def test_ordinary_queries_reach_the_view(query):
    """No query, plain words, accents and an encoded percent sign pass through."""
    assert _answer("/api/inventory/sites/", query).content == b"reached the view"
