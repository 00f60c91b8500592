"""A glycol preheat coil's freezing point on the record page and the inspection PDF, in the reader's units.

Propylene glycol 30 % by mass freezes at −12.8 °C = 9.0 °F (Melinder 2010 via CoolProp; Lange's Handbook table 5.13:
−12.8 °C): ok up to 2 K (3.6 °F) warmer, watch up to 4 K (7.2 °F) warmer, warmer fails (common practice). A sample
reading −12.0 °C (10.4 °F) is ok; a US reader reads the reading and its band in °F, never in °C.
"""

import datetime as dt
import re

import pytest

from tests.factories.inspections import make_visit, r, sync_form
from tests.factories.inventory import ComponentFactory
from tests.factories.scheduling import make_supervisor

from .conftest import pdf_text

pytestmark = pytest.mark.django_db

SYNC = "/api/inspections/sync/"
FINISHED = dt.datetime(2025, 10, 3, 10, tzinfo=dt.UTC)
GLYCOL = {
    "duty": "preheat",
    "fluid": "glycol",
    "glycol_pct": 30,
    "glycol_kind": "propylene",
    "design_capacity_w": 40_000,
}


def flat(text: str) -> str:
    return " ".join(re.sub(r"<[^>]+>", " ", text).split())


@pytest.fixture
def visit(api_client):
    wo, tech = make_visit(tasks=["preheater_freeze"])
    coil = ComponentFactory(ahu=wo.ahu, kind="coil", name="Preheat coil", position=5, specs=GLYCOL)
    api_client.force_authenticate(tech)
    readings = [
        r("visit.run_hours", 1200),
        r("preheater_freeze.coil_valve_fail_open", "ok", coil),
        r("preheater_freeze.coil_pump_runs", "ok", coil),
        r("preheater_freeze.glycol_freeze_point", -12.0, coil, note="sample at the coil drain"),
        r("preheater_freeze.freeze_trip_temp", 4.0),
        r("preheater_freeze.freeze_trip_test", "ok"),
    ]
    [out] = api_client.post(SYNC, {"forms": [sync_form(wo, readings, finished_at=FINISHED)]}, format="json").json()[
        "results"
    ]
    assert out["status"] in {"stored", "flagged"}, out
    return wo


def test_the_record_page_reads_the_glycol_freezing_point_in_fahrenheit(visit, client):
    client.force_login(make_supervisor(visit.organisation, unit_system="us"))
    page = flat(client.get(f"/w/{visit.public_id}/").content.decode())
    at = page.index("Glycol freezing point by refractometer — Preheat coil")
    row = page[at : page.index("Note: sample at the coil drain", at)]
    assert "10.4 °F" in row and "OK" in row
    assert "within −5.4 to 12.6 °F" in row  # the ok band: −20.8 to −10.8 °C
    assert "°C" not in row


def test_the_inspection_pdf_reads_the_glycol_freezing_point_in_fahrenheit(visit, make_report):
    report = make_report(
        user=make_supervisor(visit.organisation, unit_system="us"),
        kind="inspection",
        parameters={"work_order": str(visit.public_id)},
    )
    text = " ".join(pdf_text(report).split())
    at = text.index("Glycol freezing point by refractometer")
    row = text[at : text.index("Note: sample at the coil drain", at)]
    assert "10.4 °F" in row and "OK" in row
    assert "ok −5.4 to 12.6 °F; watch −5.4 to 16.2 °F" in row  # watch to 4 K (7.2 °F) warmer than 9.0 °F
    assert "°C" not in row
