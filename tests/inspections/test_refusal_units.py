"""Engineering refusals reach every reader in their own units, rounded as the quantity usually is.

A refusal (``EngineeringInputError``) carries its numbers as SI quantities (``parts``, the reason-part form
of inspections/reasons.py); the checklist's "cannot judge" reasons and the field calculator render them in
the reader's units. Conversions are pint's (engineering/units.py): 1 m³/s = 2118.88 cfm, 1 K = 1.8 Δ°F.
"""

import pytest

from accounts.models import Role
from engineering import filters, outdoor_air
from engineering.errors import EngineeringInputError
from frontend.calculators import CalcError, calculate
from inspections.display import refusal_parts
from inspections.reasons import render
from tests.factories.accounts import OrganisationFactory, make_person
from tests.factories.inspections import component, make_visit, r, sync_form


def test_a_filter_airflow_refusal_reads_in_each_readers_units():
    """1,200 cfm (0.566 m³/s) on a 2.8 m³/s bank is outside 0.5–1.5 × design = 1.4–4.2 m³/s
    (= 2966–8899 cfm; 5933 cfm design; never grouped, engineering.formatting.format_number);
    SI in L/s, no unrounded number in either."""
    with pytest.raises(EngineeringInputError) as caught:
        filters.corrected_pressure_drop(dp_pa=100, airflow_m3s=1200 / 2118.88, design_airflow_m3s=2.8)
    parts = refusal_parts(caught.value)
    us, si = render(parts, "us"), render(parts, "si")
    assert us.startswith("airflow 1200 cfm is outside 2966–8899 cfm (0.5–1.5 × design 5933 cfm)")
    assert si.startswith("airflow 566 L/s is outside 1400–4200 L/s (0.5–1.5 × design 2800 L/s)")
    assert "0.566" not in us + si and "m³/s" not in us + si


def test_an_outdoor_air_refusal_gives_temperatures_and_their_difference_in_the_readers_units():
    """70 °F and 72 °F (21.11 and 22.22 °C) differ by 2.0 Δ°F (1.11 K), under 3 K = 5.4 Δ°F."""
    with pytest.raises(EngineeringInputError) as caught:
        outdoor_air.oa_fraction_from_temperatures(t_outdoor_c=190 / 9, t_return_c=200 / 9, t_mixed_c=21.5)
    parts = refusal_parts(caught.value)
    assert render(parts, "us") == (
        "cannot compute an outdoor-air fraction by temperatures: outdoor 70.0 °F and return 72.0 °F "
        "differ by 2.0 Δ°F; they must differ by at least 5.4 Δ°F"
    )
    assert render(parts, "si") == (
        "cannot compute an outdoor-air fraction by temperatures: outdoor 21.1 °C and return 22.2 °C "
        "differ by 1.1 K; they must differ by at least 3.0 K"
    )


def test_an_open_limit_reads_as_what_is_allowed_not_as_outside_a_band():
    """0 cfm where the airflow must be above zero: "must be above 0 cfm", never "0 … is outside … from 0"."""
    with pytest.raises(CalcError) as caught:
        calculate(
            name="filter-loading",
            values={
                "dp_pa": "0.5",
                "airflow_m3s": "0",
                "design_airflow_m3s": "5000",
                "clean_dp_pa": "0.3",
                "final_dp_pa": "1",
            },
            system="us",
        )
    (message,) = caught.value.errors["airflow_m3s"]
    assert message == "Airflow now: airflow 0 cfm must be above 0 cfm and at most 211888 cfm"


@pytest.mark.parametrize(
    ("system", "typed", "words"),
    [
        ("us", ("70", "72", "71"), "outdoor 70.0 °F and return 72.0 °F differ by 2.0 Δ°F"),
        ("si", ("21.1111", "22.2222", "21.5"), "outdoor 21.1 °C and return 22.2 °C differ by 1.1 K"),
    ],
)
def test_the_calculator_refusal_is_in_the_readers_units(system, typed, words):
    """The calculator restates the refusal in the reader's units (the tryout saw "21.1111 °C" for a US user)."""
    with pytest.raises(CalcError) as caught:
        calculate(
            name="oa-temperatures",
            values=dict(zip(("t_outdoor_c", "t_return_c", "t_mixed_c"), typed, strict=True)),
            system=system,
        )
    (message,) = caught.value.errors["t_outdoor_c"]
    assert words in message
    assert ("°C" not in message) if system == "us" else ("°F" not in message)


@pytest.mark.django_db
def test_a_us_technicians_cannot_judge_reason_is_in_cfm(api_client):
    """A US visit with 1,200 cfm supply on a 3.0 m³/s bank (allowed 1.5–4.5 m³/s = 3,178–9,535 cfm):
    the sync answer's reason is in cfm; the record (reason_si) keeps L/s."""
    org = OrganisationFactory()
    tech = make_person(organisation=org, role=Role.TECHNICIAN, unit_system="us")
    wo, _ = make_visit(tasks=["filter_check"], organisation=org, technician=tech)
    bank = component(wo.ahu, "Final filters")
    readings = [r("visit.run_hours", 1200), r("visit.supply_airflow", 1200), r("filter_check.dp", 0.5, bank)]
    api_client.force_authenticate(tech)
    res = api_client.post(
        "/api/inspections/sync/", {"forms": [sync_form(wo, readings, unit_system="us")]}, format="json"
    )
    assert res.status_code == 200
    [out] = res.json()["results"]
    ev = next(e for e in out["evaluation"] if e["check"] == "filter_loading")
    assert ev["reason"].startswith("cannot judge the filter loading: airflow 1200 cfm is outside 3178–9535 cfm")
    assert "m³/s" not in ev["reason"] and "0.566" not in ev["reason"]
    assert "566 L/s is outside 1500–4500 L/s" in ev["reason_si"]
