"""The freezing point of a water-glycol solution by its kind and mass concentration.

Freezing points (°C) at the mass concentrations of ``engineering.airside.fluids`` (the registry's
``glycol_pct``): Melinder, "Properties of Secondary Working Fluids for Indirect Systems" (IIR, 2010), as
CoolProp 7.2 gives them (``INCOMP::MEG-xx%`` / ``MPG-xx%``, ``T_freeze``), the same source as the coil's fluid
properties. Checked against Lange's Handbook of Chemistry (15th ed.) table 5.13, propylene glycol by volume:
30 % −12.8 °C, 40 % −20.6 °C, 50 % −33.3 °C (by mass these lie within 1 K of it). ASHRAE Handbook—Fundamentals
ch. 31 tabulates the same freezing points by mass and by volume (from memory, not cross-checked).
Between rows the freezing point is interpolated linearly in concentration (0 % is water, 0 °C).
"""

from __future__ import annotations

import itertools

from engineering import validate as v

__all__ = ["FREEZE_POINTS_C", "glycol_freeze_point_c"]

FREEZE_POINTS_C: dict[str, tuple[tuple[float, float], ...]] = {
    "ethylene": ((0, 0.0), (10, -3.4), (20, -7.9), (30, -14.6), (40, -23.8), (50, -36.0), (60, -51.2)),
    "propylene": ((0, 0.0), (10, -2.9), (20, -7.2), (30, -12.8), (40, -20.6), (50, -32.2), (60, -50.0)),
}


def glycol_freeze_point_c(*, kind: str, mass_pct: float) -> float:
    """Freezing point (°C) of ``kind`` ("ethylene" or "propylene") glycol at ``mass_pct`` (0–60 %) in water."""
    rows = FREEZE_POINTS_C[v.choice("kind", kind, FREEZE_POINTS_C)]
    pct = v.in_range("mass_pct", mass_pct, 0.0, rows[-1][0], unit="%", label=f"{kind} glycol concentration")
    for (c0, t0), (c1, t1) in itertools.pairwise(rows):
        if pct <= c1:
            return t0 + (pct - c0) / (c1 - c0) * (t1 - t0)
    return rows[-1][1]
