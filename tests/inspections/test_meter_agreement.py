"""The phone judges a typed run-hour value by the server's meter rule, in the server's words.

Seeded random cases (at least 200: below the last reading, within what the clock
allows, exactly at the edge, just beyond it, far beyond it, tenths of hours)
go through ``scheduling.services.meter_reading_check`` (with the form's finish
time as the reading time, as the sync step calls it) and through its JavaScript
twin ``frontend/static/frontend/js/meter.js`` under Node, fed only by
``inspections.phone.meter_context``. Both must find the same problem (none, a
reading below the last one, a gain beyond the clock time), and for the gain
beyond the clock time the phone shows the server's message word for word.
"""

from __future__ import annotations

import datetime as dt
import random
import shutil
from collections import Counter

import pytest
from django.core.exceptions import ValidationError

from inspections import phone
from inspections.services.reading_check import RUN_HOURS_IF_REPLACED
from scheduling.models import MeterReading
from scheduling.services import meter_reading_check
from tests.conftest import service_missing
from tests.factories.inventory import AHUFactory
from tests.phone_js import node_json

T0 = dt.datetime(2026, 1, 5, 7, 30, tzinfo=dt.UTC)
CASES = 240
LABEL = "Run hours"

RUNNER = """
import { readFileSync } from "node:fs";
import { meterReadingCheck } from "./meter.js";
const cases = JSON.parse(readFileSync(process.argv[2], "utf8"));
const out = cases.map((c) => meterReadingCheck(c.meter, c.hours, new Date(c.now), c.label));
console.log(JSON.stringify(out));
"""

pytestmark = [pytest.mark.django_db]


@pytest.fixture(autouse=True)
def _node():
    """The phone's code runs under Node: skipped locally without it, a failure under CI."""
    if shutil.which("node") is None:
        service_missing("node is not installed (make system installs nodejs)")


def _case(rng: random.Random, kind: str) -> tuple[float, dt.datetime, float, dt.datetime]:
    prev_h = rng.choice([0.0, float(rng.randint(1, 60000)), round(rng.uniform(1, 60000), 1)])
    prev_at = T0 + dt.timedelta(seconds=rng.randint(0, 3_000_000))
    elapsed = dt.timedelta(seconds=rng.choice([0, rng.randint(1, 7200), rng.randint(7200, 8_000_000)]))
    now = prev_at + elapsed
    e_h = elapsed.total_seconds() / 3600.0
    most = prev_h + e_h + max(e_h * 0.02, 1.0)  # check value: the rule's own statement (common practice)
    hours = {
        "below": prev_h - rng.choice([0.1, 1.0, rng.uniform(1, 5000)]),
        "within": rng.uniform(prev_h, most),
        "edge": most,
        "beyond": most + rng.choice([0.01, 0.5, 1.0]),
        "far": most + rng.uniform(100, 40000),
        "tenths": round(rng.uniform(prev_h, most + 10), 1),
    }[kind]
    return prev_h, prev_at, hours, now


def _server(ahu, hours: float, now: dt.datetime) -> tuple[str | None, str]:
    try:
        meter_reading_check(ahu=ahu, hours=hours, taken_at=now, now=now, label=LABEL, if_replaced=RUN_HOURS_IF_REPLACED)
    except ValidationError as exc:
        problem = exc.error_dict["hours"][0]
        return problem.code, " ".join(problem.messages)
    return None, ""


def test_phone_and_server_meter_rule_agree(tmp_path):
    """Every case: the same problem on both sides; a refused gain in the same words."""
    rng = random.Random(20260305)
    ahu = AHUFactory()
    kinds = ["below", "within", "edge", "beyond", "far", "tenths"]
    cases, expected = [], []
    for n in range(CASES):
        prev_h, prev_at, hours, now = _case(rng, kinds[n % len(kinds)])
        if hours < 0:
            hours = 0.0
        MeterReading.objects.filter(ahu=ahu).delete()
        MeterReading.objects.create(ahu=ahu, hours=prev_h, taken_at=prev_at, source="manual")
        expected.append(_server(ahu, hours, now))
        cases.append(
            {"meter": phone.meter_context(ahu=ahu, as_of=now), "hours": hours, "now": now.isoformat(), "label": LABEL}
        )
    phone_out = node_json(tmp_path, RUNNER, cases, timeout=120)
    codes = Counter(code for code, _ in expected)
    assert codes[None] >= 40 and codes["meter_backwards"] >= 20 and codes["meter_too_fast"] >= 60, codes
    problems = []
    for case, (code, message), js in zip(cases, expected, phone_out, strict=True):
        js_code = js["code"] if js else None
        if js_code != code:
            problems.append(f"{case}: server {code}, phone {js_code}")
        elif code == "meter_too_fast" and js["message"] != message:
            problems.append(f"server: {message}\nphone:  {js['message']}")
        elif code == "meter_too_fast" and js["verdict"] != "fail":
            problems.append(f"{case}: phone verdict {js['verdict']} for a refused gain")
        elif code == "meter_backwards" and not js["message"].startswith("below the last reading of"):
            problems.append(f"{case}: phone words {js['message']}")
    assert not problems, "\n".join(problems[:10])


def test_the_tryout_readings_are_judged_alike(tmp_path):
    """41,250 h a month after 11,034 h: refused by the server, "fail" on the phone naming 11,034 h;
    11,800 h after 14,043 h: "watch" on the phone, below the last reading, with its date."""
    ahu = AHUFactory(building__site__time_zone="UTC")
    then = dt.datetime(2026, 2, 1, 9, 0, tzinfo=dt.UTC)
    now = then + dt.timedelta(days=30)
    MeterReading.objects.create(ahu=ahu, hours=11034, taken_at=then, source="manual")
    code, message = _server(ahu, 41250, now)
    assert code == "meter_too_fast"
    MeterReading.objects.create(ahu=ahu, hours=14043, taken_at=then + dt.timedelta(days=1), source="manual")
    meter_a = {**phone.meter_context(ahu=ahu, as_of=now)}
    MeterReading.objects.filter(hours=14043).delete()
    meter_b = phone.meter_context(ahu=ahu, as_of=now)
    cases = [
        {"meter": meter_b, "hours": 41250, "now": now.isoformat(), "label": LABEL},
        {"meter": meter_a, "hours": 11800, "now": now.isoformat(), "label": LABEL},
    ]
    fail, watch = node_json(tmp_path, RUNNER, cases, timeout=60)
    assert fail["verdict"] == "fail" and fail["message"] == message
    assert "Run hours 41250 h is more than the meter can have run" in fail["message"]
    assert "11034 h on 1 Feb 2026 09:00 UTC" in fail["message"]  # the site's clock, zone named
    assert watch["verdict"] == "watch"
    assert watch["message"] == "below the last reading of 14043 h on 2 Feb 2026 09:00 UTC — meter replaced or misread?"
