"""The whole demo: registry, a year of history, the schedule and today's round."""

import datetime as dt

import pytest
from django.core.management import call_command
from django.utils import timezone

from accounts.models import User
from inspections.models import Inspection
from scheduling.models import WorkOrder
from scheduling.selectors import today_visits_for


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
    """Each demo technician signs in to visits for today."""
    today = timezone.localdate()
    for username in ("ines.tech", "tomas.tech"):
        tech = User.objects.get(username=username)
        assert today_visits_for(technician=tech, day=today + dt.timedelta(days=10)), username


def test_second_run_changes_nothing(loaded, capsys):
    """Running load_demo again creates no records and prints the same logins."""
    counts = (WorkOrder.objects.count(), Inspection.objects.count())
    call_command("load_demo")
    second = capsys.readouterr().out
    assert (WorkOrder.objects.count(), Inspection.objects.count()) == counts
    assert "0 record(s) created or changed" in second
    assert loaded.splitlines()[-8:] == second.splitlines()[-8:]
