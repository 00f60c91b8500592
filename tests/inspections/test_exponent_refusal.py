"""Tryout: "1e5" typed for a unit's run-hours was read as 100000 h, on the phone and by the server.

A person never types a number with an exponent (common practice: "1e5" is more likely a slip than 100000), so
the phone's form and the sync both refuse it, naming the field, the value as typed and the field's own range, in
the same words: "Run-hour meter: “1e5” is not a plain number; type digits with an optional decimal point or comma,
allowed 0 to 1000000 h" (accounts.typed_numbers.exponent_words; the phone's numbers.js exponentWords with the
range limits.js ``plausibility`` gives the field). Nothing of the form is stored; the number typed in full is.
"""

import html
import json
import re

import pytest

from inspections.models import Inspection, Reading
from scheduling.models import MeterReading
from tests.factories.inspections import make_visit, r, sync_form
from tests.phone_js import node_json

from .test_sync import post

pytestmark = pytest.mark.django_db

RUNNER = """
import { readFileSync } from "node:fs";
import { exponentWords } from "./numbers.js";
import { plausibility } from "./limits.js";
const [label, typed, unit, limits, decimals] = JSON.parse(readFileSync(process.argv[2], "utf8"));
const allowed = plausibility(Infinity, limits, unit, decimals).allowed;
console.log(JSON.stringify(`${label}: ${exponentWords(typed, allowed)}`));
"""


def phone_words(tmp_path, page: str, field_id: str, typed: str) -> str:
    """What the phone's form says of ``typed`` in the field ``field_id`` (checklist.js notANumber, after the label)."""
    tag = re.search(rf'<input [^>]*id="{field_id}"[^>]*>', page)
    assert tag is not None, field_id
    attrs = dict(re.findall(r'([\w-]+)="([^"]*)"', tag.group(0)))
    label = re.search(rf'<label for="{field_id}">(.*?)<', page, re.S)
    context = re.search(r'<script id="evaluation-context" type="application/json">(.*?)</script>', page, re.S)
    assert label is not None and context is not None
    ctx = json.loads(context.group(1))
    slot = next(s for s in ctx["slots"] if field_id.startswith(f"r-{s['item'].replace('.', '-')}"))
    args = [
        label.group(1).strip(),
        typed,
        html.unescape(attrs["data-unit"]),
        json.loads(html.unescape(attrs["data-limits"])),
        ctx["decimals"][slot["quantity"]][0],
    ]
    return node_json(tmp_path, RUNNER, args)


@pytest.mark.parametrize(
    ("task", "item", "typed", "expected"),
    [
        # Physical ranges of inspections/checklists.py (run-hours 0 to 1000000 h) and checklist_items.py.
        (
            "controls_check",
            "visit.run_hours",
            "1e5",
            "Run-hour meter: “1e5” is not a plain number; type digits with an optional decimal point or comma, "
            "allowed 0 to 1000000 h",
        ),
        (
            "controls_check",
            "controls_check.supply_air",
            "2E3",
            "Supply-air temperature: “2E3” is not a plain number; type digits with an optional decimal point or "
            "comma, allowed −60 to 120 °C",
        ),
    ],
)
def test_a_reading_typed_with_an_exponent_is_refused_alike_naming_the_range(
    api_client, client, tmp_path, task, item, typed, expected
):
    wo, tech = make_visit(tasks=[task])
    [res] = post(api_client, tech, [sync_form(wo, [r(item, typed)])])
    assert res["status"] == "refused", res
    assert res["errors"]["readings[0].value"] == [expected]
    assert Inspection.objects.count() == 0 and Reading.objects.count() == 0 and MeterReading.objects.count() == 0

    client.force_login(tech)
    page = client.get(f"/w/{wo.public_id}/").content.decode()
    field_id = f"r-{item.replace('.', '-')}-unit"
    assert phone_words(tmp_path, page, field_id, typed) == expected


def test_the_number_typed_in_full_is_stored(api_client):
    wo, tech = make_visit(tasks=["controls_check"])
    [res] = post(api_client, tech, [sync_form(wo, [r("visit.run_hours", "100000")])])
    assert res["status"] in {"stored", "flagged"}, res
    assert MeterReading.objects.get().hours == 100000


@pytest.mark.parametrize(
    ("sent", "said"),
    [
        (1e308, "Supply-air temperature: more than 1000000000000000 °C is impossible; allowed −60 to 120 °C"),
        (-2.5e-7, None),  # a tiny size is a possible temperature: stored, no words to say
    ],
)
def test_a_machine_number_is_said_back_without_an_exponent(api_client, sent, said):
    """Tryout: a JSON number the sync reads (an exponent is machine data there) was said back as "1e+308 °C" and a
    tiny one as "2.5e−07": a person never reads an exponent (engineering.formatting.significant_text)."""
    wo, tech = make_visit(tasks=["controls_check"])
    form = sync_form(wo, [r("visit.run_hours", 1200), r("controls_check.supply_air", sent)])
    [res] = post(api_client, tech, [form])
    words = [
        *(m for ms in res["errors"].values() for m in ms),
        *(f["reason"] for f in res["flags"]),
        *(e["reason"] for e in res["evaluation"]),
        *(f["text"] for f in res["findings"]),
    ]
    assert words and not any(re.search(r"\de[+\-−]?\d", w) for w in words), words
    if said:
        assert res["status"] == "refused" and said in res["errors"]["readings[1].value"][0], res
