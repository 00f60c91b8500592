"""Ventilation: the unit's outdoor-air requirement (ASHRAE 62.1 ventilation rate procedure), the outdoor-air
fraction by temperatures or CO2 against it and the design minimum, and a 100 % outdoor-air unit's delivered air."""

from __future__ import annotations

from engineering import controls, outdoor_air, ventilation
from engineering.controls import Verdict
from engineering.errors import EngineeringInputError
from inspections.display import refusal_parts
from inspections.reasons import q as qty

from .form import Form, supply_airflow
from .results import Result


def ventilation_requirement(ahu) -> ventilation.OutdoorAirIntake | None:
    """The outdoor-air intake the unit's space needs by the ASHRAE 62.1 ventilation rate procedure, from the
    registry: space kind, floor area, design occupants, the system (one zone, several zones, 100 % outdoor
    air), the air distribution (Ez) and, for several zones, the occupant diversity or the design's Ev.
    None when the registry lacks what it needs."""
    if ahu.space_kind not in ventilation.SPACE_KINDS or not ahu.floor_area_m2:
        return None
    multi = ahu.ventilation_system == "multi_zone"
    try:
        return ventilation.outdoor_air_intake(
            space_kind=ahu.space_kind,
            floor_area_m2=ahu.floor_area_m2,
            occupants=ahu.design_occupants,
            air_distribution=ahu.air_distribution or "ceiling_supply_cool",
            system=ahu.ventilation_system,
            occupant_diversity=ahu.occupant_diversity if multi else None,
            ev=ahu.system_ventilation_efficiency if multi else None,
        )
    except EngineeringInputError:
        return None


def required_outdoor_airflow_m3s(ahu) -> float | None:
    """Outdoor airflow the unit must take in for its space (Vot of ``ventilation_requirement``), m³/s; None
    when unknown.

    The phone receives this number with the checklist (inspections.phone) and judges against it offline.
    """
    need = ventilation_requirement(ahu)
    return None if need is None else need.vot_m3s


# The start of an outdoor-air refusal that names the measurement itself (engineering.outdoor_air).
CANNOT_COMPUTE_FRACTION = "cannot compute an outdoor-air fraction"
# How the outdoor-air fraction stands against the ventilation requirement, in words (never the verdict's code).
REQUIREMENT_WORDS: dict[str, str] = {
    Verdict.OK: "met",
    Verdict.WATCH: "cannot decide (the band spans it)",
    Verdict.FAIL: "not met",
}


def space_label(ahu) -> str:
    """The kind of space a unit serves in plain words (lower case), as the ventilation requirement names it."""
    kind = ventilation.SPACE_KINDS.get(ahu.space_kind)
    return kind.label.lower() if kind is not None else "the space served"


def requirement_words(need: ventilation.OutdoorAirIntake) -> str:
    """How the requirement was found, in plain words with its numbers (Ez, D, Ev)."""
    if need.system == "multi_zone":
        ev = f"system ventilation efficiency {need.ev:.2f}" + (
            " from the design" if need.ev_given else f" for occupant diversity {need.occupant_diversity:g}"
        )
        return f"several zones with recirculated air, {ev}"
    where = "100 % outdoor air" if need.system == "full_outdoor_air" else "one zone"
    return f"{where}, air distribution effectiveness {need.ez:g}"


def oa_fraction_checks(form: Form, consumed: set) -> list[Result]:
    """The outdoor-air fraction by temperatures and by CO2 (mixing balance), each judged against the unit's design
    minimum and the space's requirement (``_judge_oa_fraction``)."""
    out = []
    ahu = form.ahu
    q, q_how = supply_airflow(form)
    pairs = [
        (
            "temperature",
            "ventilation_check.mixed_air",
            lambda: outdoor_air.oa_fraction_from_temperatures(
                t_outdoor_c=form.num("ventilation_check.outdoor_air"),
                t_return_c=form.num("ventilation_check.return_air"),
                t_mixed_c=form.num("ventilation_check.mixed_air"),
            ),
            ("ventilation_check.outdoor_air", "ventilation_check.return_air", "ventilation_check.mixed_air"),
        ),
        (
            "co2",
            "ventilation_check.supply_co2",
            lambda: outdoor_air.oa_fraction_from_co2(
                co2_outdoor_ppm=form.num("ventilation_check.outdoor_co2"),
                co2_return_ppm=form.num("ventilation_check.return_co2"),
                co2_supply_or_mixed_ppm=form.num("ventilation_check.supply_co2"),
            ),
            ("ventilation_check.outdoor_co2", "ventilation_check.return_co2", "ventilation_check.supply_co2"),
        ),
    ]
    need_vr = ventilation_requirement(ahu)
    design_min_q = ahu.design_min_oa_fraction * ahu.design_supply_airflow_m3s
    for method, item, compute, keys in pairs:
        if any(form.num(k) is None for k in keys):
            continue
        res = Result(check=f"oa_fraction_{method}", item=item, condition_code="ventilation_low")
        try:
            frac = compute()
        except EngineeringInputError as exc:
            by = "CO2" if method == "co2" else "temperatures"
            res.verdict = Verdict.WATCH
            lead = f"outdoor-air fraction by {by}: "
            # A refusal that already says "cannot compute an outdoor-air fraction by …" is not led by it again.
            res.say("" if str(exc).startswith(CANNOT_COMPUTE_FRACTION) else lead, refusal_parts(exc))
            out.append(res)
            continue
        oa_q = outdoor_air.outdoor_airflow_m3s(fraction=frac.fraction, supply_airflow_m3s=q)
        res.derived = {
            "oa_fraction": outdoor_air.kept(frac.fraction),  # kept as every text says it (fraction_words)
            "uncertainty": outdoor_air.kept(frac.uncertainty),
            "outdoor_airflow_m3s": round(oa_q, 3),
            "supply_airflow_m3s": q,
            "airflow_source": q_how,
            "design_min_oa_fraction": ahu.design_min_oa_fraction,
            "design_min_outdoor_airflow_m3s": round(ahu.design_min_oa_fraction * ahu.design_supply_airflow_m3s, 3),
        }
        if need_vr is not None:
            res.derived.update(
                {
                    "required_outdoor_airflow_m3s": round(need_vr.vot_m3s, 3),
                    "breathing_zone_outdoor_airflow_m3s": round(need_vr.vbz_m3s, 3),
                    "zone_air_distribution_effectiveness": need_vr.ez,
                    "zone_outdoor_airflow_m3s": round(need_vr.voz_m3s, 3),
                    "ventilation_system": need_vr.system,
                    "occupant_diversity": need_vr.occupant_diversity,
                    "uncorrected_outdoor_airflow_m3s": (None if need_vr.vou_m3s is None else round(need_vr.vou_m3s, 3)),
                    "system_ventilation_efficiency": None if need_vr.ev is None else round(need_vr.ev, 3),
                    # The requirement is above what the unit was designed to take in: the design, not the
                    # unit's upkeep, falls short (compared unrounded, in m³/s).
                    "design_shortfall": need_vr.vot_m3s > design_min_q,
                }
            )
        label = "temperatures" if method == "temperature" else "CO2"
        res.method = f"mixing balance from {label}; outdoor airflow = fraction × supply airflow ({q_how})" + (
            "" if need_vr is None else f"; requirement by ASHRAE 62.1: {need_vr.method}"
        )
        if ahu.full_outdoor_air:
            res.verdict = Verdict.OK
            res.reason = f"100 % outdoor-air unit; measured fraction {frac.fraction * 100:.0f} %"
            out.append(res)
            continue
        _judge_oa_fraction(res, ahu=ahu, frac=frac, oa_q=oa_q, q=q, need_vr=need_vr, label=label)
        out.append(res)
    return out


def _judge_oa_fraction(
    res: Result,
    *,
    ahu,
    frac: outdoor_air.OaFraction,
    oa_q: float,
    q: float,
    need_vr: ventilation.OutdoorAirIntake | None,
    label: str,
) -> None:
    """Judge a measured outdoor-air fraction against the unit's design minimum and, when known, the space's
    requirement (the worse of the two), and set ``res``'s verdict and words."""
    design_min_q = ahu.design_min_oa_fraction * ahu.design_supply_airflow_m3s
    chk = outdoor_air.fraction_check(
        fraction=frac.fraction, uncertainty=frac.uncertainty, minimum=ahu.design_min_oa_fraction
    )
    verdict = chk.verdict
    parts = [
        f"by {label}: outdoor air {outdoor_air.fraction_words(frac.fraction, frac.uncertainty)} (",
        qty(oa_q, "airflow"),
        f"); against the unit's design minimum {ahu.design_min_oa_fraction * 100:.0f} % (",
        qty(design_min_q, "airflow"),
        f"): {REQUIREMENT_WORDS[chk.verdict.value]}",
    ]
    if need_vr is not None and q > 0:
        required_q = need_vr.vot_m3s
        basis = f" for {space_label(ahu)} ({requirement_words(need_vr)}, ASHRAE 62.1 ventilation rate procedure)"
        parts += ["; against what the space needs, ", qty(required_q, "airflow")]
        if required_q > q:
            # More than all the air the unit supplied: even 100 % outdoor air (the fraction is at most 1) falls short.
            req_verdict = Verdict.FAIL
            parts += [basis, ": more than the ", qty(q, "airflow"), f" {SUPPLY_TAKEN}, {NOT_MET_AT_ALL}"]
        else:
            req = outdoor_air.fraction_check(
                fraction=frac.fraction, uncertainty=frac.uncertainty, minimum=required_q / q
            )
            req_verdict = req.verdict
            parts.append(f" = {required_q / q * 100:.0f} % of the supply air{basis}: {REQUIREMENT_WORDS[req_verdict]}")
        verdict = controls.worst(verdict, req_verdict)
        if res.derived["design_shortfall"]:
            parts += [
                "; the requirement is above the unit's design minimum outdoor air ",
                qty(design_min_q, "airflow"),
                ": the design falls short",
            ]
        parts.append(judged_by(verdict=verdict, design=chk.verdict, need=req_verdict, design_name="the design minimum"))
    res.verdict = verdict.value
    res.say(parts)


# The supply airflow an outdoor-air check took (measured, from the fan speed, or the design), and a requirement
# above it: never "100 % of the supply air", which would hide that all of it is not enough.
SUPPLY_TAKEN = "supply airflow taken for this visit"
NOT_MET_AT_ALL = "not met even at 100 % outdoor air"


def judged_by(*, verdict: Verdict | str, design: Verdict | str, need: Verdict | str, design_name: str) -> str:
    """Which comparison decides a ventilation verdict, in words ("" when both say the same): the design's
    ("; judged by the design minimum") when the verdict is the design's alone, else the space's ("; judged by what
    the space needs"; a 100 % outdoor-air unit short of its design with the space's need met is only a watch). The
    phone's twin is evaluate.js ``judgedBy``."""
    if Verdict(design) == Verdict(need):
        return ""
    return f"; judged by {design_name if Verdict(verdict) == Verdict(design) else 'what the space needs'}"


# Uncertainty of the supply airflow a 100 % outdoor-air unit delivers, as a fraction of it: a field
# traverse or the unit's flow station about ±10 % (common practice); the first fan law from a speed
# reading, with belt slip and a filter loaded since the design point, about ±15 % (common practice).
AIRFLOW_UNCERTAINTY = {"measured": 0.10, "fan_speed": 0.15}


def _airflow_band_verdict(*, q: float, u: float, minimum: float) -> Verdict:
    """ok at or above the minimum; below it, watch within the uncertainty ``u`` and fail beyond it."""
    if q >= minimum:
        return Verdict.OK
    if q + u >= minimum:
        return Verdict.WATCH
    return Verdict.FAIL


def full_oa_checks(form: Form, consumed: set) -> list[Result]:
    """A 100 % outdoor-air unit takes in what it supplies: the outdoor airflow it delivers is its supply airflow
    (measured, or from the fan speed), judged against the space's requirement (ASHRAE 62.1 ventilation rate
    procedure; with no recirculation Vot = Voz) and the unit's design airflow, each within the airflow's
    uncertainty. Below the requirement beyond the uncertainty fails, within it is watch; below the design (the
    requirement met) is watch; with no requirement known, the design stands in for it. Runs when the
    ventilation check was done."""
    ahu = form.ahu
    if not ahu.full_outdoor_air or not any(k.startswith("ventilation_check.") for k, _ in form.values):
        return []
    q, q_how = supply_airflow(form)
    design = ahu.design_supply_airflow_m3s
    need = ventilation_requirement(ahu)
    res = Result(check="full_oa_airflow", item="visit.supply_airflow", condition_code="ventilation_low")
    res.method = "100 % outdoor air: outdoor airflow = supply airflow" + (
        "" if need is None else f"; requirement by ASHRAE 62.1: {need.method}"
    )
    if q_how.startswith("design"):
        res.verdict = Verdict.WATCH
        res.say(
            "100 % outdoor-air unit: the outdoor air delivered cannot be judged without the supply airflow; "
            "measure the supply airflow (or read the supply fan speed) at the visit"
        )
        return [res]
    u_rel = AIRFLOW_UNCERTAINTY["measured" if q_how == "measured" else "fan_speed"]
    u = q * u_rel
    res.derived = {
        "outdoor_airflow_m3s": round(q, 3),
        "airflow_uncertainty_m3s": round(u, 3),
        "airflow_source": q_how,
        "design_supply_airflow_m3s": design,
    }
    design_verdict = _airflow_band_verdict(q=q, u=u, minimum=design)
    parts = [
        "100 % outdoor-air unit: outdoor air delivered ",
        qty(q, "airflow"),
        f" ± {u_rel * 100:.0f} % ({q_how}); against the unit's design airflow ",
        qty(design, "airflow"),
        f": {REQUIREMENT_WORDS[design_verdict]}",
    ]
    if need is None:
        verdict = design_verdict
    else:
        res.derived.update(
            {
                "required_outdoor_airflow_m3s": round(need.vot_m3s, 3),
                "zone_outdoor_airflow_m3s": round(need.voz_m3s, 3),
                "ventilation_system": need.system,
                "design_shortfall": need.vot_m3s > design,
            }
        )
        req_verdict = _airflow_band_verdict(q=q, u=u, minimum=need.vot_m3s)
        # Short of the design but the space's requirement met: a unit to look after, not a ventilation failure.
        verdict = controls.worst(req_verdict, Verdict.WATCH if design_verdict != Verdict.OK else Verdict.OK)
        parts += [
            "; against what the space needs, ",
            qty(need.vot_m3s, "airflow"),
            f" for {space_label(ahu)} ({requirement_words(need)}, ASHRAE 62.1 ventilation rate procedure): "
            f"{REQUIREMENT_WORDS[req_verdict]}",
        ]
        if need.vot_m3s > design:
            parts += ["; the requirement is above the unit's design airflow: the design falls short"]
        parts.append(
            judged_by(verdict=verdict, design=design_verdict, need=req_verdict, design_name="the design airflow")
        )
    res.verdict = verdict
    res.say(parts)
    return [res]
