"""What a found fault costs, where the trends allow a number.

Only three rules have inputs that give one: FC#6 (too much or too little
outdoor air: a ventilation shortfall, or the heat to bring the extra outdoor
air to return-air temperature), FC#14 and FC#15 (heat removed or added by a
leaking coil valve). The heat is ``engineering.airside.sensible_heat_w``
(ASHRAE Handbook—Fundamentals 2017 ch. 1) on the means over the fault
windows, and needs the supply airflow; without it FC#6 still reports the
fractions and FC#14/#15 report nothing.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass

from engineering.airside import sensible_heat_w
from engineering.errors import EngineeringInputError


@dataclass(frozen=True)
class Consequence:
    kind: str  # "ventilation" or "energy"
    summary: str  # plain words, SI numbers
    values: Mapping[str, float]


def _ok(*values: float) -> bool:
    return all(math.isfinite(x) for x in values)


def _heat(airflow_m3s: float, t_in_c: float, t_out_c: float) -> float | None:
    if not _ok(airflow_m3s, t_in_c, t_out_c) or airflow_m3s <= 0:
        return None
    try:
        return sensible_heat_w(airflow_m3s=airflow_m3s, t_in_c=t_in_c, t_out_c=t_out_c)
    except EngineeringInputError:
        return None


def outdoor_air(means: Mapping[str, float], fault_s: float) -> Consequence | None:
    """FC#6: outdoor-air fraction against its minimum, over the fault windows."""
    oa, oa_min = means.get("_oa_fraction", math.nan), means.get("min_oa_fraction", math.nan)
    if not _ok(oa, oa_min):
        return None
    diff = oa - oa_min
    airflow = means.get("supply_airflow", math.nan)
    values: dict[str, float] = {"oa_fraction": oa, "min_oa_fraction": oa_min}
    head = f"outdoor air fraction {oa:.2f} against a minimum of {oa_min:.2f}"
    if diff < 0:
        summary = f"{head}: the spaces get too little outdoor air"
        if _ok(airflow):
            values["outdoor_airflow_shortfall_m3s"] = -diff * airflow
            summary += f" (about {-diff * airflow:.2f} m³/s short)"
        return Consequence(kind="ventilation", summary=summary, values=values)
    summary = f"{head}: more outdoor air is conditioned than needed"
    excess = diff * airflow if _ok(airflow) else math.nan
    heat = _heat(excess, means.get("oat", math.nan), means.get("rat", math.nan)) if _ok(excess) else None
    if heat is not None:
        values |= {"excess_outdoor_airflow_m3s": excess, "heat_rate_w": heat, "energy_j": abs(heat) * fault_s}
        what = "heating" if heat > 0 else "cooling"
        summary += f" ({excess:.2f} m³/s extra, about {abs(heat) / 1000:.1f} kW of {what} while the fault lasted)"
    return Consequence(kind="energy", summary=summary, values=values)


def _coil(entering: str, leaving: str, what: str) -> Callable[[Mapping[str, float], float], Consequence | None]:
    def consequence(means: Mapping[str, float], fault_s: float) -> Consequence | None:
        heat = _heat(means.get("supply_airflow", math.nan), means.get(entering, math.nan), means.get(leaving, math.nan))
        if heat is None:
            return None
        return Consequence(
            kind="energy",
            summary=f"a closed {what} valve passes about {abs(heat) / 1000:.1f} kW into the air stream",
            values={"heat_rate_w": heat, "energy_j": abs(heat) * fault_s},
        )

    return consequence


CONSEQUENCES: dict[str, Callable[[Mapping[str, float], float], Consequence | None]] = {
    "FC6": outdoor_air,
    "FC14": _coil("cooling_coil_entering", "cooling_coil_leaving", "cooling"),
    "FC15": _coil("heating_coil_entering", "heating_coil_leaving", "heating"),
}
