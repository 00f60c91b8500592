"""A finding's age counts the site's local dates: first seen 2 Nov, today 2 Dec is 30 days, whatever the hours.

The supervisor's findings page and the compliance figures' "findings by age" read the same count
(inspections.models.finding_age_days).
"""

import datetime as dt

import pytest
import time_machine
from django.urls import reverse

from inspections.models import Finding, finding_age_days
from reports.compliance import compliance_figures
from tests.factories.inspections import make_visit
from tests.factories.scheduling import make_supervisor
from tests.reports import builders as b

pytestmark = pytest.mark.django_db
BERLIN = "Europe/Berlin"


def test_age_counts_local_dates_not_whole_24_hour_spans():
    """10:00 UTC on 2 Nov to 08:00 UTC on 2 Dec is 29 days 22 hours, but 30 days by the dates; a finding first
    seen at 23:30 UTC on 2 Nov was seen on 3 Nov in Berlin (UTC+1 in November): 29 days there, 30 in UTC."""
    first = dt.datetime(2026, 11, 2, 10, 0, tzinfo=dt.UTC)
    today = dt.datetime(2026, 12, 2, 8, 0, tzinfo=dt.UTC)
    assert finding_age_days(opened_at=first, end=today, time_zone=BERLIN) == 30
    late = dt.datetime(2026, 11, 2, 23, 30, tzinfo=dt.UTC)
    assert finding_age_days(opened_at=late, end=today, time_zone=BERLIN) == 29
    assert finding_age_days(opened_at=late, end=today, time_zone="UTC") == 30
    assert finding_age_days(opened_at=today, end=first, time_zone=BERLIN) == 0, "never negative"


def test_findings_page_and_compliance_figures_give_the_same_local_age(client):
    """First seen on 2 Nov: the page on 2 Dec says 30 days; the figures on 3 Dec count it 31–90 days old."""
    wo, tech = make_visit(tasks=["drain_pan"])
    site = wo.ahu.building.site
    site.time_zone = BERLIN
    site.save(update_fields=["time_zone"])
    insp = b.inspection(wo, tech, finished="2026-11-02")
    ev = b.evaluation(insp, "choice", "drain_pan.pan_condition", verdict="fail", reason="standing water")
    b.finding(insp, ev, severity="medium", title="Drain pan: standing water", opened="2026-11-02")
    assert Finding.objects.get().opened_at.hour == 10

    client.force_login(make_supervisor(wo.organisation))
    with time_machine.travel(dt.datetime(2026, 12, 2, 8, 0, tzinfo=dt.UTC), tick=False):
        page = client.get(reverse("frontend:findings"))
    [row] = [f for rows in page.context["groups"].values() for f in rows]
    assert row.age == 30

    figures = compliance_figures(
        site_ids=[site.pk],
        start=dt.date(2026, 11, 1),
        end=dt.date(2026, 12, 31),
        as_of=dt.datetime(2026, 12, 3, 8, 0, tzinfo=dt.UTC),
    )
    assert figures.findings_total == 1
    assert figures.findings_matrix["medium"]["31–90 days"] == 1 and figures.findings_matrix["medium"]["0–30 days"] == 0
