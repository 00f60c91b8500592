"""Where a reading belongs reads alike in the inspection report, the unit history and the record page.

A freeze-protection test done as the task on a glycol preheat coil records the frost thermostat's trip once for the
unit (the item has no part). The inspection report's task table said the task was on "Glycol preheat coil", its
readings table put the trip under the checklist's title with no place, the unit history said "unit" and the record
page nothing. Each now names a reading's place with one function (``inspections.display.place_words``: its part,
or the whole unit when it has none), and the task table names a task's place with it too.
"""

import re

import pytest

from accounts.models import Role
from inspections.display import place_words
from tests.factories.accounts import make_person
from tests.factories.inventory import BuildingFactory, ComponentFactory, make_full_unit

from . import builders as b
from .conftest import pdf_text

pytestmark = pytest.mark.django_db

TRIP = "Freeze-protection trip temperature (air leaving the first coil)"
UNIT = place_words(None)


@pytest.fixture
def freeze_visit(site):
    lib = b.library()
    ahu = make_full_unit(building=BuildingFactory(site=site), tag="AHU-07")
    coil = ComponentFactory(
        ahu=ahu,
        kind="coil",
        name="Glycol preheat coil",
        position=20,
        specs={"duty": "preheat", "fluid": "glycol", "design_capacity_w": 30000},
    )
    tech = make_person(organisation=site.organisation, role=Role.TECHNICIAN, first_name="Ana", last_name="Field")
    wo = b.preventive(ahu, lib["preheater_freeze"], "2025-10-11", done="2025-10-11", component=coil)
    insp = b.freeze_test(wo, tech, finished="2025-10-11")
    b.reading(insp, "preheater_freeze.freeze_trip_temp", value_si=4.0, verdict="ok")
    return wo


def flat(text: str) -> str:
    return " ".join(text.split())  # a table cell may wrap a line anywhere


def test_the_place_is_the_part_or_the_whole_unit(freeze_visit):
    coil = freeze_visit.ahu.components.get(name="Glycol preheat coil")
    assert place_words(coil) == "Glycol preheat coil"
    assert UNIT == "whole unit"


def test_the_inspection_report_names_the_trips_place(freeze_visit, supervisor, make_report):
    report = make_report(user=supervisor, kind="inspection", parameters={"work_order": str(freeze_visit.public_id)})
    text = flat(pdf_text(report))
    # The task's place (its part), then the reading's under the group of its place: the unit's.
    assert "Preheater and freeze protection Glycol preheat coil 11 Oct 2025" in text
    assert re.search(
        rf"Readings Check Value Limit Verdict {UNIT.capitalize()} — Preheater and freeze protection "
        rf"{re.escape(TRIP)} 4\.0 °C",
        text,
    ), text


def test_the_unit_history_names_the_same_place(freeze_visit, supervisor, make_report):
    report = make_report(
        user=supervisor,
        kind="unit_history",
        parameters={"unit": freeze_visit.ahu_id, "start": "2025-10-01", "end": "2025-10-31"},
    )
    text = flat(pdf_text(report))
    assert f"{TRIP} {UNIT} 4.0 °C" in text
    assert " unit 4.0 °C" not in text.replace(f"{UNIT} 4.0", "")


def test_the_record_page_names_the_same_place(freeze_visit, supervisor, client):
    client.force_login(supervisor)
    page = client.get(f"/w/{freeze_visit.public_id}/").content.decode()
    record = flat(page[page.index("data-record=") :])
    assert f"{TRIP} — {UNIT}:" in record
