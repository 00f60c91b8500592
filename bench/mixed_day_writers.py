"""The mixed day's writers: one operation each, checked, its latency or its wrong outcome kept in a ``Tally``."""

from __future__ import annotations

import datetime as dt
import json
import math
import threading
from dataclasses import dataclass, field

from .mixed_day_setup import DayOrg
from .scenarios import url


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


def sync_one(port: int, org: DayOrg, tally: Tally) -> bool | None:
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


def assign_one(port: int, org: DayOrg, tally: Tally, turn: int) -> bool:
    from .load import request

    visit = org.assign[turn % len(org.assign)]
    visit["turn"] += 1
    techs = org.assign_techs
    assignee = techs[(org.assign.index(visit) + visit["turn"]) % len(techs)]
    path = url("scheduling_api:work-order-assign", public_id=visit["id"])
    # The day's writers load the server as a supervisor would who has read the board's warnings and confirms them
    # (a plan after the due date, a skill or a day's capacity): the write, not the decision, is what is measured.
    body = json.dumps(
        {
            "assignee": assignee,
            "version": visit["version"],
            "scheduled_for": visit["day"].isoformat(),
            "confirm_warnings": True,
        }
    )
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


def meter_one(port: int, org: DayOrg, tally: Tally, turn: int) -> bool:
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
