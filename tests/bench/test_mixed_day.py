"""The mixed-day benchmark (bench/mixed_day.py): every outcome it names is checked, and a wrong one fails it.

The passes run against a stand-in for the server (``bench.load.request`` replaced), so each wrong outcome
can be made on purpose; the whole scenario against gunicorn runs in tests/bench/test_harness.py.
"""

import datetime as dt
import json

import pytest

from bench import load, mixed_day
from bench.generate import OrgSummary
from bench.scenarios import WrongOutcome, forms_outcome_check

NOW = dt.datetime(2025, 3, 3, 4, 30, tzinfo=dt.UTC)  # a Monday, before the generated 06:00 meter readings


def _org(slug: str = "main") -> mixed_day.DayOrg:
    summary = OrgSummary(1, slug, [1], [1], f"{slug}-supervisor", [f"{slug}-tech01", f"{slug}-tech02"], "m")
    form = {"client_uuid": "c0ffee00-0000-4000-8000-000000000001", "work_order": "w", "readings": []}
    return mixed_day.DayOrg(
        summary=summary,
        reads={
            "today": [("/api/scheduling/today/", "tok-tech", None)],
            "board": [("/api/scheduling/board/", "tok-sup", None)],
            "dashboard": [("/dashboard/", None, "sessionid=s")],
        },
        forms=[("tok-tech", dict(form)) for _ in range(500)],
        assign=[{"id": "00000000-0000-4000-8000-000000000002", "version": 3, "day": dt.date(2025, 8, 4), "turn": 0}],
        assign_techs=list(summary.technicians),
        supervisor_token="tok-sup",
        meters=[{"label": "UABCDEF", "hours": 1000.0, "at": NOW - dt.timedelta(hours=1)}],
        meter_token="tok-tech",
    )


class Server:
    """Answers as the app does when all is well; ``wrong`` names the one kind of request to answer otherwise."""

    def __init__(self, wrong: str = ""):
        self.wrong = wrong
        self.seen: dict[str, int] = {}

    def __call__(self, method, port, path, *, token=None, body=None, timeout=60, cookie=None):
        kind = (
            "sync"
            if "/sync/" in path
            else "assign"
            if path.endswith("/assign/")
            else "meter"
            if "meter-readings" in path
            else "dashboard"
            if cookie
            else "read"
        )
        self.seen[kind] = self.seen.get(kind, 0) + 1
        bad = kind == self.wrong
        if kind == "sync":
            form = json.loads(body)["forms"][0]
            status = "flagged" if bad else "stored"
            flags = [{"code": "work_order_changed", "reason": "the work order changed after the phone saw it"}]
            answer = {"client_uuid": form["client_uuid"], "status": status, "flags": flags if bad else []}
            return 200, json.dumps({"results": [answer]}).encode(), 0.004
        if kind == "assign":
            if bad:
                return 409, b'{"detail": "over capacity"}', 0.003
            return 200, json.dumps({"version": json.loads(body)["version"] + 1}).encode(), 0.003
        if kind == "meter":
            return (400, b'{"errors": {"hours": ["too fast"]}}', 0.002) if bad else (201, b"{}", 0.002)
        if kind == "dashboard" and bad:
            return 302, b"", 0.001
        return (500, b"oops", 0.001) if bad and kind == "read" else (200, b"[]", 0.001)


def _pass(monkeypatch, server: Server, *, writers: int = 3) -> dict:
    monkeypatch.setattr(load, "request", server)
    monkeypatch.setattr(mixed_day, "DASHBOARD_PAUSE_S", 0.05)
    orgs = [_org("main"), _org("other")]
    return mixed_day.day_pass(port=1, orgs=orgs, clients=5, writers=writers, seconds=0.3)


def test_a_pass_where_every_outcome_is_right_gives_figures_for_every_kind(monkeypatch):
    """Readers of each kind and the three writers each get requests, rates and percentiles."""
    server = Server()
    out = _pass(monkeypatch, server)
    for kind in ("today", "board", "dashboard", "sync", "assign", "meter"):
        assert out[kind]["requests"] > 0 and out[kind]["p95_ms"] is not None, kind
    assert out["reads_rps"] > 0
    assert set(server.seen) == {"read", "dashboard", "sync", "assign", "meter"}


def test_a_read_only_pass_writes_nothing(monkeypatch):
    """Without writers only the reads are sent."""
    server = Server()
    out = _pass(monkeypatch, server, writers=0)
    assert set(server.seen) == {"read", "dashboard"}
    assert out["sync"]["requests"] == out["assign"]["requests"] == out["meter"]["requests"] == 0


@pytest.mark.parametrize(
    ("wrong", "said"),
    [
        ("sync", "a form came back 'flagged': the work order changed after the phone saw it"),
        ("assign", "answered 409"),
        ("meter", "answered 400"),
        ("read", "answered 500"),
        ("dashboard", "answered 302"),
    ],
)
def test_a_wrong_outcome_fails_the_pass_saying_what_happened(monkeypatch, wrong, said):
    """A flagged form, an assignment refused (409), a meter reading refused, a read not 200/304: WrongOutcome."""
    with pytest.raises(WrongOutcome) as caught:
        _pass(monkeypatch, Server(wrong))
    assert said in str(caught.value)


def test_the_sync_scenario_fails_when_a_form_is_not_stored():
    """Its figure is the cost of storing forms; one flagged form among them fails it, naming the flag."""
    stored = [{"client_uuid": f"u{i}", "status": "stored", "flags": []} for i in range(3)]
    forms_outcome_check(stored, expected=3, status="stored", what="sync")
    flagged = [*stored[:2], {"client_uuid": "u2", "status": "flagged", "flags": [{"reason": "run-hour meter: x"}]}]
    with pytest.raises(WrongOutcome) as caught:
        forms_outcome_check(flagged, expected=3, status="stored", what="sync")
    assert "answers {'stored': 2, 'flagged': 1}" in str(caught.value) and "run-hour meter: x" in str(caught.value)
    with pytest.raises(WrongOutcome, match="2 forms sent"):
        forms_outcome_check(stored, expected=2, status="stored", what="sync")


@pytest.mark.django_db
@pytest.mark.parametrize("latest_hours_ago", [-1.5, 0.2, 30.0, 24 * 30])
def test_a_meter_writer_reading_is_accepted_whenever_the_bench_runs(latest_hours_ago):
    """The line through the unit's latest reading at half the clock's rate passes the meter rules, whether that
    reading is later today (a generated 06:00 reading seen at 04:30), minutes, a day or a month old."""
    from django.core.exceptions import ValidationError

    from scheduling.services.meters import meter_reading_check
    from tests.factories.inventory import AHUFactory
    from tests.factories.scheduling import MeterReadingFactory

    ahu = AHUFactory()
    latest_at = NOW - dt.timedelta(hours=latest_hours_ago)
    MeterReadingFactory(ahu=ahu, hours=10_000.0, taken_at=latest_at - dt.timedelta(days=30))
    MeterReadingFactory(ahu=ahu, hours=10_000.0 + 650 * 1.05, taken_at=latest_at)
    for minutes in (0, 1, 7):
        at = NOW + dt.timedelta(minutes=minutes)
        hours = mixed_day.meter_hours_at(hours=10_000.0 + 650 * 1.05, at=latest_at, now=at)
        meter_reading_check(ahu=ahu, hours=hours, taken_at=at, component=None, is_reset=False, now=at)
    # The rules do bite: 1,000 h above the line is more than the meter can have run in any of these cases.
    with pytest.raises(ValidationError):
        meter_reading_check(ahu=ahu, hours=hours + 1000, taken_at=at, component=None, is_reset=False, now=at)


@pytest.mark.django_db
def test_the_meter_writer_reads_only_units_its_technician_may_see(clock, api_client):
    """A technician sees only the sites of their own work (inventory.selectors.sites_visible_to): in a portfolio
    where the first technician's work covers some sites only, every unit chosen for the meter writer is one of
    theirs and none a form is for, and each reading is stored (201) through the meter API with their token, as
    the writer sends it. (The 5,000-unit run's writer was answered 400 'not a unit you can see'.)"""
    from django.urls import reverse

    from accounts.models import User
    from bench.generate import portfolio_generate
    from inventory.models import AHU
    from inventory.selectors import ahus_visible_to
    from tests.conftest import TEST_NOW

    p = portfolio_generate(sites=10, ahus=60, years=1, today=TEST_NOW.date())
    tech = User.objects.get(username=p.main.technicians[0])
    visible = set(ahus_visible_to(user=tech).filter(pk__in=p.main.ahu_ids).values_list("pk", flat=True))
    assert 20 < len(visible) < len(p.main.ahu_ids)  # the case the large run met: not every unit is theirs
    skip = set(sorted(visible)[-3:])  # units the sync writer's forms are for
    meters = mixed_day.meters_prepare(org=p.main, user=tech, skip=skip)
    labels = dict(AHU.objects.filter(pk__in=p.main.ahu_ids).values_list("label_code", "pk"))
    assert len(meters) == 20 and not {labels[m["label"]] for m in meters} & skip
    for meter in meters:
        body = {
            "unit_label": meter["label"],
            "hours": mixed_day.meter_hours_at(hours=meter["hours"], at=meter["at"], now=TEST_NOW),
            "taken_at": TEST_NOW.isoformat(),
        }
        answer = api_client.post(
            reverse("scheduling_api:meter-readings"),
            body,
            format="json",
            HTTP_AUTHORIZATION=f"Token {p.main.tokens[tech.username]}",
        )
        assert answer.status_code == 201, (body, answer.content)
        assert answer.json()["unit_label"] == meter["label"]


def test_a_writer_whose_forms_run_out_stops_and_the_pass_says_so(monkeypatch):
    """A server fast enough to use every prepared form: the sync writer stops (no wrong outcome), the readers and
    the other writers go on, and the pass names the writer that ran out."""
    server = Server()
    monkeypatch.setattr(load, "request", server)
    monkeypatch.setattr(mixed_day, "DASHBOARD_PAUSE_S", 0.05)
    orgs = [_org("main"), _org("other")]
    for org in orgs:
        org.forms = org.forms[:2]
    out = mixed_day.day_pass(port=1, orgs=orgs, clients=5, writers=3, seconds=0.3)
    assert out["ran_out"] == ["sync (main)", "sync (other)"] or out["ran_out"] == ["sync (main)"], out["ran_out"]
    assert out["sync"]["requests"] == 4 or out["sync"]["requests"] == 2
    assert out["assign"]["requests"] > 0 and out["meter"]["requests"] > 0 and out["reads_rps"] > 0
