"""Judging a submitted inspection: every formula through ``engineering``.

``evaluate`` takes the readings of one form (SI values) and the unit, and
returns one ``Result`` per judgement: a reading against its bands, or a
check over several readings (filter loading and forecast, outdoor-air
fraction, coil heat balance, set-point and position deviations, sensor
drift, fan proving, freeze protection). Each result carries its verdict, a
plain reason, the method and the derived values (SI, units in the key names).

One module per family of checks: ``readings`` (single answers and numbers),
``filter_checks``, ``ventilation_checks``, ``heat_checks`` (coils, heat
recovery), ``control_checks`` (set points, dampers, sensor drift), ``valve_checks`` (a shut coil's leak-by),
``freeze_checks`` (the frost thermostat's trip setting); what they
read is ``form``, what they give is ``results``.

A number outside its plausible range is recorded and flagged (``services.reading_check``) but no check uses it
(``Form.set_aside``): each does what it does without it, and its reason says which reading was not used and why.
"""

from __future__ import annotations

from .control_checks import damper_checks, drift_checks, duct_static_checks, supply_temperature_checks
from .filter_checks import filter_change_checks, filter_loading_checks
from .form import Form, Value, set_aside_parts
from .freeze_checks import freeze_trip_checks
from .heat_checks import coil_checks, heat_recovery_checks
from .readings import reading_result
from .results import CHECKS, Result, own_judgement
from .valve_checks import valve_leak_checks
from .ventilation_checks import full_oa_checks, oa_fraction_checks

__all__ = ["CHECKS", "Form", "Result", "Value", "evaluate", "own_judgement", "set_aside_parts"]


def evaluate(form: Form) -> list[Result]:
    """Every judgement of one form, cross-reading checks first, then the remaining single readings."""
    consumed: set[tuple[str, int | None]] = set()
    results: list[Result] = []
    for fn in (
        filter_loading_checks,
        filter_change_checks,
        oa_fraction_checks,
        full_oa_checks,
        coil_checks,
        supply_temperature_checks,
        duct_static_checks,
        damper_checks,
        drift_checks,
        heat_recovery_checks,
        valve_leak_checks,
        freeze_trip_checks,
    ):
        form.asked.clear()
        found = fn(form, consumed)
        for res in found:
            _say_set_aside(res, form)
        results.extend(found)
    for slot in form.slots:
        key = (slot.item.api_key, slot.component.pk if slot.component else None)
        if key in consumed or key not in form.values:
            continue
        res = reading_result(slot, form.values[key])
        if res is not None:
            results.append(res)
    return results


def _say_set_aside(res: Result, form: Form) -> None:
    """Add to a check's reason the readings it asked for and did not use (``Form.set_aside``): a unit's reading to
    every result of the check, a part's reading to that part's result."""
    pk = res.component.pk if res.component is not None else None
    notes = [why for (key, part), why in form.set_aside.items() if (key, part) in form.asked and part in (None, pk)]
    if notes:
        res.say(res.reason_parts, *(["; ", *why] for why in notes))
