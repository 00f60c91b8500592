"""Density and specific heat of water and glycol solutions: the tables and their interpolation."""

from __future__ import annotations

import itertools

from engineering import validate as v
from engineering.errors import EngineeringInputError

__all__ = ["FLUIDS", "GLYCOLS", "fluid_properties"]


# Density (kg/m³) and specific heat (J/kg·K) by temperature (°C) at 300 kPa.
# Water: IAPWS-95; glycols (mass fractions 20/30/40 %): Melinder, "Properties
# of Secondary Working Fluids for Indirect Systems" (IIR, 2010). Both tabulated
# with CoolProp 7.2 (PropsSI, "Water" and "INCOMP::MEG-/MPG-xx%"). ASHRAE
# Handbook—Fundamentals ch.31 tabulates the same properties; these figures
# were not cross-checked against its printed tables.
# Rows: (temperature °C, density kg/m³, cp J/kg·K). Glycol tables 10/50/60 % start 10 K or
# less above the solution's freezing point (CoolProp's T_freeze).
FLUIDS: dict[str, tuple[tuple[float, float, float], ...]] = {
    "water": (
        (0.0, 999.9, 4218),
        (10.0, 999.8, 4194),
        (20.0, 998.3, 4183),
        (30.0, 995.7, 4179),
        (40.0, 992.3, 4179),
        (50.0, 988.1, 4181),
        (60.0, 983.3, 4185),
        (70.0, 977.9, 4190),
        (80.0, 971.9, 4196),
        (90.0, 965.4, 4205),
        (100.0, 958.4, 4215),
    ),
    "ethylene_glycol_20": (
        (-5.0, 1029.8, 3852),
        (0.0, 1029.1, 3861),
        (10.0, 1026.9, 3878),
        (20.0, 1024.1, 3896),
        (30.0, 1020.6, 3914),
        (40.0, 1016.4, 3933),
        (50.0, 1011.6, 3951),
        (60.0, 1006.2, 3969),
        (70.0, 1000.2, 3987),
        (80.0, 993.8, 4005),
        (90.0, 986.8, 4022),
    ),
    "ethylene_glycol_30": (
        (-10.0, 1047.5, 3627),
        (0.0, 1045.0, 3658),
        (10.0, 1041.8, 3689),
        (20.0, 1038.0, 3718),
        (30.0, 1033.7, 3747),
        (40.0, 1028.8, 3775),
        (50.0, 1023.4, 3803),
        (60.0, 1017.5, 3829),
        (70.0, 1011.1, 3854),
        (80.0, 1004.3, 3878),
        (90.0, 997.0, 3900),
    ),
    "ethylene_glycol_40": (
        (-20.0, 1066.7, 3344),
        (-10.0, 1063.8, 3390),
        (0.0, 1060.4, 3434),
        (10.0, 1056.4, 3477),
        (20.0, 1051.9, 3519),
        (30.0, 1046.8, 3559),
        (40.0, 1041.4, 3598),
        (50.0, 1035.4, 3635),
        (60.0, 1029.1, 3670),
        (70.0, 1022.4, 3703),
        (80.0, 1015.4, 3734),
        (90.0, 1008.1, 3763),
    ),
    "propylene_glycol_20": (
        (-5.0, 1020.8, 3926),
        (0.0, 1020.1, 3936),
        (10.0, 1017.9, 3956),
        (20.0, 1014.8, 3977),
        (30.0, 1010.9, 3998),
        (40.0, 1006.4, 4019),
        (50.0, 1001.2, 4040),
        (60.0, 995.6, 4061),
        (70.0, 989.5, 4082),
        (80.0, 983.2, 4102),
        (90.0, 976.6, 4121),
    ),
    "propylene_glycol_30": (
        (-10.0, 1034.3, 3775),
        (0.0, 1031.6, 3803),
        (10.0, 1028.0, 3830),
        (20.0, 1023.8, 3857),
        (30.0, 1018.9, 3884),
        (40.0, 1013.4, 3910),
        (50.0, 1007.5, 3937),
        (60.0, 1001.2, 3962),
        (70.0, 994.5, 3988),
        (80.0, 987.6, 4012),
        (90.0, 980.5, 4036),
    ),
    "propylene_glycol_40": (
        (-20.0, 1049.7, 3575),
        (-10.0, 1046.4, 3609),
        (0.0, 1042.4, 3642),
        (10.0, 1037.6, 3674),
        (20.0, 1032.3, 3707),
        (30.0, 1026.4, 3739),
        (40.0, 1020.1, 3771),
        (50.0, 1013.3, 3802),
        (60.0, 1006.3, 3834),
        (70.0, 999.1, 3865),
        (80.0, 991.6, 3896),
        (90.0, 984.1, 3926),
    ),
    "ethylene_glycol_10": (
        (0.0, 1013.6, 4037),
        (10.0, 1012.5, 4041),
        (20.0, 1010.6, 4046),
        (30.0, 1007.8, 4053),
        (40.0, 1004.3, 4062),
        (50.0, 1000.1, 4072),
        (60.0, 995.2, 4083),
        (70.0, 989.7, 4095),
        (80.0, 983.6, 4107),
        (90.0, 976.8, 4119),
    ),
    "ethylene_glycol_50": (
        (-30.0, 1085.1, 3027),
        (-20.0, 1082.2, 3087),
        (-10.0, 1078.7, 3146),
        (0.0, 1074.6, 3203),
        (10.0, 1070.0, 3258),
        (20.0, 1064.9, 3312),
        (30.0, 1059.4, 3364),
        (40.0, 1053.4, 3413),
        (50.0, 1047.1, 3459),
        (60.0, 1040.5, 3503),
        (70.0, 1033.6, 3544),
        (80.0, 1026.4, 3582),
        (90.0, 1019.0, 3616),
    ),
    "ethylene_glycol_60": (
        (-40.0, 1102.1, 2684),
        (-30.0, 1099.6, 2757),
        (-20.0, 1096.3, 2828),
        (-10.0, 1092.4, 2898),
        (0.0, 1087.9, 2967),
        (10.0, 1082.7, 3034),
        (20.0, 1077.1, 3098),
        (30.0, 1071.1, 3159),
        (40.0, 1064.6, 3218),
        (50.0, 1057.8, 3272),
        (60.0, 1050.8, 3323),
        (70.0, 1043.5, 3369),
        (80.0, 1036.0, 3410),
        (90.0, 1028.4, 3446),
    ),
    "propylene_glycol_10": (
        (0.0, 1009.3, 4059),
        (10.0, 1008.3, 4067),
        (20.0, 1006.2, 4076),
        (30.0, 1003.2, 4088),
        (40.0, 999.4, 4101),
        (50.0, 994.9, 4115),
        (60.0, 989.8, 4130),
        (70.0, 984.2, 4146),
        (80.0, 978.2, 4161),
        (90.0, 971.9, 4176),
    ),
    "propylene_glycol_50": (
        (-30.0, 1064.1, 3337),
        (-20.0, 1060.4, 3376),
        (-10.0, 1056.0, 3414),
        (0.0, 1050.9, 3453),
        (10.0, 1045.3, 3492),
        (20.0, 1039.1, 3530),
        (30.0, 1032.4, 3569),
        (40.0, 1025.4, 3607),
        (50.0, 1018.0, 3645),
        (60.0, 1010.5, 3683),
        (70.0, 1002.7, 3722),
        (80.0, 994.9, 3760),
        (90.0, 987.1, 3798),
    ),
    "propylene_glycol_60": (
        (-40.0, 1074.6, 3070),
        (-30.0, 1071.0, 3114),
        (-20.0, 1066.7, 3159),
        (-10.0, 1061.7, 3205),
        (0.0, 1056.0, 3250),
        (10.0, 1049.7, 3295),
        (20.0, 1043.0, 3340),
        (30.0, 1035.9, 3386),
        (40.0, 1028.4, 3431),
        (50.0, 1020.7, 3476),
        (60.0, 1012.8, 3521),
        (70.0, 1004.8, 3565),
        (80.0, 996.7, 3610),
        (90.0, 988.7, 3654),
    ),
}
# Glycol solutions by kind: the mass concentrations (%) tabulated in ``FLUIDS`` (0 % is water).
GLYCOLS: dict[str, tuple[int, ...]] = {
    "ethylene_glycol": (10, 20, 30, 40, 50, 60),
    "propylene_glycol": (10, 20, 30, 40, 50, 60),
}
GLYCOL_PCT_MAX = 60.0


def _glycol_pct(kind: str, glycol_pct: object) -> float:
    return v.in_range(
        "glycol_pct",
        glycol_pct,
        0.0,
        GLYCOL_PCT_MAX,
        unit="%",
        label=f"{kind.replace('_', ' ')} concentration",
        low_open=True,
    )


def fluid_range(fluid: str, glycol_pct: float | None = None) -> tuple[float, float]:
    """Temperature range (°C) a fluid's properties are known over."""
    if fluid not in GLYCOLS:
        rows = FLUIDS[fluid]
        return rows[0][0], rows[-1][0]
    names = _glycol_tables(fluid, _glycol_pct(fluid, glycol_pct))
    return max(FLUIDS[n][0][0] for n, _ in names), min(FLUIDS[n][-1][0] for n, _ in names)


def _glycol_tables(kind: str, pct: float) -> list[tuple[str, float]]:
    """The one or two tables around ``pct`` and each one's weight (linear in concentration)."""
    steps = (0, *GLYCOLS[kind])
    for lo, hi in itertools.pairwise(steps):
        if pct <= hi:
            f = (pct - lo) / (hi - lo)
            name_lo = "water" if lo == 0 else f"{kind}_{lo}"
            if f >= 1.0 - 1e-9:
                return [(f"{kind}_{hi}", 1.0)]
            return [(name_lo, 1.0 - f), (f"{kind}_{hi}", f)]
    return [(f"{kind}_{steps[-1]}", 1.0)]


def _table_properties(name: str, t: float) -> tuple[float, float]:
    rows = FLUIDS[name]
    for (t0, d0, c0), (t1, d1, c1) in itertools.pairwise(rows):
        if t <= t1:
            f = (t - t0) / (t1 - t0)
            return d0 + f * (d1 - d0), c0 + f * (c1 - c0)
    return rows[-1][1], rows[-1][2]


def fluid_properties(*, fluid: str, temperature_c: float, glycol_pct: float | None = None) -> tuple[float, float]:
    """(density kg/m³, specific heat J/kg·K) of a coil fluid, linearly
    interpolated in the ``FLUIDS`` table (sources given there).

    ``fluid`` is a table name ("water", "ethylene_glycol_30", ...) or a glycol
    kind of ``GLYCOLS`` ("ethylene_glycol", "propylene_glycol") with its mass
    concentration ``glycol_pct`` (above 0 to 60 %): between tabulated
    concentrations the properties are interpolated linearly in concentration
    (0 % is water), within 0.3 % of CoolProp's incompressible MEG/MPG data.
    """
    name = v.choice("fluid", fluid, [*FLUIDS, *GLYCOLS])
    if name in GLYCOLS:
        pct = _glycol_pct(name, glycol_pct)
        lo, hi = fluid_range(name, pct)
        t = v.in_range(
            "temperature_c", temperature_c, lo, hi, unit="°C", label=f"{pct:g} % {name.replace('_', ' ')} temperature"
        )
        rho = cp = 0.0
        for table, weight in _glycol_tables(name, pct):
            d, c = _table_properties(table, t)
            rho, cp = rho + weight * d, cp + weight * c
        return rho, cp
    if glycol_pct is not None:
        raise EngineeringInputError(
            field="glycol_pct",
            value=glycol_pct,
            allowed=f"nothing for {name}; a concentration goes with one of {', '.join(GLYCOLS)}",
            message=f"glycol_pct={v.fmt(glycol_pct)} applies only to fluid one of {', '.join(GLYCOLS)}",
        )
    rows = FLUIDS[name]
    t = v.in_range(
        "temperature_c",
        temperature_c,
        rows[0][0],
        rows[-1][0],
        unit="°C",
        label=f"{name.replace('_', ' ')} temperature",
    )
    return _table_properties(name, t)
