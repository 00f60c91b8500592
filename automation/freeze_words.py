"""A freeze event in words: the one sentence the fault, its corrective work and its finding say.

For an HVAC reader: how low the air went and when (the site's clock, "at 04:15 CET on the night of 3–4 Dec
2026"), how long it stayed below the temperature of the highest stage it reached, which stage that is and which
it did not reach (``engineering.faults.freeze.G36_FREEZE_STAGES``), what the guideline's freeze protection does at
that stage (``STAGE_ACTIONS``), and what the unit did when the air was coldest — the supply fan, the outdoor-air
damper, the heating and preheat valves, each with the trend point it was read from, or plainly that no point is
mapped for it (``automation.freeze_moments``). Temperatures and commands are reason parts in SI, rendered in the
reader's units (``inspections.reasons``, through ``engineering.formatting``).
"""

from __future__ import annotations

import datetime as dt

from accounts.clock import moment_words
from engineering.faults import G36_DEFAULTS
from engineering.faults.freeze import G36_FREEZE_STAGES, STAGE_ACTIONS, FreezeStage, stage_number
from inspections import reasons

# The air a freeze event was judged on (``freeze_moments.freeze_moment``'s ``air``): the role's words.
AIR_WORDS = {"sat": "supply air", "preheat_leaving": "air after the preheater"}


def duration_words(seconds: float) -> str:
    """A length of time as a person says it: "45 min", "1 h 30 min", "3 h"."""
    minutes = max(round(seconds / 60), 0)
    hours, rest = divmod(minutes, 60)
    if not hours:
        return f"{rest} min"
    return f"{hours} h {rest} min" if rest else f"{hours} h"


def fan_ran(unit: dict) -> bool | None:
    """Whether the supply fan ran at the moment, as the run-hour feed decides it (``feeds.fan_running``): its
    status on, else its speed command above the guideline's command tolerance; None when neither was read."""
    status, speed = unit.get("fan_status") or {}, unit.get("fan_speed") or {}
    if status.get("value") is not None:
        return float(status["value"]) > 0.5
    if speed.get("value") is not None:
        return float(speed["value"]) > G36_DEFAULTS.command_tolerance
    return None


def _stage_of(w: dict) -> FreezeStage | None:
    """A freeze window's stage as the rule defines it (windows kept before they carried ``for_s`` name the stage and
    its temperature only)."""
    if w.get("stage") is None or w.get("below_c") is None:
        return None
    if w.get("for_s") is not None:
        return FreezeStage(str(w["stage"]), float(w["below_c"]), float(w["for_s"]))
    return next((st for st in G36_FREEZE_STAGES if st.name == w["stage"] and st.below_c == w["below_c"]), None)


def _ways(name: str, fallback: FreezeStage | None = None) -> list:
    """How a stage is reached, as parts: "below 3.3 °C for 15 min or below 1.0 °C for 5 min"."""
    ways = [st for st in G36_FREEZE_STAGES if st.name == name] or ([fallback] if fallback else [])
    parts: list = []
    for i, st in enumerate(ways):
        parts += [" or " if i else "", "below ", reasons.q(st.below_c, "temperature"), f" for {st.for_s / 60:g} min"]
    return parts


def _point(read: dict) -> str:
    return f" (trend point {read['point']})"


def _command(read: dict, thing: str) -> list:
    """A command's clause: "the outdoor-air damper was commanded 20 % open (trend point …)"."""
    if read.get("value") is None:
        return [f"{thing}'s trend point {read['point']} has no sample from that time"]
    if float(read["value"]) <= 0.0:
        return [f"{thing} was commanded shut", _point(read)]
    return [f"{thing} was commanded ", reasons.q(float(read["value"]) * 100, "percent"), " open", _point(read)]


def unit_parts(unit: dict) -> list:
    """What the unit did when the air was coldest, as clauses joined by "; " (reason parts)."""
    clauses: list[list] = []
    status, speed = unit.get("fan_status"), unit.get("fan_speed")
    ran = fan_ran(unit)
    if status is not None and status.get("value") is not None:
        clauses.append([f"the supply fan was {'running' if ran else 'stopped'}", _point(status)])
    elif speed is not None and speed.get("value") is not None:
        if ran:
            clauses.append(["the supply fan was running at ", reasons.q(float(speed["value"]) * 100, "percent")])
            clauses[-1] += [" speed", _point(speed)]
        else:
            clauses.append(["the supply fan was commanded off", _point(speed)])
    elif status is not None or speed is not None:
        clauses.append([f"the supply fan's trend point {(status or speed)['point']} has no sample from that time"])
    else:
        clauses.append(["no supply-fan status or speed point is mapped, so the trends cannot say whether it ran"])
    damper = unit.get("oa_damper")
    if damper is not None:
        clauses.append(_command(damper, "the outdoor-air damper"))
    else:
        clauses.append(["no outdoor-air damper command is mapped, so the trends cannot say where it was"])
    for read in unit.get("heating") or []:
        clauses.append(_command(read, f"the {read['part']} valve"))
    for part in unit.get("heating_unmapped") or []:
        clauses.append([f"no command of the {part} is mapped, so the trends cannot say what it did"])
    if not unit.get("heating") and not unit.get("heating_unmapped"):
        clauses.append(["the unit has no heating or preheat part in the registry"])
    frost = unit.get("frost_stat")
    if frost is not None and frost.get("value") is not None:
        tripped = float(frost["value"]) > 0.5
        clauses.append([f"the frost thermostat had {'' if tripped else 'not '}tripped", _point(frost)])
    out: list = []
    for i, clause in enumerate(clauses):
        out += (["; "] if i else []) + clause
    return reasons.flatten(out)


def _open(read: dict | None) -> float | None:
    """A command's value (a fraction), None when not mapped or not sampled."""
    if read is None or read.get("value") is None:
        return None
    return float(read["value"])


def _turned_up(read: dict, tolerance: float) -> bool | None:
    """Whether a heating valve was turned up by the coldest moment: commanded fully open (within the tolerance), or
    more open than when the air first fell below the stage's temperature; None when that earlier value is unknown
    (no sample then, or a moment kept before it was read) and the valve is not fully open."""
    now = float(read["value"])
    if now >= 1.0 - tolerance:
        return True
    before = read.get("before")
    return None if before is None else now > float(before) + tolerance


def response_parts(stage: str, unit: dict) -> list:
    """Whether the unit did, at its coldest moment, what the guideline's freeze protection does at ``stage``
    (``STAGE_ACTIONS``), as reason parts: at stage 3 the supply fan stops and the outdoor-air damper closes; at stage
    2 the outdoor air is shut off; at stage 1 the heating is turned up (a valve merely open, left where it was before
    the stage, is not a response). Each thing it did not do is named; a thing no trend point says is left to the
    clauses that say so. The unit is said to have done what the stage calls for only when every response the stage
    calls for was read and done, so a stage that did not respond, or whose response the trends cannot show, never
    reads as done. Empty when nothing is wrong and not every response could be read."""
    tolerance = G36_DEFAULTS.command_tolerance  # a command at or below 1 % reads shut (the rules' own tolerance)
    n = stage_number(stage)
    wrong: list[list] = []
    unread = False  # a response the stage calls for that the trends do not show
    if n >= 3:
        ran = fan_ran(unit)
        unread = unread or ran is None
        if ran:
            wrong.append(["the supply fan kept running"])
    damper = _open(unit.get("oa_damper"))
    if n >= 2:
        unread = unread or damper is None
        if damper is not None and damper > tolerance:
            wrong.append(["the outdoor-air damper was still ", reasons.q(damper * 100, "percent"), " open"])
    reads = unit.get("heating") or []
    # Every heating and preheat command mapped and sampled: else what the heating did is not known.
    heat_known = bool(reads) and not unit.get("heating_unmapped") and all(_open(r) is not None for r in reads)
    if heat_known and max(float(r["value"]) for r in reads) <= tolerance:
        wrong.append(["no heating or preheat was commanded"])
    elif n == 1:
        up = [_turned_up(r, tolerance) for r in reads] if heat_known else [None]
        if heat_known and not any(up) and None not in up:
            wrong.append(["the heating was not turned up (no heating or preheat valve opened further)"])
        elif not any(up):
            unread = True
    if wrong:
        out: list = [f". The unit did not do what {stage} calls for: "]
        for i, clause in enumerate(wrong):
            out += ([" and " if i == len(wrong) - 1 else ", "] if i else []) + clause
        out.append(
            " — check the freeze-protection sequence, its wiring and the low-limit thermostat before the next frost"
        )
        return out
    if not unread:
        return [f". The unit did what {stage} calls for, as far as its trend points show"]
    return []


def freeze_parts(windows: list[dict], zone: str) -> list:
    """What a freeze event's latest day says, as reason parts (SI, rendered in the reader's units): how low the air
    went and when on the site's clock (``zone``), how long it stayed below the temperature of the highest stage it
    reached, which stage that is and how it is reached, which stage it did not reach, what the guideline's freeze
    protection does at that stage, what the unit did when the air was coldest (windows kept before that was read
    say nothing of it), and that the unit is not ready until its freeze-protection test passes again."""
    days = [w["day"] for w in windows if w.get("day")]
    latest = [w for w in windows if w.get("day") == max(days)] if days else list(windows)
    staged = [(w, st) for w in latest if (st := _stage_of(w)) is not None]
    lowest = [w for w in latest if w.get("lowest_c") is not None]
    coldest = min(lowest, key=lambda w: (float(w["lowest_c"]), w.get("lowest_at") or "")) if lowest else {}
    air = AIR_WORDS.get(str(coldest.get("air") or "sat"), AIR_WORDS["sat"])
    parts: list = [f"The {air} fell"]
    if coldest:
        parts += [" to ", reasons.q(float(coldest["lowest_c"]), "temperature")]
    if coldest.get("lowest_at"):
        parts.append(f" at {moment_words(dt.datetime.fromisoformat(coldest['lowest_at']), zone=zone)}")
    elif days:
        parts.append(f" on {dt.date.fromisoformat(str(max(days))):%-d %b %Y}")  # the pages' date style
    reached: tuple[dict, FreezeStage] | None = None  # the highest stage's window, and that stage
    if staged:
        top = max(stage_number(st.name) for _, st in staged)
        # The window of the highest stage at its warmest temperature: the longest time the air stayed that cold.
        w, stage = max(
            ((w, st) for w, st in staged if stage_number(st.name) == top),
            key=lambda pair: (pair[1].below_c, float(pair[0].get("duration_s") or 0.0)),
        )
        reached = (w, stage)
        if w.get("duration_s") is not None:
            parts += [" and stayed below ", reasons.q(stage.below_c, "temperature")]
            parts.append(f" for {duration_words(float(w['duration_s']))}")
        parts += [f": it reached freeze-protection {stage.name} (", *_ways(stage.name, stage), ")"]
        beyond = sorted({st.name for st in G36_FREEZE_STAGES if stage_number(st.name) > top}, key=stage_number)
        if beyond:
            parts += [f" but not {beyond[0]} (", *_ways(beyond[0]), ")"]
        else:
            parts.append(", the last stage")
        action = STAGE_ACTIONS.get(stage.name)
        if action:
            parts.append(f". At {stage.name} of the guideline's freeze protection {action}")
    if coldest.get("unit"):
        parts += [f". When the {air} was coldest: ", *unit_parts(coldest["unit"])]
        if reached is not None and _after_alarm(coldest, reached[0]):
            parts += response_parts(reached[1].name, coldest["unit"])
    parts.append(". The unit is not ready for freeze protection until its freeze-protection test passes again")
    return reasons.flatten(parts)


def _after_alarm(coldest: dict, window: dict) -> bool:
    """Whether the coldest moment came once the stage was reached (its alarm time): only then is what the unit did
    its response to that stage. A window kept without an alarm time is taken as reached before its coldest moment."""
    if not coldest.get("lowest_at") or not window.get("alarm_at"):
        return True
    return dt.datetime.fromisoformat(coldest["lowest_at"]) >= dt.datetime.fromisoformat(window["alarm_at"])


def freeze_text(windows: list[dict], system: str = "si", *, zone: str) -> str:
    """``freeze_parts`` in ``system``'s units ("si" or "us"): the freeze event as the fault, its work and its
    finding say it."""
    return reasons.render(freeze_parts(windows, zone), system)
