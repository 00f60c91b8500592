"""The last value of each reading on a unit (inspections.last_values), as the phone form shows it beside the field."""

from __future__ import annotations

import datetime as dt

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext

from inspections.last_values import last_readings, last_value_words
from inspections.services import inspection_amend, inspection_sync
from tests.factories.inspections import FINISHED, component, make_visit, r, sync_form

pytestmark = pytest.mark.django_db


def _visit(ahu, technician, finished_at, readings, *, tasks=("filter_check",)):
    wo, _ = make_visit(tasks=list(tasks), ahu=ahu, organisation=ahu.building.site.organisation, technician=technician)
    [result] = inspection_sync(user=technician, forms=[sync_form(wo, readings, finished_at=finished_at)])
    assert result["status"] in ("stored", "flagged"), result
    return wo


@pytest.fixture
def unit():
    wo, technician = make_visit(tasks=["filter_check"])
    return wo, technician


def test_the_newest_earlier_form_gives_each_reading_and_an_older_one_fills_the_gaps(unit):
    """Two earlier visits: the filter pressure drop comes from the newer, a reading only the older one took
    from the older; a reading of the visit's own work order and one after the moment asked about are left out."""
    wo, tech = unit
    ahu = wo.ahu
    final = component(ahu, "Final filters")
    older = FINISHED - dt.timedelta(days=90)
    newer = FINISHED - dt.timedelta(days=30)
    _visit(ahu, tech, older, [r("filter_check.dp", 150, final), r("filter_check.seated", "not_ok", final)])
    _visit(ahu, tech, newer, [r("filter_check.dp", 182, final)])
    _visit(ahu, tech, FINISHED + dt.timedelta(days=1), [r("filter_check.dp", 240, final)])

    last = last_readings(ahu=ahu, before=FINISHED, exclude_work_order_id=wo.pk)

    dp = last[("filter_check.dp", final.label_code)]
    assert (dp.value_si, dp.finished_at) == (182, newer)
    seated = last[("filter_check.seated", final.label_code)]
    assert (seated.value_text, seated.finished_at) == ("not_ok", older)
    assert ("filter_check.dp", component(ahu, "Pre-filters").label_code) not in last


def test_an_amended_reading_gives_its_corrected_value(unit):
    """A reading corrected by an amendment shows the corrected value, not the one first typed."""
    wo, tech = unit
    ahu = wo.ahu
    final = component(ahu, "Final filters")
    before = _visit(ahu, tech, FINISHED - dt.timedelta(days=30), [r("filter_check.dp", 1820, final)])
    inspection = before.inspections.get()
    inspection_amend(
        inspection=inspection,
        by=tech,
        reason="Typed one zero too many",
        readings=[{"item": "filter_check.dp", "component": final.label_code, "value": 182, "note": ""}],
        unit_system="si",
    )
    last = last_readings(ahu=ahu, before=FINISHED)
    assert last[("filter_check.dp", final.label_code)].value_si == 182


def test_the_queries_do_not_grow_with_the_visits(unit):
    """Looking through ten earlier forms takes the queries of looking through one."""
    wo, tech = unit
    ahu = wo.ahu
    final = component(ahu, "Final filters")
    _visit(ahu, tech, FINISHED - dt.timedelta(days=100), [r("filter_check.dp", 100, final)])
    with CaptureQueriesContext(connection) as one:
        last_readings(ahu=ahu, before=FINISHED)
    for k in range(9):
        _visit(ahu, tech, FINISHED - dt.timedelta(days=90 - k), [r("filter_check.dp", 110 + k, final)])
    with CaptureQueriesContext(connection) as ten:
        last = last_readings(ahu=ahu, before=FINISHED)
    assert len(ten.captured_queries) == len(one.captured_queries)
    assert last[("filter_check.dp", final.label_code)].value_si == 118


def test_the_words_are_in_the_readers_units_and_on_the_sites_calendar(unit):
    """182 Pa reads "0.73 in. w.c." in US units (182 / 249.0889 = 0.731, 1 in. w.c. = 249.0889 Pa, from
    memory), 14.5 °C reads 58.1 °F; a form finished at 23:30 UTC on 1 Nov is 2 Nov in Sydney (UTC+11 then,
    from memory); a check reads OK / Not OK, a choice its label."""
    wo, tech = unit
    ahu = wo.ahu
    final = component(ahu, "Final filters")
    at = dt.datetime(2026, 11, 1, 23, 30, tzinfo=dt.UTC)
    _visit(
        ahu,
        tech,
        at,
        [
            r("filter_check.dp", 182, final),
            r("filter_check.seated", "not_ok", final),
            r("filter_check.media", "loaded", final),
        ],
    )
    last = last_readings(ahu=ahu, before=at + dt.timedelta(days=30))

    def words(key, kind, quantity="", choices=None, system="si", zone="UTC"):
        return last_value_words(
            last=last[(key, final.label_code)], kind=kind, quantity=quantity, choices=choices, system=system, zone=zone
        )

    assert words("filter_check.dp", "number", "pressure") == "last: 182 Pa on 1 Nov 2026"
    assert words("filter_check.dp", "number", "pressure", system="us") == "last: 0.73 in. w.c. on 1 Nov 2026"
    assert words("filter_check.dp", "number", "pressure", zone="Australia/Sydney") == "last: 182 Pa on 2 Nov 2026"
    assert words("filter_check.seated", "check") == "last: Not OK on 1 Nov 2026"
    choices = [{"value": "loaded", "label": "Loaded, still usable"}]
    assert words("filter_check.media", "choice", choices=choices) == "last: Loaded, still usable on 1 Nov 2026"
