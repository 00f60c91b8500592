"""Judging AHU trend logs by the fault rules: evidence windows and shares.

The procedure (ASHRAE Guideline 36-2018, 5.16.14, from memory):

1. Only samples with the supply fan running are judged (fan status when
   given, else speed command above the command tolerance, else the fan is
   taken as running throughout).
2. Each sample gets its operating state (``states.operating_states``).
3. Measured values are moving averages over ``average_window_s``; a window
   with any gap is a gap.
4. After every change of operating state (and at the start of the data)
   the rules are suspended for ``mode_delay_s``.
5. A rule's condition is true at a sample only if every value it needs is
   present and the state is one the rule applies in; a run of true samples
   is a fault once it has lasted ``alarm_delay_s`` (a run of n samples lasts
   n × step: each sample stands for the step that follows it).

Per fault and unit: the evidence windows (the runs that reached the delay,
from the first true sample to the end of the last one, and when the delay
was reached), the share of the applicable time (samples judged in a state
the rule applies in) that lay in those windows, and, where the inputs allow,
a ventilation or energy consequence.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from datetime import datetime
from typing import Any

import numpy as np

from engineering import validate as v
from engineering.errors import EngineeringInputError
from engineering.faults import series as s
from engineering.faults.consequences import CONSEQUENCES, Consequence
from engineering.faults.rules import RULES, SECTION, FaultRule, oa_fraction
from engineering.faults.states import OperatingState, changes_since, operating_states
from engineering.faults.thresholds import G36_DEFAULTS, FaultThresholds
from engineering.formatting import count_text

Time = datetime | float


@dataclass(frozen=True)
class FaultWindow:
    """A stretch of evidence: the condition held throughout and lasted at least the alarm delay."""

    start: Time  # first sample of the run
    end: Time  # end of the run's last sample (its time + one step)
    alarm_at: Time  # when the run reached the alarm delay
    duration_s: float


@dataclass(frozen=True)
class FaultResult:
    """One rule's verdict for one unit.

    ``applicable_s`` is the time the rule could be judged (fan running, a
    state it applies in, not within the mode delay, every needed value
    present); ``fault_s`` the time inside its evidence windows; ``share`` the
    one over the other.
    """

    code: str
    title: str
    formula: str
    section: str
    states: tuple[int, ...]
    judged: bool  # False when a needed point is missing or the data cannot show the fault
    reason: str  # why it was not judged ("" when judged)
    windows: tuple[FaultWindow, ...] = ()
    fault_s: float = 0.0
    applicable_s: float = 0.0
    share: float | None = None  # fault_s / applicable_s; None when nothing was applicable
    consequence: Consequence | None = None

    @property
    def present(self) -> bool:
        return bool(self.windows)


@dataclass(frozen=True)
class AhuFaults:
    """Every rule's ``FaultResult`` for one unit (by code, in rule order), its states and notes on the inputs."""

    results: dict[str, FaultResult]
    states: np.ndarray  # operating state per sample (0 not judged, 1–5)
    step_s: float
    notes: tuple[str, ...] = field(default=())

    def present(self) -> list[FaultResult]:
        """The faults found, in rule order."""
        return [r for r in self.results.values() if r.present]


def evaluate_ahu(
    *,
    times: Sequence[Time] | np.ndarray,
    points: Mapping[str, object],
    thresholds: FaultThresholds = G36_DEFAULTS,
) -> AhuFaults:
    """Judge one AHU's trends (a series of len(times) per role, or a constant) by FC#1–FC#15.

    ``times`` must be regular (``resample`` first otherwise). Roles are those
    of ``ROLES`` in SI units: °C, Pa, fractions 0–1, m³/s; a gap is NaN or
    None. Returns an ``AhuFaults`` with one ``FaultResult`` per rule.
    """
    return evaluate_ahus(times=times, points=points, thresholds=thresholds)[0]


def evaluate_ahu_logs(
    *,
    series: Mapping[str, tuple[Sequence[Any], Sequence[Any]] | float],
    step_s: float,
    thresholds: FaultThresholds = G36_DEFAULTS,
    max_hold_s: float | None = None,
) -> AhuFaults:
    """Judge one AHU from point logs with their own, possibly irregular, times.

    The logs are first put on a grid of ``step_s`` by ``resample`` (each grid
    time takes the last logged value, held at most ``max_hold_s``; see there),
    then judged by ``evaluate_ahu``.
    """
    grid = s.resample(series=series, step_s=step_s, max_hold_s=max_hold_s)
    return evaluate_ahu(times=grid.times, points=grid.points, thresholds=thresholds)


def evaluate_ahus(
    *,
    times: Sequence[Time] | np.ndarray,
    points: Mapping[str, object],
    thresholds: FaultThresholds = G36_DEFAULTS,
) -> list[AhuFaults]:
    """Judge many AHUs that share one regular time base in one vectorised pass.

    Each role is units × len(times) (or one series or one number shared by all
    units). Returns one ``AhuFaults`` per unit, in order.
    """
    if not isinstance(thresholds, FaultThresholds):
        raise EngineeringInputError(
            field="thresholds",
            value=type(thresholds).__name__,
            allowed="a FaultThresholds",
            message="thresholds must be a FaultThresholds",
        )
    base = s.regular_base("times", times)
    n = base.seconds.size
    if not isinstance(points, Mapping) or not points:
        raise EngineeringInputError(
            field="points", value=points, allowed="a mapping of role to series", message="points is empty"
        )
    raw = {role: s.as_unit_array(role, value, n) for role, value in points.items()}
    units = _unit_count(raw)
    raw = {role: np.broadcast_to(a, (units, n)) for role, a in raw.items()}
    t = thresholds
    notes: list[str] = []

    running = _fan_running(raw, t, notes, units, n)
    zeros = np.zeros((units, n))
    have_states = "oa_damper" in raw and "oa_damper_min" in raw
    if have_states:
        states = operating_states(
            heating_valve=raw.get("heating_valve", zeros),
            cooling_valve=raw.get("cooling_valve", zeros),
            oa_damper=raw["oa_damper"],
            oa_damper_min=raw["oa_damper_min"],
            fan_running=running,
            tolerance=t.command_tolerance,
        )
        for coil in ("heating_valve", "cooling_valve"):
            if coil not in raw:
                notes.append(f"no {coil}: the unit is taken to have no such coil (command 0)")
    else:
        states = np.where(running, int(OperatingState.OTHER), int(OperatingState.NOT_JUDGED)).astype(np.int8)
        notes.append("no oa_damper/oa_damper_min: states 1–4 cannot be told apart; only rules for every state run")
    settled = changes_since(states, base.seconds) >= t.mode_delay_s

    k = s.samples_for(t.average_window_s, base.step_s) if t.average_window_s > 0 else 1
    p = {role: (s.trailing_mean(a, k) if role in s.AVERAGED_ROLES else a) for role, a in raw.items()}
    for coil in ("heating_valve", "cooling_valve"):
        p.setdefault(coil, zeros)
    if {"mat", "rat", "oat"} <= p.keys():
        p["_oa_fraction"] = oa_fraction(p)

    per_unit: list[dict[str, FaultResult]] = [{} for _ in range(units)]
    for rule in RULES:
        missing = [r for r in rule.needs if r not in raw]
        reason = ""
        if missing:
            reason = f"missing {count_text(len(missing), 'point')}: " + ", ".join(missing)
        elif not have_states and set(rule.states) != {1, 2, 3, 4, 5}:
            reason = "operating states unknown (no oa_damper/oa_damper_min)"
        elif rule.condition is None and base.step_s > t.state_window_s / (t.max_state_changes + 1):
            reason = (
                f"a {v.fmt(base.step_s)} s step cannot show more than "
                f"{int(t.state_window_s // base.step_s)} state changes an hour"
            )
        if reason:
            for u in range(units):
                per_unit[u][rule.code] = _result(rule, judged=False, reason=reason)
            continue
        applicable, condition = _condition(rule, p, states, settled, base, t)
        for u, result in enumerate(_judge(rule, applicable, condition, p, base, t, units)):
            per_unit[u][rule.code] = result
    return [
        AhuFaults(results=per_unit[u], states=states[u], step_s=base.step_s, notes=tuple(notes)) for u in range(units)
    ]


def _unit_count(raw: Mapping[str, np.ndarray]) -> int:
    counts = {a.shape[0] for a in raw.values()} - {1}
    if len(counts) > 1:
        shapes = ", ".join(f"{role}: {a.shape[0]}" for role, a in raw.items() if a.shape[0] != 1)
        raise EngineeringInputError(
            field="points",
            value=sorted(counts),
            allowed="the same number of units for every role (or one shared series)",
            message=f"points give different numbers of units ({shapes})",
        )
    return counts.pop() if counts else 1


def _fan_running(raw: dict[str, np.ndarray], t: FaultThresholds, notes: list[str], units: int, n: int) -> np.ndarray:
    with np.errstate(invalid="ignore"):
        if "supply_fan_status" in raw:
            status: np.ndarray = raw["supply_fan_status"] > 0.5
            return status
        if "supply_fan_speed" in raw:
            turning: np.ndarray = raw["supply_fan_speed"] > t.command_tolerance
            return turning
    notes.append("no supply fan status or speed: the fan is taken as running throughout")
    return np.ones((units, n), dtype=bool)


def _condition(
    rule: FaultRule,
    p: dict[str, np.ndarray],
    states: np.ndarray,
    settled: np.ndarray,
    base: s.TimeBase,
    t: FaultThresholds,
) -> tuple[np.ndarray, np.ndarray]:
    in_state = np.isin(states, rule.states)
    if rule.condition is None:  # FC4: state changes in the moving hour
        valid = states > 0
        change = np.zeros(states.shape, dtype=bool)
        change[:, 1:] = valid[:, 1:] & valid[:, :-1] & (states[:, 1:] != states[:, :-1])
        window = s.samples_for(t.state_window_s, base.step_s)
        count = s.trailing_count(change, window)
        return in_state, in_state & (count > t.max_state_changes)
    present = np.ones(states.shape, dtype=bool)
    for role in rule.needs:
        present &= np.isfinite(p[role])
    applicable = in_state & settled & present
    with np.errstate(invalid="ignore"):
        return applicable, applicable & rule.condition(p, t)


def _judge(
    rule: FaultRule,
    applicable: np.ndarray,
    condition: np.ndarray,
    p: dict[str, np.ndarray],
    base: s.TimeBase,
    t: FaultThresholds,
    units: int,
) -> list[FaultResult]:
    step = base.step_s
    need = s.samples_for(t.alarm_delay_s, step) if t.alarm_delay_s > 0 else 1
    unit, first, after = s.runs(condition)
    keep = (after - first) >= need
    unit, first, after = unit[keep], first[keep], after[keep]
    bounds = np.searchsorted(unit, np.arange(units + 1)).tolist()
    applicable_s = (applicable.sum(axis=1) * step).tolist()
    stamps = base.stamps
    delay_samples = t.alarm_delay_s / step
    exact_delay = delay_samples == int(delay_samples)
    out = []
    for u in range(units):
        lo, hi = bounds[u], bounds[u + 1]
        total = applicable_s[u]
        if lo == hi:
            out.append(_result(rule, judged=True, reason="", applicable_s=total, share=0.0 if total > 0 else None))
            continue
        pairs = list(zip(first[lo:hi].tolist(), after[lo:hi].tolist(), strict=True))
        windows = tuple(
            FaultWindow(
                start=stamps[i],
                end=stamps[j],
                alarm_at=stamps[i + int(delay_samples)] if exact_delay else base.after(i, t.alarm_delay_s),
                duration_s=float((j - i) * step),
            )
            for i, j in pairs
        )
        fault_s = float(sum(w.duration_s for w in windows))
        consequence = None
        if rule.code in CONSEQUENCES:
            mask = np.zeros(condition.shape[1], dtype=bool)
            for i, j in pairs:
                mask[i:j] = True
            means = {role: _mean(a[u], mask) for role, a in p.items()}
            consequence = CONSEQUENCES[rule.code](means, fault_s)
        out.append(
            _result(
                rule,
                judged=True,
                reason="",
                windows=windows,
                fault_s=fault_s,
                applicable_s=total,
                share=(fault_s / total) if total > 0 else None,
                consequence=consequence,
            )
        )
    return out


def _mean(row: np.ndarray, mask: np.ndarray) -> float:
    vals = row[mask]
    vals = vals[np.isfinite(vals)]
    return float(vals.mean()) if vals.size else float("nan")


def _result(rule: FaultRule, **kw: Any) -> FaultResult:
    return FaultResult(
        code=rule.code, title=rule.title, formula=rule.formula, section=SECTION, states=tuple(rule.states), **kw
    )
