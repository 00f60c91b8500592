"""Unit history of a year of monthly visits: it fits its page, reads whole and stays short.

Scenario: an auditor asks for the 12-month history of one mixed-air unit visited every month. Every
visit reads both filter banks; each quarter the technician also checks the controls (supply air against
its set point, alarms, schedule), each damper's commanded and measured position and its linkage, and
the sensors against a reference meter; in autumn the electric preheater and freeze protection are
tested; the filters are changed in July. In April the outdoor-air damper sticks (a finding) and in
October the supply air runs off its set point (another). Forms come in through the sync service, as the
phone sends them, so the evaluations and findings are the server's own.

The PDF is read as an SI reader (A4) and a US reader (Letter) would read it: at most 10 pages, nothing
in the margins, readings grouped by visit with one row per check (not one per raw reading), no word cut
inside a table cell, and no internal name in the text.
"""

from __future__ import annotations

import datetime as dt
import io
import itertools
import re

import pytest
import time_machine
from pypdf import PdfReader

from accounts.models import Role
from inspections.services.sync import inspection_submit
from scheduling.models import WorkOrder
from scheduling.services import task_library_install
from tests.factories.accounts import make_person
from tests.factories.inspections import signature, sync_form, tasks_add
from tests.factories.inventory import BuildingFactory, ComponentFactory, make_full_unit
from tests.factories.scheduling import WorkOrderFactory
from tests.inspections.test_display import leaks

from .conftest import page_margin_ink, pdf_bytes, pdf_words, text_of

pytestmark = pytest.mark.django_db

# Month, run-hours, measured supply airflow (L/s, design 3000 L/s), pre- and final-filter pressure drop (Pa),
# outdoor air temperature (°C). Invented values of the size a plant room shows (from memory). The final
# filters (clean 100 Pa, final 250 Pa, tests/factories/inventory.py) load toward their final value and are
# changed in July with the pre-filters (clean 50 Pa, final 150 Pa).
MONTHS = [
    (1, 1_000, 2_900, 70, 150, -2.0),
    (2, 1_450, 2_950, 78, 162, 0.5),
    (3, 1_900, 2_850, 86, 175, 4.0),
    (4, 2_350, 3_000, 95, 190, 9.0),
    (5, 2_800, 2_900, 104, 204, 14.0),
    (6, 3_250, 2_950, 118, 222, 19.0),
    (7, 3_700, 2_900, 130, 238, 24.0),
    (8, 4_150, 3_000, 58, 112, 23.0),
    (9, 4_600, 2_900, 64, 124, 17.0),
    (10, 5_050, 2_950, 72, 138, 10.0),
    (11, 5_500, 2_900, 80, 151, 4.0),
    (12, 5_950, 2_850, 88, 164, 0.0),
]
QUARTERLY = {1, 4, 7, 10}  # controls, dampers and sensors
FILTER_CHANGE = 7
PREHEATER_TEST = 10  # autumn, before the freeze season
STUCK_DAMPER = 4  # outdoor-air damper at 26 % for 40 % commanded: 14 points, fail above 10 (common practice)
SUPPLY_OFF = 10  # supply air 19.6 °C for 17.0 °C: 2.6 K off, fail above 2 K (common practice)
# Words a reader must see whole in the tables: column headers, kinds and states, verdicts, the technician's name.
WHOLE = (
    "Verdict",
    "Severity",
    "Preventive",
    "Completed",
    "Open",
    "watch",
    "fail",
    "ok",
    "Ana",
    "Fieldhouse-Okonkwo",
)
DOTTED = re.compile(r"\b[a-z_]{3,}\.[a-z_]{3,}\b")
RAW = re.compile(r"\b(?:None|nan|NaN|True|False)\b")


def _day(month: int) -> dt.datetime:
    # The January visit ends at 23:20 UTC: 00:20 on the 15th on the site's clock (Europe/Amsterdam).
    if month == 1:
        return dt.datetime(2025, 1, 14, 23, 20, tzinfo=dt.UTC)
    return dt.datetime(2025, month, 14, 9, 30, tzinfo=dt.UTC)


def _work_order(ahu, tech, month: int, codes: list[str]) -> WorkOrder:
    wo = WorkOrderFactory(
        ahu=ahu,
        organisation=ahu.building.site.organisation,
        assignee=tech,
        state=WorkOrder.State.ASSIGNED,
        kind=WorkOrder.Kind.PREVENTIVE,
        title=f"Monthly service 2025-{month:02d}",
        due_date=dt.date(2025, month, 14),
    )
    tasks_add(wo, codes, key="layout")
    return wo


def _r(item: str, value, component=None, note: str = "") -> dict:
    return {"item": item, "component": component.label_code if component else None, "value": value, "note": note}


def _visit(ahu, tech, parts, month, hours, airflow_ls, pre_dp, final_dp, t_out) -> None:
    codes = ["filter_check", "ventilation_check"]
    if month in QUARTERLY:
        codes += ["controls_check", "damper_actuator", "sensor_calibration"]
    if month == FILTER_CHANGE:
        codes.append("filter_replace")
    if month == PREHEATER_TEST:
        codes.append("preheater_freeze")
    wo = _work_order(ahu, tech, month, codes)
    readings = [_r("visit.run_hours", hours), _r("visit.supply_airflow", airflow_ls)]
    for bank, dp in ((parts["pre"], pre_dp), (parts["final"], final_dp)):
        readings += [
            _r("filter_check.dp", dp, bank),
            _r("filter_check.seated", "ok", bank),
            _r("filter_check.media", "loaded", bank),
        ]
    if month == FILTER_CHANGE:
        for bank, dp in ((parts["pre"], 52), (parts["final"], 104)):
            readings += [_r("filter_replace.replaced", "ok", bank), _r("filter_replace.dp_after", dp, bank)]
    # Mixed air at about 30 % outdoor air (design minimum 30 %, the factory's unit).
    t_ret = 22.0
    readings += [
        _r("ventilation_check.outdoor_air", t_out),
        _r("ventilation_check.return_air", t_ret),
        _r("ventilation_check.mixed_air", round(t_ret - 0.32 * (t_ret - t_out), 1)),
    ]
    if month in QUARTERLY:
        supply = 19.6 if month == SUPPLY_OFF else 17.3
        readings += [
            _r("controls_check.supply_air", supply),
            _r("controls_check.supply_setpoint", 17.0),
            _r("controls_check.alarms", "ok"),
            _r("controls_check.schedule", "ok"),
        ]
        for damper in parts["dampers"]:
            stuck = month == STUCK_DAMPER and damper.name == "Outdoor-air damper"
            readings += [
                _r("damper_actuator.command", 40, damper),
                _r("damper_actuator.position", 26 if stuck else 41, damper, "actuator slipping" if stuck else ""),
                _r("damper_actuator.linkage", "ok", damper),
            ]
        readings += [
            _r("sensor_calibration.co2_sensor", 812, parts["co2"]),
            _r("sensor_calibration.co2_reference", 798, parts["co2"]),
            _r("sensor_calibration.temp_sensor", 17.4, parts["temp"]),
            _r("sensor_calibration.temp_reference", 17.3, parts["temp"]),
        ]
    if month == PREHEATER_TEST:
        heater = parts["heater"]
        readings += [
            _r("preheater_freeze.stage_on_temp", 5.2, heater),
            _r("preheater_freeze.stages", "ok", heater),
            _r("preheater_freeze.airflow_interlock", "ok", heater),
            _r("preheater_freeze.primary_limit", "ok", heater),
            _r("preheater_freeze.high_limit", "ok", heater),
            _r("preheater_freeze.set_points_restored", "ok", heater),
            _r("preheater_freeze.freeze_trip_temp", 4.5),
            _r("preheater_freeze.freeze_trip_test", "ok"),
        ]
    finished = _day(month)
    form = {**sync_form(wo, readings, finished_at=finished), "signature": signature(name=str(tech), at=finished)}
    with time_machine.travel(finished + dt.timedelta(hours=1), tick=False):
        result = inspection_submit(user=tech, form=form)
    assert result["status"] in ("stored", "flagged"), result
    if month == PREHEATER_TEST:  # every step of the freeze-protection test answered: not flagged incomplete
        assert not [f for f in result["flags"] if f["code"] == "incomplete"], result["flags"]


@pytest.fixture
def year_of_visits(site):
    task_library_install()
    ahu = make_full_unit(building=BuildingFactory(site=site), tag="AHU-12")
    ComponentFactory(
        ahu=ahu,
        kind="electric_preheater",
        name="Electric preheater",
        specs={"power_w": 12_000, "stages": 2, "switch_on_c": 5.0},
        position=30,
    )
    tech = make_person(
        organisation=site.organisation, role=Role.TECHNICIAN, first_name="Ana", last_name="Fieldhouse-Okonkwo"
    )
    parts = {
        "pre": ahu.components.get(name="Pre-filters"),
        "final": ahu.components.get(name="Final filters"),
        "dampers": list(ahu.components.filter(kind="damper").order_by("position")),
        "co2": ahu.components.get(name="Return CO2 sensor"),
        "temp": ahu.components.get(name="Supply temperature sensor"),
        "heater": ahu.components.get(name="Electric preheater"),
    }
    for month, *values in MONTHS:
        _visit(ahu, tech, parts, month, *values)
    return ahu


def _history(make_report, user, ahu) -> bytes:
    with time_machine.travel(dt.datetime(2026, 1, 5, 8, 0, tzinfo=dt.UTC), tick=False):
        report = make_report(
            user=user, kind="unit_history", parameters={"unit": ahu.pk, "start": "2025-01-01", "end": "2025-12-31"}
        )
    return pdf_bytes(report)


def _cut_words(words) -> list[str]:
    """Words of WHOLE split across two lines of a cell ("Preve" then "ntive")."""
    cut = []
    for a, b in itertools.pairwise(words):
        for term in WHOLE:
            if a.page == b.page and a.text != term and len(a.text) < len(term) and (a.text + b.text) == term:
                cut.append(f"page {a.page}: {a.text!r} + {b.text!r}")
    return cut


@pytest.mark.parametrize(
    ("reader", "paper_width_pt", "units"),
    [("supervisor", 841.9, ("Pa", "°C", "L/s")), ("us_supervisor", 792.0, ("in. w.c.", "°F", "cfm"))],
)
def test_a_year_of_monthly_visits_fits_and_reads_whole(
    year_of_visits, make_report, request, reader, paper_width_pt, units
):
    """Ten pages at most, landscape on the reader's paper (A4 297 mm = 841.9 pt, Letter 11 in = 792 pt wide),
    nothing in the margins, every table word whole, no internal name, the reader's units."""
    pdf = _history(make_report, request.getfixturevalue(reader), year_of_visits)
    pages = len(PdfReader(io.BytesIO(pdf)).pages)
    assert pages <= 10, f"{pages} pages"
    assert page_margin_ink(pdf, f"unit-history-year-{reader}") == []

    words = pdf_words(pdf)
    assert {round(w.page_width, 1) for w in words} == {paper_width_pt}
    assert _cut_words(words) == []
    seen = {w.text for w in words}
    for term in WHOLE:
        assert term in seen, f"{term!r} is not printed whole"

    text = text_of(pdf)
    flat = " ".join(text.split())
    assert leaks(flat) == []
    assert DOTTED.findall(flat) == []
    assert RAW.findall(flat) == []
    for unit in units:
        assert unit in flat


def test_readings_are_grouped_by_visit_one_row_per_check(year_of_visits, supervisor, make_report):
    """Each visit has a heading (its day on the site's clock, the technician, the work order); under it one row
    per judgement: a damper's commanded and measured positions are one row, not two; a check asked of several
    parts with the same answer is one row naming the parts."""
    flat = " ".join(text_of(_history(make_report, supervisor, year_of_visits)).split())
    findings, readings = flat.split("Readings by visit")
    # The January visit ended at 23:20 UTC, 00:20 on the 15th in Amsterdam.
    assert "15 Jan 2025 00:20 CET" in readings and "14 Jan 2025" not in readings
    # Every visit in order under its heading (repeated over a table that runs onto the next page).
    first = [readings.find(f"Monthly service 2025-{month:02d}") for month in range(1, 13)]
    assert -1 not in first and first == sorted(first)
    assert readings.count("— Ana Fieldhouse-Okonkwo — Monthly service") >= 12
    # 4 quarterly visits × 3 dampers, each one row; the raw "Commanded position" reading is not a row of its own.
    assert readings.count("Damper position against command") == 12
    assert "Commanded position" not in readings
    assert readings.count("Linkage tight, blades move freely, seals intact") == 4
    # The stuck damper and the supply air off its set point fail on their visits' rows, naming the findings;
    # the findings table gives their reasons once.
    assert "commanded 40.0 %; measured 26.0 %; error −14.0 points" in readings
    assert "Fail finding: Damper not at commanded position" in readings and "(first seen 2025-04-14)" in readings
    assert "supply air 19.6 °C; set point 17.0 °C; deviation 2.6 K" in readings
    assert "finding: Supply-air temperature off set point (first seen 2025-10-14)" in readings
    assert "14.0 points more closed than commanded 40 %" in findings
    assert "2.6 K above set point 17.0 °C" in findings
    # The autumn preheater test is listed on its visit.
    assert "Entering-air temperature at which stage 1 switched on" in readings
