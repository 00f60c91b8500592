"""Freeze events: supply (or mixed, or preheat-leaving) air below freeze-protection stages.

A stage is a temperature and a time: the air below ``below_c`` for at least
``for_s``. The defaults are the multiple-zone AHU freeze protection of
ASHRAE Guideline 36 (5.16.12 in the 2018 edition; section number from
memory), with the values as implemented in the Modelica Buildings library
(github.com/lbl-srg/modelica-buildings,
Buildings/Controls/OBC/ASHRAE/G36/AHUs/MultiZone/VAV/SetPoints/FreezeProtection.mo):
stage 1 below 4.4 °C for 5 min; stage 2 below 3.3 °C for 5 min; stage 3
below 3.3 °C for 15 min, or below 1 °C for 5 min.

The events say when the air was near freezing; they do not replace the
unit's own freeze stat or its controls. Local codes, the manufacturer's
instructions and licensed practice come first.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from datetime import datetime
from typing import Any

import numpy as np

from engineering import validate as v
from engineering.errors import EngineeringInputError
from engineering.faults import series as s

Time = datetime | float


@dataclass(frozen=True)
class FreezeStage:
    name: str
    below_c: float
    for_s: float

    def __post_init__(self) -> None:
        v.in_range("below_c", self.below_c, -30.0, 15.0, unit="°C", label=f"{self.name} temperature")
        v.in_range("for_s", self.for_s, 0.0, 86_400.0, unit="s", label=f"{self.name} duration")


G36_FREEZE_STAGES: tuple[FreezeStage, ...] = (
    FreezeStage("stage 1", 4.4, 300.0),
    FreezeStage("stage 2", 3.3, 300.0),
    FreezeStage("stage 3", 3.3, 900.0),
    FreezeStage("stage 3", 1.0, 300.0),
)


def stage_lines(stages: Sequence[FreezeStage] = G36_FREEZE_STAGES) -> tuple[tuple[float, tuple[FreezeStage, ...]], ...]:
    """The stages' temperatures, warmest first, each with the stages judged below it (stage 2 and stage 3
    share 3.3 °C with different times): what a chart draws as one limit line per temperature."""
    by_temp: dict[float, list[FreezeStage]] = {}
    for stage in stages:
        by_temp.setdefault(stage.below_c, []).append(stage)
    return tuple((t, tuple(by_temp[t])) for t in sorted(by_temp, reverse=True))


def stage_line_words(temperature: str, stages: Sequence[FreezeStage]) -> str:
    """One temperature's limit line on a chart: "freeze below 3.3 °C: stage 2 after 5 min, stage 3 after 15 min"."""
    return f"freeze below {temperature}: " + ", ".join(f"{st.name} after {st.for_s / 60:g} min" for st in stages)


# What the guideline's freeze protection does at each stage, in plain words for the person who reads a freeze event
# (ASHRAE Guideline 36, May 2020, section 5.16.12, as the documentation of the FreezeProtection block of the Modelica
# Buildings library named above states it). Words only: the stages' temperatures and times are ``G36_FREEZE_STAGES``.
# What the unit's own controls did is in its trends, not here.
STAGE_ACTIONS: dict[str, str] = {
    "stage 1": "the outdoor-air damper is held at its minimum and the heating is turned up to warm the supply air",
    "stage 2": "the outdoor air is shut off completely for an hour and an alarm says the ventilation was interrupted",
    "stage 3": (
        "the supply and return fans stop, the outdoor-air damper closes, the cooling valve opens fully, the heating "
        "keeps the air in the unit warm and an alarm says the unit was shut down; it stays off until someone resets it"
    ),
}


def stage_number(name: str) -> int:
    """A stage's place in the order ("stage 3" → 3; 0 for a name without a number)."""
    digits = "".join(ch for ch in name if ch.isdigit())
    return int(digits) if digits else 0


# What a freeze event risks, said where a rule's consequence is (the trends give no number for it).
FREEZE_RISK = (
    "risk of coil freeze damage (a burst coil, water in the unit); check the freeze protection, the preheat and the "
    "outdoor-air damper before the next frost"
)


@dataclass(frozen=True)
class FreezeEvent:
    stage: str
    below_c: float
    for_s: float
    start: Time  # first sample below the stage's temperature
    end: Time  # end of the last sample below it
    reached_at: Time  # when the stage's time was reached
    duration_s: float
    lowest_c: float


def freeze_events(
    *,
    times: Sequence[Any] | np.ndarray,
    temperature_c: Sequence[float | None] | np.ndarray,
    stages: Sequence[FreezeStage] = G36_FREEZE_STAGES,
) -> tuple[FreezeEvent, ...]:
    """Windows in which the air stayed below a stage's temperature for its time.

    ``times`` must be regular (``resample`` first otherwise); a gap (NaN or
    None) ends a window. A run of n samples lasts n × step. Events are in
    time order, stage by stage within a start.
    """
    return freeze_events_batch(times=times, temperature_c=temperature_c, stages=stages)[0]


def freeze_events_batch(
    *,
    times: Sequence[Any] | np.ndarray,
    temperature_c: Sequence[Any] | np.ndarray,
    stages: Sequence[FreezeStage] = G36_FREEZE_STAGES,
) -> list[tuple[FreezeEvent, ...]]:
    """``freeze_events`` for many units (temperature_c units × len(times)) at once."""
    base = s.regular_base("times", times)
    temp = s.as_unit_array("sat", temperature_c, base.seconds.size)
    stages = tuple(stages)
    if not stages or not all(isinstance(st, FreezeStage) for st in stages):
        raise EngineeringInputError(
            field="stages",
            value=stages,
            allowed="one or more FreezeStage",
            message="stages must be one or more FreezeStage (a temperature and a time)",
        )
    units, n = temp.shape
    events: list[list[tuple[int, int, FreezeEvent]]] = [[] for _ in range(units)]
    step = base.step_s
    stamps = base.stamps
    flat = np.append(np.where(np.isnan(temp), np.inf, temp).ravel(), np.inf)
    for order, stage in enumerate(stages):
        with np.errstate(invalid="ignore"):
            below = temp < stage.below_c
        unit, first, after = s.runs(below)
        need = s.samples_for(stage.for_s, step) if stage.for_s > 0 else 1
        keep = (after - first) >= need
        unit, first, after = unit[keep], first[keep], after[keep]
        if not unit.size:
            continue
        bounds = np.empty(2 * unit.size, dtype=np.int64)
        bounds[0::2] = unit * n + first
        bounds[1::2] = unit * n + after
        lowest = np.minimum.reduceat(flat, bounds)[0::2].tolist()
        reach = stage.for_s / step
        for u, i, j, low in zip(unit.tolist(), first.tolist(), after.tolist(), lowest, strict=True):
            reached = stamps[i + int(reach)] if reach == int(reach) else base.after(i, stage.for_s)
            event = FreezeEvent(
                stage=stage.name,
                below_c=stage.below_c,
                for_s=stage.for_s,
                start=stamps[i],
                end=stamps[j],
                reached_at=reached,
                duration_s=float((j - i) * step),
                lowest_c=float(low),
            )
            events[u].append((i, order, event))
    return [tuple(e for _, _, e in sorted(unit_events, key=lambda x: (x[0], x[1]))) for unit_events in events]
