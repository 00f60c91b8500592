"""A reading's limits: the bands that depend on the unit or the part (``dynamic_limits``, named by an item's
``limits_from``), and a limit or value shown in the reader's units."""

from __future__ import annotations

import math

from engineering import filters as eng_filters
from engineering import formatting as fmt
from engineering.errors import EngineeringInputError
from engineering.glycol import glycol_freeze_point_c

# A glycol coil's freezing point read on a refractometer, against the freezing point of the coil's design
# concentration (engineering.glycol): ok up to 2 K warmer (a few points of concentration lost to top-ups with
# water), watch up to 4 K warmer, warmer fails; a mix richer than designed only costs heat transfer, so more than
# 8 K colder is a watch, never a fail. Common practice, no published source.
GLYCOL_OK_WARMER_K = 2.0
GLYCOL_WATCH_WARMER_K = 4.0
GLYCOL_OK_COLDER_K = 8.0

# A conversion's noise (120 °C read back as 120.00000000001) is no bound: below this many display steps it is
# ignored when a bound is rounded inward (the phone's limits.js BOUND_NOISE is the same).
BOUND_NOISE = 1e-6


def bound_text(x: float, *, decimals: int, side: str) -> str:
    """A range's bound ("allowed −40.14 to 40.14 in. w.c.", "expected …") at ``decimals``, rounded inward: a
    maximum (``side="max"``) down, a minimum up, so every value the words allow the check allows and every value
    it refuses or flags lies outside them (to the nearest, 10 000 Pa read "40.15 in. w.c." and a typed 40.15 was
    refused with words that allowed it). No grouping, a true minus sign, no trailing zeros; the phone's twin is
    ``limits.js`` ``bound``."""
    scale = 10**decimals
    steps = x * scale
    steps = math.floor(steps + BOUND_NOISE) if side == "max" else math.ceil(steps - BOUND_NOISE)
    text = f"{steps / scale:.{decimals}f}"
    text = text.rstrip("0").rstrip(".") if "." in text else text
    return "0" if text in ("-0", "") else text.replace("-", "−")


# A reading's units, labels and conversion are engineering.formatting's; these take a missing value through.
def display_unit_label(quantity: str, system: str) -> str:
    return fmt.unit_text(quantity=quantity, system=system)


def display_decimals(quantity: str, system: str) -> int | None:
    """The decimals the phone says a range of ``quantity`` at (its checklist context's table, the quantity's
    own, never an item's); None for a quantity the table does not know (then 4 significant figures)."""
    return fmt.DECIMALS[quantity][1 if system == "us" else 0] if quantity in fmt.DECIMALS else None


def to_display(value: float | None, quantity: str, system: str) -> float | None:
    return None if value is None else fmt.display_value(value, quantity=quantity, system=system)


def from_display(value: float, quantity: str, system: str) -> float:
    return fmt.stored_value(value, quantity=quantity, system=system)


def dynamic_limits(*, rule: str, ahu, component) -> dict[str, float | None]:
    """ok/watch bands (SI) that depend on the unit or the part; {} when the data is missing."""
    specs = component.specs if component is not None else {}
    if rule == "filter_span":
        clean, final = specs.get("clean_dp_pa"), specs.get("final_dp_pa")
        if clean is None or final is None:
            return {}
        span = final - clean
        # Far below clean means missing, torn or bypassed media (engineering.filters, common practice).
        return {
            "ok_min": eng_filters.BYPASS_WATCH_FRACTION * clean,
            "ok_max": clean + 0.75 * span,
            "watch_min": eng_filters.BYPASS_FAIL_FRACTION * clean,
            "watch_max": clean + 0.95 * span,
        }
    if rule == "filter_clean":
        clean = specs.get("clean_dp_pa")
        if clean is None:
            return {}
        tol = eng_filters.AFTER_CHANGE_TOLERANCE
        return {
            "ok_min": (1 - tol) * clean,
            "ok_max": (1 + tol) * clean,
            "watch_min": eng_filters.BYPASS_FAIL_FRACTION * clean,
            "watch_max": eng_filters.AFTER_CHANGE_HIGH_FAIL * clean,
        }
    if rule == "motor_fla":
        fla = specs.get("motor_full_load_a")
        return {} if fla is None else {"ok_max": fla, "watch_max": 1.1 * fla}
    if rule == "damper_stroke":
        rated = specs.get("stroke_time_s")
        return {} if rated is None else {"ok_max": 1.2 * rated, "watch_max": 1.5 * rated}
    if rule == "glycol_freeze_point":
        return _glycol_limits(specs)
    if rule == "preheat_threshold":
        th = specs.get("switch_on_c")
        if th is None:
            return {}
        return {
            "ok_min": th - 1.0,
            "ok_max": th + 1.0,
            "watch_min": th - 2.0,
            "watch_max": th + 2.0,
        }
    return {}


def _glycol_limits(specs: dict) -> dict[str, float | None]:
    """The band of a glycol coil's freezing point around its design concentration's; {} without kind or
    concentration in the registry."""
    kind, pct = specs.get("glycol_kind"), specs.get("glycol_pct")
    if specs.get("fluid") != "glycol" or not pct:
        return {}
    try:
        design = glycol_freeze_point_c(kind=str(kind), mass_pct=float(pct))
    except EngineeringInputError:
        return {}
    return {
        "ok_min": design - GLYCOL_OK_COLDER_K,
        "ok_max": design + GLYCOL_OK_WARMER_K,
        "watch_min": None,
        "watch_max": design + GLYCOL_WATCH_WARMER_K,
    }
