"""The faults pages agree with the other pages about the same unit.

- Freeze protection: the property manager's faults page never says no freeze event keeps a unit from being ready
  while her dashboard says the unit is not ready (a failed freeze-protection test, no trend event): both read
  ``inspections.freeze.freeze_readiness``, and the faults page says the dashboard's words.
- Outdoor air: where the trends' FC6 computes one outdoor-air fraction and a technician's visit measured a far
  other one, the fault's evidence page and each one's corrective work ("Why this work") say the two disagree and
  what a technician checks (``automation.oa_agreement``); neither judgement changes.

The world is ``tests.frontend.test_fault_pages_for_a_new_reader``'s (a stuck outdoor-air damper judged from a trend
CSV at Dune Offices; final filters loading up at Wharf House), with an electric preheater on Wharf House's AHU-01
whose freeze-protection test failed on 10 Jan 2026 (the freeze-trip test judged fail), in the freeze season.
"""

import datetime as dt
import html as html_lib
import re

import pytest
import time_machine
from django.urls import reverse

from accounts.models import Role
from inventory.models import Site
from scheduling.models import WorkOrder
from tests.factories.accounts import make_person
from tests.factories.inventory import ComponentFactory
from tests.frontend.test_fault_pages_for_a_new_reader import READ_AT, world  # noqa: F401 (the fixture)
from tests.reports import builders as b

pytestmark = pytest.mark.django_db


def _text(html: str) -> str:
    return html_lib.unescape(re.sub(r"\s+", " ", re.sub(r"<[^>]+>", " ", html)))


def _get(client, user, url, **params):
    client.force_login(user)
    with time_machine.travel(READ_AT, tick=False):
        return client.get(url, params)


@pytest.fixture
def failed_freeze_test(world):  # noqa: F811 (the fixture above)
    unit, wharf = world["unit"], world["wharf"]
    Site.objects.filter(pk=wharf.pk).update(freeze_season_start=dt.date(2025, 11, 1))
    heater = ComponentFactory(
        ahu=unit,
        kind="electric_preheater",
        name="Preheater",
        position=0,
        specs={"power_w": 12000, "stages": 2, "switch_on_c": 3},
    )
    tech = make_person(organisation=world["org"], role=Role.TECHNICIAN, username="tech")
    wo = b.preventive(unit, b.library()["preheater_freeze"], "2026-01-10", done="2026-01-10")
    b.freeze_test(wo, tech, finished="2026-01-10", heaters=[heater], verdicts={"freeze_trip_test": "fail"})
    return world


def test_the_faults_page_says_what_the_dashboard_says_of_a_unit_not_ready_without_a_freeze_event(
    client, failed_freeze_test
):
    w = failed_freeze_test
    dashboard = _text(_get(client, w["pm"], reverse("frontend:dashboard")).content.decode())
    faults = _text(_get(client, w["pm"], reverse("frontend:faults")).content.decode())
    [why] = re.findall(
        r"AHU-01 \(Main block\): (not ready — test failed on 10 Jan 2026: .*?) for the freeze", dashboard
    )
    assert why.endswith("; no corrective work raised yet"), why
    freeze = faults.split("Freeze protection")[1]
    assert "No freeze event keeps a unit from being ready" not in faults
    assert "No freeze event in the trends" in freeze
    assert f"AHU-01 (Main block), Wharf House: {why}" in freeze
    # Once a retest passes, both say it is ready and the faults page names no unit.
    wo = b.preventive(w["unit"], b.library()["preheater_freeze"], "2026-01-12", done="2026-01-12")
    tech = make_person(organisation=w["org"], role=Role.TECHNICIAN, username="tech2")
    b.freeze_test(wo, tech, finished="2026-01-12", heaters=[w["unit"].components.get(name="Preheater")])
    faults = _text(_get(client, w["pm"], reverse("frontend:faults")).content.decode())
    freeze = faults.split("Freeze protection")[1]
    dashboard = _text(_get(client, w["pm"], reverse("frontend:dashboard")).content.decode())
    assert "AHU-01 (Main block): not ready" not in dashboard and "Freeze protection ready 1 of 1" in dashboard
    assert "AHU-01 (Main block)" not in freeze
    assert "No freeze event in the trends; every unit with preheat is ready for freeze protection." in freeze


# The outdoor-air fraction: the stuck damper's FC6 reads about 0.96 from the trend temperatures; a technician's
# visit on 13 Jan 2026 measured 31 % by temperatures (its own thermometers) and found it below nothing (a finding of
# its own with its own corrective work). Both pages that show one of them say the two disagree and what to check.


@pytest.fixture
def visit_measured_31(world):  # noqa: F811 (the fixture above)
    ahu = world["ahu"]
    tech = make_person(organisation=world["org"], role=Role.TECHNICIAN, username="tech31")
    visit = b.preventive(ahu, b.library()["filter_check"], "2026-01-13", done="2026-01-13")
    insp = b.inspection(visit, tech, finished="2026-01-13")
    ev = b.evaluation(
        insp,
        "oa_fraction_temperature",
        "ventilation.oa_fraction",
        verdict="watch",
        reason="outdoor-air fraction by temperatures: 31 %",
        derived={"oa_fraction": 0.31, "uncertainty": 0.05, "design_min_oa_fraction": 0.25},
        condition_code="ventilation_low",
    )
    corrective = b.preventive(ahu, b.library()["filter_check"], "2026-01-20", title="Check the outdoor air")
    WorkOrder.objects.filter(pk=corrective.pk).update(kind=WorkOrder.Kind.CORRECTIVE)
    b.finding(
        insp, ev, severity="medium", title="Outdoor air off its minimum", opened="2026-01-13", corrective=corrective
    )
    return {**world, "corrective": corrective}


CHECKS = ("mixed-air, return-air and outdoor-air temperature sensors", "stratify", "calibration", "common practice")


def test_the_fc6_fault_and_the_visit_say_their_outdoor_air_fractions_disagree_and_what_to_check(
    client, visit_measured_31
):
    w = visit_measured_31
    fault = w["fault"]
    share = float(fault.consequence["values"]["oa_fraction"])
    assert share > 0.9  # the trends' own number, unchanged
    page = _text(_get(client, w["boss"], reverse("frontend:fault", kwargs={"pk": fault.pk})).content.decode())
    note = page.split("disagree:")[1]
    assert f"FC6 computes {share:.2f} ({share * 100:.0f} %)" in note
    assert "visit on 13 Jan 2026 measured 31 % by temperatures" in note
    assert "neither judgement is changed" in note
    for words in CHECKS:
        assert words in note, words
    assert fault.reason.split(";")[0] in page  # the fault's own words stand
    # The corrective work of each, on its "Why this work", says the same.
    for wo in (fault.corrective_work_order, w["corrective"]):
        why = _text(
            _get(client, w["boss"], reverse("frontend:checklist", kwargs={"public_id": wo.public_id})).content.decode()
        )
        why = why.split("Why this work")[1]
        assert "visit on 13 Jan 2026 measured 31 % by temperatures" in why and f"computes {share:.2f}" in why, wo
        for words in CHECKS:
            assert words in why, words


def test_no_word_of_disagreement_where_the_visit_agrees_with_the_trends(client, visit_measured_31):
    from inspections.models import Evaluation

    w = visit_measured_31
    Evaluation.objects.filter(check_name="oa_fraction_temperature").update(
        derived={"oa_fraction": 0.90, "uncertainty": 0.05, "design_min_oa_fraction": 0.25}
    )
    page = _text(_get(client, w["boss"], reverse("frontend:fault", kwargs={"pk": w["fault"].pk})).content.decode())
    assert "disagree" not in page
