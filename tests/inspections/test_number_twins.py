"""The phone rounds and widens a number exactly as the server does: formatNumber and typedDecimals in units.js
against engineering.formatting's format_number and typed_decimals, on ties (12.5, 0.15, 2.675), typed values
shown back after storage in SI, conversion noise, negatives and large and small numbers."""

from __future__ import annotations

import random
from pathlib import Path

from engineering import formatting as fmt
from engineering import units
from tests.phone_js import node_json

RUNNER = """
import { readFileSync } from "node:fs";
import { formatNumber, typedDecimals } from "./units.js";
const cases = JSON.parse(readFileSync(process.argv[2], "utf8"));
console.log(JSON.stringify(cases.map(([x, d]) => [formatNumber(x, d), typedDecimals(x, d)])));
"""


def _cases() -> list[tuple[float, int]]:
    rng = random.Random(20261205)
    xs = [12.5, -12.5, 0.15, 0.25, 0.35, 2.675, 9.995, -0.04, 0.0005, 154_000.0, 1e-20, 1e21, 12.0, 21.25]
    xs += [round(rng.uniform(-500, 5000), rng.randint(0, 4)) for _ in range(400)]
    xs += [rng.randint(-4000, 4000) / 8 for _ in range(100)]  # exact binary ties
    for typed in (0.055, 0.5, 1.25, 12.5, 2.34):  # typed in US, stored in SI, shown back in US
        si = units.from_display(value=typed, quantity="pressure", system="us")
        xs.append(units.to_display(value=si, quantity="pressure", system="us"))
    xs += [12.5 / 60 * 60, 566.3369327, 1200 / 2118.88 * 2118.88]
    return [(x, d) for x in xs for d in (0, 1, 2)]


def test_the_phone_rounds_and_widens_numbers_as_the_server_does(tmp_path: Path):
    cases = _cases()
    got = node_json(tmp_path, RUNNER, cases)
    want = [[fmt.format_number(x, decimals=d), fmt.typed_decimals(x, decimals=d)] for x, d in cases]
    wrong = [(x, d, g, w) for (x, d), g, w in zip(cases, got, want, strict=True) if g != w]
    assert not wrong, wrong[:10]


def test_a_tie_rounds_half_up_on_both():
    """Python's round(12.5) is 12 and JS's (0.15).toFixed(1) is "0.1": people read 13 and 0.2."""
    assert fmt.format_number(12.5, decimals=0) == "13"
    assert fmt.format_number(0.15, decimals=1) == "0.2"


def test_airflow_from_fan_speed_says_the_speed_as_typed():
    """Tryout: "Airflow from fan speed 12 rpm" gave 73 L/s, worked from the 12.5 rpm typed."""
    from types import SimpleNamespace as NS

    from inspections.evaluation.form import supply_airflow

    fan = NS(kind="fan", specs={"role": "supply", "design_speed_rpm": 17.0, "design_flow_m3s": 0.1})
    typed = {"visit.supply_airflow": None, "visit.supply_fan_speed": 12.5 / 60}  # stored rev/s
    form = NS(num=typed.get, components=[fan], ahu=NS(design_supply_airflow_m3s=0.1))
    flow, how = supply_airflow(form)
    assert how == "from fan speed 12.5 rpm by the first fan law"
    assert fmt.quantity_text(flow, quantity="airflow", system="si") == "74 L/s"  # 100 L/s × 12.5 / 17 = 73.5
