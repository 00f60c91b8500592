"""A coil whose air side and water side disagree: the record page and the inspection PDF say it on the heat-balance
check's own row, and the fluid-flow reading keeps its own verdict (no check judges a flow: "Recorded").

The balance needs all five readings (entering and leaving air, entering and leaving water, the flow); it was shown
as the flow's verdict and reason, as if the flow itself had failed. Numbers: air side 3 m³/s warmed 10 → 30 °C at
the leaving-air density, 70.3 kW; water 0.5 L/s cooled 70 → 50 °C, 41.2 kW (IAPWS-95 via CoolProp): 41 % apart,
beyond the 20 % watch limit (common practice) → fail.
"""

import re

import pytest

from tests.factories.inspections import component, make_visit, r, sync_form
from tests.factories.scheduling import make_supervisor

from .conftest import pdf_text

pytestmark = pytest.mark.django_db

SYNC = "/api/inspections/sync/"
FLOW = "Water or glycol flow (meter or balancing valve)"


def flat(text: str) -> str:
    return " ".join(text.split())


@pytest.fixture
def visit(api_client):
    wo, tech = make_visit(tasks=["coil_clean"])
    coil = component(wo.ahu, "Heating coil")
    api_client.force_authenticate(tech)
    readings = [
        r("visit.run_hours", 1200),
        r("visit.supply_airflow", 3000),
        r("coil_clean.fins", "clean", coil),
        r("coil_clean.air_in", 10, coil),
        r("coil_clean.air_out", 30, coil),
        r("coil_clean.water_in", 70, coil),
        r("coil_clean.water_out", 50, coil),
        r("coil_clean.water_flow", 0.5, coil, note="read on the balancing valve"),
    ]
    [out] = api_client.post(SYNC, {"forms": [sync_form(wo, readings)]}, format="json").json()["results"]
    assert out["status"] in {"stored", "flagged"}, out
    [balance] = [e for e in out["evaluation"] if e["check"] == "coil_balance"]
    assert balance["verdict"] == "fail"
    return wo


def _items(html: str, marker: str) -> list[str]:
    """The list items of the record's list ``marker`` (its readings or its judgements) as text."""
    block = html[html.index(marker) :]
    block = block[: block.index("</ul>")]
    return [flat(re.sub(r"<[^>]+>", " ", li)) for li in block.split("<li")[1:]]


def test_the_record_page_shows_the_failure_on_the_balance_row_not_the_flow(visit, client):
    client.force_login(make_supervisor(visit.organisation))
    page = client.get(f"/w/{visit.public_id}/").content.decode()
    page = page[page.index("data-record=") :]
    [flow] = [row for row in _items(page, "data-readings") if row.startswith("data-reading> " + FLOW)]
    assert "Fail" not in flow and "apart" not in flow
    assert "Recorded" in flow
    [balance] = [row for row in _items(page, "data-evaluations") if "Coil heat balance" in row]
    assert "Fail" in balance and "% apart" in balance


def test_the_inspection_pdf_says_it_on_the_balance_row(visit, make_report):
    report = make_report(
        user=make_supervisor(visit.organisation), kind="inspection", parameters={"work_order": str(visit.public_id)}
    )
    text = flat(pdf_text(report))
    assert re.search(r"Water or glycol flow \(meter or balancing valve\) 0\.50 L/s\s+Recorded", text), text
    at = text.index("Coil heat balance")
    assert "Fail" in text[at : at + 80]
    assert "% apart" in text[at:]
