"""Operating states of an air handler for fault detection.

ASHRAE Guideline 36-2018, 5.16.14 (section number and wording from memory)
sorts each moment of a running AHU by its heating valve, cooling valve and
outdoor-air damper commands into five operating states; each fault rule
applies only in some of them. The same split is used by open-fdd
(github.com/bbartling/open-fdd, fault_condition_four.py: heating with the
damper at minimum; economizer only; economizer plus mechanical cooling;
mechanical cooling at minimum outdoor air).
"""

from __future__ import annotations

from enum import IntEnum

import numpy as np


class OperatingState(IntEnum):
    NOT_JUDGED = 0  # fan off, or a command missing at that time
    HEATING = 1  # OS#1: heating valve open, cooling closed, OA damper at minimum
    FREE_COOLING = 2  # OS#2: both valves closed, OA damper above minimum (modulating or full open)
    MECHANICAL_AND_ECONOMIZER = 3  # OS#3: cooling valve open, OA damper full open (100 % outdoor air)
    MECHANICAL_MINIMUM_OA = 4  # OS#4: cooling valve open, OA damper at minimum
    OTHER = 5  # OS#5: any other combination (simultaneous heating and cooling, dehumidification, …)


STATE_NAMES = {
    OperatingState.HEATING: "heating",
    OperatingState.FREE_COOLING: "free cooling, modulating outdoor air",
    OperatingState.MECHANICAL_AND_ECONOMIZER: "mechanical cooling with 100 % outdoor air",
    OperatingState.MECHANICAL_MINIMUM_OA: "mechanical cooling with minimum outdoor air",
    OperatingState.OTHER: "other or unknown",
}


def operating_states(
    *,
    heating_valve: np.ndarray,
    cooling_valve: np.ndarray,
    oa_damper: np.ndarray,
    oa_damper_min: np.ndarray,
    fan_running: np.ndarray,
    tolerance: float = 0.01,
) -> np.ndarray:
    """Operating state (0–5, see ``OperatingState``) of each sample.

    A valve command above ``tolerance`` is open; the damper is "at minimum"
    within ``tolerance`` of ``oa_damper_min`` and "full open" within it of 1.
    A sample with the fan stopped or a command missing is 0 (not judged).
    Arrays broadcast against each other (units × samples).
    """
    h = np.asarray(heating_valve, dtype=np.float64)
    c = np.asarray(cooling_valve, dtype=np.float64)
    d = np.asarray(oa_damper, dtype=np.float64)
    dmin = np.asarray(oa_damper_min, dtype=np.float64)
    known = np.isfinite(h) & np.isfinite(c) & np.isfinite(d) & np.isfinite(dmin) & np.asarray(fan_running, bool)
    with np.errstate(invalid="ignore"):
        heat = h > tolerance
        cool = c > tolerance
        at_min = np.abs(d - dmin) <= tolerance
        above_min = d > dmin + tolerance
        full_open = d >= 1.0 - tolerance
    state = np.full(np.broadcast(h, c, d, dmin).shape, int(OperatingState.OTHER), dtype=np.int8)
    state[heat & ~cool & at_min] = OperatingState.HEATING
    state[~heat & ~cool & above_min] = OperatingState.FREE_COOLING
    state[~heat & cool & full_open] = OperatingState.MECHANICAL_AND_ECONOMIZER
    state[~heat & cool & at_min & ~full_open] = OperatingState.MECHANICAL_MINIMUM_OA
    state[~np.broadcast_to(known, state.shape)] = OperatingState.NOT_JUDGED
    return state


def changes_since(state: np.ndarray, seconds: np.ndarray) -> np.ndarray:
    """Seconds since the state last changed (the start of the data counts as a change)."""
    n = state.shape[1]
    changed = np.ones(state.shape, dtype=bool)
    changed[:, 1:] = state[:, 1:] != state[:, :-1]
    last = np.maximum.accumulate(np.where(changed, np.arange(n), 0), axis=1)
    since: np.ndarray = seconds[np.newaxis, :] - seconds[last]
    return since
