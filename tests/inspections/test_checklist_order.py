"""A per-part checklist asks one part's items together, in the template's order, then the next part's.

Tryout (issue 19): on the coil valve leak-by test of a unit with two coils the phone alternated between the
coils (coil A entering, coil B entering, coil A leaving …). The server's order (``checklist_build``) is the one
order: the checklist document the phone caches and the checklist page it renders read it, so both agree.
"""

import re

import pytest

from inspections import checklists
from inspections.selectors.checklist import checklist_build
from tests.factories.inspections import make_visit

pytestmark = pytest.mark.django_db

LEAK_ITEMS = [
    f"coil_valve_leak.{raw['key']}"
    for t in checklists.TEMPLATES
    if t["code"] == "coil_valve_leak"
    for raw in t["items"]
]


def _coil_sequence(pairs):
    """[(item key, part)] of the leak-by test as asked, in order."""
    return [(key, part) for key, part in pairs if key.startswith("coil_valve_leak.")]


def test_a_unit_with_two_coils_is_asked_coil_by_coil(api_client, client):
    wo, tech = make_visit(tasks=["coil_valve_leak"])
    coils = sorted(wo.ahu.components.filter(kind="coil"), key=lambda c: (c.position, c.pk))
    assert len(coils) == 2, "the full unit has a heating and a cooling coil"
    expected = [(key, coil.label_code) for coil in coils for key in LEAK_ITEMS]

    # The server's order.
    slots = checklist_build(work_order=wo).slots
    asked = _coil_sequence((s.item.api_key, s.component.label_code if s.component else None) for s in slots)
    assert asked == expected

    # The checklist document the phone caches.
    api_client.force_authenticate(tech)
    body = api_client.get(f"/api/inspections/work-orders/{wo.public_id}/checklist/").json()
    items = [(i["key"], (i["component"] or {}).get("label_code")) for t in body["templates"] for i in t["items"]]
    assert _coil_sequence(items) == expected

    # The form the technician fills, in its page order.
    client.force_login(tech)
    page = client.get(f"/w/{wo.public_id}/").content.decode()
    fields = re.findall(r'data-item="([^"]+)" data-component="([^"]*)"', page)
    assert _coil_sequence(fields) == expected


def test_unit_items_stay_where_the_template_puts_them():
    """A run of per-part items is grouped by part; an item asked once stays between them as listed."""
    from types import SimpleNamespace as NS

    from inspections.selectors.checklist import item_runs

    a, b = NS(key="a", component_kind="coil"), NS(key="b", component_kind="coil")
    once = NS(key="once", component_kind="")
    c = NS(key="c", component_kind="fan")
    assert [[i.key for i in run] for run in item_runs([a, b, once, c])] == [["a", "b"], ["once"], ["c"]]
