"""A check of several readings shows on the phone as it does on the record page: on a line of its own under its
part, never as the verdict of the reading it names (``evaluation.results.SPANNING_CHECKS``, ``own_judgement``).

A heating coil whose air side and water side disagree: air 3 m³/s warmed 10 → 30 °C (70.3 kW), water 0.5 L/s cooled
70 → 50 °C (41.2 kW, IAPWS-95 via CoolProp): 41 % apart, beyond the 20 % watch limit (common practice) → fail. The
balance needs all five readings and names the flow as its place; the flow itself is not what failed, so it reads
"Recorded" while filling in, as on the record page, and the balance reads "Coil heat balance — <coil>" on its own
line, while filling in and in the phone's offline copy of the server's answer.
"""

from __future__ import annotations

import json
import random

from inspections import evaluation, phone
from inspections.evaluation.results import SPANNING_CHECKS
from inspections.selectors import check_label
from tests.phone_js import node_json

from .test_phone_agreement import _slots, _unit, js_input, python_results

RUNNER = """
import { readFileSync } from "node:fs";
import { evaluate, resultsByPlace, ownLineLabel, SPANNING_CHECKS } from "./evaluate.js";
const { context, readings, finished_at, server } = JSON.parse(readFileSync(process.argv[2], "utf8"));
const results = evaluate(context, readings, { finishedAt: finished_at });
const { byReading, ownLines } = resultsByPlace(context, results);
console.log(JSON.stringify({
  spanning: SPANNING_CHECKS,
  byReading: Object.fromEntries([...byReading].map(([k, rs]) => [k, rs.map((r) => r.check)])),
  ownLines: ownLines.map((l) => ({ key: l.key, label: l.label, check: l.result.check, verdict: l.result.verdict })),
  serverLabels: server.map((e) => ownLineLabel(context, e)),
}));
"""


def _case():
    ahu, comps = _unit(random.Random(2))
    coil = next(c for c in comps if c.kind == "coil" and c.specs.get("fluid") == "water")
    values = {
        ("visit.supply_airflow", None): 3.0,
        ("coil_clean.air_in", coil.pk): 10.0,
        ("coil_clean.air_out", coil.pk): 30.0,
        ("coil_clean.water_in", coil.pk): 70.0,
        ("coil_clean.water_out", coil.pk): 50.0,
        ("coil_clean.water_flow", coil.pk): 0.0005,
    }
    case = {
        "ahu": ahu,
        "components": comps,
        "slots": _slots(ahu, comps),
        "values": values,
        "points": {},
        "codes": {c.pk: c.label_code for c in comps},
    }
    return case, coil


def test_the_phone_lists_the_same_checks_of_several_readings_as_the_server():
    assert phone.check_labels() == {c: check_label(check=c, item="", labels={}) for c in SPANNING_CHECKS}


def test_the_coil_balance_is_its_own_line_and_the_flow_reads_recorded_on_the_phone(tmp_path):
    case, coil = _case()
    py = python_results(case)
    [balance] = [r for r in py if r["check"] == "coil_balance"]
    assert balance["verdict"] == "fail"
    # The server's reading verdicts: each reading's own judgements only (as the sync stores them).
    server_readings: dict[str, list[str]] = {}
    for r in py:
        if evaluation.own_judgement(r["check"]):
            server_readings.setdefault(f"{r['item']}|{r['component'] or ''}", []).append(r["check"])
    inputs = js_input(case)
    inputs["context"]["check_labels"] = phone.check_labels()
    # The sync's answer as the phone keeps it offline (sync_answers.result_json: the component's label code).
    inputs["server"] = [{"check": "coil_balance", "item": balance["item"], "component": coil.label_code}]
    out = node_json(tmp_path, RUNNER, json.loads(json.dumps(inputs)))
    assert sorted(out["spanning"]) == sorted(SPANNING_CHECKS)
    flow_key = f"coil_clean.water_flow|{coil.label_code}"
    assert flow_key not in out["byReading"] and flow_key not in server_readings  # no verdict of its own: "Recorded"
    assert out["byReading"] == server_readings
    label = f"Coil heat balance — {coil.name}"
    assert out["ownLines"] == [{"key": flow_key, "label": label, "check": "coil_balance", "verdict": "fail"}]
    assert out["serverLabels"] == [label]
