"""One time format for people: a place's clock with the zone named, on the server and on the phone alike.

Zone facts are from the IANA tz database (Python's zoneinfo): Europe/Berlin keeps CET (UTC+1) and, from the
last Sunday of March to the last Sunday of October at 01:00 UTC, CEST (UTC+2) (EU Directive 2000/84/EC);
Asia/Kolkata is IST, UTC+5:30, without summer time; Australia/Lord_Howe moves its clock by half an hour.
"""

from __future__ import annotations

import datetime as dt
import json
import random
import shutil
import subprocess
from pathlib import Path

import pytest

from accounts.clock import local_time_text, zone_clock
from accounts.inputs import FieldErrors, check_reading_time, local_text
from inventory.display import site_time_text
from tests.conftest import service_missing

JS = Path(__file__).resolve().parents[2] / "frontend" / "static" / "frontend" / "js"
ZONES = [
    "Europe/Berlin",
    "Europe/Amsterdam",
    "Europe/London",
    "Europe/Dublin",
    "Europe/Helsinki",
    "America/New_York",
    "America/St_Johns",
    "America/Sao_Paulo",
    "Asia/Kolkata",
    "Asia/Kathmandu",
    "Australia/Lord_Howe",
    "Pacific/Chatham",
    "UTC",
]
AROUND = dt.datetime(2026, 12, 2, 8, 15, tzinfo=dt.UTC)

RUNNER = """
import { readFileSync } from "node:fs";
import { timeText } from "./units.js";
const { clocks, cases } = JSON.parse(readFileSync(process.argv[2], "utf8"));
console.log(JSON.stringify(cases.map((c) => timeText(c.at, clocks[c.zone]))));
"""


def test_a_moment_reads_on_the_sites_clock_with_its_zone():
    """08:15 UTC on 2 Dec 2026 is 09:15 in Berlin (CET, UTC+1) and 13:45 in Kolkata (IST, UTC+5:30)."""
    assert local_time_text(AROUND, zone="Europe/Berlin") == "2 Dec 2026 09:15 CET"
    assert local_time_text(AROUND, zone="Asia/Kolkata") == "2 Dec 2026 13:45 IST"
    assert site_time_text(AROUND, "Europe/Berlin") == "2 Dec 2026 09:15 CET"


def test_the_repeated_hour_when_clocks_go_back_names_its_side():
    """26 Oct 2025: 00:30 UTC is 02:30 CEST and 01:30 UTC is 02:30 CET in Berlin; the zone tells them apart
    (Django's own 'T' format leaves the zone out for such an hour)."""
    first = dt.datetime(2025, 10, 26, 0, 30, tzinfo=dt.UTC)
    assert local_time_text(first, zone="Europe/Berlin") == "26 Oct 2025 02:30 CEST"
    assert local_time_text(first + dt.timedelta(hours=1), zone="Europe/Berlin") == "26 Oct 2025 02:30 CET"


def test_the_input_policys_messages_use_the_same_format():
    """A reading 'from the future' is named on the site's clock with the zone, as the pages write it."""
    assert local_text(AROUND, "Europe/Berlin") == local_time_text(AROUND, zone="Europe/Berlin")
    errors = FieldErrors()
    now = dt.datetime(2026, 1, 5, 7, 30, tzinfo=dt.UTC)
    check_reading_time(
        "2026-01-06 09:00", key="taken_at", label="Reading time", tz="Europe/Berlin", now=now, errors=errors
    )
    assert errors["taken_at"] == [
        "Reading time 6 Jan 2026 09:00 CET is later than now (5 Jan 2026 08:30 CET, site time); "
        "a reading cannot come from the future — check the date and the device's clock"
    ]


def test_the_ends_of_the_calendar_read_as_given():
    """A moment the zone's clock cannot reach (the last minutes of year 9999 east of UTC) is shown as given."""
    end = dt.datetime(9999, 12, 31, 23, 30, tzinfo=dt.UTC)
    assert local_time_text(end, zone="Asia/Tokyo") == "9999-12-31T23:30+00:00"


@pytest.fixture
def node():
    if shutil.which("node") is None:
        service_missing("node is not installed (make system installs nodejs)")


def _moments(rng: random.Random) -> list[dt.datetime]:
    """60 random moments from 2000 to 2028."""
    start, end = dt.datetime(2000, 1, 1, tzinfo=dt.UTC), dt.datetime(2028, 12, 31, tzinfo=dt.UTC)
    span = int((end - start).total_seconds())
    return [start + dt.timedelta(seconds=rng.randrange(span)) for _ in range(60)]


def test_the_phone_writes_every_moment_as_the_server_does(tmp_path, node):
    """For 13 zones (half-hour, quarter-hour and half-hour-summer offsets, southern summers, negative summer time
    in Dublin), random moments and every clock change ± 1 minute read the same on the phone (``timeText`` in
    units.js, fed by ``zone_clock``) as on the server (``local_time_text``), word for word."""
    rng = random.Random(20261202)
    clocks = {zone: zone_clock(zone, around=AROUND) for zone in ZONES}
    cases, expected = [], []
    for zone in ZONES:
        moments = _moments(rng)
        for start_ms, _, _ in clocks[zone]["spans"][1:]:
            change = dt.datetime.fromtimestamp(start_ms / 1000, tz=dt.UTC)
            moments += [change - dt.timedelta(minutes=1), change, change + dt.timedelta(minutes=1)]
        for at in moments:
            cases.append({"zone": zone, "at": at.isoformat()})
            expected.append(local_time_text(at, zone=zone))
    assert len(cases) > 1500
    (tmp_path / "runner.mjs").write_text(RUNNER)
    for f in JS.glob("*.js"):
        (tmp_path / f.name).write_text(f.read_text())
    (tmp_path / "cases.json").write_text(json.dumps({"clocks": clocks, "cases": cases}))
    run = subprocess.run(
        ["node", "runner.mjs", "cases.json"], capture_output=True, text=True, timeout=120, cwd=tmp_path, check=False
    )
    assert run.returncode == 0, run.stderr
    phone = json.loads(run.stdout)
    problems = [f"{c}: server {s!r}, phone {p!r}" for c, s, p in zip(cases, expected, phone, strict=True) if s != p]
    assert not problems, "\n".join(problems[:10])


COUNT_RUNNER = """
import { readFileSync } from "node:fs";
import { countText } from "./units.js";
const cases = JSON.parse(readFileSync(process.argv[2], "utf8"));
console.log(JSON.stringify(cases.map((c) => countText(c.n, c.noun, c.plural))));
"""


def test_the_phone_counts_with_its_noun_as_the_server_does(tmp_path, node):
    """The phone's ``countText`` (units.js; the outbox bar's "1 form needs fixing") says a count as the server's
    ``engineering.formatting.count_text`` does, word for word — never "form(s)"."""
    from engineering.formatting import count_text

    cases = [{"n": n, "noun": noun, "plural": plural} for n in (0, 1, 2, 12) for noun, plural in
             (("form", None), ("finished form", None), ("child", "children"))]  # fmt: skip
    (tmp_path / "runner.mjs").write_text(COUNT_RUNNER)
    for f in JS.glob("*.js"):
        (tmp_path / f.name).write_text(f.read_text())
    (tmp_path / "cases.json").write_text(json.dumps(cases))
    run = subprocess.run(
        ["node", "runner.mjs", "cases.json"], capture_output=True, text=True, timeout=120, cwd=tmp_path, check=False
    )
    assert run.returncode == 0, run.stderr
    assert json.loads(run.stdout) == [count_text(c["n"], c["noun"], c["plural"]) for c in cases]
    assert "(s)" not in (JS / "app.js").read_text()


def test_a_moment_at_night_names_the_night_it_belongs_to():
    """A freeze at 04:15 belongs to the night that began the evening before; evening and morning of one night read
    the same night; a night across a month or a year names both ends; by day a moment reads on its day."""
    from accounts.clock import moment_words

    zone = "Europe/Amsterdam"  # CET, UTC+1 in winter
    assert moment_words(dt.datetime(2026, 12, 4, 3, 15, tzinfo=dt.UTC), zone=zone) == (
        "04:15 CET on the night of 3–4 Dec 2026"
    )
    assert moment_words(dt.datetime(2026, 12, 3, 21, 40, tzinfo=dt.UTC), zone=zone) == (
        "22:40 CET on the night of 3–4 Dec 2026"
    )
    assert moment_words(dt.datetime(2026, 1, 31, 23, 0, tzinfo=dt.UTC), zone=zone).endswith(
        "on the night of 31 Jan – 1 Feb 2026"
    )
    assert moment_words(dt.datetime(2026, 12, 31, 22, 0, tzinfo=dt.UTC), zone=zone).endswith(
        "on the night of 31 Dec 2026 – 1 Jan 2027"
    )
    assert moment_words(dt.datetime(2026, 12, 4, 13, 20, tzinfo=dt.UTC), zone=zone) == "14:20 CET on 4 Dec 2026"
