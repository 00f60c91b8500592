"""Migration 0012 takes a coil heat balance's verdict and reason off the flow reading it was copied to (the balance
judges five readings, not the flow); a flow reading with a verdict of its own, and the balance itself, are kept."""

import importlib

import pytest
from django.apps import apps

from tests.factories.inspections import make_visit
from tests.reports import builders as b

pytestmark = pytest.mark.django_db

BALANCE = "Heating coil: air side 70.3 kW, water side 41.2 kW: 52.3 % apart"


def test_the_balance_comes_off_the_flow_reading_and_stays_a_judgement_of_its_own():
    migration = importlib.import_module("inspections.migrations.0012_coil_balance_off_the_flow_reading")
    wo, tech = make_visit(tasks=["coil_clean"])
    heating, cooling = (wo.ahu.components.get(name=n) for n in ("Heating coil", "Cooling coil"))
    insp = b.inspection(wo, tech, finished="2025-03-03")
    copied = b.reading(
        insp, "coil_clean.water_flow", component=heating, value_si=0.0005, verdict="fail", reason=BALANCE
    )
    own = b.reading(insp, "coil_clean.water_flow", component=cooling, value_si=0.003, verdict="watch", reason="other")
    ev = b.evaluation(insp, "coil_balance", "coil_clean.water_flow", component=heating, verdict="fail", reason=BALANCE)
    b.evaluation(insp, "coil_balance", "coil_clean.water_flow", component=cooling, verdict="ok", reason="in balance")

    migration._clear(apps, None)

    copied.refresh_from_db()
    own.refresh_from_db()
    ev.refresh_from_db()
    assert (copied.verdict, copied.reason, copied.reason_parts) == ("", "", [])
    assert (own.verdict, own.reason) == ("watch", "other")
    assert (ev.verdict, ev.reason) == ("fail", BALANCE)
