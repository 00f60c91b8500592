"""Air-side and water-side heat flows of a coil, and their balance.

Sign conventions (stated once, used everywhere):
- air side: heat *added to the air*, positive when the air leaves warmer
  (heating coil), negative when it leaves cooler (cooling coil);
- water side: heat *picked up by the fluid*, positive when the return is
  warmer than the supply (cooling coil), negative on a heating coil.
So on a healthy coil the two have opposite signs; ``coil_balance`` compares
magnitudes.

One module per side: ``air`` (heat added to moist air), ``fluids`` (density and specific heat of water
and glycol solutions, tabulated) and ``coil`` (the water-side heat and the balance of the two sides).
The package answers with their public names.
"""

from __future__ import annotations

from .air import (
    AIRFLOW_MAX_M3S as AIRFLOW_MAX_M3S,  # the largest airflow the calculators allow, read outside __all__
)
from .air import AirHeat, dry_air_density_kg_m3, latent_heat_w, sensible_heat_w, total_heat_w
from .coil import CoilBalance, coil_balance, water_side_heat_w
from .fluids import FLUIDS, GLYCOLS, fluid_properties

__all__ = [
    "FLUIDS",
    "GLYCOLS",
    "AirHeat",
    "CoilBalance",
    "coil_balance",
    "dry_air_density_kg_m3",
    "fluid_properties",
    "latent_heat_w",
    "sensible_heat_w",
    "total_heat_w",
    "water_side_heat_w",
]
