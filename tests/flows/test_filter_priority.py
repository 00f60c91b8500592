"""A filter past its final pressure drop is changed now: its corrective work is high priority, not normal.

Final filters clean 90 Pa, final 250 Pa (the factory's bank), read at design airflow:
- 300 Pa: (300 − 90)/(250 − 90) = 131 % of the span, past the final value: high priority (3 days' grace).
- 245 Pa: (245 − 90)/160 = 97 %, past the 95 % fail line but not yet at the final value: normal priority.
Changing a filter at its final pressure drop, not weeks later, is common practice: past it the airflow falls
off and loaded media can burst into the unit.
"""

import datetime as dt

import pytest

from inspections.models import Finding
from scheduling.models import WorkOrder
from tests.factories.inspections import component, make_visit, sync_filter_visit

pytestmark = pytest.mark.django_db
DAY0 = dt.datetime(2026, 11, 2, 9, 30, tzinfo=dt.UTC)


@pytest.mark.parametrize(("final_dp", "priority"), [(300, "high"), (245, "normal")])
def test_a_filter_past_its_final_value_gets_high_priority_work(api_client, time_machine, final_dp, priority):
    first, tech = make_visit(tasks=["filter_check"])
    ahu = first.ahu
    time_machine.move_to(DAY0 + dt.timedelta(hours=1), tick=False)
    sync_filter_visit(
        api_client, ahu=ahu, technician=tech, finished_at=DAY0, hours=1_000, airflow_ls=3000, final_dp=final_dp
    )
    final = component(ahu, "Final filters")
    [work] = WorkOrder.objects.filter(ahu=ahu, kind=WorkOrder.Kind.CORRECTIVE, component=final)
    assert work.priority == priority, (work.title, work.reason)
    [finding] = Finding.objects.filter(corrective_work_order=work)
    assert finding.severity == ("high" if priority == "high" else "medium")
