"""A coil's valve leak-by test: the air's temperature across a coil whose valve is shut, the fan running.

The limit is the trend rules' own (FC#14/FC#15, ``FaultThresholds.coil_change_k``), so a valve the trends
call leaking and the test a technician runs on it are judged by the same figure; the phone gets it in its
evaluation constants (``inspections.phone``).
"""

from __future__ import annotations

from engineering import controls
from engineering.faults.thresholds import FaultThresholds
from inspections.reasons import q as qty

from .form import Form
from .results import Result

LEAK_LIMIT_K = FaultThresholds().coil_change_k
# The section and the 2 °F allowances are from memory (engineering.faults.thresholds); the record cites the rule.
LEAK_METHOD = (
    "change across the shut coil against √(εin² + εout²) + fan heat = 2.68 K "
    "(ASHRAE Guideline 36-2018 5.16.14, FC#14/FC#15)"
)


def valve_leak_checks(form: Form, consumed: set) -> list[Result]:
    """Each coil with both leak-by readings: FAIL when the shut coil still cools (cooling duty) or warms
    (heating, preheat) the air by the limit or more; WATCH (re-check) when the air changes the other way by as
    much, which is a sensor or another coil, not proof that the valve holds."""
    out = []
    for coil in (c for c in form.components if c.kind == "coil"):
        t_in = form.num("coil_valve_leak.leak_air_in", coil)
        t_out = form.num("coil_valve_leak.leak_air_out", coil)
        duty = coil.specs.get("duty")
        if t_in is None or t_out is None or duty not in controls.COIL_DUTIES:
            continue
        consumed.add(("coil_valve_leak.leak_air_out", coil.pk))
        chk = controls.valve_leak_check(entering_c=t_in, leaving_c=t_out, duty=duty, limit_k=LEAK_LIMIT_K)
        change = chk.limits["change_k"]
        res = Result(
            check="coil_valve_leak",
            item="coil_valve_leak.leak_air_out",
            component=coil,
            verdict=chk.verdict.value,
            condition_code="valve_leak",
            method=LEAK_METHOD,
            derived={
                "entering_c": t_in,
                "leaving_c": t_out,
                "change_k": round(change, 2),
                "limit_k": round(LEAK_LIMIT_K, 2),
            },
        )
        # Said the way the air went: a cooling coil's negative drop is a rise.
        what = ("drop" if change >= 0 else "rise") if duty == "cooling" else ("rise" if change >= 0 else "drop")
        head = [
            f"{coil.name}: air ",
            qty(t_in, "temperature"),
            " entering, ",
            qty(t_out, "temperature"),
            f" leaving the shut coil, a {what} of ",
            qty(abs(change), "temperature_difference"),
        ]
        if chk.verdict == controls.Verdict.WATCH:
            res.say(
                *head,
                f" — re-check: air {controls.WRONG_WAY[duty]}; beyond the ",
                qty(LEAK_LIMIT_K, "temperature_difference"),
                " allowance it cannot show whether the valve holds",
            )
        else:
            held = "the valve passes water" if chk.verdict == controls.Verdict.FAIL else "the valve holds"
            res.say(*head, f" — {held} (a leak from ", qty(LEAK_LIMIT_K, "temperature_difference"), ")")
        out.append(res)
    return out
