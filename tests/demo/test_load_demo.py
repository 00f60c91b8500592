"""The whole demo: registry, a year of history, the schedule and today's round."""

import datetime as dt

import pytest
from django.core.management import call_command
from django.utils import timezone

from accounts.models import User
from inspections.models import Inspection
from scheduling.models import WorkOrder
from scheduling.selectors import person_today, today_visits_for


@pytest.fixture
def loaded(db, capsys):
    call_command("load_demo")
    return capsys.readouterr().out


def test_demo_has_a_year_of_history_and_upcoming_work(loaded):
    """After load_demo there are completed visits over twelve months and planned work ahead."""
    today = timezone.localdate()
    done = WorkOrder.objects.filter(state__in=["completed", "verified"])
    assert done.count() >= 100
    oldest = min(done.values_list("due_date", flat=True))
    assert (today - oldest).days >= 330
    assert Inspection.objects.count() >= 100
    assert WorkOrder.objects.filter(due_date__gte=today, state__in=["planned", "assigned"]).exists()
    assert "plenum-demo-1" in loaded and "helena.pm" in loaded


def test_a_demo_technician_has_a_round_today(loaded):
    """Each demo technician signs in to visits for today (the day their today page shows)."""
    for username in ("ines.tech", "tomas.tech"):
        tech = User.objects.get(username=username)
        assert today_visits_for(technician=tech, day=person_today(user=tech)), username


def test_second_run_changes_nothing(loaded, capsys):
    """Running load_demo again creates no records and prints the same logins."""
    counts = (WorkOrder.objects.count(), Inspection.objects.count())
    call_command("load_demo")
    second = capsys.readouterr().out
    assert (WorkOrder.objects.count(), Inspection.objects.count()) == counts
    assert "0 record(s) created or changed" in second
    assert loaded.splitlines()[-8:] == second.splitlines()[-8:]


def test_demo_preheaters_were_proven_before_this_freeze_season(loaded):
    """Every demo unit with a preheater or preheat coil had its freeze protection proven before the season began."""
    from inventory.models import Site
    from reports.compliance import FREEZE_READY, compliance_figures

    now = timezone.now()
    today = timezone.localdate()
    figures = compliance_figures(
        site_ids=list(Site.objects.values_list("pk", flat=True)),
        start=today - dt.timedelta(days=365),
        end=today,
        as_of=now,
    )
    assert figures.freeze, "the demo has preheat to prove"
    proven = WorkOrder.objects.filter(tasks__task_code="preheater_freeze", state__in=["completed", "verified"])
    assert proven.exists()
    for row in figures.freeze:
        if row["season_start"] <= today:
            assert row["status"] == FREEZE_READY, row
