"""The run-hour value reads alike on the phone and in the record.

While the technician types the unit's run-hours the phone says what the meter rule checked of it ("plausible: 615 h
since the last reading of 12000 h on …") or, below the last reading, "Watch — below the last reading of … — meter
replaced or misread?" (meter.js ``meterWords``); the record page and the PDFs said "Recorded — no limit applies to
this reading" for that same reading. Both now say it from one rule: the server's
``scheduling.services.meter_words``, as of the form's finish time. Seeded cases (within what the clock
allows, at its edge, beyond it, below the last reading, tenths, a last reading later than the finish, none) go
through both, the phone fed only by ``inspections.phone.meter_context``.
"""

from __future__ import annotations

import datetime as dt
import random

import pytest

from inspections import phone
from scheduling.models import MeterReading
from scheduling.services import meter_plausible_words, meter_words
from tests.factories.inventory import AHUFactory
from tests.phone_js import node_json

T0 = dt.datetime(2026, 1, 5, 7, 30, tzinfo=dt.UTC)
CASES = 120

RUNNER = """
import { readFileSync } from "node:fs";
import { meterReadingCheck, meterWords } from "./meter.js";
const cases = JSON.parse(readFileSync(process.argv[2], "utf8"));
const said = (c) => {
  const { verdict, text } = meterWords(c.meter, c.hours, new Date(c.now));
  const check = meterReadingCheck(c.meter, c.hours, new Date(c.now));  // the watch the phone shows beside the field
  return [verdict, text, check && check.verdict === "watch" ? check.message : ""];
};
console.log(JSON.stringify(cases.map(said)));
"""

pytestmark = [pytest.mark.django_db]


def _case(rng: random.Random, kind: str) -> tuple[float, dt.datetime, float, dt.datetime]:
    prev_h = rng.choice([0.0, float(rng.randint(1, 60000)), round(rng.uniform(1, 60000), 1)])
    prev_at = T0 + dt.timedelta(seconds=rng.randint(0, 3_000_000))
    elapsed = dt.timedelta(seconds=rng.choice([0, rng.randint(1, 7200), rng.randint(7200, 8_000_000)]))
    e_h = elapsed.total_seconds() / 3600.0
    most = prev_h + e_h + max(e_h * 0.02, 1.0)  # the rule's own statement (common practice)
    hours = {
        "within": rng.uniform(prev_h, most),
        "edge": most,
        "beyond": most + rng.choice([0.01, 0.5, 1.0]),
        "below": max(prev_h - rng.choice([0.1, 1.0, rng.uniform(1, 5000)]), 0.0),
        "tenths": round(rng.uniform(prev_h, most + 10), 1),
        "same": prev_h,
    }[kind]
    return prev_h, prev_at, hours, prev_at + elapsed


def test_phone_and_record_say_the_same_words_for_a_run_hour_value(tmp_path):
    rng = random.Random(20261205)
    ahu = AHUFactory(building__site__time_zone="Europe/Berlin")
    zone = ahu.building.site.time_zone
    kinds = ["within", "edge", "beyond", "below", "tenths", "same"]
    cases, server = [], []
    for n in range(CASES):
        prev_h, prev_at, hours, now = _case(rng, kinds[n % len(kinds)])
        MeterReading.objects.filter(ahu=ahu).delete()
        MeterReading.objects.create(ahu=ahu, hours=prev_h, taken_at=prev_at, source="manual")
        meter = phone.meter_context(ahu=ahu, as_of=now)
        cases.append({"meter": meter, "hours": hours, "now": now.isoformat()})
        last = MeterReading.objects.get(ahu=ahu)
        server.append(meter_words(hours=hours, last_hours=last.hours, last_at=last.taken_at, at=now, zone=zone))
    # A last reading later than the finish time, and none at all: nothing checked on either side.
    later = {**cases[0]["meter"], "last": {**cases[0]["meter"]["last"], "taken_at": "2030-01-01T00:00:00+00:00"}}
    cases += [
        {"meter": later, "hours": 5.0, "now": T0.isoformat()},
        {"meter": {**later, "last": None}, "hours": 5.0, "now": T0.isoformat()},
    ]
    server += [
        meter_words(hours=5.0, last_hours=0.0, last_at=dt.datetime(2030, 1, 1, tzinfo=dt.UTC), at=T0, zone=zone),
        meter_words(hours=5.0, last_hours=None, last_at=None, at=T0, zone=zone),
    ]
    js = node_json(tmp_path, RUNNER, cases, timeout=120)
    problems = [
        f"{c}\nserver: {s!r}\nphone:  {p!r}"
        for c, s, p in zip(cases, server, js, strict=True)
        if list(s) != p[:2] or p[2] != (s[1] if s[0] == "watch" else "")  # the watch beside the field: the same
    ]
    assert not problems, "\n".join(problems[:5])
    plausible = [w for v, w in server if w and not v]
    watched = [w for v, w in server if v]
    assert len(plausible) >= CASES // 3 and all(w.startswith("plausible: ") for w in plausible)
    assert len(watched) >= CASES // 8 and all(
        w.startswith("below the last reading of ") and w.endswith(" — meter replaced or misread?") for w in watched
    )
    assert server[-2:] == [("", ""), ("", "")]
    for case, (verdict, _) in zip(cases, server, strict=True):
        below = bool(case["meter"]["last"]) and case["hours"] < case["meter"]["last"]["hours"]
        assert (verdict == "watch") == (below and case is not cases[-2])  # later than the finish: nothing said


def test_the_words_name_the_gain_the_last_reading_and_its_time_on_the_sites_clock():
    at = dt.datetime(2026, 12, 2, 8, 15, tzinfo=dt.UTC)
    words = meter_plausible_words(
        hours=12615, last_hours=12000, last_at=at, at=at + dt.timedelta(days=30), zone="Europe/Berlin"
    )
    assert words == "plausible: 615 h since the last reading of 12000 h on 2 Dec 2026 09:15 CET"
    # Beyond what 30 days of clock time allow: not plausible, no words (the server refuses it).
    assert (
        meter_plausible_words(hours=13000, last_hours=12000, last_at=at, at=at + dt.timedelta(days=30), zone="UTC")
        == ""
    )


def test_a_value_below_the_last_reading_is_a_watch_naming_the_reading_and_its_time():
    at = dt.datetime(2026, 12, 2, 8, 15, tzinfo=dt.UTC)
    later = at + dt.timedelta(days=30)
    assert meter_words(hours=11000, last_hours=12000, last_at=at, at=later, zone="Europe/Berlin") == (
        "watch",
        "below the last reading of 12000 h on 2 Dec 2026 09:15 CET — meter replaced or misread?",
    )
    # The same value before the last reading was taken: nothing to compare with.
    assert meter_words(hours=11000, last_hours=12000, last_at=later, at=at, zone="UTC") == ("", "")
