"""A new user's tryout: the supply fan is marked "variable-speed drive: no", yet the visit's fan-speed reading
gives the airflow. The first fan law holds at any speed, so the reading is still used; the phone and the server
say beside it that the fan has no variable-speed drive (its speed moves only with belt slip or a pulley change)."""

from __future__ import annotations

import random

import pytest

from tests.inspections.test_phone_agreement import _slots, _unit, js_input, python_results, run_js

WORDS = "(the fan has no variable-speed drive: its speed moves only with belt slip or a pulley change)"


@pytest.mark.parametrize(("vsd", "said"), [(False, True), (True, False), (None, False)])
def test_a_speed_reading_on_a_fan_without_a_drive_says_so_on_both(tmp_path, vsd, said):
    rng = random.Random(11)
    ahu, comps = _unit(rng)
    fan = next(c for c in comps if c.kind == "fan")
    fan.specs = {
        "role": "supply",
        "drive": "belt",
        "design_speed_rpm": 1120.0,
        "design_flow_m3s": ahu.design_supply_airflow_m3s,
    }
    if vsd is not None:
        fan.specs["vsd"] = vsd
    bank = comps[1]
    bank.specs = {"clean_dp_pa": 30.0, "final_dp_pa": 250.0}
    values = {("visit.supply_fan_speed", None): 1100 / 60, ("filter_check.dp", bank.pk): 120.0}
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
    source = py["derived"]["airflow_source"]
    assert source.startswith("from fan speed 1100 rpm by the first fan law")
    assert (WORDS in source) is said
    assert js["derived"]["airflow_source"] == source
