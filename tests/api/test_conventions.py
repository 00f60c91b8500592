"""API conventions every app keeps: its DRF views in ``<app>/api.py``, its shapes named ``…Input`` (what a
client sends) or ``…Output`` (what it gets back), in Python and in the published schema alike, and its
addresses reached by URL name, never written out."""

import importlib
import inspect
import re
from pathlib import Path
from typing import Any

import pytest
from drf_spectacular.generators import SchemaGenerator
from rest_framework import serializers
from rest_framework.views import APIView

from tests.tenancy.test_matrix import routes

APPS = ("accounts", "automation", "frontend", "inspections", "inventory", "reports", "scheduling")
SHAPE_MODULES = ("api", "serializers", "api_errors")


def _api_views() -> list[tuple[str, type[APIView]]]:
    """(route, view class) of every DRF view the URL patterns serve from the project's apps."""
    found = []
    for route, _name, pattern in routes():  # type: ignore[no-untyped-call]
        view = getattr(pattern.callback, "cls", None)
        if inspect.isclass(view) and issubclass(view, APIView) and view.__module__.split(".")[0] in APPS:
            found.append((route, view))
    return found


def test_every_apps_api_views_live_in_its_api_module() -> None:
    """A DRF view is in its app's ``api.py``, never in ``views.py`` (pages) or elsewhere."""
    views = _api_views()
    assert {v.__module__.split(".")[0] for _, v in views} == set(APPS)
    misplaced = sorted(
        f"{route}: {v.__module__}.{v.__qualname__}" for route, v in views if not v.__module__.endswith(".api")
    )
    assert not misplaced, misplaced


def test_serializers_are_named_input_or_output() -> None:
    """Each serializer of an app's API modules says by its name which way it goes."""
    odd = []
    for app in APPS:
        for module_name in (f"{app}.{m}" for m in SHAPE_MODULES):
            try:
                module = importlib.import_module(module_name)
            except ModuleNotFoundError:
                continue
            odd += [
                f"{module_name}.{name}"
                for name, obj in vars(module).items()
                if inspect.isclass(obj)
                and issubclass(obj, serializers.BaseSerializer)
                and obj.__module__ == module_name
                and not name.endswith(("Input", "Output"))
            ]
    assert not odd, odd


@pytest.mark.django_db
def test_schema_components_are_named_input_or_output() -> None:
    """The published schema's shapes are ``…Output``, ``…InputRequest`` (a body sent) or a named choice set."""
    schema: dict[str, Any] = SchemaGenerator().get_schema(request=None, public=True)  # type: ignore[no-untyped-call]
    odd = sorted(n for n in schema["components"]["schemas"] if not n.endswith(("Output", "InputRequest", "Enum")))
    assert not odd, odd


ROOT = Path(__file__).resolve().parents[2]
WRITTEN_API_ADDRESS = re.compile(r"""["'`]/api/""")


def test_python_and_templates_reach_the_api_by_url_name() -> None:
    """No view, serializer or page template writes an API address out: each is ``reverse()``d or ``{% url %}``ed,
    so a route moved or mounted under a prefix moves every link with it."""
    written = [
        f"{path.relative_to(ROOT)}:{number}"
        for app in APPS
        for path in sorted((ROOT / app).rglob("*"))
        if path.suffix in (".py", ".html") and "migrations" not in path.parts
        for number, line in enumerate(path.read_text(encoding="utf-8").splitlines(), start=1)
        if WRITTEN_API_ADDRESS.search(line)
    ]
    assert not written, written


@pytest.mark.django_db
def test_every_read_with_query_parameters_documents_its_400() -> None:
    """Any query value may be refused (a control character in the address is, before any view): every operation
    that takes query parameters says so in its schema, as the API fuzz test holds every answer to it."""
    schema: dict[str, Any] = SchemaGenerator().get_schema(request=None, public=True)  # type: ignore[no-untyped-call]
    missing = [
        f"{method.upper()} {path}"
        for path, operations in schema["paths"].items()
        for method, op in operations.items()
        if any(p.get("in") == "query" for p in op.get("parameters", [])) and "400" not in op.get("responses", {})
    ]
    assert missing == []
