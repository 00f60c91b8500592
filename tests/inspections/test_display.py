"""What a person reads of a judgement carries no stored key, argument name or code.

Every derived value the evaluation can produce has a plain label (collected by running
``inspections.evaluation.evaluate`` over the seeded forms of the phone-agreement test, every
check of ``evaluation.CHECKS``); its value reads in the reader's units; a yes/no value reads in
words or not at all; an unknown key is not shown. Reasons name no argument ("airflow_m3s=").
"""

from __future__ import annotations

import random
import re
from collections import defaultdict

import pytest

from inspections import display, evaluation
from inspections.evaluation.results import SEVERITY
from tests.inspections.test_phone_agreement import FOCUS, make_case, python_results

# An internal token: a snake_case name or a dotted item key, an argument with "=", a Python boolean.
INTERNAL = re.compile(r"\b[a-z][a-z0-9]*(?:_[a-z0-9]+)+\b|\b\w+=|\bTrue\b|\bFalse\b|\bna\b|\bco2\b")
CODES = set(SEVERITY) | {c for c in evaluation.CHECKS if "_" in c}


def leaks(text: str) -> list[str]:
    """The internal tokens a text shows (empty when it reads in plain words)."""
    found = INTERNAL.findall(text)
    return found + [c for c in CODES if re.search(rf"\b{c}\b", text)]


@pytest.fixture(scope="module")
def generated() -> list[dict]:
    """Server results over seeded forms, every check with its ok, watch and fail cases and edge cases."""
    rng = random.Random(20261202)
    return [r for focus in FOCUS for _ in range(60) for r in python_results(make_case(rng, focus))]


def test_every_derived_key_the_evaluation_produces_has_a_label(generated):
    """Each derived key of each check is labelled, a yes/no flag or deliberately hidden; every check is covered."""
    keys: dict[str, set] = defaultdict(set)
    for r in generated:
        keys[r["check"]].update(r["derived"])
    known = set(display.DERIVED) | set(display.DERIVED_FLAGS) | display.DERIVED_HIDDEN
    unlabelled = {check: sorted(ks - known) for check, ks in keys.items() if ks - known}
    assert not unlabelled, f"derived keys without a label: {unlabelled}"
    judged = {c for c in evaluation.CHECKS if c not in ("check", "choice")}
    assert judged <= set(keys), f"no derived values seen for {judged - set(keys)}"


def test_derived_values_and_reasons_read_in_plain_words(generated):
    """Every derived row (SI and US) and every reason reads without a key, an argument name or a code."""
    problems = []
    for r in generated:
        for system in ("si", "us"):
            for label, value in display.derived_rows(r["derived"], system, item=r["item"]):
                if leaks(f"{label}: {value}"):
                    problems.append((r["check"], system, label, value))
        if leaks(r["reason"]):
            problems.append((r["check"], "reason", r["reason"], leaks(r["reason"])))
    assert not problems, problems[:10]


def test_derived_values_read_in_the_readers_units():
    """Pressure, airflow and temperature read in in. w.c., cfm and °F for a US reader; fractions as %."""
    derived = {"corrected_dp_pa": 249.0, "airflow_m3s": 1.0, "supply_air_c": 20.0, "oa_fraction": 0.25}
    us = dict(display.derived_rows(derived, "us"))
    # 249.0 Pa = 1.00 in. w.c. (1 in. w.c. = 249.089 Pa, NIST SP 811); 1 m³/s = 2118.88 cfm (NIST SP 811).
    assert us["pressure drop at design airflow"] == "1.00 in. w.c."
    assert us["airflow"] == "2119 cfm"
    assert us["supply air"] == "68.0 °F"  # 20 °C = 68 °F (exact)
    assert us["outdoor-air fraction"] == "25 %"
    si = dict(display.derived_rows(derived, "si"))
    assert si["airflow"] == "1000 L/s"


def test_yes_no_values_read_in_words_or_not_at_all_and_unknown_keys_are_not_shown():
    """A true bypass suspicion reads in words, a false one is left out; a key with no label never shows."""
    rows = display.derived_rows({"media_bypass_suspected": True, "design_shortfall": False, "made_up_key": 3}, "si")
    assert rows == [("filter media", "missing, torn or bypassed suspected")]
    assert display.derived_rows({"media_bypass_suspected": False}, "si") == []


def test_a_non_finite_stored_number_is_not_shown():
    """A NaN or infinite value kept from before the input policy reads as nothing, never "nan" or "inf"."""
    rows = display.derived_rows({"loading_pct": float("nan"), "dp_pa": float("inf"), "deviation_pct": -4.25}, "si")
    assert rows == [("deviation", "−4.2 %")]


def test_engineering_refusals_lose_their_argument_names():
    """ "airflow airflow_m3s=0.4 is outside …" reads "airflow 0.4 is outside …"."""
    assert display.plain_message("airflow airflow_m3s=0.4 is outside 0.6–1.8 m³/s") == (
        "airflow 0.4 is outside 0.6–1.8 m³/s"
    )
    assert display.plain_message("run-hours points[2].run_hours=-1 is outside at least 0 h") == (
        "run-hours -1 is outside at least 0 h"
    )


def test_verdicts_read_as_the_phone_says_them():
    """OK, Watch, Fail as the verdict's labels (engineering.controls.Verdict, the stored choices' labels too),
    never the lowercase code; "na" reads "Not applicable"; no verdict reads "Recorded"."""
    from inspections.models import VERDICT_CHOICES

    assert [display.verdict_words(v) for v in ("ok", "watch", "fail", "na", "")] == [
        "OK",
        "Watch",
        "Fail",
        "Not applicable",
        "Recorded",
    ]
    assert all(display.verdict_words(code) == label for code, label in VERDICT_CHOICES)


@pytest.mark.parametrize(
    ("system", "rate", "density"),
    [
        ("si", "0.040 Pa per run-hour", "1.164 kg/m³"),
        # 0.04 Pa ÷ 249.089 Pa per in. w.c. = 0.00016; 1.1644 kg/m³ ÷ 16.0185 kg/m³ per lb/ft³ = 0.0727
        # (NIST SP 811 Appendix B conversion factors, from memory).
        ("us", "0.0002 in. w.c. per run-hour", "0.073 lb/ft³"),
    ],
)
def test_loading_rate_and_air_density_read_in_the_readers_units_at_their_own_precision(system, rate, density):
    """The two derived values the reasons never carry (a filter's loading rate, the coil's air density) read
    through the same number formatting as the reasons, at finer precision than their quantities' usual."""
    rows = dict(display.derived_rows({"rate_pa_per_hour": 0.04, "air_density_kg_m3": 1.1644}, system))
    assert rows == {"pressure drop rising by": rate, "air density": density}


def test_a_derived_number_is_said_without_an_exponent():
    """Tryout: a derived value of 2.5e-07 read "2.5e−07" (the minus of the exponent made true); a person never
    reads an exponent: plain digits at six figures (engineering.formatting.significant_text)."""
    from inspections.display import derived_rows

    rows = dict(derived_rows({"occupant_diversity": 2.5e-7, "zone_air_distribution_effectiveness": -0.8}, "si"))
    assert rows == {"occupant diversity": "0.00000025", "air distribution effectiveness": "−0.8"}
    assert dict(derived_rows({"points_used": 12}, "si")) == {"readings in the trend": "12"}
