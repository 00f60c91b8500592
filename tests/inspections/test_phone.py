"""The phone's evaluation context (inspections.phone) is read in a fixed number of queries."""

from __future__ import annotations

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext

from inspections import phone, selectors
from tests.factories.inspections import FINISHED, make_visit


def _context_queries(wo) -> tuple[int, dict]:
    checklist = selectors.checklist_build(work_order=wo)
    with CaptureQueriesContext(connection) as ctx:
        context = phone.checklist_context(checklist=checklist, as_of=FINISHED)
    return len(ctx.captured_queries), context


@pytest.mark.django_db
def test_earlier_filter_readings_of_every_bank_take_the_queries_of_one():
    """A unit with four more filter banks needs no more queries for its context: the banks' earlier readings
    (for the change forecast) are read together, not bank by bank."""
    from tests.factories.inventory import ComponentFactory

    wo, _ = make_visit(tasks=["filter_check"])
    before, context = _context_queries(wo)
    banks_before = len(context["filter_points"])
    for i in range(4):
        ComponentFactory(
            ahu=wo.ahu,
            kind="filter_bank",
            name=f"Extra filters {i}",
            specs={"clean_dp_pa": 90, "final_dp_pa": 250},
            position=40 + i,
        )
    after, context = _context_queries(wo)
    assert len(context["filter_points"]) == banks_before + 4
    assert after == before
