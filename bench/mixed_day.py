"""The mixed day: readers and writers at once, in several organisations, against the same gunicorn.

A real working day has technicians polling today while others send finished forms and supervisors
assign work. Each run measures two passes of ``seconds`` each with the same reader clients:

* *read-only*: the readers alone — the baseline of this scenario;
* *under writers*: the same readers while ``writers`` continuous writer clients write, each of one kind
  (``WRITE_KINDS``, in turn), every write going to the next organisation in turn.

Readers (``READ_KINDS``, client ``i`` reads kind ``i % 5`` of organisation ``i % n``): a technician's today
(API, token), a supervisor's board (API, token) and a property manager's dashboard (the page, signed in
with a session cookie as a browser is, opened again ``DASHBOARD_PAUSE_S`` after each answer). Writers: sync
forms (one finished visit a request, built as the phone builds it; each must come back "stored"),
assignments through the work-order API (a supervisor moving a visit between technicians on a day of its
own far ahead, so no day passes its capacity: each must answer 200), and run-hour readings through the
meter API by a technician, of units that technician may see (each must answer 201).

Any other outcome raises ``WrongOutcome``: a flagged form or a refused write measures another path, and a
read that is not 200/304 measures nothing. Dates come from the portfolio's ``today``; the clock-bound
values (a form's finish time when it is made, a meter's reading time when it is sent) are kept within
what the server's plausibility rules allow at any hour of any day of the week.
"""

from __future__ import annotations

import datetime as dt
import json
import math
import threading
import time
from dataclasses import dataclass, field

from .generate import OrgSummary, Portfolio
from .scenarios import WrongOutcome, median, sync_forms_prepare, today_work_assign, url

READ_KINDS = ("today", "board", "today", "dashboard", "today")
WRITE_KINDS = ("sync", "assign", "meter")
WARM_UP_SECONDS = 2.0
SETUP_TIMEOUT_S = 130  # gunicorn's worker timeout (bench.load.Server) is 120 s
# Phones and the board ask again as soon as answered (a capacity measure, as the load scenario's); a property
# manager reads the dashboard before opening it again, as a person at a desk does, so a page that takes seconds
# does not hold every worker in both passes.
DASHBOARD_PAUSE_S = 2.0


@dataclass
class DayOrg:
    """What the readers and writers of one organisation use."""

    summary: OrgSummary
    reads: dict[str, list[tuple[str, str | None, str | None]]]  # kind -> (path, token, cookie) per reader
    forms: list[tuple[str, dict]] = field(default_factory=list)  # (technician token, form), taken in order
    assign: list[dict] = field(default_factory=list)  # {"id", "version", "day", "turn"} per visit
    assign_techs: list[str] = field(default_factory=list)
    supervisor_token: str = ""
    meters: list[dict] = field(default_factory=list)  # {"label", "hours", "at"}: the reading a line runs through
    meter_token: str = ""


@dataclass
class Tally:
    """Latencies of the successful operations and the first wrong outcomes, per kind."""

    latencies: dict[str, list[float]] = field(default_factory=dict)
    wrong: list[str] = field(default_factory=list)
    ran_out: list[str] = field(default_factory=list)  # writers whose prepared material ran out (they stopped)
    lock: threading.Lock = field(default_factory=threading.Lock)

    def ok(self, kind: str, seconds: float) -> None:
        with self.lock:
            self.latencies.setdefault(kind, []).append(seconds)

    def fail(self, text: str) -> None:
        with self.lock:
            if len(self.wrong) < 20:
                self.wrong.append(text[:400])


def _figures(latencies: list[float], seconds: float) -> dict:
    from .load import percentile

    return {
        "requests": len(latencies),
        "rps": round(len(latencies) / seconds, 2) if seconds > 0 else 0.0,
        "p50_ms": round(percentile(latencies, 50) * 1000, 1) if latencies else None,
        "p95_ms": round(percentile(latencies, 95) * 1000, 1) if latencies else None,
    }


def _far_weekday(day: dt.date) -> dt.date:
    while day.weekday() >= 5:  # Saturday, Sunday: no capacity (scheduling.selectors.capacity_on)
        day += dt.timedelta(days=1)
    return day


# ---------------------------------------------------------------------------
# Setup (not timed)
# ---------------------------------------------------------------------------
def organisations_for_day(*, portfolio: Portfolio, extra: int, years: int) -> list[OrgSummary]:
    """The main and the other organisation, plus ``extra`` more of a tenth of the main one's units each, every
    one with its preventive work generated and today's visits given to its technicians."""
    from accounts.models import Organisation
    from scheduling.engine import work_orders_generate
    from scheduling.models import WorkOrder

    from .generate import organisations_add

    orgs = [portfolio.main, portfolio.other]
    if extra:
        units = max(5, len(portfolio.main.ahu_ids) // 10)
        orgs += organisations_add(
            count=extra, sites=max(1, units // 10), ahus=units, today=portfolio.today, years=years
        )
    for org in orgs:
        has_open = WorkOrder.objects.filter(organisation_id=org.organisation_id, state__in=WorkOrder.OPEN_STATES)
        if not has_open.exists():
            work_orders_generate(organisation=Organisation.objects.get(pk=org.organisation_id), today=portfolio.today)
        if not WorkOrder.objects.filter(organisation_id=org.organisation_id, scheduled_for=portfolio.today).exists():
            today_work_assign(portfolio=portfolio, org=org)
    return orgs


def _session_cookie(username: str) -> str:
    """A signed-in browser's session cookie for ``username`` (the dashboard is a page, not an API)."""
    from django.conf import settings
    from django.test import Client

    from accounts.models import User

    client = Client()
    client.force_login(User.objects.get(username=username))
    return f"{settings.SESSION_COOKIE_NAME}={client.cookies[settings.SESSION_COOKIE_NAME].value}"


def meters_prepare(*, org: OrgSummary, user, skip: set[int], count: int = 20) -> list[dict]:
    """Up to ``count`` units of ``org`` whose run-hour meter ``user`` (the meter writer) reads, each with its latest
    reading (``{"label", "hours", "at"}``).

    Only units the person may see (``inventory.selectors.ahus_visible_to``): a technician sees the sites of their
    own work only, so any other unit is refused ("not a unit you can see"). Chosen before the passes, their
    visibility holds through them: it comes from work the writers do not take away (the history, today's visits,
    the forms' copies, which the sync writer completes). None a form is for (``skip``): a form stores its unit's
    reading as it was when the form was made."""
    from inventory.selectors import ahus_visible_to
    from scheduling.models import MeterReading

    units = dict(
        ahus_visible_to(user=user)
        .filter(building__site__organisation_id=org.organisation_id)
        .exclude(pk__in=skip)
        .order_by("-pk")
        .values_list("pk", "label_code")[:count]
    )
    latest: dict[int, tuple[float, dt.datetime]] = {}
    for ahu_id, hours, at in (
        MeterReading.objects.filter(ahu_id__in=units, component__isnull=True)
        .order_by("ahu_id", "taken_at")
        .values_list("ahu_id", "hours", "taken_at")
    ):
        latest[ahu_id] = (hours, at)
    return [{"label": units[a], "hours": h, "at": at} for a, (h, at) in latest.items()]


def day_prepare(*, portfolio: Portfolio, port: int, orgs: list[OrgSummary], forms: int) -> list[DayOrg]:
    """Reads, and the writers' material, for each organisation: ``forms`` sync forms in all (shared evenly),
    visits to move between technicians, and units whose run-hour meters are read."""
    from accounts.models import User
    from scheduling.models import WorkOrder
    from scheduling.selectors import assignment_check

    from .load import get_json, request

    today_path = url("scheduling_api:today") + f"?day={portfolio.today.isoformat()}"
    board_path = url("scheduling_api:board") + f"?week={portfolio.today.isoformat()}"
    dashboard_path = url("frontend:dashboard")
    copies_due = portfolio.today + dt.timedelta(days=300)  # off today's lists and the board's week
    per_org = math.ceil(forms / len(orgs))
    out = []
    for n, org in enumerate(orgs):
        techs = [org.tokens[t] for t in org.technicians]
        sup = org.tokens[org.supervisor]
        cookie = _session_cookie(org.property_manager)
        day_org = DayOrg(
            summary=org,
            reads={
                "today": [(today_path, t, None) for t in techs],
                "board": [(board_path, sup, None)],
                "dashboard": [(dashboard_path, None, cookie)],
            },
            supervisor_token=sup,
            meter_token=org.tokens[org.technicians[0]],
            assign_techs=list(org.technicians),
        )
        # One look at each read, so the passes measure real answers, not errors or a sign-in page. Untimed, and
        # given as long as gunicorn gives a worker: the first answer of a large organisation is built cold.
        get_json(port, today_path, token=techs[0], timeout=SETUP_TIMEOUT_S)
        get_json(port, board_path, token=sup, timeout=SETUP_TIMEOUT_S)
        status, body, _ = request("GET", port, dashboard_path, cookie=cookie, timeout=SETUP_TIMEOUT_S)
        if status != 200 or b"<html" not in body[:500].lower():
            raise WrongOutcome(f"{org.slug}: the property manager's dashboard answered {status}: {body[:200]!r}")
        day_org.forms = sync_forms_prepare(
            portfolio=portfolio, port=port, count=per_org, tag=f"day{n}", org=org, due_date=copies_due
        )
        synced_units = set(
            WorkOrder.objects.filter(public_id__in=[f["work_order"] for _, f in day_org.forms]).values_list(
                "ahu_id", flat=True
            )
        )
        # Visits to move: open, unassigned, planned for no day (not the forms' copies); each gets a weekday of
        # its own from 150 days ahead (past the generated horizon), so a technician holds one a day at most.
        tech_users = list(User.objects.filter(username__in=org.technicians).order_by("username"))
        candidates = (
            WorkOrder.objects.filter(
                organisation_id=org.organisation_id,
                state=WorkOrder.State.PLANNED,
                assignee__isnull=True,
                scheduled_for__isnull=True,
                approval=WorkOrder.Approval.NOT_NEEDED,
            )
            .select_related("ahu__building__site", "organisation")
            .order_by("-due_date", "pk")[:40]
        )
        day = _far_weekday(portfolio.today + dt.timedelta(days=150))
        for wo in candidates:
            if len(day_org.assign) >= max(2, len(tech_users)):
                break
            if assignment_check(work_order=wo, technician=tech_users[0], day=day).over:
                continue  # this visit alone would fill a day: a deliberate 409 is not what is measured
            day_org.assign.append({"id": str(wo.public_id), "version": wo.version, "day": day, "turn": 0})
            day = _far_weekday(day + dt.timedelta(days=1))
        meter_user = User.objects.get(username=org.technicians[0])  # the owner of ``meter_token``
        day_org.meters = meters_prepare(org=org, user=meter_user, skip=synced_units)
        out.append(day_org)
    # A tiny organisation may lack a meter of its own or a visit to move: its writes go to the others.
    for kind, has in (("forms", "forms"), ("visits to move", "assign"), ("meters", "meters")):
        if not any(getattr(o, has) for o in out):
            raise WrongOutcome(f"mixed day: no organisation has {kind} to write with")
    return out


# ---------------------------------------------------------------------------
# The writers: one operation each, checked
# ---------------------------------------------------------------------------
def _sync_one(port: int, org: DayOrg, tally: Tally) -> bool | None:
    """One sync form posted and checked stored; None when the forms prepared for ``org`` have run out (a faster
    server uses more of them: the writer stops, and the pass says so rather than calling it a wrong outcome)."""
    from .load import request

    if not org.forms:
        with tally.lock:
            tally.ran_out.append(f"sync ({org.summary.slug})")
        return None
    token, form = org.forms.pop(0)
    body = json.dumps({"forms": [form]}).encode()
    status, data, took = request("POST", port, url("inspections_api:sync"), token=token, body=body, timeout=120)
    if status != 200:
        tally.fail(f"sync writer ({org.summary.slug}): POST answered {status}: {data[:200]!r}")
        return False
    results = json.loads(data).get("results") or [{}]
    if results[0].get("status") != "stored":
        flags = "; ".join(f.get("reason", "") for f in results[0].get("flags") or []) or results[0].get("errors")
        tally.fail(f"sync writer ({org.summary.slug}): a form came back {results[0].get('status')!r}: {flags}")
        return False
    tally.ok("sync", took)
    return True


def _assign_one(port: int, org: DayOrg, tally: Tally, turn: int) -> bool:
    from .load import request

    visit = org.assign[turn % len(org.assign)]
    visit["turn"] += 1
    techs = org.assign_techs
    assignee = techs[(org.assign.index(visit) + visit["turn"]) % len(techs)]
    path = url("scheduling_api:work-order-assign", public_id=visit["id"])
    body = json.dumps({"assignee": assignee, "version": visit["version"], "scheduled_for": visit["day"].isoformat()})
    status, data, took = request("POST", port, path, token=org.supervisor_token, body=body.encode())
    if status != 200:
        tally.fail(f"assignment writer ({org.summary.slug}): assigning to {assignee} answered {status}: {data[:300]!r}")
        return False
    visit["version"] = json.loads(data)["version"]
    tally.ok("assign", took)
    return True


def meter_hours_at(*, hours: float, at: dt.datetime, now: dt.datetime) -> float:
    """A reading on the line through the unit's latest stored one at half the clock's rate: never more than the
    clock allows since it, never below it, and — when that reading is later than ``now`` (a generated reading at
    06:00 seen before then) — never above it nor too far below; so ``scheduling.services.meters`` accepts it at
    any hour. Rounded down to 0.001 h."""
    return math.floor((hours + 0.5 * (now - at).total_seconds() / 3600) * 1000) / 1000


def _meter_one(port: int, org: DayOrg, tally: Tally, turn: int) -> bool:
    from .load import request

    meter = org.meters[turn % len(org.meters)]
    now = dt.datetime.now(dt.UTC) - dt.timedelta(seconds=1)  # never ahead of the server's clock
    body = {
        "unit_label": meter["label"],
        "hours": meter_hours_at(hours=meter["hours"], at=meter["at"], now=now),
        "taken_at": now.isoformat(),
    }
    path = url("scheduling_api:meter-readings")
    status, data, took = request("POST", port, path, token=org.meter_token, body=json.dumps(body).encode())
    if status != 201:
        tally.fail(f"meter writer ({org.summary.slug}): {body} answered {status}: {data[:300]!r}")
        return False
    tally.ok("meter", took)
    return True


# ---------------------------------------------------------------------------
# One pass
# ---------------------------------------------------------------------------
def day_pass(*, port: int, orgs: list[DayOrg], clients: int, writers: int, seconds: float) -> dict:
    """``clients`` readers (and ``writers`` writers) for ``seconds``; figures per kind. Raises ``WrongOutcome``
    on any read not answered 200/304 and any write without its outcome."""
    from .load import request

    tally = Tally()
    gate = threading.Event()
    stop = threading.Event()
    deadline = [0.0]

    def reader(i: int) -> None:
        kind = READ_KINDS[i % len(READ_KINDS)]
        org = orgs[i % len(orgs)]
        choices = org.reads[kind]
        path, token, cookie = choices[(i // len(orgs)) % len(choices)]
        gate.wait()
        while not stop.is_set() and time.perf_counter() < deadline[0]:
            try:
                status, data, took = request("GET", port, path, token=token, cookie=cookie)
            except OSError as exc:
                tally.fail(f"{kind} reader ({org.summary.slug}): {type(exc).__name__}: {exc}")
                stop.set()
                return
            if status in (200, 304):
                tally.ok(kind, took)
                if kind == "dashboard":
                    stop.wait(max(0.0, min(DASHBOARD_PAUSE_S, deadline[0] - time.perf_counter())))
            else:
                tally.fail(f"{kind} reader ({org.summary.slug}): GET {path} answered {status}: {data[:200]!r}")
                stop.set()
                return

    def writer(i: int) -> None:
        kind = WRITE_KINDS[i % len(WRITE_KINDS)]
        mine = [o for o in orgs if {"sync": o.forms, "assign": o.assign, "meter": o.meters}[kind]]
        turn = i // len(WRITE_KINDS)  # writers of the same kind start at different organisations
        gate.wait()
        while not stop.is_set() and time.perf_counter() < deadline[0]:
            org = mine[turn % len(mine)]
            try:
                if kind == "sync":
                    done = _sync_one(port, org, tally)
                elif kind == "assign":
                    done = _assign_one(port, org, tally, turn // len(mine))
                else:
                    done = _meter_one(port, org, tally, turn // len(mine))
            except OSError as exc:
                tally.fail(f"{kind} writer ({org.summary.slug}): {type(exc).__name__}: {exc}")
                done = False
            if done is None:
                return  # its material ran out: this writer stops, the others go on (said in the pass's figures)
            if not done:
                stop.set()
                return
            turn += 1

    threads = [threading.Thread(target=reader, args=(i,), daemon=True) for i in range(clients)]
    threads += [threading.Thread(target=writer, args=(i,), daemon=True) for i in range(writers)]
    for t in threads:
        t.start()
    t0 = time.perf_counter()
    deadline[0] = t0 + seconds
    gate.set()
    for t in threads:
        t.join(seconds + 180)
    wall = time.perf_counter() - t0
    if tally.wrong:
        raise WrongOutcome(f"mixed day: {len(tally.wrong)} wrong outcome(s); first: " + " | ".join(tally.wrong[:3]))
    reads = sum(len(tally.latencies.get(k, [])) for k in set(READ_KINDS))
    return {
        "ran_out": sorted(set(tally.ran_out)),
        "seconds": round(wall, 2),
        "reads_rps": round(reads / wall, 2) if wall > 0 else 0.0,
        **{k: _figures(tally.latencies.get(k, []), wall) for k in (*dict.fromkeys(READ_KINDS), *WRITE_KINDS)},
    }


# ---------------------------------------------------------------------------
# The scenario
# ---------------------------------------------------------------------------
def mixed_day(
    *,
    portfolio: Portfolio,
    port: int,
    runs: int,
    clients: int,
    writers: int = 3,
    seconds: float = 10.0,
    forms: int = 1500,
    extra_orgs: int = 2,
    years: int = 2,
) -> dict:
    """Each run: a read-only pass, then the same readers under ``writers`` continuous writers; medians of the
    runs. Targets (issue 17): reads under writers ≥ 50 % of read-only; today's p95 under writers < 100 ms."""
    summaries = organisations_for_day(portfolio=portfolio, extra=extra_orgs, years=years)
    orgs = day_prepare(portfolio=portfolio, port=port, orgs=summaries, forms=forms)
    day_pass(port=port, orgs=orgs, clients=clients, writers=writers, seconds=WARM_UP_SECONDS)  # warm every worker
    passes: dict[str, list[dict]] = {"read_only": [], "under_writers": []}
    for _ in range(runs):
        passes["read_only"].append(day_pass(port=port, orgs=orgs, clients=clients, writers=0, seconds=seconds))
        passes["under_writers"].append(
            day_pass(port=port, orgs=orgs, clients=clients, writers=writers, seconds=seconds)
        )
    out: dict = {
        "organisations": [
            {"slug": o.summary.slug, "units": len(o.summary.ahu_ids), "technicians": len(o.summary.technicians)}
            for o in orgs
        ],
        "clients": clients,
        "writers": writers,
        "seconds": seconds,
        "runs": runs,
        "forms_left": sum(len(o.forms) for o in orgs),
    }
    for name, results in passes.items():
        figures: dict = {"reads_rps": median([r["reads_rps"] for r in results])}
        for kind in (*dict.fromkeys(READ_KINDS), *WRITE_KINDS):
            if name == "read_only" and kind in WRITE_KINDS:
                continue
            figures[kind] = {
                "requests": sum(r[kind]["requests"] for r in results),
                "rps": median([r[kind]["rps"] for r in results]),
                "p50_ms": median([r[kind]["p50_ms"] for r in results]),
                "p95_ms": median([r[kind]["p95_ms"] for r in results]),
            }
        out[name] = figures
    base, mixed = out["read_only"]["reads_rps"], out["under_writers"]["reads_rps"]
    out["reads_under_writers_over_read_only"] = round(mixed / base, 3) if base and mixed is not None else None
    today_p95 = out["under_writers"]["today"]["p95_ms"]
    ratio = out["reads_under_writers_over_read_only"]
    ran_out = sorted({w for r in passes["under_writers"] for w in r.get("ran_out", [])})
    out["writers_ran_out"] = ran_out
    # Writers that ran out of prepared forms were not continuous: the targets are not judged (None), never met.
    out["targets"] = {
        "reads under writers >= 50 % of read-only": None if ran_out else ratio is not None and ratio >= 0.5,
        "today p95 under writers < 100 ms": None if ran_out else today_p95 is not None and today_p95 < 100,
    }
    return out
