"""What a failed check is, in the words a finding keeps: its problem, severity, title and text, and the
corrective work's priority. Pure rules over a judgement (one query: the labels of checklist steps)."""

from __future__ import annotations

import datetime as dt
from collections.abc import Iterable
from typing import Any

from engineering.freeze import daily_minimums_from_normals
from engineering.outdoor_air import fraction_words
from inventory.models import AHU, Site
from scheduling.titles import title_fit

from ... import reasons as rs
from ...evaluation.results import ITEM_CONDITIONS, SEVERITY, Result
from ...evaluation.ventilation_checks import NOT_MET_AT_ALL, SUPPLY_TAKEN
from ...models import ChecklistTemplate, Evaluation, Finding

FREEZE_LEAD_DAYS = 30
# A finding's title fits its column (200 characters).
TITLE_MAX: int = Finding._meta.get_field("title").max_length or 200
PRIORITY = {"critical": "urgent", "high": "high", "medium": "normal", "low": "low"}


def severity_of(*, condition: str, res: Result, derived: dict[str, Any]) -> str:
    """How serious a failed check is. A filter at or past its final pressure drop at design airflow, or with
    its media bypassed, is high: it is changed now, not within the normal grace, as airflow falls off and
    loaded media can burst into the unit (common practice)."""
    base = SEVERITY.get(condition, res.severity)
    if res.check == "filter_loading" and (
        (derived.get("loading_pct") or 0) >= 100 or derived.get("media_bypass_suspected")
    ):
        return severity_worst(base, "high")
    return base


def freeze_season_near(*, site: Site, on: dt.date, lead_days: int = FREEZE_LEAD_DAYS) -> bool:
    """Is ``on`` inside the site's freeze season or at most ``lead_days`` before it?

    Uses the site's computed season start when it falls in that window, and
    otherwise the daily minimums interpolated from the site's monthly normals
    (engineering.freeze.daily_minimums_from_normals) against its preheat threshold.
    """
    start = site.freeze_season_start
    if start is not None and 0 <= (start - on).days <= lead_days:
        return True
    days = daily_minimums_from_normals(monthly_min_c=site.normals_min_c, start=on, days=lead_days + 1)
    return any(t <= site.preheat_threshold_c for _, t in days)


# Plain names of the problems a check or a scheduling condition stands for (titles of findings and work).
CHECK_TITLES = {
    "filter_loading": "Filter loaded",
    "filter_after_change": "Filter pressure drop after change outside the clean range",
    "oa_fraction_temperature": "Outdoor air below minimum",
    "oa_fraction_co2": "Outdoor air below minimum",
    "coil_balance": "Coil heat balance off",
    "supply_temperature": "Supply-air temperature off set point",
    "duct_static": "Duct static pressure off set point",
    "damper_position": "Damper not at commanded position",
    "sensor_drift": "Sensor drift",
    "heat_recovery": "Heat recovery below design",
}
CONDITION_TITLES = {
    "filter_loaded": "Filter loaded",
    "sensor_drift": "Sensor drift",
    "supply_temp_off": "Supply-air temperature off set point",
    "damper_position": "Damper not at commanded position",
    "fan_not_proven": "Fan not proven",
    "freeze_protection_failed": "Freeze protection failed",
    "valve_leak": "Coil valve passing water when shut",
}
# A step whose failure is another problem than the one its test's condition names, in its own words: a coil valve
# that will not close is its actuator or linkage (the step's help says so), not water passing a shut seat.
STEP_TITLES = {
    "coil_valve_leak.valve_closed": "Coil valve not closing when commanded shut (actuator or linkage)",
}
# Conditions whose title says what a measurement found (the leak-by test's change across the shut coil): the test's
# other failed steps are titled by the test ("Coil valve leak-by test: <step>"), never by that finding.
MEASURED_CONDITIONS = frozenset({"valve_leak"})
# Condition codes the scheduling engine knows (each has its title above); other fails raise corrective work without one.
KNOWN_CONDITIONS = frozenset(CONDITION_TITLES)
# A filter reading below its clean pressure drop is about missing or bypassed media, not loading.
FILTER_BYPASS_TITLE = "Filter media missing, torn or bypassed"
# An outdoor-air shortfall that comes from the design: the unit meets its design minimum, which is too low.
DESIGN_REVIEW_TITLE = "Design minimum outdoor air below the ventilation requirement"
FILTER_CHECKS = {"filter_loading", "filter_after_change"}
# Checks over the outdoor-air fraction: one problem however it was measured.
OUTDOOR_AIR_CHECKS = {"oa_fraction_temperature", "oa_fraction_co2"}
# Judgements of single checklist answers (a step of a test) rather than of a calculation.
STEP_CHECKS = {"check", "choice", "limits"}
SEVERITY_ORDER = ["low", "medium", "high", "critical"]


def template_conditions() -> dict[str, str]:
    """{checklist template code: condition} for the tests whose failed steps name a scheduling condition.

    Every failed step of such a test (e.g. the preheater and freeze-protection test) is part of the same
    problem for corrective work: one work order per unit and condition holds the findings of all its steps.
    """
    return {key.split(".", 1)[0]: code for key, code in ITEM_CONDITIONS.items()}


def condition_of(res: Result, by_template: dict[str, str]) -> str:
    """The scheduling condition a judgement stands for: its own, else (a step of a test) its test's
    (``by_template``: ``template_conditions()``). A finding keeps the condition of the failure that opened it."""
    if res.condition_code or res.check not in STEP_CHECKS:
        return res.condition_code
    return by_template.get(res.item.split(".", 1)[0], "")


def problem_of(*, check: str, item: str) -> str:
    """The problem a failed judgement is about: one open finding per unit, part and problem.

    A step of a checklist is its own problem (each failed step of a test is one finding); the outdoor-air
    fraction is one problem whether measured by temperatures or by CO2; other checks by check and reading.
    """
    if check in OUTDOOR_AIR_CHECKS:
        return "outdoor_air"
    if check in STEP_CHECKS:
        return item
    return f"{check}:{item}"[:120]


def step_labels(items: set[str], *, current: Iterable[ChecklistTemplate] = ()) -> dict[str, tuple[str, str]]:
    """{api key: (test title, step label)} of checklist items, each from the latest template version that has it;
    one query for all the steps of a form, none for those ``current`` holds (the newest versions as already read
    with their items, e.g. a synced form's checklist, ``templates_current``)."""
    from ...models import ChecklistItem

    out: dict[str, tuple[str, str]] = {}
    for template in current:
        for it in template.items.all():
            if f"{template.code}.{it.key}" in items:
                out[f"{template.code}.{it.key}"] = (template.title, it.label)
    items = items - out.keys()
    if not items:
        return out
    for code, key, title, label in (
        ChecklistItem.objects.filter(template__code__in={i.partition(".")[0] for i in items})
        .order_by("template__version")
        .values_list("template__code", "key", "template__title", "label")
    ):
        if f"{code}.{key}" in items:
            out[f"{code}.{key}"] = (title, label)  # a later version's wins
    return out


def finding_title(
    res: Result, condition: str, labels: dict[str, tuple[str, str]], *, design_review: bool = False
) -> str:
    """A plain title: the problem's name, or the test and its step; then the part it concerns. A design review
    names the design minimum below the requirement (the unit meets its design minimum)."""
    where = f" — {res.component.name}" if res.component is not None else ""
    words = DESIGN_REVIEW_TITLE if design_review else CHECK_TITLES.get(res.check)
    if res.check in FILTER_CHECKS and (getattr(res, "derived", None) or {}).get("media_bypass_suspected") is True:
        words = FILTER_BYPASS_TITLE
    if words is None and res.check in STEP_CHECKS:
        words = STEP_TITLES.get(res.item)
        found = labels.get(res.item)
        if words is None and found is not None:
            test, step = found
            words = f"{test if condition in MEASURED_CONDITIONS else CONDITION_TITLES.get(condition, test)}: {step}"
    if words is None:
        words = CONDITION_TITLES.get(condition, "Deficiency")
    return title_fit(words + where, limit=TITLE_MAX)


def design_shortfall(derived: dict[str, Any]) -> bool:
    """Does the ventilation requirement exceed the unit's design minimum outdoor air?

    Uses the evaluation's own ``design_shortfall`` when it carries one, otherwise compares the derived
    requirement with the design minimum outdoor airflow (both m³/s, as the evaluation recorded them).
    """
    if "design_shortfall" in derived:
        return bool(derived["design_shortfall"])
    required, design = derived.get("required_outdoor_airflow_m3s"), derived.get("design_min_outdoor_airflow_m3s")
    return required is not None and design is not None and required > design


def _not_below_design_minimum(derived: dict[str, Any]) -> bool:
    """The measured fraction does not fail the design minimum: its band, uncertainty included, reaches it
    (engineering.outdoor_air.fraction_check fails only when the whole band is below the minimum)."""
    x, u, minimum = derived.get("oa_fraction"), derived.get("uncertainty", 0.0), derived.get("design_min_oa_fraction")
    return x is not None and minimum is not None and x + u >= minimum


def is_design_review(*, check: str, derived: dict[str, Any]) -> bool:
    """A shortfall from the design, not from the unit's upkeep: the unit does not fail its design minimum
    outdoor air, but the space needs more than that design minimum, so the failure comes from the requirement.
    Monthly corrective work cannot fix it."""
    if check == "full_oa_airflow":  # 100 % outdoor air: its design airflow is its design outdoor air
        q, u = derived.get("outdoor_airflow_m3s"), derived.get("airflow_uncertainty_m3s", 0.0)
        design = derived.get("design_supply_airflow_m3s")
        return bool(derived.get("design_shortfall")) and q is not None and design is not None and q + u >= design
    return check in OUTDOOR_AIR_CHECKS and design_shortfall(derived) and _not_below_design_minimum(derived)


def _outdoor_air_parts(*, check: str, derived: dict[str, Any], ahu: AHU, design_review: bool) -> list[Any] | None:
    """The outdoor-air shortfall in words and quantities: measured, design minimum, requirement, what failed."""
    from engineering.ventilation import SPACE_KINDS

    try:
        x, u = derived["oa_fraction"], derived.get("uncertainty", 0.0)
        oa_q, supply_q = derived["outdoor_airflow_m3s"], derived["supply_airflow_m3s"]
        dmin, dmin_q = derived["design_min_oa_fraction"], derived["design_min_outdoor_airflow_m3s"]
    except KeyError:
        return None
    by = "temperatures" if check == "oa_fraction_temperature" else "CO2"
    parts: list[Any] = [
        f"Outdoor air measured by {by}: {fraction_words(x, u)} of the supply air (",
        rs.q(oa_q, "airflow"),
        f"); the unit's design minimum is {dmin * 100:.0f} % (",
        rs.q(dmin_q, "airflow"),
        ")",
    ]
    required = derived.get("required_outdoor_airflow_m3s")
    # A requirement above the supply airflow is said as such, never capped at "100 %" (ventilation_checks).
    beyond = required is not None and bool(supply_q) and required > supply_q
    if required is not None and supply_q:
        kind = SPACE_KINDS.get(ahu.space_kind)
        space = f" for {kind.label.lower()}" if kind is not None else ""
        how = f"{space} by the ASHRAE 62.1 ventilation rate procedure"
        if beyond:
            parts += ["; the space needs ", rs.q(required, "airflow"), f"{how}, more than the "]
            parts += [rs.q(supply_q, "airflow"), f" {SUPPLY_TAKEN}"]
        else:
            parts += [f"; the space needs {required / supply_q * 100:.0f} % (", rs.q(required, "airflow"), f"){how}"]
    if x + u < dmin:
        parts.append(f". Fails: below the design minimum {dmin * 100:.0f} %")
    elif beyond:
        parts.append(f". Fails: {NOT_MET_AT_ALL}")
    elif required is not None and supply_q:
        parts.append(f". Fails: below the {required / supply_q * 100:.0f} % the space needs")
    if design_review:
        parts.append(
            ". The unit's design minimum is below what the space needs: a design review, "
            "not monthly corrective work (no work order is proposed)"
        )
    return rs.flatten(parts)


def finding_text_parts(ev: Evaluation, res: Result, *, ahu: AHU, design_review: bool) -> list[Any]:
    """The finding's text: the check's numbers and the limit that failed it, from the evaluation's parts.

    The title names the part ("Filter loaded — Final filters"), so the text does not start with it again: every
    page and PDF shows the two together ("Filter loaded — Final filters: filter at 112 % of its span …").
    """
    if res.check in OUTDOOR_AIR_CHECKS:
        parts = _outdoor_air_parts(check=res.check, derived=ev.derived, ahu=ahu, design_review=design_review)
        if parts is not None:
            return parts
    parts = list(ev.reason_parts or ([ev.reason] if ev.reason else []))
    return rs.without_subject(parts, res.component.name) if res.component is not None else parts


def severity_worst(a: str, b: str) -> str:
    return max(a, b, key=lambda s: SEVERITY_ORDER.index(s) if s in SEVERITY_ORDER else 0)


def known_condition(code: str) -> str:
    return code if code in KNOWN_CONDITIONS else ""
