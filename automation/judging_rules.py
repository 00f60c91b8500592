"""The guideline's rules over a unit's day of trends, with no writes: ASHRAE Guideline 36's AHU fault conditions
and the freeze-protection stages (``engineering.faults``), for many units at once.

Each unit's points are put on one regular grid (``engineering.faults.resample``), its step the median logging
interval of its points, from ``LEAD`` before the day to its end. Percent points are fractions already
(``automation.series``); a value outside its role's plausible range is a gap, not a value. The minimum
outdoor-air fraction is the unit's design minimum (``AHU.design_min_oa_fraction``); the damper's minimum
position, which the operating states need and no mapped Brick class carries, is the lowest position the damper
was commanded to while the fan ran over the day (a controller rests the damper at its minimum; common practice).
Units whose grids share the time base and the points judged are judged in one vectorised pass
(``evaluate_ahus``, ``freeze_events_batch``), as each would be alone.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

import numpy as np

from engineering.errors import EngineeringInputError
from engineering.faults import (
    G36_DEFAULTS,
    ROLES,
    AhuFaults,
    FreezeEvent,
    evaluate_ahu,
    evaluate_ahus,
    freeze_events,
    freeze_events_batch,
    resample,
)

from .feeds import fan_running
from .series import EXTRA_ROLES, UnitTrends

# Averages and the mode delay look back: the hour before the day is read with it (its evidence is not kept).
LEAD = dt.timedelta(hours=1)


def grid_step_s(trends: UnitTrends) -> float:
    """The grid step: the median logging interval of the unit's points, 1 min to 1 h."""
    steps = [np.diff(s.seconds) for s in trends.samples.values() if s.seconds.size > 1]
    steps = [d[d > 0] for d in steps]
    steps = [d for d in steps if d.size]
    if not steps:
        return 900.0
    return float(min(max(np.median(np.concatenate(steps)), 60.0), 3600.0))


def _series(trends: UnitTrends, start: float) -> dict:
    out: dict = {}
    for role, point in trends.roles.items():
        if role in EXTRA_ROLES:
            continue
        s = trends.samples.get(point.pk)
        if s is None or s.seconds.size == 0:
            continue
        low, high = ROLES[role][1], ROLES[role][2]
        values = np.clip(s.values, 0.0, 1.0) if ROLES[role][3] == "" else s.values
        values = np.where((values >= low) & (values <= high), values, np.nan)  # out of range: a gap, not a value
        out[role] = (s.seconds, values)
    return out


def _fault_series(trends: UnitTrends, step: float) -> tuple[dict | None, str]:
    """What FC#1–#15 read of the unit's day, as ``resample`` takes it (None and why when there is nothing)."""
    series = _series(trends, (trends.start - LEAD).timestamp())
    day_start = trends.start.timestamp()
    if not any((times >= day_start).any() for times, _values in series.values()):
        return None, "no trend samples that day of any point the fault rules read"
    series["min_oa_fraction"] = float(trends.ahu.design_min_oa_fraction)
    damper = trends.of("oa_damper")
    if "oa_damper" in series and damper is not None:
        running = fan_running(trends, damper.seconds)
        seen = damper.values[np.isfinite(damper.values) & (running if running is not None else True)]
        if seen.size:
            series["oa_damper_min"] = float(np.clip(seen.min(), 0.0, 1.0))
    return series, ""


@dataclass(frozen=True)
class RulesDay:
    """What the guideline's rules found in one unit's day (no writes): FC#1–#15 (None and why when they could not
    judge it) and the freeze events of the supply air and of the air after a preheater."""

    faults: AhuFaults | None
    why: str
    freeze: tuple[FreezeEvent, ...]
    freeze_air: tuple[str, ...] = ()  # each event's air: its role, ``sat`` or ``preheat_leaving``


def _grid_key(grid) -> tuple:
    return (grid.step_s, grid.times[0], len(grid.times), tuple(sorted(grid.points)))


def _stacked(grids: list) -> dict[str, np.ndarray]:
    """Units' grids of one time base and one set of roles as units × samples arrays (a constant as its row)."""
    n = len(grids[0].times)
    return {
        role: np.stack([np.broadcast_to(np.asarray(g.points[role], dtype=np.float64), (n,)) for g in grids])
        for role in grids[0].points
    }


def rules_judge(trends: list[UnitTrends]) -> list[RulesDay]:
    """Each unit's day judged by FC#1–#15 (``engineering.faults.evaluate_ahus``) and for freeze events
    (``freeze_events_batch``), in order. Each unit's points are put on its own grid (``resample``: its step the
    median logging interval of its points); units whose grids share the time base and the points judged are
    judged in one vectorised pass, as each would be alone (a pass refused falls back to one unit at a time, so
    a refusal names the unit's own problem)."""
    steps = [grid_step_s(t) for t in trends]
    faults: list[AhuFaults | None] = [None] * len(trends)
    why = [""] * len(trends)
    groups: dict[tuple, list[tuple[int, object]]] = {}
    for i, (t, step) in enumerate(zip(trends, steps, strict=True)):
        series, why[i] = _fault_series(t, step)
        if series is None:
            continue
        try:
            grid = resample(
                series=series, step_s=step, start=(t.start - LEAD).timestamp(), end=t.end.timestamp() - step
            )
        except EngineeringInputError as exc:
            why[i] = f"not judged: {exc}"
            continue
        groups.setdefault(_grid_key(grid), []).append((i, grid))
    for members in groups.values():
        grids = [g for _i, g in members]
        try:
            judged = evaluate_ahus(times=grids[0].times, points=_stacked(grids), thresholds=G36_DEFAULTS)
        except EngineeringInputError:
            judged = []
            for i, g in members:
                try:
                    judged.append(evaluate_ahu(times=g.times, points=g.points, thresholds=G36_DEFAULTS))
                except EngineeringInputError as exc:
                    judged.append(None)
                    why[i] = f"not judged: {exc}"
        for (i, _g), result in zip(members, judged, strict=True):
            faults[i] = result
    freeze = _freeze_judge(trends, steps)
    return [
        RulesDay(faults=f, why=w, freeze=tuple(e for e, _ in ev), freeze_air=tuple(a for _, a in ev))
        for f, w, ev in zip(faults, why, freeze, strict=True)
    ]


def _freeze_judge(trends: list[UnitTrends], steps: list[float]) -> list[list[tuple[FreezeEvent, str]]]:
    """Freeze events of each unit's supply air and air after a preheater, over the day (not its lead), each with
    its air's role; the air of units of one time base judged at once."""
    events: list[list[tuple[FreezeEvent, str]]] = [[] for _ in trends]
    groups: dict[tuple, list[tuple[int, object]]] = {}
    for i, (t, step) in enumerate(zip(trends, steps, strict=True)):
        for role in ("sat", "preheat_leaving"):
            s = t.of(role)
            if s is None or s.seconds.size == 0:
                continue
            try:
                grid = resample(
                    series={"sat": (s.seconds, s.values)},
                    step_s=step,
                    start=t.start.timestamp(),
                    end=t.end.timestamp() - step,
                )
            except EngineeringInputError:
                continue
            groups.setdefault((role, *_grid_key(grid)), []).append((i, grid))
    for key, members in groups.items():
        grids = [g for _i, g in members]
        try:
            found = freeze_events_batch(times=grids[0].times, temperature_c=_stacked(grids)["sat"])
        except EngineeringInputError:
            found = []
            for _i, g in members:
                try:
                    found.append(freeze_events(times=g.times, temperature_c=g.points["sat"]))
                except EngineeringInputError:
                    found.append(())
        for (i, _g), unit_events in zip(members, found, strict=True):
            events[i] += [(e, key[0]) for e in unit_events]
    return [sorted(e, key=lambda pair: (float(pair[0].start), pair[0].below_c)) for e in events]
