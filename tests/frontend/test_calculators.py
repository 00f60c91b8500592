"""The field calculator: the checklist's formulas, the reader's units, plain rounded figures."""

import pytest

from engineering.airside import dry_air_density_kg_m3, sensible_heat_w
from engineering.formatting import number_text
from engineering.units import from_display
from frontend import calculator_inputs, calculators
from frontend.calculators import CalcError, calculate, calculator_context
from tests.phone_js import node_json

# A number typed with an exponent (accounts.typed_numbers.exponent_words), before the field's range.
PLAIN = "is not a plain number; type digits with an optional decimal point or comma"

# 1,200 cfm heated from 50 to 80 °F (the tryout's case).
TYPED_US = {"airflow_m3s": "1200", "t_in_c": "50", "t_out_c": "80"}


def test_sensible_heat_uses_the_checklist_function_with_airflow_at_the_leaving_state():
    """By default the airflow is taken at the leaving air (a supply fan after the coil), as the
    checklist's coil check takes the supply airflow; the figure is the same engineering function's,
    rounded to whole Btu/h with thousands grouped."""
    rows = calculate(name="sensible-heat", values=TYPED_US, system="us")
    expected_w = sensible_heat_w(
        airflow_m3s=from_display(value=1200, quantity="airflow", system="us"),
        t_in_c=from_display(value=50, quantity="temperature", system="us"),
        t_out_c=from_display(value=80, quantity="temperature", system="us"),
        airflow_at="leaving",
    )
    assert rows == [
        {"label": "Sensible heat added to the air", "value": "38147", "unit": "Btu/h"},
        {"label": "Air assumed", "value": "dry air at 29.92 in. Hg, the standard atmosphere at sea level", "unit": ""},
    ]
    assert expected_w / 0.29307107 == pytest.approx(38_147, abs=0.5)  # 1 Btu_IT/h = 0.29307107 W


def test_sensible_heat_hand_check_against_the_1_08_rule():
    """Hand check: 1.08 × cfm × ΔT°F = 1.08 × 1200 × 30 = 38,880 Btu/h for standard air, 0.075 lb/ft³
    (1.2014 kg/m³) and c_p 0.24 Btu/lb·°F (ASHRAE Handbook—Fundamentals, the 1.08 factor for standard air at
    sea level, from memory). Our figure differs only by the density (dry air at 80 °F, 101.325 kPa:
    1.1774 kg/m³, ρ = p/(R_da·T), ASHRAE Fundamentals ch.1) and c_p (1.006 kJ/kg·K = 0.2403 Btu/lb·°F,
    ASHRAE Fundamentals ch.1 eq. 32): 38,880 × 1.1774/1.2014 × 0.2403/0.24 = 38,147 Btu/h."""
    rho_leaving = dry_air_density_kg_m3(t_c=(80 - 32) / 1.8)
    assert rho_leaving == pytest.approx(1.1774, abs=1e-4)
    rule = 1.08 * 1200 * 30
    assert rule == pytest.approx(38_880)
    scaled = rule * (rho_leaving / 1.2014) * (1006 / 4186.8 / 0.24)  # 1 Btu/lb·°F = 4186.8 J/kg·K
    assert scaled == pytest.approx(38_147, rel=1e-3)


def test_sensible_heat_at_the_entering_state_when_the_user_picks_it():
    """Picking "entering air" takes the density at 50 °F (1.2467 kg/m³), 5.9 % denser: 40,393 Btu/h."""
    rows = calculate(name="sensible-heat", values={**TYPED_US, "airflow_at": "entering"}, system="us")
    assert rows[0]["value"] == "40393"
    rows_si = calculate(
        name="sensible-heat", values={"airflow_m3s": "566.3", "t_in_c": "10", "t_out_c": "26.7"}, system="si"
    )
    assert rows_si[0] == {"label": "Sensible heat added to the air", "value": "11.2", "unit": "kW"}


def test_sensible_heat_refuses_an_unknown_state_in_plain_words():
    """A state that is neither entering nor leaving is refused, naming the field in plain words."""
    with pytest.raises(CalcError) as caught:
        calculate(name="sensible-heat", values={**TYPED_US, "airflow_at": "middle"}, system="us")
    (message,) = caught.value.errors["airflow_at"]
    assert message.startswith("Airflow measured at: choose leaving air")
    assert "airflow_at" not in message


# ---------------------------------------------------------------------------------------------------------------
# A US technician's filter figures, on the server and on the phone (calc.js under Node)
# ---------------------------------------------------------------------------------------------------------------

IN_WC_PA = 249.08891  # conventional inch of water: 1000 kg/m³ × 9.80665 m/s² × 0.0254 m (NIST SP 811, App. B.8)
# 0.75 in. w.c. at 1,200 cfm on a bank rated for 1,695 cfm, clean 0.36 and final 1.20 in. w.c.
FILTER_US = {"dp_pa": "0.75", "airflow_m3s": "1200", "design_airflow_m3s": "1695", "clean_dp_pa": "0.36"}
FILTER_US["final_dp_pa"] = "1.20"
NODE_RUNNER = """
import { readFileSync } from "node:fs";
import { calculate } from "./calc.js";
const { context, cases } = JSON.parse(readFileSync(process.argv[2], "utf8"));
console.log(JSON.stringify(cases.map((c) => calculate(context, c.name, c.values, c.system))));
"""


def _phone(tmp_path, cases: list[dict], places=None) -> list[dict]:
    """calc.js's answers to the cases, fed the page's calculator context, as the phone works them offline."""
    return node_json(tmp_path, NODE_RUNNER, {"context": calculator_context(places), "cases": cases}, timeout=60)


def _server(case: dict, places=None) -> dict:
    try:
        return {"rows": calculate(name=case["name"], values=case["values"], system=case["system"], places=places)}
    except CalcError as exc:
        return {"errors": exc.errors}


def test_a_us_filter_figure_reads_in_inches_of_water_on_the_server_and_the_phone(tmp_path):
    """186.8 Pa × (1695/1200)^1.5 = 313.6 Pa = 1.26 in. w.c. at design airflow (n = 1.5, common practice),
    (313.6 − 89.7)/(298.9 − 89.7) = 107 % of the span: fail. The reason gives every pressure in in. w.c. at two
    decimals, the final one as typed (1.20), never in Pa; the phone says the same words."""
    case = {"name": "filter-loading", "values": FILTER_US, "system": "us"}
    server = _server(case)
    assert server == {
        "rows": [
            {"label": "Pressure drop at design airflow", "value": "1.26", "unit": "in. w.c."},
            {"label": "Loading (clean = 0 %, final = 100 %)", "value": "107", "unit": "%"},
            {"label": "Verdict", "value": "fail", "unit": "", "verdict": "fail"},
            {
                "label": "Reason",
                "value": "filter 1.26 in. w.c. at design airflow, 107 % of the way from clean 0.36 in. w.c. to "
                "final 1.20 in. w.c. (watch from 75 %, fail from 95 %)",
                "unit": "",
            },
        ]
    }
    assert _phone(tmp_path, [case]) == [server]


def test_typed_inches_of_water_keep_their_value_through_si_and_back():
    """1.20 in. w.c. is stored as 298.9 Pa (1.20 × 249.08891, NIST SP 811): an SI reader rightly sees 299 Pa,
    and the US reader sees 1.20 again, not a drifted 1.19 or 1.21. 300 Pa (1.204 in. w.c.) also reads 1.20."""
    stored = from_display(value=1.20, quantity="pressure", system="us")
    assert stored == pytest.approx(1.20 * IN_WC_PA, abs=1e-4)
    assert number_text(stored, quantity="pressure", system="si") == "299"
    assert number_text(stored, quantity="pressure", system="us") == "1.20"
    assert number_text(300.0, quantity="pressure", system="us") == "1.20"
    for typed in ("0.01", "0.36", "1.00", "1.20", "2.55", "10.03"):
        assert (
            number_text(
                from_display(value=float(typed), quantity="pressure", system="us"), quantity="pressure", system="us"
            )
            == typed
        )


def test_a_shown_bound_typed_back_is_allowed_and_one_past_it_is_refused_naming_the_range(tmp_path):
    """2,500 Pa, the largest filter pressure drop (engineering.filters.FILTER_DP_PA), is 10.037 in. w.c.: the
    range reads "0 to 10 in. w.c." (sensible figures, rounded inward) and 10.03 is still worked; 10.04 in. w.c.
    (2,500.9 Pa) is refused in words that give the allowed range, on the server and the phone alike."""
    at_max = {**FILTER_US, "final_dp_pa": "10.03"}
    past = {**FILTER_US, "final_dp_pa": "10.04"}
    cases = [{"name": "filter-loading", "values": v, "system": "us"} for v in (at_max, past)]
    server = [_server(c) for c in cases]
    assert "rows" in server[0]
    assert server[1] == {
        "errors": {
            "final_dp_pa": ["Final pressure drop: 10.04 in. w.c. is outside the allowed range, from 0 to 10 in. w.c."]
        }
    }
    assert _phone(tmp_path, cases) == server


@pytest.mark.parametrize(
    ("typed", "message"),
    [
        ("", "Final pressure drop: missing; enter a number from 0 to 10 in. w.c."),
        (
            "1e400",
            f"Final pressure drop: “1e400” {PLAIN}, allowed from 0 to 10 in. w.c.",
        ),
        ("abc", "Final pressure drop: abc is not a usable number; allowed from 0 to 10 in. w.c."),
        (
            "1e300",
            f"Final pressure drop: “1e300” {PLAIN}, allowed from 0 to 10 in. w.c.",
        ),
        ("300000", "Final pressure drop: 300000 in. w.c. is outside the allowed range, from 0 to 10 in. w.c."),
    ],
)
def test_a_blank_or_unusable_field_is_named_with_its_range(tmp_path, typed, message):
    """Blank, 1e400 (beyond any float), text, 1e300 (a number written with an exponent: typed in full or not at
    all) and a number far out of range each get a message naming the field, what was typed and the range, never a
    300-digit number or a silent blank, on the server and the phone alike."""
    case = {"name": "filter-loading", "values": {**FILTER_US, "final_dp_pa": typed}, "system": "us"}
    server = _server(case)
    assert server == {"errors": {"final_dp_pa": [message]}}
    assert _phone(tmp_path, [case]) == [server]


def test_sensible_heat_takes_the_sites_altitude_and_says_what_air_it_assumed(tmp_path):
    """At 1,500 m the standard atmosphere is 84.556 kPa (ASHRAE Handbook—Fundamentals ch.1 Table 1, from
    memory; eq. 3 gives 84.56 kPa): the air is 84.556/101.325 as dense as at sea level, so 1,200 cfm heated
    from 50 to 80 °F carries 38,147 × 0.8345 = 31,834 Btu/h. The result says the air it assumed."""
    from engineering.psychro import pressure_from_altitude
    from frontend.calculators import SEA_LEVEL, Place

    high = Place("site:7", "Ridge Clinic", 1500.0, pressure_from_altitude(altitude_m=1500.0))
    assert high.pressure_pa == pytest.approx(84_556, abs=10)
    places = [high, SEA_LEVEL]
    cases = [
        {"name": "sensible-heat", "values": TYPED_US, "system": "us"},  # the default: the person's first site
        {"name": "sensible-heat", "values": {**TYPED_US, "place": "sea-level"}, "system": "si"},
    ]
    server = [_server(c, places) for c in cases]
    heat, air = server[0]["rows"]
    assert heat["value"] == "31834" and heat["unit"] == "Btu/h"
    assert pytest.approx(31_834, abs=1) == 38_147 * 84_556 / 101_325
    assert air == {
        "label": "Air assumed",
        "value": "dry air at 24.97 in. Hg, the standard atmosphere at 4921 ft (Ridge Clinic)",
        "unit": "",
    }
    assert server[1]["rows"][1]["value"] == "dry air at 101.3 kPa, the standard atmosphere at sea level"
    assert _phone(tmp_path, cases, places) == server


def test_a_site_the_person_cannot_see_is_not_a_place_to_calculate_at(scenario, login):
    """The API takes the places of the person's own sites only: another organisation's site id is refused in
    words that list the person's choices."""
    client = login(scenario.technician)
    answer = client.post(
        "/api/calc/sensible-heat/",
        {"values": {"airflow_m3s": 500, "t_in_c": 10, "t_out_c": 30, "place": "site:999999"}},
        content_type="application/json",
    )
    assert answer.status_code == 400
    [message] = answer.json()["errors"]["place"]
    assert message.startswith("Site (its altitude sets the air pressure): choose ") and "sea level" in message


def test_the_calculator_page_defaults_to_the_persons_site_and_names_its_air(scenario, login):
    """Without scripts: the supervisor's first site by name (Harbour House, at the factory's altitude) is the
    default place, and the figure says the air it assumed."""
    site = scenario.site_a
    site.altitude_m = 350.0
    site.save(update_fields=["altitude_m"])
    client = login(scenario.supervisor)
    page = client.get("/calc/").content.decode()
    assert f'<option value="site:{site.pk}"' in page and "Harbour House (350 m)" in page
    html = client.post(
        "/calc/", {"calculator": "sensible-heat", "airflow_m3s": "500", "t_in_c": "10", "t_out_c": "30"}
    ).content.decode()
    assert "the standard atmosphere at 350 m (Harbour House)" in html


def test_shown_limits_are_sensible_figures_rounded_inward():
    """The limits a person reads: 2,500 Pa = 10.037 in. w.c. (1 in. w.c. = 249.0889 Pa, NIST SP 811 B.8) shows
    10; 100 m³/s = 211,888 cfm shows 210,000; the shown limit is inside the exact one; 0 stays 0."""
    from engineering.units import sensible_bound

    assert sensible_bound(10.03, upper=True) == 10
    assert sensible_bound(211_888.0, upper=True) == 210_000
    assert sensible_bound(-75.9, upper=False) == -75
    assert sensible_bound(-76.0, upper=False) == -76
    assert sensible_bound(0.0, upper=False) == 0
    assert sensible_bound(0.037, upper=False) == 0.037
    assert sensible_bound(0.0374, upper=False) == 0.038
    us = {
        i.label: calculator_inputs.allowed_text(i, "us")
        for c in calculators.CALCULATORS.values()
        for i in c.inputs
        if i.quantity
    }
    assert us["Final pressure drop"] == "from 0 to 10 in. w.c."
    assert us["Airflow now"] == "from 0 to 210000 cfm"
    assert not any(".00 " in text or "211888" in text for text in us.values()), us
