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

Here the passes and the scenario; the setup in ``mixed_day_setup``, the writers in ``mixed_day_writers``.
"""

from __future__ import annotations

import threading
import time

from .generate import Portfolio
from .mixed_day_setup import DayOrg, day_prepare, meters_prepare, organisations_for_day
from .mixed_day_writers import Tally, assign_one, meter_hours_at, meter_one, sync_one
from .scenarios import WrongOutcome, median

# DayOrg, meters_prepare and meter_hours_at are answered here too: the mixed day's public names in one place.
__all__ = ["DASHBOARD_PAUSE_S", "DayOrg", "day_pass", "meter_hours_at", "meters_prepare", "mixed_day"]


READ_KINDS = ("today", "board", "today", "dashboard", "today")
WRITE_KINDS = ("sync", "assign", "meter")
WARM_UP_SECONDS = 2.0
# Phones and the board ask again as soon as answered (a capacity measure, as the load scenario's); a property
# manager reads the dashboard before opening it again, as a person at a desk does, so a page that takes seconds
# does not hold every worker in both passes.
DASHBOARD_PAUSE_S = 2.0


def figures(latencies: list[float], seconds: float) -> dict:
    from .load import percentile

    return {
        "requests": len(latencies),
        "rps": round(len(latencies) / seconds, 2) if seconds > 0 else 0.0,
        "p50_ms": round(percentile(latencies, 50) * 1000, 1) if latencies else None,
        "p95_ms": round(percentile(latencies, 95) * 1000, 1) if latencies else None,
    }


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
                    done = sync_one(port, org, tally)
                elif kind == "assign":
                    done = assign_one(port, org, tally, turn // len(mine))
                else:
                    done = meter_one(port, org, tally, turn // len(mine))
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
        **{k: figures(tally.latencies.get(k, []), wall) for k in (*dict.fromkeys(READ_KINDS), *WRITE_KINDS)},
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
