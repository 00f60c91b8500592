"""Reading verdicts in plain words: no doubled words, no raw or contradictory limits, readable ranges.

The server's words (inspections/reasons.py, inspections/evaluation/) and the phone's (units.js, limits.js,
evaluate.js) say the same; the phone agreement test holds evaluate.js to the server's reason text.
"""

import json
import shutil
import subprocess
from pathlib import Path
from types import SimpleNamespace

import pytest

from inspections.evaluation.readings import _band_parts
from inspections.reasons import render, span

JS = Path(__file__).resolve().parents[2] / "frontend" / "static" / "frontend" / "js"


def test_a_range_of_negative_numbers_reads_with_to():
    """−7.0 to −3.0 °C, not "−7.0–−3.0 °C"; in °F −22.0 to −4.0 (−30 and −20 °C, pint's conversion);
    a positive range keeps its dash."""
    assert render([span(-7.0, -3.0, "temperature")], "si") == "−7.0 to −3.0 °C"
    assert render([span(-30.0, -20.0, "temperature")], "us") == "−22.0 to −4.0 °F"
    assert render([span(2.0, 6.0, "temperature")], "si") == "2.0–6.0 °C"


@pytest.mark.parametrize(
    ("verdict", "si"),
    [
        ("fail", "motor current 9.0 A is above 7.5 A"),
        ("watch", "motor current 7.0 A is above 6.7 A but at most 7.5 A"),
        ("ok", "motor current 6.0 A is at most 6.7 A"),
    ],
)
def test_a_one_sided_band_never_reads_outside_at_most(verdict, si):
    """A band with only an upper limit reads "above 6.7 A" / "at most 6.7 A", never "is outside at most 6.7 A"."""
    it = SimpleNamespace(label="Motor current", quantity="current", decimals=1)
    value = {"fail": 9.0, "watch": 7.0, "ok": 6.0}[verdict]
    text = render(_band_parts(it, value, {"ok_max": 6.7, "watch_max": 7.5}, verdict), "si")
    assert text == si
    assert "outside at most" not in text


def test_a_two_sided_band_still_reads_within_and_outside():
    """2.0–6.0 °C band: 7.0 °C is outside it (fail with no watch band)."""
    it = SimpleNamespace(label="Supply air", quantity="temperature", decimals=1)
    text = render(_band_parts(it, 7.0, {"ok_min": 2.0, "ok_max": 6.0}, "fail"), "si")
    assert text == "supply air 7.0 °C is outside 2.0–6.0 °C"


RUNNER = """
import { describe, plausibility } from "./limits.js";
import { renderPart } from "./units.js";
const units = JSON.parse(process.argv[2]);
console.log(JSON.stringify({
  impossible: plausibility(-1, { physical: { min: 0, max: 99999.99999999999 }, plausible: null }, "L/s").text,
  big: describe({ min: 0, max: 211888.00000000003 }, "cfm"),
  converted: plausibility(30, { physical: { min: 0, max: 20.073216 }, plausible: null }, "in. w.c.", 2).text,
  negative: describe({ min: -7, max: -3 }, "°C"),
  band: renderPart({ units, decimals: { temperature: [1, 1] } }, { low: -7, high: -3, quantity: "temperature" }, "si"),
}));
"""


def test_the_phone_says_limits_plainly(tmp_path):
    """limits.js: "allowed 0 to 100000 L/s" after an "impossible" badge (no "impossible not possible", no
    99999.99999999999); a converted limit at the quantity's display precision (5,000 Pa = 20.07 in. w.c., not
    20.0732; 1 in. w.c. = 249.08891 Pa, NIST SP 811 B.8); true minus signs; units.js gives "−7.0 to −3.0 °C"
    as the server."""
    from inspections.phone import unit_table

    for module in JS.glob("*.js"):
        shutil.copy(module, tmp_path / module.name)
    (tmp_path / "runner.mjs").write_text(RUNNER)
    (tmp_path / "package.json").write_text('{"type": "module"}')
    proc = subprocess.run(
        ["node", "runner.mjs", json.dumps(unit_table())],
        capture_output=True,
        text=True,
        timeout=60,
        cwd=tmp_path,
        check=False,
    )
    assert proc.returncode == 0, proc.stderr
    out = json.loads(proc.stdout)
    assert out["impossible"] == "allowed 0 to 100000 L/s"
    assert out["converted"] == "allowed 0 to 20.07 in. w.c."
    assert out["big"] == "0 to 211888 cfm"
    assert out["negative"] == "−7 to −3 °C"
    assert out["band"] == "−7.0 to −3.0 °C" == render([span(-7.0, -3.0, "temperature")], "si")


def test_the_phone_badge_is_not_repeated_in_its_text():
    """checklist.js: the "recorded" badge is followed by what it means, in the server's words from the checklist's
    context (inspections.display.reading_words), never its own copy and never "nothing judges"."""
    source = (JS / "checklist.js").read_text()
    assert "nothing judges" not in source
    assert "words.unjudged" in source and "no limit applies" not in source
