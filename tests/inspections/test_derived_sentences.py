"""A technician's result reads derived values as sentences in their units, never "label: value; label: value".

1 in. w.c. = 249.08891 Pa and 1 cfm = 0.00047194745 m³/s (NIST SP 811 B.8); the filter figures are invented.
"""

import re

import pytest

from frontend.selectors import result_for_display
from inspections import display

FILTER = {
    "dp_pa": 62.2,
    "airflow_m3s": 1.92,
    "airflow_source": "measured",
    "clean_dp_pa": 44.8,
    "fraction_of_clean_pct": 139.3,
    "corrected_dp_pa": 70.0,
    "design_airflow_m3s": 2.0,
    "final_dp_pa": 250.0,
    "loading_pct": 8.5,
    "media_bypass_suspected": False,
    "forecast_note": "a filter forecast needs at least 3 usable readings (airflow within 0.5–1.5 × design); got 1",
}


def test_a_filter_reading_reads_as_sentences_in_us_units():
    text = display.derived_text(FILTER, "us")
    assert text.startswith(
        "Pressure drop 0.25 in. w.c. at 4068 cfm measured, 139 % of the clean value (0.18 in. w.c.). "
    ), text
    assert "At the design airflow (4238 cfm) it would be 0.28 in. w.c. " in text
    assert "Loaded 8 % of the way from clean to final (1.00 in. w.c.)." in text
    assert text.endswith("Not enough readings for a forecast yet (1; 3 needed).")
    assert " Pa" not in text and "got 1" not in text and ".." not in text


def test_a_filter_reading_reads_as_sentences_in_si_units():
    text = display.derived_text(FILTER, "si")
    assert text.startswith("Pressure drop 62 Pa at 1920 L/s measured, 139 % of the clean value (45 Pa).")


def test_no_label_colon_value_lists_for_any_derived_value():
    """Every labelled value, every yes/no flag: sentences, each starting with a capital and ending in a stop."""
    derived = {key: 1.5 for key, (_, how) in display.DERIVED.items() if not isinstance(how, dict)}
    derived |= {"airflow_source": "measured", "forecast_change_date": "2027-03-03", "forecast_note": "x needs y"}
    derived |= dict.fromkeys(display.FLAG_SENTENCES, True) | {"fluid": "water", "points_used": 4}
    for system in ("si", "us"):
        sentences = display.derived_sentences(derived, system, item="sensor_drift.temp_sensor")
        assert sentences
        for s in sentences:
            assert s[0].isupper() or s[0].isdigit(), s
            assert s.endswith("."), s
            assert not re.search(r"[a-z]: [\d−]", s), s  # no "label: value"
            assert not re.search(r"\b[a-z]+_[a-z_]+\b", s), s  # no stored key


def test_a_forecast_reads_as_one_sentence():
    text = display.derived_text(
        {
            "forecast_change_date": "2027-03-03",
            "forecast_earliest_date": "2027-02-01",
            "forecast_latest_date": "2027-04-01",
            "forecast_run_hours": 5200,
            "points_used": 4,
        },
        "si",
    )
    assert text.startswith(
        "Filter change forecast 3 March 2027 (between 1 February 2027 and 1 April 2027), at about 5200 h"
    )
    assert "4 readings in the trend." in text


@pytest.mark.django_db
def test_the_result_page_shows_sentences():
    result = {
        "status": "stored",
        "evaluation": [
            {
                "item": "filter_check.dp",
                "component": None,
                "check": "filter_loading",
                "verdict": "watch",
                "reason": "filter at 139 %",
                "derived": FILTER,
            },
        ],
    }
    shown = result_for_display(result=result, system="us")["evaluation"][0]
    assert shown["verdict_words"] == "Watch"
    assert shown["derived_text"] == display.derived_text(FILTER, "us")


def test_how_the_airflow_was_found_reads_once():
    assumed = {**FILTER, "airflow_source": "design airflow assumed (not measured)"}
    assert "at 1920 L/s (design airflow assumed, not measured), 139 %" in display.derived_text(assumed, "si")
    fan = {"airflow_m3s": 1.0, "airflow_source": "from fan speed 931 rpm by the first fan law"}
    text = display.derived_text(fan, "si")
    assert "Airflow from fan speed 931 rpm by the first fan law." in text and "from from" not in text
    assert "Design airflow assumed (not measured)." in display.derived_text(
        {"airflow_source": assumed["airflow_source"]}, "si"
    )


@pytest.mark.parametrize(
    ("reason", "label", "shown"),
    [
        ("Fin condition: Clean", "Fin condition — Heating coil", "Clean"),
        ("Heating coil: Fin condition: Clean", "Fin condition — Heating coil", "Clean"),
        ("confirmed: Filters replaced and dated", "Filters replaced and dated — Pre-filters", "confirmed"),
        ("Pre-filters: confirmed: Filters replaced and dated", "Filters replaced and dated — Pre-filters", "confirmed"),
        ("not confirmed: Belt tension", "Belt tension", "not confirmed"),
        ("supply air 7.0 °C is outside 2.0–6.0 °C", "Supply air", "supply air 7.0 °C is outside 2.0–6.0 °C"),
    ],
)
def test_a_result_line_says_each_thing_once(reason, label, shown):
    """Server and phone (checklist.js withoutPart) strip what the line's label already says."""
    import json
    import shutil
    import subprocess
    from pathlib import Path

    from inspections.reasons import text_said_once

    assert text_said_once(reason, label) == shown
    js = Path(__file__).resolve().parents[2] / "frontend" / "static" / "frontend" / "js" / "checklist.js"
    source = js.read_text()
    start = source.index("function withoutLead(")
    end = source.index("function captionOf(")
    script = (
        source[start:end] + f"\nconsole.log(JSON.stringify(withoutPart({json.dumps(reason)}, {json.dumps(label)})));"
    )
    node = shutil.which("node")
    if node:
        out = subprocess.run([node, "-e", script], capture_output=True, text=True, timeout=30, check=True).stdout
        assert json.loads(out) == shown
