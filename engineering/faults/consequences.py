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

from engineering import formatting as fmt
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


def outdoor_air_words(values: Mapping[str, float], system: str = "si") -> str:
    """FC#6's consequence in words from its ``values`` (SI), quantities in ``system``'s units."""
    oa, oa_min = values["oa_fraction"], values["min_oa_fraction"]
    head = f"outdoor air fraction {oa:.2f} against a minimum of {oa_min:.2f}"
    if "outdoor_airflow_shortfall_m3s" in values:
        short = fmt.quantity_text(values["outdoor_airflow_shortfall_m3s"], quantity="airflow", system=system)
        return f"{head}: the spaces get too little outdoor air (about {short} short)"
    if oa < oa_min:
        return f"{head}: the spaces get too little outdoor air"
    summary = f"{head}: more outdoor air is conditioned than needed"
    if "heat_rate_w" in values:
        heat = values["heat_rate_w"]
        extra = fmt.quantity_text(values["excess_outdoor_airflow_m3s"], quantity="airflow", system=system)
        rate = fmt.quantity_text(abs(heat), quantity="heat_rate", system=system)
        what = "heating" if heat > 0 else "cooling"
        summary += f" ({extra} extra, about {rate} of {what} while the fault lasted)"
    return summary


def outdoor_air(means: Mapping[str, float], fault_s: float) -> Consequence | None:
    """FC#6: outdoor-air fraction against its minimum, over the fault windows."""
    oa, oa_min = means.get("_oa_fraction", math.nan), means.get("min_oa_fraction", math.nan)
    if not _ok(oa, oa_min):
        return None
    diff = oa - oa_min
    airflow = means.get("supply_airflow", math.nan)
    values: dict[str, float] = {"oa_fraction": oa, "min_oa_fraction": oa_min}
    if diff < 0:
        if _ok(airflow):
            values["outdoor_airflow_shortfall_m3s"] = -diff * airflow
        return Consequence(kind="ventilation", summary=outdoor_air_words(values), values=values)
    excess = diff * airflow if _ok(airflow) else math.nan
    heat = _heat(excess, means.get("oat", math.nan), means.get("rat", math.nan)) if _ok(excess) else None
    if heat is not None:
        values |= {"excess_outdoor_airflow_m3s": excess, "heat_rate_w": heat, "energy_j": abs(heat) * fault_s}
    return Consequence(kind="energy", summary=outdoor_air_words(values), values=values)


def coil_words(what: str) -> Callable[[Mapping[str, float], str], str]:
    """FC#14/#15's consequence in words from its ``values`` (SI), the heat in ``system``'s units."""

    def words(values: Mapping[str, float], system: str = "si") -> str:
        rate = fmt.quantity_text(abs(values["heat_rate_w"]), quantity="heat_rate", system=system)
        return f"a closed {what} valve passes about {rate} into the air stream"

    return words


def _coil(entering: str, leaving: str, what: str) -> Callable[[Mapping[str, float], float], Consequence | None]:
    def consequence(means: Mapping[str, float], fault_s: float) -> Consequence | None:
        heat = _heat(means.get("supply_airflow", math.nan), means.get(entering, math.nan), means.get(leaving, math.nan))
        if heat is None:
            return None
        values = {"heat_rate_w": heat, "energy_j": abs(heat) * fault_s}
        return Consequence(
            kind="energy", summary=WORDS["FC14" if what == "cooling" else "FC15"](values, "si"), values=values
        )

    return consequence


CONSEQUENCES: dict[str, Callable[[Mapping[str, float], float], Consequence | None]] = {
    "FC6": outdoor_air,
    "FC14": _coil("cooling_coil_entering", "cooling_coil_leaving", "cooling"),
    "FC15": _coil("heating_coil_entering", "heating_coil_leaving", "heating"),
}

# A consequence's words from its kept values, in a reader's units (the rules with a number).
WORDS: dict[str, Callable[[Mapping[str, float], str], str]] = {
    "FC6": outdoor_air_words,
    "FC14": coil_words("cooling"),
    "FC15": coil_words("heating"),
}

# What each rule's fault risks where the trends give no number (no airflow, or a rule without one): plain words,
# what follows from the rule's own title and what a technician checks first (common practice).
RISKS: dict[str, str] = {
    "FC1": "the spaces may get too little air; check the filters, the fan belts and the ducts for leaks",
    "FC2": "mixed air colder than both return and outdoor air points to a faulty temperature sensor",
    "FC3": "mixed air warmer than both return and outdoor air points to a faulty temperature sensor",
    "FC4": "hunting control wears valves, dampers and actuators and wastes energy; check the control tuning",
    "FC5": "the heating coil is not heating the air; check the heating valve, its actuator and the hot water",
    "FC6": "the outdoor air differs from its minimum; check the outdoor-air damper and its actuator",
    "FC7": "the supply air stays too cold at full heating; check the hot water supply and the heating coil",
    "FC8": "supply and mixed air differ in free cooling; check for a leaking cooling valve or a faulty sensor",
    "FC9": "the outdoor air is too warm to cool with alone; check the outdoor air sensor and the economizer",
    "FC10": "outdoor and mixed air differ at full outdoor air; check the dampers for leaks or a faulty sensor",
    "FC11": "mechanical cooling runs where outdoor air alone would do; check the outdoor air sensor",
    "FC12": "the supply air is warmer than the mixed air in cooling; check the cooling valve and chilled water",
    "FC13": "the supply air stays too warm at full cooling; check the chilled water supply and the cooling coil",
    "FC14": "a closed cooling valve lets chilled water through (leaking valve); check the valve and its actuator",
    "FC15": "a closed heating valve lets hot water through (leaking valve); check the valve and its actuator",
}


def consequence_text(code: str, consequence: Mapping[str, object] | None, system: str = "si") -> str:
    """A fault's consequence for a reader: its number in ``system``'s units where the trends gave one, else the
    rule's risk in words ("" for a code without either)."""
    values = (consequence or {}).get("values")
    if code in WORDS and isinstance(values, Mapping) and values:
        try:
            return WORDS[code]({k: float(v) for k, v in values.items()}, system)
        except (KeyError, TypeError, ValueError):
            pass
    summary = (consequence or {}).get("summary")
    return str(summary) if summary else RISKS.get(code, "")
