"""Where the trends' outdoor-air fraction and a visit's disagree: one note for every page that shows either.

Guideline 36's FC6 computes the outdoor-air fraction from the building-automation temperatures, %OA = (MAT − RAT)
/ (OAT − RAT) (``engineering.faults.rules.oa_fraction``), as the mean over its fault windows; a technician's visit
measures it with its own instruments at one moment, by temperatures or by CO2 (``inspections.evaluation.
ventilation_checks``). When both exist for a unit and differ by more than the rule's own allowance (εF,
``G36_DEFAULTS.eps_oa_fraction``), the pages say so beside each, and what a technician checks; neither judgement is
changed. The formula divides by OAT − RAT, so a mixed-air sensor that reads the outdoor or the return stream in
place of the mix (stratification in the mixing box: the cold outdoor air and the warm return air layer rather than
mix where the sensor sits) moves the fraction towards 1.00 or 0.00; a single-point sensor there, a sensor drifted
out of calibration, or an outdoor-air sensor in the sun or near an exhaust do the same (common practice).
"""

from __future__ import annotations

import datetime as dt
import zoneinfo
from dataclasses import dataclass

from engineering.faults import G36_DEFAULTS
from inspections.models import Evaluation

from .fault_models import Fault

# The visit's checks of the outdoor-air fraction, and how each measured it.
VISIT_CHECKS = {
    "oa_fraction_temperature": "by temperatures",
    "oa_fraction_co2": "by CO2 (mixing balance)",
}
RULE = "FC6"

CHECK_WORDS = (
    "Before acting on either, a technician checks the building-automation mixed-air, return-air and outdoor-air "
    "temperature sensors the rule reads: where each sits (a single-point mixed-air sensor in a mixing box where "
    "the outdoor and return air stratify reads one stream, not the mix — an averaging sensor across the section "
    "reads the mix), and each one's calibration against a reference thermometer at the sensor; the outdoor-air "
    "sensor out of the sun and away from exhaust air; and the outdoor-air damper's position at both times "
    "(common practice)"
)


@dataclass(frozen=True)
class VisitFraction:
    """The latest outdoor-air fraction a visit measured on a unit."""

    fraction: float  # 0–1
    on: dt.date  # the site's day of the visit
    by: str  # how it was measured, in words


def visit_fraction(*, ahu_id: int, zone: str) -> VisitFraction | None:
    """The latest outdoor-air fraction a technician's visit measured on the unit (None when none did)."""
    row = (
        Evaluation.objects.filter(
            inspection__ahu_id=ahu_id,
            inspection__finished_at__isnull=False,
            check_name__in=list(VISIT_CHECKS),
            derived__oa_fraction__isnull=False,
        )
        .order_by("-inspection__finished_at", "-pk")
        .values_list("derived", "check_name", "inspection__finished_at")
        .first()
    )
    if row is None:
        return None
    derived, check, finished_at = row
    try:
        fraction = float(derived["oa_fraction"])
    except (KeyError, TypeError, ValueError):
        return None
    return VisitFraction(fraction, finished_at.astimezone(zoneinfo.ZoneInfo(zone)).date(), VISIT_CHECKS[check])


def trend_fraction(fault: Fault | None) -> float | None:
    """The outdoor-air fraction an FC6 fault read from the temperatures (the mean over its latest day's windows)."""
    if fault is None or fault.code != RULE:
        return None
    try:
        return float(((fault.consequence or {}).get("values") or {})["oa_fraction"])
    except (KeyError, TypeError, ValueError):
        return None


def _pct(fraction: float) -> str:
    return f"{fraction * 100:.0f} %"


def disagreement_words(trend: float, visit: VisitFraction) -> str:
    """The note, when the two differ by more than the rule's allowance; "" when they agree within it."""
    allowance = G36_DEFAULTS.eps_oa_fraction
    if abs(trend - visit.fraction) <= allowance:
        return ""
    return (
        f"The two outdoor-air fractions of this unit disagree: the trends' rule {RULE} computes {trend:.2f} "
        f"({_pct(trend)}) from the mixed-, return- and outdoor-air temperatures, averaged over its fault windows; "
        f"a technician's visit on {visit.on.day} {visit.on:%b %Y} measured {_pct(visit.fraction)} {visit.by}, at "
        f"one moment. They differ by more than the rule's own allowance ({_pct(allowance)}), so at least one "
        f"measurement is wrong or the unit ran differently at the two times; neither judgement is changed here. "
        f"{CHECK_WORDS}."
    )


def unit_fc6(*, ahu_id: int) -> Fault | None:
    """The unit's FC6 fault the pages show: the open one, else the latest closed."""
    return Fault.objects.filter(ahu_id=ahu_id, code=RULE).order_by("-state", "-last_seen_at", "-pk").first()


def oa_disagreement(*, ahu_id: int, zone: str, fault: Fault | None = None) -> str:
    """The note for a unit where an FC6 fault (``fault``, else the unit's own) and a visit's measured outdoor-air
    fraction disagree; "" where either is missing or they agree within the rule's allowance."""
    trend = trend_fraction(fault if fault is not None else unit_fc6(ahu_id=ahu_id))
    if trend is None:
        return ""
    visit = visit_fraction(ahu_id=ahu_id, zone=zone)
    return disagreement_words(trend, visit) if visit is not None else ""
