"""Heat transfer: a coil's air-side against its fluid-side heat (the heat balance), and a heat-recovery device's
effectiveness against its design."""

from __future__ import annotations

from engineering import heat_recovery
from engineering.airside import coil_balance, dry_air_density_kg_m3, sensible_heat_w, water_side_heat_w
from engineering.controls import Verdict
from engineering.errors import EngineeringInputError
from engineering.psychro import pressure_from_altitude
from inspections.display import plain_message, refusal_parts
from inspections.reasons import q as qty

from .form import Form, supply_airflow
from .results import Result

COIL_TOLERANCE_PCT = 10.0  # air vs water side, field instruments: common practice


def coil_fluid(specs: dict) -> tuple[str | None, float | None, str]:
    """(fluid for engineering.airside.water_side_heat_w, glycol %, plain words) of a coil's registry specs.

    Water, or ethylene/propylene glycol at its concentration; (None, None, words) for steam and refrigerant
    coils, whose heat flow and temperatures do not give. A glycol coil without its kind or concentration in
    the registry cannot be balanced honestly, so it gets None too.
    """
    fluid = specs.get("fluid") or "water"
    if fluid == "water":
        return "water", None, "water"
    if fluid == "glycol":
        kind, pct = specs.get("glycol_kind"), specs.get("glycol_pct")
        if kind in ("ethylene", "propylene") and pct:
            return f"{kind}_glycol", float(pct), f"{float(pct):g} % {kind} glycol"
        return None, None, "glycol of unknown kind or concentration"
    return None, None, fluid


def coil_checks(form: Form, consumed: set) -> list[Result]:
    """Each coil's heat balance from the first of its checklists with all five readings (``_coil_result``)."""
    out = []
    q, q_how = supply_airflow(form)
    p = pressure_from_altitude(altitude_m=form.ahu.building.site.altitude_m)
    for coil in (c for c in form.components if c.kind == "coil"):
        for template in ("coil_clean", "cooling_season_check"):
            vals = {
                k: form.num(f"{template}.{k}", coil)
                for k in ("air_in", "air_out", "water_in", "water_out", "water_flow")
            }
            if any(v is None for v in vals.values()):
                continue
            res = _coil_result(coil, template=template, vals=vals, q=q, q_how=q_how, p=p)
            if res is not None:
                out.append(res)
            break
    return out


def _coil_result(coil, *, template: str, vals: dict[str, float], q: float, q_how: str, p: float) -> Result | None:
    """One coil's air-side against fluid-side heat from one checklist's readings; None for a steam or refrigerant
    coil, whose heat its flow and temperatures do not give."""
    fluid, glycol_pct, fluid_words = coil_fluid(coil.specs)
    res = Result(check="coil_balance", item=f"{template}.water_flow", component=coil)
    if fluid is None:
        if coil.specs.get("fluid") == "glycol":
            res.verdict = Verdict.WATCH
            res.reason = (
                f"{coil.name}: cannot balance the coil: the registry does not give the glycol's kind and concentration"
            )
            return res
        return None  # steam or refrigerant: flow and temperatures do not give its heat
    # The supply airflow (measured, from fan speed, or the unit's design) is at the supply fan,
    # downstream of the coils: its density is the leaving air's. A coil's own design airflow is
    # rated at its entering air (common practice).
    airflow, airflow_at = q, "leaving"
    if q_how.startswith("design") and coil.specs.get("design_airflow_m3s"):
        airflow, airflow_at = coil.specs["design_airflow_m3s"], "entering"
    try:
        air = sensible_heat_w(
            airflow_m3s=airflow,
            t_in_c=vals["air_in"],
            t_out_c=vals["air_out"],
            pressure_pa=p,
            airflow_at=airflow_at,
        )
        rho_air = dry_air_density_kg_m3(
            t_c=vals["air_out"] if airflow_at == "leaving" else vals["air_in"], pressure_pa=p
        )
        water = water_side_heat_w(
            t_supply_c=vals["water_in"],
            t_return_c=vals["water_out"],
            flow_m3s=vals["water_flow"],
            fluid=fluid,
            glycol_pct=glycol_pct,
        )
        bal = coil_balance(air_side_w=air, water_side_w=water, tolerance_pct=COIL_TOLERANCE_PCT)
    except EngineeringInputError as exc:
        res.verdict = Verdict.WATCH
        res.say(f"{coil.name}: cannot balance the coil: ", refusal_parts(exc))
        return res
    res.derived = {
        "air_side_w": round(air),
        "water_side_w": round(water),
        "difference_pct": round(bal.difference_pct, 1),
        "airflow_m3s": airflow,
        "airflow_source": q_how,
        "airflow_at": airflow_at,
        "air_density_kg_m3": round(rho_air, 4),
        "pressure_pa": round(p),
        "fluid": fluid,
        "glycol_pct": glycol_pct,
    }
    state = (
        "leaving air (airflow at the supply fan, after the coil)"
        if airflow_at == "leaving"
        else "entering air (the coil's design airflow)"
    )
    res.method = (
        f"air side q = ρ·V·cp·Δt, sensible, dry air, ρ = p/(R·T) at the {state}; fluid side "
        f"q = ρ·V·cp·Δt with the properties of {fluid_words} (CoolProp: IAPWS-95, Melinder 2010); "
        "balance within 10 % ok, 20 % watch"
    )
    res.verdict = bal.verdict.value
    which = "air side higher" if bal.difference_pct > 0 else "water side higher"
    parts = [
        f"{coil.name}: air side ",
        qty(abs(air), "heat_rate"),
        ", water side ",
        qty(abs(water), "heat_rate"),
        f": {abs(bal.difference_pct):.1f} % apart ({which}; ok within {COIL_TOLERANCE_PCT:g} %, "
        f"watch within {2 * COIL_TOLERANCE_PCT:g} %)",
    ]
    if coil.specs.get("duty") == "cooling" and res.verdict == Verdict.FAIL:
        # Latent heat is not measured, so a wet cooling coil reads high on the water side.
        res.verdict = Verdict.WATCH
        parts.append(" (cooling coil: air side is sensible only, latent heat not measured)")
    res.say(parts)
    return res


def heat_recovery_checks(form: Form, consumed: set) -> list[Result]:
    """Each heat-recovery device's temperature effectiveness, judged against its design effectiveness."""
    out = []
    for hx in (c for c in form.components if c.kind == "heat_recovery"):
        t_o, t_s, t_e = (form.num(f"heat_recovery.{k}", hx) for k in ("outdoor_in", "supply_out", "extract_in"))
        if t_o is None or t_s is None or t_e is None:
            continue
        res = Result(
            check="heat_recovery",
            item="heat_recovery.supply_out",
            component=hx,
            condition_code="heat_recovery_low",
            method=(
                "ε = (supply − outdoor)/(extract − outdoor) temperatures, temperature ratio per EN 308 / "
                "ASHRAE HVAC Systems and Equipment (from memory), ±0.5 K "
                "sensors; against design: watch beyond 5, fail beyond 15 points below (common "
                "practice)"
            ),
        )
        try:
            hr = heat_recovery.heat_recovery_effectiveness(
                t_outdoor_c=t_o, t_supply_after_recovery_c=t_s, t_extract_c=t_e
            )
        except EngineeringInputError as exc:
            res.verdict = Verdict.WATCH
            res.say(f"{hx.name}: {plain_message(exc)}")
            out.append(res)
            continue
        pct, u_pct = hr.effectiveness * 100, hr.uncertainty * 100
        res.derived = {
            "outdoor_c": t_o,
            "supply_after_recovery_c": t_s,
            "extract_c": t_e,
            "effectiveness_pct": round(pct, 1),
            "uncertainty_pct": round(u_pct, 1),
        }
        temps = [
            " (outdoor ",
            qty(t_o, "temperature"),
            ", after recovery ",
            qty(t_s, "temperature"),
            ", extract ",
            qty(t_e, "temperature"),
            ")",
        ]
        design = hx.specs.get("design_effectiveness_pct")
        if design is None:
            res.verdict = Verdict.WATCH
            res.say(
                f"{hx.name}: effectiveness {pct:.0f} % ± {u_pct:.0f} points",
                temps,
                "; no design effectiveness in the registry to judge it against",
            )
            out.append(res)
            continue
        chk = heat_recovery.heat_recovery_check(
            effectiveness=hr.effectiveness, uncertainty=hr.uncertainty, design_effectiveness_pct=design
        )
        res.verdict = chk.verdict.value
        res.derived.update(
            {"design_effectiveness_pct": design, "below_design_points": round(chk.limits["below_design_points"], 1)}
        )
        res.say(f"{hx.name}: {chk.reason}", temps)
        out.append(res)
    return out
