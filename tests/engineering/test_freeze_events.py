"""Freeze events: supply air below the freeze-protection stages for their times.

Default stages are Guideline 36's multiple-zone AHU freeze protection (5.16.12
in the 2018 edition, section number from memory) as implemented in the
Modelica Buildings library (github.com/lbl-srg/modelica-buildings,
Buildings/Controls/OBC/ASHRAE/G36/AHUs/MultiZone/VAV/SetPoints/FreezeProtection.mo:
LessThreshold t = 4.4 °C, 3.3 °C and 1 °C with Timer t = 300 s, and 900 s
below 3.3 °C).
"""

from datetime import UTC, datetime, timedelta
from zoneinfo import ZoneInfo

import numpy as np
import pytest

from engineering import EngineeringInputError
from engineering.faults import G36_FREEZE_STAGES, FreezeStage, freeze_events, freeze_events_batch

T0 = datetime(2026, 1, 12, 2, 0, tzinfo=UTC)


def minutes(n, step=1, start=T0):
    return [start + timedelta(minutes=step * i) for i in range(n)]


def supply(n=60, cold=slice(10, 15), value=4.3):
    t = np.full(n, 12.0)
    t[cold] = value
    return t


def stages_of(events):
    return [(e.stage, e.below_c) for e in events]


def test_stage_one_below_4_4_c_for_five_minutes():
    # Stage 1: below 4.4 °C (40 °F) for 5 min (Modelica Buildings G36 FreezeProtection: t=273.15+4.4, Timer 300 s).
    (event,) = freeze_events(times=minutes(60), temperature_c=supply(value=4.3))
    assert (event.stage, event.below_c) == ("stage 1", 4.4)
    assert event.start == T0 + timedelta(minutes=10)
    assert event.reached_at == T0 + timedelta(minutes=15)
    assert event.end == T0 + timedelta(minutes=15)
    assert event.lowest_c == pytest.approx(4.3)
    assert freeze_events(times=minutes(60), temperature_c=supply(value=4.5)) == ()
    assert freeze_events(times=minutes(60), temperature_c=supply(cold=slice(10, 14), value=4.3)) == ()


def test_stage_two_below_3_3_c_and_stage_three_after_fifteen_minutes():
    # Stage 2: below 3.3 °C (38 °F) for 5 min; stage 3: below 3.3 °C for 15 min (Timer 900 s) (same source).
    ten = freeze_events(times=minutes(60), temperature_c=supply(cold=slice(10, 20), value=3.0))
    assert stages_of(ten) == [("stage 1", 4.4), ("stage 2", 3.3)]
    fifteen = freeze_events(times=minutes(60), temperature_c=supply(cold=slice(10, 25), value=3.0))
    assert stages_of(fifteen) == [("stage 1", 4.4), ("stage 2", 3.3), ("stage 3", 3.3)]
    assert fifteen[2].reached_at == T0 + timedelta(minutes=25)


def test_stage_three_below_1_c_for_five_minutes():
    # Stage 3: below 1 °C for 5 min (t=273.15+1, Timer 300 s; same source).
    events = freeze_events(times=minutes(60), temperature_c=supply(cold=slice(10, 15), value=0.9))
    assert ("stage 3", 1.0) in stages_of(events)
    assert ("stage 3", 1.0) not in stages_of(
        freeze_events(times=minutes(60), temperature_c=supply(cold=slice(10, 15), value=1.1))
    )


def test_a_gap_ends_the_window():
    t = supply(cold=slice(10, 18), value=4.0)
    t[13] = np.nan  # 3 + 4 minutes either side of a lost sample
    assert freeze_events(times=minutes(60), temperature_c=t) == ()


def test_quarter_hour_data_one_cold_sample_is_an_event():
    """One 15-minute sample below 4.4 °C already covers the 5-minute stage time."""
    t = np.full(96, 10.0)
    t[8] = 4.0
    (event,) = freeze_events(times=minutes(96, step=15), temperature_c=t)
    assert event.duration_s == 900
    assert event.reached_at == T0 + timedelta(minutes=8 * 15 + 5)


def test_own_stages_and_local_time_zones():
    vienna = ZoneInfo("Europe/Vienna")
    start = datetime(2026, 1, 12, 3, 0, tzinfo=vienna)
    stage = FreezeStage("preheat alarm", 6.0, 600.0)
    (event,) = freeze_events(
        times=minutes(60, start=start), temperature_c=supply(cold=slice(10, 22), value=5.5), stages=[stage]
    )
    assert event.stage == "preheat alarm" and event.start.tzinfo == vienna
    assert event.reached_at == start + timedelta(minutes=20)


def test_many_units_at_once():
    temps = np.vstack([supply(), np.full(60, 12.0)])
    first, second = freeze_events_batch(times=minutes(60), temperature_c=temps)
    assert len(first) == 1 and second == ()


def test_default_stages_are_the_guidelines():
    assert [(s.below_c, s.for_s) for s in G36_FREEZE_STAGES] == [(4.4, 300), (3.3, 300), (3.3, 900), (1.0, 300)]


def test_impossible_stages_and_temperatures_are_refused():
    with pytest.raises(EngineeringInputError, match="for_s"):
        FreezeStage("x", 4.0, -5)
    with pytest.raises(EngineeringInputError, match="below_c"):
        FreezeStage("x", 40.0, 300)
    with pytest.raises(EngineeringInputError, match="outside -60–80 °C"):
        freeze_events(times=minutes(3), temperature_c=[4.0, 40.0, 400.0])
    with pytest.raises(EngineeringInputError, match="stages"):
        freeze_events(times=minutes(3), temperature_c=[4.0, 4.0, 4.0], stages=[])
