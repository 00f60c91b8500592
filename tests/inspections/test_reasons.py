"""Evaluation reasons in the reader's units: SI text kept for the record, parts rendered for SI or US readers."""

import pint
import pytest

from accounts.models import Role
from inspections.models import Evaluation
from inspections.reasons import q, render, span
from inspections.selectors import reason_for
from tests.factories.accounts import OrganisationFactory, make_person
from tests.factories.inspections import component, make_visit, r, sync_form

SYNC = "/api/inspections/sync/"
ureg = pint.UnitRegistry()


def _us(value, si_unit, us_unit):
    return ureg.Quantity(value, si_unit).to(us_unit).magnitude


def _submit_us(api_client):
    """A US technician's visit: 160 Pa at 2.4 m³/s on a 3.0 m³/s bank; supply 18.5 °C against 17 °C."""
    org = OrganisationFactory()
    tech = make_person(organisation=org, role=Role.TECHNICIAN, unit_system="us")
    wo, _ = make_visit(tasks=["filter_check", "controls_check"], organisation=org, technician=tech)
    bank = component(wo.ahu, "Final filters")
    readings = [
        r("visit.run_hours", 1200),
        r("visit.supply_airflow", _us(2.4, "m**3/s", "ft**3/min")),
        r("filter_check.dp", _us(160, "pascal", "inch_H2O"), bank),
        r("controls_check.supply_air", _us(18.5, "degC", "degF")),
        r("controls_check.supply_setpoint", _us(17.0, "degC", "degF")),
    ]
    api_client.force_authenticate(tech)
    res = api_client.post(SYNC, {"forms": [sync_form(wo, readings, unit_system="us")]}, format="json")
    assert res.status_code == 200
    [out] = res.json()["results"]
    return out, bank, tech


@pytest.mark.django_db
def test_a_us_users_sync_answer_gives_reasons_in_inches_of_water_and_fahrenheit(api_client):
    """Filter: 160 × (3.0/2.4)^1.5 = 223.6 Pa at design airflow = 0.90 in. w.c. (pint's inch_H2O, 249.09 Pa);
    supply air 18.5 °C = 65.3 °F, 1.5 K = 2.7 Δ°F above the 17 °C = 62.6 °F set point (pint conversions)."""
    out, _, _ = _submit_us(api_client)
    filt = next(e for e in out["evaluation"] if e["check"] == "filter_loading")
    corrected = filt["derived"]["corrected_dp_pa"]
    assert corrected == pytest.approx(223.6, abs=0.1)
    assert f"{_us(corrected, 'pascal', 'inch_H2O'):.2f} in. w.c. at design" in filt["reason"]
    assert "0.90 in. w.c. at design" in filt["reason"]
    assert "Pa" not in filt["reason"]
    assert "224 Pa at design" in filt["reason_si"]  # the record stays SI

    supply = next(e for e in out["evaluation"] if e["check"] == "supply_temperature")
    assert supply["verdict"] == "watch"
    assert f"supply air {_us(18.5, 'degC', 'degF'):.1f} °F" in supply["reason"]  # 65.3 °F
    assert f"{_us(1.5, 'kelvin', 'delta_degF'):.1f} Δ°F above set point 62.6 °F" in supply["reason"]  # 2.7
    assert "°C" not in supply["reason"]
    assert supply["reason_si"].startswith("supply air 18.5 °C, 1.5 K above set point 17.0 °C")


@pytest.mark.django_db
def test_reason_for_renders_the_stored_evaluation_in_any_readers_units(api_client):
    """The same stored evaluation reads in Pa for an SI reader and in. w.c. for a US reader; SI text is unchanged."""
    out, _, tech = _submit_us(api_client)
    ev = Evaluation.objects.get(inspection_id=out["inspection_id"], check_name="filter_loading")
    assert reason_for(evaluation=ev, unit_system="si") == ev.reason
    assert "224 Pa at design, clean 90 Pa, final 250 Pa" in ev.reason
    assert "0.90 in. w.c. at design, clean 0.36 in. w.c., final 1.00 in. w.c." in reason_for(
        evaluation=ev, unit_system="us"
    )
    # The detail API answers in the reader's units too.
    api_client.force_authenticate(tech)
    detail = api_client.get(f"/api/inspections/{out['inspection_id']}/").json()
    [e] = [e for e in detail["evaluations"] if e["check"] == "filter_loading"]
    assert "in. w.c." in e["reason"] and "Pa" in e["reason_si"]


def test_bands_and_differences_convert_as_bands_and_differences():
    """A 2–6 °C band is 35.6–42.8 °F; a 2 K difference is 3.6 Δ°F, never 35.6 °F (pint: 1 K = 1.8 Δ°F)."""
    parts = [
        "trip ",
        q(4.0, "temperature"),
        " within ",
        span(2.0, 6.0, "temperature"),
        ", ",
        q(2.0, "temperature_difference"),
        " from the limit",
    ]
    assert render(parts, "si") == "trip 4.0 °C within 2.0–6.0 °C, 2.0 K from the limit"
    assert render(parts, "us") == "trip 39.2 °F within 35.6–42.8 °F, 3.6 Δ°F from the limit"
    assert render([span(None, 250, "pressure")], "us") == "at most 1.00 in. w.c."


@pytest.mark.django_db
def test_the_inspection_report_gives_reasons_in_the_readers_units(api_client, django_capture_on_commit_callbacks):
    """A US reader's PDF states the supply-air reason in °F and Δ°F (2.7 Δ°F = 1.5 K, pint), not in °C."""
    import io

    from pypdf import PdfReader

    from reports.models import Report
    from reports.services import report_request

    out, _, _ = _submit_us(api_client)
    ev = Evaluation.objects.get(inspection_id=out["inspection_id"], check_name="supply_temperature")
    supervisor = make_person(organisation=ev.inspection.work_order.organisation, role=Role.SUPERVISOR, unit_system="us")
    with django_capture_on_commit_callbacks(execute=True):
        report = report_request(
            user=supervisor, kind="inspection", parameters={"work_order": str(ev.inspection.work_order.public_id)}
        )
    report = Report.objects.get(pk=report.pk)
    assert report.status == "done", report.error
    with report.file.open("rb") as fh:
        text = " ".join(page.extract_text() for page in PdfReader(io.BytesIO(fh.read())).pages)
    assert "2.7 Δ°F above set point 62.6 °F" in " ".join(text.split())
    assert "1.5 K above set point" not in text


def test_a_reason_does_not_repeat_the_end_of_its_heading():
    """Under "Outdoor-air fraction by temperatures" the reason "by temperatures: outdoor air 41 %" drops its lead;
    a lead the heading does not end with stays."""
    from inspections.reasons import text_without_label_end

    label = "Outdoor-air fraction by temperatures"
    assert text_without_label_end("by temperatures: outdoor air 41 %", label) == "outdoor air 41 %"
    assert text_without_label_end("by CO2: outdoor air 39 %", label) == "by CO2: outdoor air 39 %"
    assert text_without_label_end("no colon here", label) == "no colon here"
