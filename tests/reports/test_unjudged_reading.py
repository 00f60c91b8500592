"""A reading no check judged reads alike on the phone, the record page and the PDFs.

The phone says "Recorded — no limit applies to this reading" beside it (inspections.display.reading_words);
the inspection report's verdict column said "—" and the unit history's "recorded", the record page nothing. Each
now takes its words from ``inspections.display`` (``reading_verdict_words``), so a reader of any of them reads the
same thing as the technician did.
"""

import pytest

from accounts.models import Role
from inspections import display
from tests.factories.accounts import make_person
from tests.factories.inventory import BuildingFactory, make_full_unit

from . import builders as b
from .conftest import pdf_text

pytestmark = pytest.mark.django_db

PHONE = "Recorded — no limit applies to this reading"  # tests/browser/test_phone_verdicts.py reads the same


@pytest.fixture
def visit(site):
    """A visit with two readings only recorded (the supply airflow and the outdoor-air damper's position: no check
    judges either) and a supply-air reading that failed."""
    lib = b.library()
    ahu = make_full_unit(building=BuildingFactory(site=site, name="North Wing"), tag="AHU-05")
    tech = make_person(organisation=site.organisation, role=Role.TECHNICIAN, first_name="Ana", last_name="Field")
    wo = b.preventive(ahu, lib["filter_check"], "2025-03-10", done="2025-03-11", title="Quarterly service")
    insp = b.inspection(wo, tech, finished="2025-03-11")
    b.reading(insp, "visit.supply_airflow", value_si=2.5)
    b.reading(insp, "ventilation_check.oa_damper_position", value_si=30.0)
    b.reading(insp, "controls_check.supply_air", value_si=19.5, verdict="fail", reason="2.5 K above set point")
    b.evaluation(
        insp,
        "supply_temperature",
        "controls_check.supply_air",
        verdict="fail",
        reason="supply air 19.5 °C is 2.5 K from its set point 17 °C",
        derived={"supply_air_c": 19.5, "setpoint_c": 17.0, "deviation_k": 2.5},
    )
    return wo


def flat(text: str) -> str:
    return " ".join(text.split())  # a table cell may wrap a line anywhere


def test_the_words_are_the_phones():
    words = display.reading_words()
    assert display.reading_verdict_words("", judged=False) == (words["recorded"], words["unjudged"])
    assert " — ".join(display.reading_verdict_words("", judged=False)) == PHONE
    # A judged reading keeps its verdict and says no more.
    assert display.reading_verdict_words("fail", judged=True) == ("Fail", "")
    assert display.reading_verdict_words("", judged=True) == ("", "")


def test_the_inspection_report_says_what_the_phone_said(visit, supervisor, make_report):
    report = make_report(user=supervisor, kind="inspection", parameters={"work_order": str(visit.public_id)})
    text = flat(pdf_text(report))
    assert "Recorded" in text
    assert "no limit applies to this reading" in text
    assert text.count("no limit applies to this reading") == 2  # the judged reading does not say it


def test_the_unit_history_says_what_the_phone_said(visit, supervisor, make_report):
    report = make_report(
        user=supervisor,
        kind="unit_history",
        parameters={"unit": visit.ahu_id, "start": "2025-03-01", "end": "2025-03-31"},
    )
    text = flat(pdf_text(report))
    # The airflow stands in the visit's heading; the damper's position is a row of its own.
    assert text.count("no limit applies to this reading") == 1
    assert " recorded " not in f" {text} "  # the old lowercase word of its own


def test_the_record_page_says_what_the_phone_said(visit, supervisor, client):
    client.force_login(supervisor)
    page = client.get(f"/w/{visit.public_id}/").content.decode()
    record = flat(page[page.index("data-record=") :])
    assert '<span class="verdict recorded">Recorded</span> — no limit applies to this reading' in record
    assert record.count("no limit applies to this reading") == 2
