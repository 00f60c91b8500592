"""A coil's water-side heat and the balance of its two sides, by the sign conventions of the package
docstring."""

from __future__ import annotations

import math
from dataclasses import dataclass

from engineering import validate as v
from engineering.controls import Verdict
from engineering.errors import EngineeringInputError

from .fluids import FLUIDS, GLYCOLS, fluid_properties, fluid_range

__all__ = ["CoilBalance", "coil_balance", "water_side_heat_w"]


def water_side_heat_w(
    *,
    t_supply_c: float,
    t_return_c: float,
    flow_m3s: float | None = None,
    flow_l_s: float | None = None,
    fluid: str = "water",
    glycol_pct: float | None = None,
) -> float:
    """Heat picked up by the coil fluid, W (positive on a cooling coil).

    q = ρ V c_p (t_return − t_supply), with ρ and c_p at the mean fluid
    temperature from ``fluid_properties`` (IAPWS-95 / Melinder 2010 via
    CoolProp); a glycol kind takes its concentration ``glycol_pct``.
    The flow is volumetric as a flow meter or balancing valve reports it;
    give either flow_m3s or flow_l_s.
    """
    if (flow_m3s is None) == (flow_l_s is None):
        raise EngineeringInputError(
            field="flow_m3s",
            value=(flow_m3s, flow_l_s),
            allowed="exactly one of flow_m3s, flow_l_s",
            message="give exactly one of flow_m3s, flow_l_s",
        )
    if flow_m3s is not None:
        q = v.in_range("flow_m3s", flow_m3s, 0.0, 1.0, unit="m³/s", label="fluid flow")
    else:
        q = v.in_range("flow_l_s", flow_l_s, 0.0, 1000.0, unit="L/s", label="fluid flow") / 1000.0
    name = v.choice("fluid", fluid, [*FLUIDS, *GLYCOLS])
    lo, hi = fluid_range(name, glycol_pct)
    label = name.replace("_", " ")
    if name in GLYCOLS:
        label = f"{v.fmt(glycol_pct or 0.0)} % {label}"
    ts = v.in_range("t_supply_c", t_supply_c, lo, hi, unit="°C", label=f"{label} supply temperature")
    tr = v.in_range("t_return_c", t_return_c, lo, hi, unit="°C", label=f"{label} return temperature")
    rho, cp = fluid_properties(fluid=name, temperature_c=(ts + tr) / 2.0, glycol_pct=glycol_pct)
    return rho * q * cp * (tr - ts)


@dataclass(frozen=True)
class CoilBalance:
    difference_pct: float  # (|air| − |water|) / mean magnitude × 100
    verdict: Verdict
    reason: str


# A coil balance with no heat on either side, as a person reads it (the phone's twin: evaluate.js coilBalance).
COIL_NOTHING_TO_COMPARE = "both sides carry almost no heat: nothing to compare"


def coil_balance(*, air_side_w: float, water_side_w: float, tolerance_pct: float = 10.0) -> CoilBalance:
    """Compare air-side and water-side heat of one coil.

    difference = (|q_air| − |q_water|) / ((|q_air| + |q_water|)/2) × 100 %.
    OK within tolerance_pct, WATCH within twice it, FAIL beyond. The 10 %
    default is common practice for field readings with portable instruments
    (no published source). Signs are ignored because the two sides carry
    opposite signs under this module's conventions.
    """
    a = abs(v.finite("air_side_w", air_side_w))
    w = abs(v.finite("water_side_w", water_side_w))
    tol = v.positive("tolerance_pct", tolerance_pct, unit="%")
    mean = (a + w) / 2.0
    if mean < 1.0:
        raise EngineeringInputError(
            field="air_side_w",
            value=air_side_w,
            allowed="a heat flow of at least 1 W on one side",
            message="air_side_w and water_side_w are both below 1 W: nothing to balance",
            low=1.0,
            unit="W",
            # In words, with no number: 1 W reads "0.0 kW" or "3 Btu/h" and says less than the words do.
            parts=[COIL_NOTHING_TO_COMPARE],
        )
    diff = (a - w) / mean * 100.0
    d = round(abs(diff), 9)
    verdict = Verdict.OK if d <= tol else Verdict.WATCH if d <= 2 * tol else Verdict.FAIL
    which = "air side higher" if diff > 0 else "water side higher"
    reason = (
        f"air side {a / 1000:.1f} kW, water side {w / 1000:.1f} kW: {abs(diff):.1f} % apart "
        f"({which}; ok within {tol:g} %, watch within {2 * tol:g} %)"
    )
    if not math.isfinite(diff):  # pragma: no cover - guarded by the mean check
        raise EngineeringInputError(field="air_side_w", value=air_side_w, allowed="finite")
    return CoilBalance(difference_pct=diff, verdict=verdict, reason=reason)
