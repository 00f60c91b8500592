"""The phone judges every reading exactly as the server does.

Seeded random forms (at least 200 per check, spread over ok, watch and fail and
over the edges: reduced airflow, airflow from fan speed, too little
outdoor–return difference, missing registry data, altitude, glycol-free and
cooling coils) go through ``inspections.evaluation.evaluate`` and through its
JavaScript twin ``frontend/static/frontend/js/evaluate.js`` under Node, fed only
by ``inspections.phone.evaluation_context``. Verdicts and reasons (as the person
reads them, SI rendering) must agree everywhere and every derived number within 0.5 %. A check the server can produce
(``evaluation.CHECKS``) that the twin lacks fails the test, as does a check
name the server produces that the registry does not list.

The field calculator (``frontend/calculators.py``) and its offline twin
(``calc.js``) are held to the same agreement at the end of this module.
"""

from __future__ import annotations

import datetime as dt
import json
import random
import re
import shutil
from collections import Counter
from pathlib import Path
from types import SimpleNamespace as NS

import pytest

from engineering import ventilation
from engineering.filters import FilterPoint
from inspections import checklists, evaluation, limits, phone
from inspections.evaluation.ventilation_checks import required_outdoor_airflow_m3s
from inspections.selectors import item_limits
from inspections.selectors.checklist import _matches
from tests.conftest import service_missing
from tests.phone_js import node_json

FINISHED = dt.datetime(2026, 3, 3, 10, 0, tzinfo=dt.UTC)
CASES_PER_FOCUS = 260
REL_TOL = 0.005  # 0.5 % of the larger magnitude

RUNNER = """
import { readFileSync } from "node:fs";
import { evaluate, CHECKS } from "./evaluate.js";
const { shared, cases } = JSON.parse(readFileSync(process.argv[2], "utf8"));
const out = cases.map((c) => {
  try {
    const when = { finishedOn: c.finished_on, finishedAt: c.finished_at };
    return { results: evaluate({ ...c.context, ...shared }, c.readings, when) };
  } catch (error) {
    return { error: String(error && error.stack || error) };
  }
});
console.log(JSON.stringify({ checks: CHECKS, out }));
"""


@pytest.fixture(autouse=True)
def _node():
    """The phone's code runs under Node: skipped locally without it, a failure under CI."""
    if shutil.which("node") is None:
        service_missing("node is not installed (make system installs nodejs)")


# ---------------------------------------------------------------------------
# A unit built from the real checklist templates, without the database
# ---------------------------------------------------------------------------

_next_pk = iter(range(1, 10**9))


def _component(kind: str, name: str, specs: dict) -> NS:
    pk = next(_next_pk)
    return NS(pk=pk, label_code=f"C{pk:05d}", name=name, kind=kind, specs=specs)


def _items() -> list[NS]:
    out = []
    for t in checklists.all_templates():
        for raw in t["items"]:
            out.append(NS(**raw, api_key=f"{t['code']}.{raw['key']}", template_code=t["code"]))
    return out


ITEMS = _items()


def _slots(ahu, components) -> list[NS]:
    slots = []
    for it in ITEMS:
        if it.kind == "photo":
            continue
        if not it.component_kind:
            slots.append(NS(item=it, component=None, limits=item_limits(item=it, ahu=ahu, component=None)))
            continue
        for c in components:
            if _matches(c, it):  # the server's own rule for which parts an item is asked of
                slots.append(NS(item=it, component=c, limits=item_limits(item=it, ahu=ahu, component=c)))
    return slots


def _unit(rng: random.Random) -> tuple[NS, list[NS]]:
    design = rng.choice([0.8, 1.2, 0.8, 2.0, 3.0, 4.5, 0.7999])  # 1,695 cfm ≈ 0.8 m³/s
    kinds = list(ventilation.SPACE_KINDS)
    full_oa = rng.random() < 0.1
    zones = rng.choice(["single_zone", "multi_zone"])
    ahu = NS(
        design_supply_airflow_m3s=design,
        design_min_oa_fraction=rng.choice([0.1, 0.15, 0.2, 0.3, 0.5]),
        full_outdoor_air=full_oa,
        ventilation_zones=zones,
        ventilation_system="full_outdoor_air" if full_oa else zones,
        air_distribution=rng.choice(list(ventilation.ZONE_AIR_DISTRIBUTION_EFFECTIVENESS)),
        occupant_diversity=rng.choice([None, 0.6, 0.9]),
        system_ventilation_efficiency=rng.choice([None, 0.7]),
        supply_air_setpoint_c=rng.choice([None, 13.0, 16.0, 18.5]),
        duct_static_setpoint_pa=rng.choice([None, 0.0, 250.0, 400.0]),
        space_kind=rng.choice(["", *kinds[:6]]),
        floor_area_m2=rng.choice([None, 0.0, 200.0, 800.0, 2500.0]),
        design_occupants=rng.choice([None, 5, 20, 80]),
        building=NS(site=NS(altitude_m=rng.choice([0.0, 0.0, 350.0, 1600.0, 2400.0]))),
    )
    clean = rng.choice([40.0, 60.0, 90.0])
    comps = [
        _component(
            "filter_bank",
            "Final filters",
            {
                "clean_dp_pa": clean,
                "final_dp_pa": clean + rng.choice([100.0, 160.0, 200.0]),
                **({"design_airflow_m3s": design * rng.choice([0.9, 1.0])} if rng.random() < 0.4 else {}),
            },
        ),
        _component(
            "filter_bank",
            "Pre-filters",
            {"clean_dp_pa": 30.0, "final_dp_pa": 150.0} if rng.random() < 0.8 else {"final_dp_pa": 150.0},
        ),
        _component(
            "fan",
            "Supply fan",
            {
                "role": "supply",
                "drive": rng.choice(["belt", "direct"]),
                **(
                    {"design_speed_rpm": rng.choice([900.0, 1450.0]), "design_flow_m3s": design}
                    if rng.random() < 0.7
                    else {}
                ),
                "motor_full_load_a": rng.choice([4.2, 11.0]),
            },
        ),
        _component(
            "coil",
            "Heating coil",
            {"fluid": "water", "duty": "heating", **({"design_airflow_m3s": design} if rng.random() < 0.5 else {})},
        ),
        _component("coil", "Cooling coil", {"fluid": "water", "duty": "cooling"}),
        _component(
            "coil",
            "Glycol preheat coil",
            {"fluid": "glycol", "duty": "heating"}
            | rng.choice(
                [
                    {"glycol_kind": "ethylene", "glycol_pct": rng.choice([20, 25, 30, 40])},
                    {"glycol_kind": "propylene", "glycol_pct": rng.choice([15, 30, 35])},
                    {},
                ]
            ),
        ),
        _component("coil", "Steam coil", {"fluid": "steam", "duty": "heating"}),
        _component("damper", "Outdoor-air damper", {"stroke_time_s": rng.choice([90.0, 150.0])}),
        _component("damper", "Return damper", {}),
        _component(
            "sensor", "Return CO2 sensor", {"measures": "co2", **({"accuracy": 75.0} if rng.random() < 0.3 else {})}
        ),
        _component(
            "sensor",
            "Supply temperature sensor",
            {"measures": "temperature", **({"accuracy": 0.3} if rng.random() < 0.3 else {})},
        ),
        _component("sensor", "Return humidity sensor", {"measures": "humidity"}),
        _component("sensor", "Duct pressure sensor", {"measures": "pressure"}),
        _component(
            "heat_recovery",
            "Plate heat exchanger",
            {"design_effectiveness_pct": rng.choice([55.0, 65.0, 78.0])} if rng.random() < 0.85 else {},
        ),
        _component("electric_preheater", "Electric preheater", {"switch_on_c": rng.choice([3.0, 5.0])}),
        _component("humidifier", "Steam humidifier", {}),
    ]
    return ahu, comps


# ---------------------------------------------------------------------------
# Readings that aim at one check each, over its ok / watch / fail range
# ---------------------------------------------------------------------------


def _airflow(rng, ahu, values):
    roll = rng.random()
    if roll < 0.45:
        values[("visit.supply_airflow", None)] = ahu.design_supply_airflow_m3s * rng.uniform(0.4, 1.6)
    elif roll < 0.75:
        # rev/s; a tenth of these a hundredth as fast (5–16 rpm, below the plausible 50 rpm): set aside on both
        values[("visit.supply_fan_speed", None)] = rng.uniform(8.0, 26.0) * (0.01 if roll > 0.72 else 1.0)


def _filter(rng, ahu, comps, values, points):
    _airflow(rng, ahu, values)
    for bank in (c for c in comps if c.kind == "filter_bank"):
        final = bank.specs.get("final_dp_pa", 200.0)
        values[("filter_check.dp", bank.pk)] = rng.uniform(0.2, 1.4) * final
        if rng.random() < 0.5:
            values[("visit.run_hours", None)] = rng.uniform(3000, 5000)
            n = rng.choice([0, 1, 2, 3, 5])
            clean = bank.specs.get("clean_dp_pa", 30.0)
            slope = rng.choice([0.0, 0.01, 0.04])
            points[bank.label_code] = [
                FilterPoint(
                    run_hours=500.0 * (i + 1),
                    dp_pa=clean + slope * 500.0 * (i + 1) + rng.uniform(-3, 3),
                    airflow_m3s=ahu.design_supply_airflow_m3s * rng.uniform(0.45, 1.2),
                    when=FINISHED.date() - dt.timedelta(days=30 * (n - i)),
                )
                for i in range(n)
            ]


def _filter_change(rng, ahu, comps, values, points):
    _airflow(rng, ahu, values)
    for bank in (c for c in comps if c.kind == "filter_bank"):
        values[("filter_replace.replaced", bank.pk)] = "ok"
        values[("filter_replace.dp_after", bank.pk)] = rng.uniform(0.3, 1.8) * bank.specs.get("clean_dp_pa", 40.0)


def _oa(rng, ahu, comps, values, points):
    _airflow(rng, ahu, values)
    if rng.random() < 0.9:
        o, r = rng.uniform(-15, 30), rng.uniform(18, 26)
        x = rng.uniform(-0.1, 1.1)
        values[("ventilation_check.outdoor_air", None)] = o
        values[("ventilation_check.return_air", None)] = r
        values[("ventilation_check.mixed_air", None)] = r - x * (r - o) + rng.uniform(-0.3, 0.3)
    if rng.random() < 0.9:
        o, r = rng.uniform(380, 450), rng.uniform(420, 1400)
        x = rng.uniform(-0.1, 1.1)
        values[("ventilation_check.outdoor_co2", None)] = o
        values[("ventilation_check.return_co2", None)] = r
        values[("ventilation_check.supply_co2", None)] = r - x * (r - o) + rng.uniform(-10, 10)


def _full_oa(rng, ahu, comps, values, points):
    """A 100 % outdoor-air unit's ventilation check: supply airflow around the requirement or the design."""
    ahu.full_outdoor_air, ahu.ventilation_system = True, "full_outdoor_air"
    if rng.random() < 0.7:
        ahu.space_kind = rng.choice(list(ventilation.SPACE_KINDS)[:6])
        ahu.floor_area_m2 = rng.choice([200.0, 800.0, 2500.0])
    need = required_outdoor_airflow_m3s(ahu)
    target = need if need and rng.random() < 0.6 else ahu.design_supply_airflow_m3s
    roll = rng.random()
    if roll < 0.65:
        values[("visit.supply_airflow", None)] = target * rng.uniform(0.7, 1.3)
    elif roll < 0.9:
        values[("visit.supply_fan_speed", None)] = rng.uniform(8.0, 26.0)  # rev/s
    values[("ventilation_check.outdoor_air", None)] = rng.uniform(-15, 30)
    if rng.random() < 0.5:
        values[("ventilation_check.outdoor_co2", None)] = rng.uniform(380, 450)


def _coil(rng, ahu, comps, values, points):
    _airflow(rng, ahu, values)
    for coil in (c for c in comps if c.kind == "coil"):
        template = "cooling_season_check" if coil.specs["duty"] == "cooling" and rng.random() < 0.5 else "coil_clean"
        q = values.get(("visit.supply_airflow", None), ahu.design_supply_airflow_m3s)
        if coil.specs["duty"] == "heating":
            t_in, t_out = rng.uniform(-10, 15), rng.uniform(18, 35)
            w_in, w_out = rng.uniform(60, 80), rng.uniform(40, 59)
        else:
            t_in, t_out = rng.uniform(24, 32), rng.uniform(11, 16)
            w_in, w_out = rng.uniform(6, 8), rng.uniform(11, 15)
        air = q * 1.2 * 1006 * abs(t_out - t_in)
        water = air * rng.uniform(0.7, 1.35)
        flow = water / (990 * 4190 * abs(w_out - w_in))
        for k, val in (("air_in", t_in), ("air_out", t_out), ("water_in", w_in), ("water_out", w_out)):
            values[(f"{template}.{k}", coil.pk)] = val
        values[(f"{template}.water_flow", coil.pk)] = flow if rng.random() < 0.95 else 0.0


def _valve_leak(rng, ahu, comps, values, points):
    # Changes across the shut coil on both sides of the trend rules' limit and exactly on it (2.68 K:
    # ASHRAE Guideline 36-2018 5.16.14 FC#14/FC#15 sensor errors and fan heat, from memory), either sign.
    from inspections.evaluation.valve_checks import LEAK_LIMIT_K

    # The other way too: air warmed across a shut cooling coil (cooled across a heating one) by the same
    # allowance or more is a re-check (watch).
    for coil in (c for c in comps if c.kind == "coil"):
        t_in = rng.uniform(-15, 32)
        edges = [LEAK_LIMIT_K, LEAK_LIMIT_K - 0.01, LEAK_LIMIT_K + 0.01]
        change = rng.choice([*edges, *(-e for e in edges), rng.uniform(-8, 8), rng.uniform(-8, 8)])
        t_out = t_in - change if coil.specs["duty"] == "cooling" else t_in + change
        values[("coil_valve_leak.leak_air_in", coil.pk)] = t_in
        values[("coil_valve_leak.leak_air_out", coil.pk)] = t_out


def _freeze_trip(rng, ahu, comps, values, points):
    # The frost thermostat's trip setting on and beside its band's edges (ok 2.5–5.5 °C, fail below 2 °C, above
    # 5.5 °C watch however high: inspections.checklists.FREEZE_TRIP_*, common practice) and anywhere -5–20 °C.
    edges = [1.99, 2.0, 2.49, 2.5, 5.5, 5.51, 12.5]
    values[("preheater_freeze.freeze_trip_temp", None)] = rng.choice([*edges, rng.uniform(-5, 20)])


def _setpoint(rng, ahu, comps, values, points):
    for template in ("controls_check", "cooling_season_check"):
        if rng.random() < 0.7:
            sp = rng.choice([None, 12.0, 16.0, 20.0])
            base = sp if sp is not None else (ahu.supply_air_setpoint_c or 16.0)
            values[(f"{template}.supply_air", None)] = base + rng.uniform(-3.5, 3.5)
            if sp is not None:
                values[(f"{template}.supply_setpoint", None)] = sp


def _static(rng, ahu, comps, values, points):
    sp = rng.choice([None, 300.0, 500.0])
    base = sp or ahu.duct_static_setpoint_pa or 250.0
    values[("controls_check.duct_static", None)] = base * rng.uniform(0.6, 1.4)
    if sp is not None:
        values[("controls_check.duct_static_setpoint", None)] = sp


def _damper(rng, ahu, comps, values, points):
    for d in (c for c in comps if c.kind == "damper"):
        cmd = rng.choice([0.0, 25.0, 50.0, 100.0, rng.uniform(0, 100)])
        values[("damper_actuator.command", d.pk)] = cmd
        values[("damper_actuator.position", d.pk)] = min(100.0, max(0.0, cmd + rng.uniform(-15, 15)))
        if rng.random() < 0.5:
            values[("damper_actuator.stroke_time", d.pk)] = rng.uniform(30, 250)


def _drift(rng, ahu, comps, values, points):
    spans = {"co2": (400, 2000, 150), "temp": (5, 35, 1.0), "rh": (20, 80, 6), "pressure": (50, 600, 25)}
    for s in (c for c in comps if c.kind == "sensor"):
        prefix = {"co2": "co2", "temperature": "temp", "humidity": "rh", "pressure": "pressure"}[s.specs["measures"]]
        lo, hi, err = spans[prefix]
        ref = rng.uniform(lo, hi)
        values[(f"sensor_calibration.{prefix}_reference", s.pk)] = ref
        values[(f"sensor_calibration.{prefix}_sensor", s.pk)] = ref + rng.uniform(-err, err)


def _hr(rng, ahu, comps, values, points):
    for hx in (c for c in comps if c.kind == "heat_recovery"):
        o, e = rng.uniform(-15, 20), rng.uniform(19, 24)
        eff = rng.uniform(0.2, 0.95)
        values[("heat_recovery.outdoor_in", hx.pk)] = o
        values[("heat_recovery.extract_in", hx.pk)] = e
        values[("heat_recovery.supply_out", hx.pk)] = o + eff * (e - o) + rng.uniform(-0.5, 0.5)


def _answers(rng, ahu, comps, values, points):
    """Yes/no, choice and number answers judged against their bands (freezestat, preheater, humidity ...)."""
    by_kind = {}
    for c in comps:
        by_kind.setdefault(c.kind, []).append(c)
    for it in ITEMS:
        if it.kind == "photo" or it.kind == "text":
            continue
        targets = [None] if not it.component_kind else by_kind.get(it.component_kind, [])
        for c in targets:
            if c is not None and not _matches(c, it):
                continue
            if rng.random() < 0.6:
                continue
            key = (it.api_key, c.pk if c is not None else None)
            if rng.random() < 0.08:
                values[key] = "na"
            elif it.kind == "check":
                values[key] = rng.choice(["ok", "ok", "not_ok"])
            elif it.kind == "choice":
                values[key] = rng.choice(it.choices)["value"]
            elif it.kind == "number":
                lim = item_limits(item=it, ahu=ahu, component=c)
                lo = next((lim[k] for k in ("watch_min", "ok_min") if lim.get(k) is not None), None)
                hi = next((lim[k] for k in ("watch_max", "ok_max") if lim.get(k) is not None), None)
                if lo is None and hi is None:
                    continue
                lo = lo if lo is not None else 0.0
                hi = hi if hi is not None else lo + 10
                width = max(hi - lo, 1.0)
                values[key] = rng.uniform(lo - 0.4 * width, hi + 0.4 * width)


FOCUS = {
    "filter": _filter,
    "filter_change": _filter_change,
    "oa": _oa,
    "full_oa": _full_oa,
    "coil": _coil,
    "valve_leak": _valve_leak,
    "freeze_trip": _freeze_trip,
    "setpoint": _setpoint,
    "static": _static,
    "damper": _damper,
    "drift": _drift,
    "heat_recovery": _hr,
    "answers": _answers,
}


def _python_value(raw) -> evaluation.Value:
    if isinstance(raw, str):
        return evaluation.Value(text=raw)
    return evaluation.Value(number=raw)


def make_case(rng: random.Random, focus: str) -> dict:
    ahu, comps = _unit(rng)
    values: dict = {}
    points: dict = {}
    FOCUS[focus](rng, ahu, comps, values, points)
    if rng.random() < 0.3:
        _answers(rng, ahu, comps, values, points)
    slots = _slots(ahu, comps)
    codes = {c.pk: c.label_code for c in comps}
    return {
        "focus": focus,
        "ahu": ahu,
        "components": comps,
        "slots": slots,
        "values": values,
        "points": points,
        "codes": codes,
    }


def evaluate_case(case) -> list[evaluation.Result]:
    """The server's judgements of one seeded case (``evaluation.evaluate``)."""
    form = evaluation.Form(
        ahu=case["ahu"],
        components=case["components"],
        values={k: _python_value(v) for k, v in case["values"].items()},
        slots=case["slots"],
        finished_at=FINISHED,
        filter_points=lambda c, reading=None: [*case["points"].get(c.label_code, []), *_day_of(reading)],
    )
    return evaluation.evaluate(form)


def _day_of(reading) -> list:
    """The form's own filter reading as the phone appends it (dated by its day), none without one."""
    import dataclasses

    return [] if reading is None else [dataclasses.replace(reading, when=reading.when.date())]


def python_results(case) -> list[dict]:
    return [
        {
            "check": r.check,
            "item": r.item,
            "component": r.component.label_code if r.component is not None else None,
            "verdict": r.verdict,
            "derived": r.derived,
            "reason": r.reason,
        }
        for r in evaluate_case(case)
    ]


def js_input(case) -> dict:
    context = phone.evaluation_context(
        ahu=case["ahu"],
        components=case["components"],
        slots=case["slots"],
        filter_points=lambda c: case["points"].get(c.label_code, []),
    )
    readings = {f"{item}|{case['codes'].get(pk, '') if pk else ''}": v for (item, pk), v in case["values"].items()}
    return {
        "context": json.loads(json.dumps(context)),
        "readings": readings,
        "finished_on": FINISHED.date().isoformat(),
        "finished_at": case.get("finished_at", FINISHED).isoformat(),
    }


def run_js(inputs: list[dict], tmp_path: Path) -> dict:
    """Run the phone's modules (copied as they ship) under Node on the cases."""
    # The tables every context carries alike (units, fluids, thresholds) are sent once.
    shared_keys = ("units", "decimals", "constants")
    shared = {k: inputs[0]["context"][k] for k in shared_keys} if inputs else {}
    for i in inputs:
        assert all(i["context"].pop(k) == shared[k] for k in shared_keys)
    return node_json(tmp_path, RUNNER, {"shared": shared, "cases": inputs}, timeout=300)


def _close(a: float, b: float) -> bool:
    return abs(a - b) <= REL_TOL * max(abs(a), abs(b)) + 1e-9


def compare(case, py: list[dict], js: list[dict]) -> list[str]:
    """Every disagreement between the two result lists, in words."""
    problems = []
    key = lambda r: (r["check"], r["item"], r["component"])  # noqa: E731
    py_by, js_by = {key(r): r for r in py}, {key(r): r for r in js}
    for k in py_by.keys() - js_by.keys():
        problems.append(f"server judged {k} ({py_by[k]['verdict']}: {py_by[k]['reason']}), the phone did not")
    for k in js_by.keys() - py_by.keys():
        problems.append(f"phone judged {k} ({js_by[k]['verdict']}: {js_by[k]['reason']}), the server did not")
    for k in py_by.keys() & js_by.keys():
        p, j = py_by[k], js_by[k]
        if p["verdict"] != j["verdict"]:
            problems.append(f"{k}: server {p['verdict']} ({p['reason']}), phone {j['verdict']} ({j['reason']})")
        elif p["reason"] != j["reason"]:
            problems.append(f"{k}: the reasons differ:\n  server: {p['reason']}\n  phone:  {j['reason']}")
        for name, pv in p["derived"].items():
            jv = j["derived"].get(name, "<missing>")
            if name == "forecast_note":
                if jv == "<missing>":
                    problems.append(f"{k}: phone has no forecast note ({pv})")
                continue
            if isinstance(pv, bool) or not isinstance(pv, int | float):
                if pv != jv:
                    problems.append(f"{k}: {name} server {pv!r}, phone {jv!r}")
            elif not isinstance(jv, int | float) or not _close(float(pv), float(jv)):
                problems.append(f"{k}: {name} server {pv!r}, phone {jv!r}")
        for name in j["derived"].keys() - p["derived"].keys():
            problems.append(f"{k}: phone gives {name}={j['derived'][name]!r}, the server does not")
    return problems


@pytest.fixture(scope="module")
def agreement(tmp_path_factory):
    rng = random.Random(20261202)
    cases = [make_case(rng, focus) for focus in FOCUS for _ in range(CASES_PER_FOCUS)]
    py = [python_results(c) for c in cases]
    js = run_js([js_input(c) for c in cases], tmp_path_factory.mktemp("agree"))
    return cases, py, js


def test_every_server_check_has_a_phone_twin(agreement):
    """The phone's evaluate.js lists every check of evaluation.CHECKS, and the server produces no unlisted check."""
    _, py, js = agreement
    missing = set(evaluation.CHECKS) - set(js["checks"])
    assert not missing, f"checks the server makes that the phone cannot: {sorted(missing)}"
    produced = {r["check"] for results in py for r in results}
    assert produced <= set(evaluation.CHECKS), (
        f"checks missing from evaluation.CHECKS: {produced - set(evaluation.CHECKS)}"
    )


def test_every_check_name_in_the_server_code_is_registered():
    """A check name written in the evaluation package (literal, or an f-string's fixed start) is listed in
    evaluation.CHECKS, so a new server check cannot slip past the phone-twin test above."""
    source = "\n".join(p.read_text(encoding="utf-8") for p in sorted(Path(evaluation.__file__).parent.glob("*.py")))
    literal = set(re.findall(r'check="([a-z_]+)"', source))
    prefixes = set(re.findall(r'check=f"([a-z_]+)\{', source))
    assert literal, "no check names found: the scan no longer matches the evaluation package"
    assert literal <= set(evaluation.CHECKS), f"not in evaluation.CHECKS: {sorted(literal - set(evaluation.CHECKS))}"
    for prefix in prefixes:
        assert any(c.startswith(prefix) for c in evaluation.CHECKS), f"no registered check starts with {prefix!r}"


def test_phone_and_server_agree_on_every_verdict_and_number(agreement):
    """0 verdict disagreements and every derived number within 0.5 %, over at least 200 results per check."""
    cases, py, js = agreement
    problems, per_check, verdicts = [], Counter(), {}
    for case, p, j in zip(cases, py, js["out"], strict=True):
        if "error" in j:
            problems.append(f"{case['focus']}: the phone failed: {j['error']}")
            continue
        problems.extend(f"{case['focus']}: {x}" for x in compare(case, p, j["results"]))
        for r in p:
            per_check[r["check"]] += 1
            verdicts.setdefault(r["check"], set()).add(r["verdict"])
    assert not problems, f"{len(problems)} disagreements, first ones:\n" + "\n".join(problems[:25])
    thin = {c: per_check[c] for c in evaluation.CHECKS if per_check[c] < 200}
    assert not thin, f"fewer than 200 cases for {thin}"
    for check in evaluation.CHECKS:
        # Answers are ok or not.
        binary = ("check", "choice")
        wanted = {"ok", "fail"} if check in binary else {"ok", "watch", "fail"}
        assert wanted <= verdicts[check], f"{check}: only {verdicts[check]} among the cases"


def test_the_scenario_reading_fails_on_both(tmp_path):
    """0.75 in. w.c. (186.8 Pa) at 1,200 cfm on a bank designed for 1,695 cfm: fail on the phone and the server.

    186.8 × (1695/1200)^1.5 = 313.6 Pa at design airflow (n = 1.5, common practice): (313.6 − 90)/(250 − 90)
    = 139.8 % of the clean-to-final span, beyond the final 250 Pa.
    """
    rng = random.Random(1)
    ahu, comps = _unit(rng)
    ahu.design_supply_airflow_m3s = 1695 * 0.0004719474432  # cfm → m³/s (ft³ = 0.3048³ m³, exact)
    bank = comps[0]
    bank.specs = {"clean_dp_pa": 90.0, "final_dp_pa": 250.0}
    values = {
        ("visit.supply_airflow", None): 1200 * 0.0004719474432,
        ("filter_check.dp", bank.pk): 0.75 * 249.0889,  # in. w.c., conventional inch of water
    }
    case = {
        "ahu": ahu,
        "components": comps,
        "slots": _slots(ahu, comps),
        "values": values,
        "points": {},
        "codes": {c.pk: c.label_code for c in comps},
    }
    [py] = [r for r in python_results(case) if r["check"] == "filter_loading" and r["component"] == bank.label_code]
    out = run_js([js_input(case)], tmp_path)["out"][0]["results"]
    [js] = [r for r in out if r["check"] == "filter_loading" and r["component"] == bank.label_code]
    assert py["verdict"] == js["verdict"] == "fail"
    assert js["derived"]["loading_pct"] == pytest.approx(139.8, abs=0.1)


def test_a_coil_with_no_heat_on_either_side_reads_the_same_plain_words_on_both(tmp_path):
    """Air and water in equal to out: no heat on either side. Both say so in the same words, with no argument
    names and no number in a unit (1 W reads "0.0 kW" or "3 Btu/h")."""
    rng = random.Random(2)
    ahu, comps = _unit(rng)
    coil = next(c for c in comps if c.kind == "coil" and c.specs.get("fluid") == "water")
    values = {
        ("coil_clean.air_in", coil.pk): 20.0,
        ("coil_clean.air_out", coil.pk): 20.0,
        ("coil_clean.water_in", coil.pk): 60.0,
        ("coil_clean.water_out", coil.pk): 60.0,
        ("coil_clean.water_flow", coil.pk): 0.0005,
        ("visit.supply_airflow", None): 2.0,
    }
    case = {
        "ahu": ahu,
        "components": comps,
        "slots": _slots(ahu, comps),
        "values": values,
        "points": {},
        "codes": {c.pk: c.label_code for c in comps},
    }
    [py] = [r for r in python_results(case) if r["check"] == "coil_balance" and r["component"] == coil.label_code]
    out = run_js([js_input(case)], tmp_path)["out"][0]["results"]
    [js] = [r for r in out if r["check"] == "coil_balance" and r["component"] == coil.label_code]
    assert py["verdict"] == js["verdict"] == "watch"
    assert py["reason"] == js["reason"]
    assert py["reason"].endswith("cannot balance the coil: both sides carry almost no heat: nothing to compare")


def test_the_tryout_readings_read_the_same_on_both(tmp_path):
    """The new-user tryout: a frost thermostat set to trip at 12.5 °C (above the usual 2–5 °C, about 36–41 °F, common
    practice) is a watch on both, nuisance trips and not a freeze-protection failure; a shut cooling coil whose
    air goes from 18 °C to 25 °C (7 K the wrong way, beyond the 2.68 K allowance of ASHRAE Guideline 36-2018
    5.16.14 FC#14's sensor errors and fan heat, from memory) is a re-check on both, never "the valve holds"."""
    rng = random.Random(3)
    ahu, comps = _unit(rng)
    cooling = next(c for c in comps if c.kind == "coil" and c.specs["duty"] == "cooling")
    values = {
        ("preheater_freeze.freeze_trip_temp", None): 12.5,
        ("coil_valve_leak.leak_air_in", cooling.pk): 18.0,
        ("coil_valve_leak.leak_air_out", cooling.pk): 25.0,
    }
    case = {
        "ahu": ahu,
        "components": comps,
        "slots": _slots(ahu, comps),
        "values": values,
        "points": {},
        "codes": {c.pk: c.label_code for c in comps},
    }
    py = {r.item: r for r in evaluate_case(case)}
    js = {r["item"]: r for r in run_js([js_input(case)], tmp_path)["out"][0]["results"]}
    trip, leak = py["preheater_freeze.freeze_trip_temp"], py["coil_valve_leak.leak_air_out"]
    js["limits"], js["coil_valve_leak"] = js["preheater_freeze.freeze_trip_temp"], js["coil_valve_leak.leak_air_out"]
    assert trip.verdict == js["limits"]["verdict"] == "watch"
    assert trip.condition_code == js["limits"]["condition_code"] == "freeze_trip_set_high"
    assert trip.reason == js["limits"]["reason"]
    assert "set higher than needed, nuisance trips likely" in trip.reason
    assert "adjust to the recommended setting" in trip.reason
    assert leak.verdict == js["coil_valve_leak"]["verdict"] == "watch"
    assert leak.reason == js["coil_valve_leak"]["reason"]
    assert "a rise of 7.0 K" in leak.reason and "— the valve holds" not in leak.reason
    assert "re-check: air warmed across a shut cooling coil (sensor error or heat from another coil)" in leak.reason


@pytest.mark.parametrize(
    "limits",
    [
        {"watch_min": 3.0},  # the floor above the band's bottom (2.5 °C)
        {"ok_min": 5.5, "ok_max": 2.5},  # the band's ends reversed
        {"ok_min": 5.5, "ok_max": 2.5, "watch_min": 6.0},  # and the floor above both
    ],
)
def test_a_trip_band_out_of_order_reads_the_same_never_ok_on_both(tmp_path, limits):
    """The frost thermostat's band with its limits out of order (a configuration error): on both the reading is
    judged never ok, saying the limits are inconsistent, a fail only below every limit; the same verdict, words and
    numbers for settings on and beside every limit and across -5–20 °C (the server used to refuse the form; the
    phone judged against the misordered band and could read ok)."""
    rng = random.Random(4)
    ahu, comps = _unit(rng)
    slots = _slots(ahu, comps)
    [trip] = [s for s in slots if s.item.api_key == "preheater_freeze.freeze_trip_temp"]
    trip.limits = {**trip.limits, **limits}
    edges = sorted({v for k, v in trip.limits.items() if k in ("ok_min", "ok_max", "watch_min") and v is not None})
    settings = [*edges, *(e - 0.01 for e in edges), *(e + 0.01 for e in edges), -5.0, 1.0, 12.5, 20.0]
    cases = [
        {
            "ahu": ahu,
            "components": comps,
            "slots": slots,
            "values": {("preheater_freeze.freeze_trip_temp", None): t},
            "points": {},
            "codes": {c.pk: c.label_code for c in comps},
        }
        for t in settings
    ]
    js = run_js([js_input(c) for c in cases], tmp_path)["out"]
    problems, seen = [], set()
    for t, case, j in zip(settings, cases, js, strict=True):
        assert "error" not in j, j["error"]
        py = python_results(case)
        problems.extend(f"{t}: {x}" for x in compare(case, py, j["results"]))
        [p] = [r for r in py if r["item"] == "preheater_freeze.freeze_trip_temp"]
        assert p["verdict"] != "ok" and "the limits for this check are inconsistent" in p["reason"], p
        assert p["verdict"] == ("fail" if t < min(edges) else "watch"), (t, p)
        seen.add(p["verdict"])
    assert not problems, "\n".join(problems[:25])
    assert seen == {"watch", "fail"}


@pytest.mark.parametrize(
    ("item", "component", "limits"),
    [
        # a one-sided band (ok at most 80 %, fail above 90 %) with its fail-above under the ok band's top
        ("humidifier.rh_downstream", "Steam humidifier", {"watch_max": 70.0}),
        # the ok band's ends reversed under a fail-above
        ("humidifier.rh_downstream", "Steam humidifier", {"ok_min": 85.0}),
        # a rule's band (motor_fla: ok at most the full-load current, watch to 110 %) with its ends swapped
        ("fan_bearings.motor_current", "Supply fan", {"ok_max": 12.1, "watch_max": 11.0}),
        # a two-sided band with every limit out of order
        (
            "damper_actuator.stroke_time",
            "Outdoor-air damper",
            {"watch_min": 200.0, "ok_min": 150.0, "ok_max": 90.0, "watch_max": 60.0},
        ),
    ],
)
def test_a_reading_band_out_of_order_reads_the_same_never_ok_on_both(tmp_path, item, component, limits):
    """Any numeric reading whose band has its limits out of order (a configuration error): on both it is judged
    never ok, saying the limits are inconsistent, a fail only beyond every limit on a side that fails; the same
    verdict, words and numbers on and beside every limit and far outside them (the server used to refuse the form;
    the phone judged against the misordered band and could read ok). The limits are invented for the test."""
    rng = random.Random(5)
    ahu, comps = _unit(rng)
    slots = _slots(ahu, comps)
    [slot] = [s for s in slots if s.item.api_key == item and s.component.name == component]
    slot.limits = {**slot.limits, **limits}
    band = {k: slot.limits.get(k) for k in ("watch_min", "ok_min", "ok_max", "watch_max")}
    edges = sorted({v for v in band.values() if v is not None})
    values = [*edges, *(e - 0.01 for e in edges), *(e + 0.01 for e in edges), min(edges) / 2, max(edges) * 2]
    cases = [
        {
            "ahu": ahu,
            "components": comps,
            "slots": slots,
            "values": {(item, slot.component.pk): x},
            "points": {},
            "codes": {c.pk: c.label_code for c in comps},
        }
        for x in values
    ]
    js = run_js([js_input(c) for c in cases], tmp_path)["out"]
    fails_low = band["watch_min"] is not None or band["ok_min"] is not None
    fails_high = band["watch_max"] is not None or band["ok_max"] is not None
    problems, seen = [], set()
    for x, case, j in zip(values, cases, js, strict=True):
        assert "error" not in j, j["error"]
        py = python_results(case)
        problems.extend(f"{x}: {p}" for p in compare(case, py, j["results"]))
        [p] = [r for r in py if r["item"] == item]
        assert p["verdict"] != "ok" and "the limits for this check are inconsistent" in p["reason"], p
        beyond = (fails_low and x < min(edges)) or (fails_high and x > max(edges))
        assert p["verdict"] == ("fail" if beyond else "watch"), (x, p)
        seen.add(p["verdict"])
    assert not problems, "\n".join(problems[:25])
    assert seen == {"watch", "fail"}


# ---------------------------------------------------------------------------
# The field calculator: frontend/calculators.py against calc.js
# ---------------------------------------------------------------------------

CALC_RUNNER = """
import { readFileSync } from "node:fs";
import { calculate, CALCULATORS } from "./calc.js";
const { context, cases } = JSON.parse(readFileSync(process.argv[2], "utf8"));
const out = cases.map((c) => {
  try { return calculate(context, c.name, c.values, c.system); }
  catch (error) { return { crash: String(error.stack || error) }; }
});
console.log(JSON.stringify({ calculators: CALCULATORS, out }));
"""


def _calc_case(rng: random.Random, name: str) -> dict:
    system = rng.choice(["si", "us"])
    if name == "oa-temperatures":
        o, r = rng.uniform(-20, 35), rng.uniform(18, 26)
        si = {"t_outdoor_c": o, "t_return_c": r, "t_mixed_c": r - rng.uniform(-0.2, 1.2) * (r - o)}
        quantities = dict.fromkeys(si, "temperature")
    elif name == "oa-co2":
        o, r = rng.uniform(380, 450), rng.uniform(400, 1500)
        si = {
            "co2_outdoor_ppm": o,
            "co2_return_ppm": r,
            "co2_supply_or_mixed_ppm": r - rng.uniform(-0.2, 1.2) * (r - o),
        }
        quantities = dict.fromkeys(si, "co2")
    elif name == "filter-loading":
        qd = rng.uniform(0.5, 5.0)
        clean = rng.uniform(40, 120)
        si = {
            "dp_pa": rng.uniform(10, 400),
            "airflow_m3s": qd * rng.uniform(0.4, 1.6),
            "design_airflow_m3s": qd,
            "clean_dp_pa": clean,
            "final_dp_pa": clean + rng.uniform(-20, 250),
        }
        quantities = {"dp_pa": "pressure", "clean_dp_pa": "pressure", "final_dp_pa": "pressure"}
        quantities |= {"airflow_m3s": "airflow", "design_airflow_m3s": "airflow"}
    else:
        si = {"airflow_m3s": rng.uniform(0.1, 8), "t_in_c": rng.uniform(-30, 40), "t_out_c": rng.uniform(-10, 60)}
        quantities = {"airflow_m3s": "airflow", "t_in_c": "temperature", "t_out_c": "temperature"}
    values = {k: f"{limits.to_display(v, quantities[k], system):.5g}" for k, v in si.items()}
    if name == "sensible-heat":
        values["airflow_at"] = rng.choice(["leaving", "entering", ""])
        values["place"] = rng.choice([p.key for p in _calc_places()] + [""])
    if rng.random() < 0.08:
        values[rng.choice(list(values))] = rng.choice(["", "abc", "1,5", "1e400", "-1e300", " 12 ", "nan"])
    return {"name": name, "values": values, "system": system}


def _calc_places():
    """Two sites of a person's (a harbour at 12 m, a mountain town at 1,600 m) and sea level."""
    from engineering.psychro import pressure_from_altitude
    from frontend.calculators import SEA_LEVEL, Place

    return [
        Place("site:1", "Harbour House", 12.0, pressure_from_altitude(altitude_m=12.0)),
        Place("site:2", "Alpine Lodge", 1600.0, pressure_from_altitude(altitude_m=1600.0)),
        SEA_LEVEL,
    ]


def _same_figure(server: str, phone: str) -> bool:
    """Equal texts; or the same shown number ("38,147", "−1.5") within floating-point noise, which may
    flip the last shown digit where the exact value sits on a rounding boundary."""
    if server == phone:
        return True
    try:
        a, b = (float(t.replace(",", "").replace("−", "-")) for t in (server, phone))
    except ValueError:
        return False
    last = 10 ** -(len(server.split(".")[1]) if "." in server else 0)
    return abs(a - b) <= last + 1e-12 and _close(a, b)


_NUMBER = re.compile(r"[−-]?\d[\d,]*(?:\.\d+)?")


def _same_words(server: str, phone: str) -> bool:
    """The same message, each number in it the same shown figure (``_same_figure``: a value on a rounding
    boundary may flip its last digit, 2012.5 L/s reading 2013 on one side and 2012 on the other)."""
    if server == phone:
        return True
    if _NUMBER.split(server) != _NUMBER.split(phone):
        return False
    a, b = _NUMBER.findall(server), _NUMBER.findall(phone)
    return len(a) == len(b) and all(map(_same_figure, a, b))


def test_calculator_works_offline_with_the_server_figures(tmp_path):
    """calc.js gives every calculator's figures as frontend/calculators.py does, in SI and US units, 250 cases each,
    and refuses the same fields in the same words."""
    from frontend.calculators import CALCULATORS, CalcError, calculate, calculator_context

    places = _calc_places()

    rng = random.Random(7)
    cases = [_calc_case(rng, name) for name in CALCULATORS for _ in range(250)]
    # The tryout's case: 1,200 cfm heated from 50 to 80 °F, airflow at the leaving state as the checklist's
    # coil check takes the supply fan's (38,147 Btu/h; tests/frontend/test_calculators.py hand-checks it).
    tryout = {"airflow_m3s": "1200", "t_in_c": "50", "t_out_c": "80"}
    cases += [
        {"name": "sensible-heat", "values": {**tryout, "airflow_at": at}, "system": "us"}
        for at in ("leaving", "entering", "")
    ]
    js = node_json(tmp_path, CALC_RUNNER, {"context": calculator_context(places), "cases": cases}, timeout=300)
    assert set(CALCULATORS) <= set(js["calculators"]), "a server calculator has no phone twin"
    problems, answered = [], Counter()
    for case, phone_answer in zip(cases, js["out"], strict=True):
        try:
            rows = calculate(name=case["name"], values=case["values"], system=case["system"], places=places)
            errors = None
        except CalcError as exc:
            rows, errors = None, exc.errors
        where = f"{case['name']} {case['system']} {case['values']}"
        if "crash" in phone_answer:
            problems.append(f"{where}: the phone failed: {phone_answer['crash']}")
        elif errors is not None:
            theirs = phone_answer.get("errors") or {}
            if set(errors) != set(theirs) or not all(
                len(errors[k]) == len(theirs[k]) and all(map(_same_words, errors[k], theirs[k])) for k in errors
            ):
                problems.append(f"{where}: server refuses {errors}, phone {phone_answer}")
        elif "rows" not in phone_answer:
            problems.append(f"{where}: server {rows}, phone refuses {phone_answer.get('errors')}")
        else:
            answered[case["name"]] += 1
            for p, j in zip(rows, phone_answer["rows"], strict=True):
                same = (p["label"], p["unit"], p.get("verdict")) == (j["label"], j["unit"], j.get("verdict"))
                if isinstance(p["value"], str):
                    same = same and _same_figure(p["value"], j["value"])
                else:
                    same = same and _close(float(p["value"]), float(j["value"]))
                if not same:
                    problems.append(f"{where}: server {p}, phone {j}")
    assert not problems, f"{len(problems)} disagreements:\n" + "\n".join(problems[:20])
    assert all(answered[name] >= 100 for name in CALCULATORS), answered


# ---------------------------------------------------------------------------
# A typed number: accounts.inputs.parse_number (the server, and frontend.checklist_form.typed_number for the page
# posted without scripts) against numbers.js parseNumber (the phone's form and calculator)
# ---------------------------------------------------------------------------

NUMBER_RUNNER = """
import { readFileSync } from "node:fs";
import { parseNumber } from "./numbers.js";
const cases = JSON.parse(readFileSync(process.argv[2], "utf8"));
console.log(JSON.stringify(cases.map((c) => parseNumber(c))));
"""

TYPED = [
    "12", "12.5", "12,5", " 12,5 ", "-3,25", "+4", ".5", ",5", "5.", "5,", "1e3", "1E-2", "1,5e2",
    "12,5a", "abc", "a12", "12..5", "1,2,3", "1.234,5", "1_000", "١٢", "Infinity", "-inf", "nan", "1e400",
    "0x10", "12 5", "", "   ", "−5", "5 °C", "1" * 41,
    # A comma before exactly three digits after a whole part that is not zero: thousands or decimals? Refused.
    "12,075", "1,250", " 1,250 ", "-12,075", "+1,250", "012,075", "12,075e2", "12,075.5",
    # Decimal commas all the same: a whole part of zero, or not three digits after the comma.
    "0,125", "00,125", "-0,125", "12,5", "12,50", "1,2345", "12,0750", ",075",
]  # fmt: skip

COMMA_RUNNER = """
import { readFileSync } from "node:fs";
import { commaWords } from "./numbers.js";
const cases = JSON.parse(readFileSync(process.argv[2], "utf8"));
console.log(JSON.stringify(cases.map((c) => commaWords(c))));
"""


def test_the_phone_reads_a_typed_number_as_the_server_does(tmp_path):
    """Issue 19: "12,5" is 12.5 on both; "12,5a", "abc", "1_000", "١٢" and the like are no number on either (the
    server's float() alone took "1_000" and Arabic-Indic digits; a browser's number field dropped them unseen)."""
    from accounts.inputs import parse_number
    from frontend.checklist_form import typed_number

    phone = node_json(tmp_path, NUMBER_RUNNER, TYPED)
    server = [parse_number(t, exponent=False) for t in TYPED]  # a person's typed number: no exponent
    assert phone == server, [(t, s, p) for t, s, p in zip(TYPED, server, phone, strict=True) if s != p]
    assert dict(zip(TYPED, server, strict=True))["12,5"] == 12.5
    assert dict(zip(TYPED, server, strict=True))["12,5a"] is None
    # The page posted without scripts keeps what is no number as typed, for the server to name.
    assert typed_number("12,5") == 12.5 and typed_number("12,5a") == "12,5a"


EXPONENT_RUNNER = """
import { readFileSync } from "node:fs";
import { exponentWords, parseNumber } from "./numbers.js";
const cases = JSON.parse(readFileSync(process.argv[2], "utf8"));
console.log(JSON.stringify(cases.map((c) => [parseNumber(c), exponentWords(c, "allowed 0 to 1000000 h")])));
"""


def test_a_number_typed_with_an_exponent_is_refused_alike_with_the_fields_range(tmp_path):
    """Tryout: "1e5" typed for run-hours read 100000 h on the phone. A person never types an exponent (common
    practice: it is more likely a slip): no number on either side, said in the same words with the field's own
    range; a number written out in full still reads, and machine data (a CSV cell) still reads an exponent."""
    from accounts.inputs import exponent_words, parse_number

    typed = [*TYPED, "1e5", "1E5", " 1e5 ", "2E3", "-2.5E3", ".5e1", "100000"]
    phone = node_json(tmp_path, EXPONENT_RUNNER, typed)
    server = [[parse_number(t, exponent=False), exponent_words(t, "allowed 0 to 1000000 h")] for t in typed]
    assert phone == server, [(t, s, p) for t, s, p in zip(typed, server, phone, strict=True) if s != p]
    said = dict(zip(typed, server, strict=True))
    for t in ("1e3", "1E-2", "1,5e2", "1e400", "12,075e2", "1e5", "1E5", " 1e5 ", "2E3", "-2.5E3", ".5e1"):
        assert said[t][0] is None and "is not a plain number" in said[t][1], (t, said[t])
    assert said["1e5"][1] == (
        "“1e5” is not a plain number; type digits with an optional decimal point or comma, allowed 0 to 1000000 h"
    )
    assert said["100000"] == [100000, None] and said["12,5"] == [12.5, None] and said["abc"] == [None, None]
    assert parse_number("1e5") == 100000  # machine data: a trend or meter CSV cell, an API value


def test_a_comma_that_may_group_thousands_is_refused_alike_with_both_readings(tmp_path):
    """Tryout (HIGH): "12,075" typed as the form showed a last meter reading stored 12.075 h. A comma before exactly
    three digits after a whole part that is not zero may be a thousands separator or a decimal comma: no number on
    either side, and both say the two readings in the same words; "0,125", "12,5" and "1,2345" stay decimal commas."""
    from accounts.inputs import comma_words, parse_number

    server = [comma_words(t) for t in TYPED]
    assert COMMA_RUNNER and node_json(tmp_path, COMMA_RUNNER, TYPED) == server
    words = dict(zip(TYPED, server, strict=True))
    assert words["12,075"] == "“12,075” could be 12075 or 12.075: type 12075 or 12.075"
    assert words["-12,075"] == "“-12,075” could be -12075 or -12.075: type -12075 or -12.075"
    assert words["012,075"] == "“012,075” could be 12075 or 12.075: type 12075 or 12.075"
    refused = {t for t, w in words.items() if w}
    assert refused == {"12,075", "1,250", " 1,250 ", "-12,075", "+1,250", "012,075"}
    assert all(parse_number(t) is None for t in refused)
    assert (parse_number("0,125"), parse_number("12,50"), parse_number("1,2345")) == (0.125, 12.5, 1.2345)
    assert parse_number("12075") == 12075 and parse_number("12.075") == 12.075


def test_an_outdoor_air_fraction_says_one_uncertainty_on_the_phone_the_server_and_the_finding(tmp_path):
    """Tryout: outdoor 0 °C, return 18 °C, mixed 12.4 °C. x = (18 − 12.4)/18 = 0.311 and, with ±0.5 K on each
    sensor (common practice) propagated to first order (GUM §5.1.2, from memory), u = 0.0348: kept as 0.035 in the
    record. The phone said "± 3 points" from u unrounded, the finding and the PDF "± 4 points" from the kept 0.035;
    every text now says the kept value, so all three read the same."""
    from engineering.outdoor_air import fraction_words

    rng = random.Random(5)
    ahu, comps = _unit(rng)
    values = {
        ("ventilation_check.outdoor_air", None): 0.0,
        ("ventilation_check.return_air", None): 18.0,
        ("ventilation_check.mixed_air", None): 12.4,
    }
    case = {
        "ahu": ahu,
        "components": comps,
        "slots": _slots(ahu, comps),
        "values": values,
        "points": {},
        "codes": {c.pk: c.label_code for c in comps},
    }
    [py] = [r for r in python_results(case) if r["check"] == "oa_fraction_temperature"]
    [js] = [
        r for r in run_js([js_input(case)], tmp_path)["out"][0]["results"] if r["check"] == "oa_fraction_temperature"
    ]
    kept = fraction_words(py["derived"]["oa_fraction"], py["derived"]["uncertainty"])  # as the finding says it
    assert py["derived"]["uncertainty"] == js["derived"]["uncertainty"] == 0.035
    assert kept in py["reason"] and kept in js["reason"], (kept, py["reason"], js["reason"])
    assert py["reason"] == js["reason"]


def test_a_filter_forecast_from_readings_and_trend_days_is_the_same_on_both(tmp_path):
    """Tryout (AHU-01): a bank with an earlier technician's reading and building-automation trend days up to the
    evening before the visit. The server joins the visit's own reading to them on one meter (the trend days shifted
    by the two meters' difference at the reading within a day of the last trend day, FilterLife.forecast_points);
    the phone was given the typed readings alone (points_for_next_reading), so it forecast from other points and
    said another date. Both now get the same points and join the reading by the same rule: the same words, date
    and numbers. The trend rises 0.02 Pa per run-hour, 20 h a day (invented demo data)."""
    from inspections.evaluation import filter_checks  # noqa: F401  (the check under test)
    from inspections.selectors.filter_banks import FILTER_READING, FILTER_TREND, FilterLife, FilterSeriesPoint

    rng = random.Random(6)
    ahu, comps = _unit(rng)
    bank = comps[1]
    bank.specs = {"clean_dp_pa": 30.0, "final_dp_pa": 150.0}
    design = ahu.design_supply_airflow_m3s
    other_bank = comps[0]

    def point(at, hours, dp, source):
        return FilterSeriesPoint(
            at=at, inspection_id=None, dp_pa=dp, airflow_m3s=design, corrected_dp_pa=dp, run_hours=hours,
            after_change=False, source=source,
        )  # fmt: skip

    start = FINISHED - dt.timedelta(days=61)
    typed = [point(start - dt.timedelta(days=30), 9_000.0, 40.0, FILTER_READING)]
    trend = [
        point(
            dt.datetime.combine((start + dt.timedelta(days=i)).date(), dt.time(23, 59), tzinfo=dt.UTC),
            2_000.0 + 20 * i,
            50.0 + 0.02 * 20 * i,
            FILTER_TREND,
        )
        for i in range(61)
    ]
    life = FilterLife(changed_at=None, points=(*typed, *trend))
    lives = {bank.label_code: life, other_bank.label_code: FilterLife(changed_at=None, points=())}
    values = {
        ("visit.supply_airflow", None): design,
        ("visit.run_hours", None): 10_230.0,
        ("filter_check.dp", bank.pk): 75.0,
    }
    slots = _slots(ahu, comps)
    form = evaluation.Form(
        ahu=ahu,
        components=comps,
        values={k: _python_value(v) for k, v in values.items()},
        slots=slots,
        finished_at=FINISHED,
        filter_points=lambda c, reading=None: lives[c.label_code].forecast_points(reading),
    )
    [py] = [r for r in evaluation.evaluate(form) if r.check == "filter_loading" and r.component is bank]
    context = phone.evaluation_context(
        ahu=ahu, components=comps, slots=slots, filter_points=lambda c: list(lives[c.label_code].points)
    )
    codes = {c.pk: c.label_code for c in comps}
    js_in = {
        "context": json.loads(json.dumps(context)),
        "readings": {f"{item}|{codes.get(pk, '') if pk else ''}": v for (item, pk), v in values.items()},
        "finished_on": FINISHED.date().isoformat(),
        "finished_at": FINISHED.isoformat(),
    }
    out = run_js([js_in], tmp_path)["out"][0]
    assert "error" not in out, out
    [js] = [r for r in out["results"] if r["check"] == "filter_loading" and r["component"] == bank.label_code]
    assert py.derived["points_used"] == 63, py.reason  # the typed reading, 61 trend days and this reading
    assert "change forecast" in py.reason
    assert py.reason == js["reason"]
    assert py.verdict == js["verdict"]
    assert py.derived["forecast_change_date"] == js["derived"]["forecast_change_date"]
    assert py.derived["points_used"] == js["derived"]["points_used"]


def test_a_filter_reading_at_design_airflow_shows_one_rounding_on_both_and_in_the_record(tmp_path):
    """Tryout PDF: "(121 Pa at design …)" in the reason beside "pressure drop at design airflow: 120 Pa" in the
    record's rows, two roundings of one number: 120.52 Pa said whole read 121, kept to a tenth (120.5) read 120
    (half to even). The words now say the kept value, on the phone and the server alike."""
    from inspections.display import derived_rows

    rng = random.Random(7)
    ahu, comps = _unit(rng)
    bank = comps[1]
    bank.specs = {"clean_dp_pa": 30.0, "final_dp_pa": 250.0}
    values = {("visit.supply_airflow", None): ahu.design_supply_airflow_m3s, ("filter_check.dp", bank.pk): 120.52}
    case = {
        "ahu": ahu,
        "components": comps,
        "slots": _slots(ahu, comps),
        "values": values,
        "points": {},
        "codes": {c.pk: c.label_code for c in comps},
    }
    [py] = [r for r in python_results(case) if r["check"] == "filter_loading" and r["component"] == bank.label_code]
    out = run_js([js_input(case)], tmp_path)["out"][0]["results"]
    [js] = [r for r in out if r["check"] == "filter_loading" and r["component"] == bank.label_code]
    [(_, row)] = derived_rows({"corrected_dp_pa": py["derived"]["corrected_dp_pa"]}, "si")
    # 120.5 Pa said whole reads 121 Pa, half up (engineering.formatting.format_number), in the row and the reason alike
    assert py["derived"]["corrected_dp_pa"] == 120.5 and row.startswith("121 ")
    assert f"({row} at design" in py["reason"], (row, py["reason"])
    assert py["reason"] == js["reason"]


@pytest.mark.parametrize("speed_rpm", [12.5, 6000.0])
def test_a_fan_speed_outside_its_plausible_range_is_set_aside_alike_on_both(tmp_path, speed_rpm):
    """The tryout: "Supply fan speed now" typed as 12.5 rpm (plausible 50–5000 rpm) on a fan designed for 6.5 m³/s at
    1120 rpm. By the first fan law (airflow ∝ speed, ASHRAE Handbook—HVAC Systems and Equipment, fans chapter; from
    memory) it would give 0.073 m³/s; neither side uses it: the torn pre-filter (12.5 Pa against a clean 30 Pa, 42 %,
    below the 50 % that fails, common practice) still fails at design airflow, and the outdoor-air check judges the
    design airflow, both saying in the same words the speed was not used (likewise a speed above the range)."""
    rng = random.Random(5)
    ahu, comps = _unit(rng)
    ahu.full_outdoor_air, ahu.ventilation_system = False, "single_zone"
    ahu.design_supply_airflow_m3s, ahu.design_min_oa_fraction = 6.5, 0.3
    ahu.space_kind, ahu.floor_area_m2, ahu.design_occupants = "office", 3000.0, 348
    pre = next(c for c in comps if c.name == "Pre-filters")
    pre.specs = {"clean_dp_pa": 30.0, "final_dp_pa": 150.0}
    fan = next(c for c in comps if c.kind == "fan")
    fan.specs = {**fan.specs, "design_speed_rpm": 1120.0, "design_flow_m3s": 6.5}
    values = {
        ("visit.supply_fan_speed", None): speed_rpm / 60,  # rev/s
        ("filter_check.dp", pre.pk): 12.5,
        ("ventilation_check.outdoor_co2", None): 420.0,
        ("ventilation_check.return_co2", None): 900.0,
        ("ventilation_check.supply_co2", None): 775.0,
    }
    case = {
        "ahu": ahu,
        "components": comps,
        "slots": _slots(ahu, comps),
        "values": values,
        "points": {},
        "codes": {c.pk: c.label_code for c in comps},
    }
    py = python_results(case)
    js = run_js([js_input(case)], tmp_path)["out"][0]
    assert "error" not in js, js
    assert not compare(case, py, js["results"])
    shown = f"{speed_rpm:.1f}"
    where = f"supply fan speed now {shown} rpm not used: outside the plausible 50–5000 rpm"
    [torn] = [r for r in py if r["check"] == "filter_loading" and r["component"] == pre.label_code]
    assert torn["verdict"] == "fail" and where in torn["reason"], torn["reason"]
    assert torn["derived"]["airflow_source"] == "design airflow assumed (not measured)"
    [co2] = [r for r in py if r["check"] == "oa_fraction_co2"]
    assert where in co2["reason"] and "100 % of the supply air" not in co2["reason"], co2["reason"]


def test_a_requirement_above_the_supply_airflow_reads_the_same_on_both(tmp_path):
    """The space needs 1.77 m³/s (ASHRAE 62.1 office, 2.5 L/s per person and 0.3 L/s per m², from memory) and
    0.5 m³/s was measured: both say the need is more than the supply airflow taken for this visit and fail, never
    "100 % of the supply air"."""
    rng = random.Random(6)
    ahu, comps = _unit(rng)
    ahu.full_outdoor_air, ahu.ventilation_system, ahu.air_distribution = False, "single_zone", "ceiling_supply_cool"
    ahu.design_supply_airflow_m3s, ahu.design_min_oa_fraction = 6.5, 0.3
    ahu.space_kind, ahu.floor_area_m2, ahu.design_occupants = "office", 3000.0, 348
    values = {
        ("visit.supply_airflow", None): 0.5,
        ("ventilation_check.outdoor_co2", None): 420.0,
        ("ventilation_check.return_co2", None): 900.0,
        ("ventilation_check.supply_co2", None): 500.0,
    }
    case = {
        "ahu": ahu,
        "components": comps,
        "slots": _slots(ahu, comps),
        "values": values,
        "points": {},
        "codes": {c.pk: c.label_code for c in comps},
    }
    py = python_results(case)
    js = run_js([js_input(case)], tmp_path)["out"][0]
    assert "error" not in js, js
    assert not compare(case, py, js["results"])
    [co2] = [r for r in py if r["check"] == "oa_fraction_co2"]
    assert co2["verdict"] == "fail"
    assert "1770 L/s for office space" in co2["reason"], co2["reason"]
    assert (
        "more than the 500 L/s supply airflow taken for this visit, not met even at 100 % outdoor air" in co2["reason"]
    )
    assert co2["reason"].endswith("; judged by what the space needs")


def test_a_trip_setting_outside_its_plausible_range_is_still_judged_on_its_own_alike_on_both(tmp_path):
    """The frost thermostat's trip setting typed as 65 °C (plausible −40 to 60 °C) is flagged, but it is the
    reading judged, not an input to another judgement: both judge it on its own as typed, a watch (not proven, so
    never counted as a passed freeze step; the words say re-check it), never set aside as "not used"."""
    rng = random.Random(7)
    ahu, comps = _unit(rng)
    values = {("preheater_freeze.freeze_trip_temp", None): 65.0}
    case = {
        "ahu": ahu,
        "components": comps,
        "slots": _slots(ahu, comps),
        "values": values,
        "points": {},
        "codes": {c.pk: c.label_code for c in comps},
    }
    py = python_results(case)
    js = run_js([js_input(case)], tmp_path)["out"][0]
    assert "error" not in js, js
    assert not compare(case, py, js["results"])
    [trip] = [r for r in py if r["item"] == "preheater_freeze.freeze_trip_temp"]
    assert trip["verdict"] == "watch" and "not used" not in trip["reason"], trip["reason"]
    # Not proven (readiness never counts it as passed), and words that say so on both.
    assert "still protected" not in trip["reason"] and "not proven" in trip["reason"], trip["reason"]
    assert "outside the plausible" in trip["reason"], trip["reason"]
