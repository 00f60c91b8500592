"""A reading set aside as implausible that no check judged reads "Not judged" and why, alike on the phone and in
the record.

Tryout: supply air typed 75 °C against its set point showed "Recorded — no limit applies to this reading" beside the
phone's "unusual value" and the server's flag. A limit does apply; the value was not judged because it lies outside
its plausible range and the check that would judge it cannot run without it. Both now say "Not judged — 75.0 °C is
outside the plausible −40.0 to 60.0 °C; re-check the reading": the server's ``inspections.evaluation.set_aside_parts``
(read by ``inspections.display.reading_verdict_words`` for the record page and the PDFs) and its phone twin
evaluate.js ``setAsideParts``, fed only by the checklist's evaluation context, for every number the checklist asks,
below, within and above its plausible range, in SI and US units.
"""

from __future__ import annotations

import random

import pytest

from inspections import display, reasons
from inspections.evaluation import set_aside_parts
from inspections.selectors import checklist_build
from tests.factories.inspections import make_visit
from tests.phone_js import node_json

pytestmark = pytest.mark.django_db

RUNNER = """
import { readFileSync } from "node:fs";
import { readingKey, setAsideParts } from "./evaluate.js";
import { render } from "./units.js";
const { ctx, cases } = JSON.parse(readFileSync(process.argv[2], "utf8"));
const said = (c) => render(ctx, setAsideParts(ctx, readingKey(c.item, c.component), c.x), c.system);
console.log(JSON.stringify(cases.map(said)));
"""

TASKS = [
    "controls_check",
    "filter_check",
    "fan_bearings",
    "damper_actuator",
    "coil_clean",
    "heat_recovery",
    "sensor_calibration",
]


def _values(rng: random.Random, lo: float | None, hi: float | None) -> list[float]:
    out = []
    if lo is not None:
        out += [lo - rng.choice([0.05, 1.0, abs(lo) * 0.5 + 3]), lo]
    if hi is not None:
        out += [hi + rng.choice([0.05, 1.0, abs(hi) * 0.5 + 3]), hi, round(hi * 1.37 + 12.5, 3)]
    return out


def test_phone_and_record_say_the_same_words_for_a_set_aside_reading(api_client, tmp_path):
    rng = random.Random(20261205)
    wo, tech = make_visit(tasks=TASKS)
    api_client.force_authenticate(tech)
    ctx = api_client.get(f"/api/inspections/work-orders/{wo.public_id}/checklist/").json()["evaluation"]
    cases, server = [], []
    for slot in checklist_build(work_order=wo).slots:
        lim = slot.limits or {}
        for x in _values(rng, lim.get("plausible_min"), lim.get("plausible_max")):
            for system in ("si", "us"):
                component = slot.component.label_code if slot.component is not None else None
                cases.append({"item": slot.item.api_key, "component": component, "x": x, "system": system})
                server.append(reasons.render(set_aside_parts(slot.item, x, lim), system))
    phone = node_json(tmp_path, RUNNER, {"ctx": ctx, "cases": cases})
    problems = [f"{c}\nserver: {s!r}\nphone:  {p!r}" for c, s, p in zip(cases, server, phone, strict=True) if s != p]
    assert not problems, "\n".join(problems[:5])
    said = [s for s in server if s]
    assert len(said) >= 40 and all(s.endswith("; re-check the reading") for s in said)
    assert len(said) < len(server)  # a value at its plausible edge is within it: no words
    assert "75.0 °C is outside the plausible −40.0 to 60.0 °C; re-check the reading" in {
        reasons.render(set_aside_parts(s.item, 75.0, s.limits), "si")
        for s in checklist_build(work_order=wo).slots
        if s.item.api_key == "controls_check.supply_air"
    }


def test_the_verdict_words_say_not_judged_only_for_an_unjudged_set_aside_reading():
    why = "75.0 °C is outside the plausible −40.0 to 60.0 °C; re-check the reading"
    assert display.reading_verdict_words("", judged=False, set_aside=why) == ("Not judged", why)
    assert display.reading_verdict_words("watch", judged=True, set_aside=why) == ("Watch", "")
    assert display.reading_verdict_words("", judged=True, set_aside=why) == ("", "")
    assert display.reading_words()["not_judged"] == "Not judged"
