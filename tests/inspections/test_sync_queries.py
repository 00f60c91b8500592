"""Queries per synced form do not grow with its readings or its findings.

A form with 4 readings and one with 40 cost the same number of queries; a form whose 13 filter banks are all
overloaded (13 findings, one corrective work order) costs what a form with one overloaded bank does, and a
fixed number more than the same form clean: the banks' filter histories are read together, readings,
evaluations and new findings are written in bulk, and the findings are linked to their work in one update.
"""

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext

from inspections.models import Finding, Reading
from inspections.services.sync import inspection_sync
from tests.factories.inspections import make_visit, r, sync_form
from tests.factories.inventory import FILTER_SPECS, AHUFactory, ComponentFactory

pytestmark = pytest.mark.django_db

FINAL_DP_PA = FILTER_SPECS["final_dp_pa"]  # the bank's own final pressure drop: above it, a finding


def _visit(banks: int):
    ahu = AHUFactory()
    for i in range(banks):
        ComponentFactory(ahu=ahu, name=f"Filter bank {i + 1}")
    return make_visit(tasks=["filter_check"], ahu=ahu, organisation=ahu.building.site.organisation)


def _form(wo, *, dp: float) -> dict:
    readings = [r("visit.run_hours", 1200)]
    for bank in wo.ahu.components.order_by("pk"):
        readings += [
            r("filter_check.dp", dp, bank),
            r("filter_check.seated", "ok", bank),
            r("filter_check.media", "loaded", bank),
        ]
    return sync_form(wo, readings)


def _queries(banks: int, *, dp: float) -> tuple[int, dict]:
    wo, tech = _visit(banks)
    form = _form(wo, dp=dp)
    with CaptureQueriesContext(connection) as seen:
        [result] = inspection_sync(user=tech, forms=[form])
    assert Reading.objects.filter(inspection__work_order=wo).count() == len(form["readings"])
    return len(seen), result


def test_queries_per_form_do_not_grow_with_readings_or_findings():
    _queries(2, dp=FINAL_DP_PA + 100)  # the process's first form reads what it keeps (templates, content types)
    few, few_result = _queries(1, dp=120)
    many, many_result = _queries(13, dp=120)
    assert few_result["status"] == many_result["status"] == "stored", (few_result, many_result)
    assert many == few, f"4 readings: {few} queries; 40 readings: {many}"
    one_dirty, _ = _queries(1, dp=FINAL_DP_PA + 100)
    dirty, dirty_result = _queries(13, dp=FINAL_DP_PA + 100)
    assert dirty == one_dirty, f"1 finding: {one_dirty} queries; 13 findings: {dirty}"
    assert Finding.objects.filter(inspection__client_uuid=dirty_result["client_uuid"]).count() == 13
    # What findings add is the same for one or thirteen: the open findings read once, one insert, one
    # corrective work order proposed (its audit, tasks and the organisation's version), one link update.
    assert dirty <= many + 20, f"0 findings: {many} queries; 13 findings: {dirty}"
