"""Hostile values through every staff page form, field by field: never a 500, and a refused form saves nothing.

Each page is fetched as its person would see it, every ``<form method="post">`` on it is read from the HTML
(its fields with the values the page fills in) and posted back once per field × hostile value, the other
fields as the page gave them. An answer is never a server error; a form that is not accepted (anything but a
redirect) leaves the row counts of the records a form can touch unchanged. Deterministic: no random input.
"""

from __future__ import annotations

from html.parser import HTMLParser

import pytest
from django.test import Client
from django.urls import resolve
from django.utils import timezone

from inspections.models import Inspection
from scheduling.models import WorkOrder
from tests.factories.scheduling import WorkOrderFactory
from tests.security.test_api_fuzz import row_counts
from tests.tenancy.world import PASSWORD, World, build

# NaN, ±Infinity and 1e309 as typed, NUL and control characters, years 1 and 9999, 2³¹ and 2⁶³, an opening
# bracket (what a list becomes in a form), and far too much text.
pytestmark = pytest.mark.usefixtures("clock")  # the world's work is dated the clock's today

FORM_VALUES = (
    "nan",
    "-inf",
    "1e309",
    "\x00",
    "a\x00b",
    "\x07\x1b[2J\u202e\x85",
    "0001-01-01",
    "9999-12-31",
    str(2**31),
    str(2**63),
    "-1",
    "[",
    "x" * 20_000,
)


class _Forms(HTMLParser):
    """The post forms of a page: [(action, {name: value})], as a browser would send them unchanged."""

    def __init__(self) -> None:
        super().__init__()
        self.forms: list[tuple[str, dict[str, str]]] = []
        self._fields: dict[str, str] | None = None
        self._select: str | None = None
        self._textarea: str | None = None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "form" and (a.get("method") or "").lower() == "post":
            self._fields = {}
            self.forms.append((a.get("action") or "", self._fields))
        if self._fields is None or not a.get("name"):
            if tag == "option" and self._select and ("selected" in a or self._select not in self._fields):
                self._fields[self._select] = a.get("value", "")
            return
        name = a["name"]
        if tag == "input":
            kind = (a.get("type") or "text").lower()
            if kind in ("checkbox", "radio") and "checked" not in a:
                self._fields.setdefault(name, "") if kind == "radio" else None
                return
            if kind not in ("file", "image", "reset"):
                self._fields[name] = a.get("value") or ""
        elif tag == "select":
            self._select = name
        elif tag == "textarea":
            self._textarea = name
            self._fields[name] = ""

    def handle_data(self, data):
        if self._fields is not None and self._textarea:
            self._fields[self._textarea] += data

    def handle_endtag(self, tag):
        if tag == "form":
            self._fields = None
        elif tag == "select":
            self._select = None
        elif tag == "textarea":
            self._textarea = None


# The staff forms this walk must reach (by URL name): unit edit, component edit, rules, board assign/plan,
# corrective approve/reject, flagged resolve, verify, amend, record requests, calculator, sign-in, password reset.
EXPECTED_FORMS = {
    "registry_unit_edit",
    "registry_component_edit",
    "registry_rules",
    "rules",
    "registry_files",
    "assign",
    "corrective",
    "flagged",
    "verify",
    "amend",
    "record_request",
    "calculator",
    "login",
    "password_reset",
}


def post_forms(html: str) -> list[tuple[str, dict[str, str]]]:
    parser = _Forms()
    parser.feed(html)
    return parser.forms


@pytest.fixture
def world(db) -> World:
    w = build()
    a = w.a
    # A proposed corrective visit and a flagged form, so the approve/reject and resolve forms are on their pages.
    WorkOrderFactory(
        ahu=a.ahu,
        organisation=w.ours,
        kind=WorkOrder.Kind.CORRECTIVE,
        approval=WorkOrder.Approval.PENDING,
        state=WorkOrder.State.PLANNED,
        title="Harbour fan belt replacement",
        due_date=timezone.localdate(),
    )
    # A visit due and not yet assigned, so the board offers its assign/plan form.
    WorkOrderFactory(
        ahu=a.ahu,
        organisation=w.ours,
        assignee=None,
        state=WorkOrder.State.PLANNED,
        title="Harbour coil clean",
        due_date=timezone.localdate(),
    )
    Inspection.objects.filter(pk=a.inspection.pk).update(flags=[{"code": "skew", "reason": "phone clock"}])
    return w


def _pages(world: World) -> list[tuple[str, str]]:
    """(person, page) for every page with a staff form; '' is nobody signed in."""
    a = world.a
    return [
        ("supervisor", "/board/"),
        ("supervisor", f"/registry/unit/{a.ahu.pk}/edit/"),
        ("supervisor", f"/registry/unit/{a.ahu.pk}/rules/"),
        ("supervisor", "/rules/"),
        ("supervisor", "/registry/files/"),
        ("supervisor", f"/registry/component/{a.component.pk}/edit/"),
        ("supervisor", "/corrective/"),
        ("supervisor", "/flagged/"),
        ("supervisor", f"/w/{a.work_order.public_id}/"),
        ("supervisor", f"/registry/unit/{a.ahu.pk}/"),
        ("technician", f"/w/{a.work_order.public_id}/"),
        ("technician", "/calc/"),
        ("", "/login/"),
        ("", "/password/reset/"),
    ]


def test_every_staff_form_refuses_hostile_values_without_a_server_error_or_a_half_save(world):
    """Every field of every post form on the staff pages, in turn, holds NaN, ±Infinity, 1e309, NUL and control
    characters, years 1 and 9999, 2³¹ and 2⁶³, a bracket or 20 000 characters: no answer is a 5xx, and an answer
    that does not accept the form (no redirect) leaves every counted table as it was."""
    people = {"supervisor": world.supervisor, "technician": world.technician}
    problems: list[str] = []
    seen: set[str] = set()
    for who, page in _pages(world):
        client = Client(raise_request_exception=False)
        if who:
            client.force_login(people[who])
        shown = client.get(page)
        assert shown.status_code == 200, (page, shown.status_code)
        forms = [(action or page, fields) for action, fields in post_forms(shown.content.decode())]
        forms = [(action, fields) for action, fields in forms if not action.startswith("/logout")]
        if not forms:
            problems.append(f"{page} shows no post form")
        seen |= {action.split("?")[0] for action, _ in forms}
        for action, fields in forms:
            for name in [n for n in fields if n != "csrfmiddlewaretoken"]:
                for value in FORM_VALUES:
                    before = row_counts()
                    response = client.post(action, {**fields, name: value})
                    what = f"{who or 'anonymous'} POST {action} {name}={value!r:.30}"
                    if response.status_code >= 500:
                        problems.append(f"{what} -> {response.status_code}")
                    elif response.status_code not in (301, 302, 303) and row_counts() != before:
                        problems.append(f"{what} -> {response.status_code} but rows changed")
    reached = {resolve(action).url_name for action in seen}
    assert reached >= EXPECTED_FORMS, f"forms not reached: {EXPECTED_FORMS - reached}"
    assert not problems, f"{len(problems)} problems:\n" + "\n".join(problems[:60])


def test_sign_in_with_hostile_values_is_refused_and_the_right_password_still_works(world):
    """A NUL or 20 000 characters as the user name or password is a refusal, not a 500; the person still gets in."""
    client = Client(raise_request_exception=False)
    for value in FORM_VALUES:
        for field in ("username", "password"):
            creds = {"username": world.supervisor.username, "password": PASSWORD, field: value}
            response = client.post("/login/", creds)
            assert response.status_code < 500 and response.status_code != 302, (field, value[:20])
    assert client.post("/login/", {"username": world.supervisor.username, "password": PASSWORD}).status_code == 302
