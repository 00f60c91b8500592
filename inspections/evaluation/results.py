"""What each judgement of a form gives: the check names, a failure's severity and condition, and ``Result``."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from engineering.controls import Verdict
from inspections import reasons as rs

# Every check name a Result can carry. The phone's twin (frontend/static/frontend/js/evaluate.js)
# must judge each of them the same way; tests/inspections/test_phone_agreement.py holds it to that.
CHECKS = (
    "check",  # a yes/no answer
    "choice",  # a choice answer
    "limits",  # a number against its band
    "filter_loading",
    "filter_after_change",
    "oa_fraction_temperature",
    "oa_fraction_co2",
    "full_oa_airflow",  # a 100 % outdoor-air unit's delivered outdoor air
    "coil_balance",
    "supply_temperature",
    "duct_static",
    "damper_position",
    "sensor_drift",
    "heat_recovery",
    "coil_valve_leak",  # a shut coil still changing the air: its valve passes water
)
# Checks of several readings that name one of them only as the place the phone shows them (the last of their
# inputs typed): never that reading's own verdict. A coil's heat balance needs both air temperatures, both fluid
# temperatures and the flow, and names the flow; the flow itself is not what failed. Pages and PDFs show such a
# check on a row of its own (``own_judgement``).
SPANNING_CHECKS = frozenset({"coil_balance"})


def own_judgement(check: str) -> bool:
    """Is a judgement of ``check`` the verdict of the reading it names (not a check of several readings)?"""
    return check not in SPANNING_CHECKS


# A frost thermostat set above its band: a watch that still protects the coil (nuisance trips). Its results carry
# this condition, not "freeze_protection_failed", so freeze readiness (inspections.freeze) counts the step passed.
FREEZE_TRIP_SET_HIGH = "freeze_trip_set_high"

# Severity of a failed check by what it puts at risk (common practice):
# frozen coils and unproven fans stop the building; the rest degrades it.
SEVERITY = {
    "freeze_protection_failed": "high",  # critical when inside or just before the freeze season
    "fan_not_proven": "high",
    "ventilation_low": "high",
    "supply_temp_off": "medium",
    "filter_loaded": "medium",
    "damper_position": "medium",
    "sensor_drift": "low",
    "coil_balance": "low",
    "heat_recovery_low": "medium",
    "valve_leak": "medium",  # heating and cooling fight each other; energy wasted, comfort off
}
# Checklist answers whose failure names a scheduling condition.
ITEM_CONDITIONS = {
    "fan_proving.proving_test": "fan_not_proven",
    "fan_proving.running_status": "fan_not_proven",
    "preheater_freeze.freeze_trip_test": "freeze_protection_failed",
    "preheater_freeze.freeze_trip_temp": "freeze_protection_failed",
    # A preheater that does not switch on in time, or misses a stage, lets the first coil freeze.
    "preheater_freeze.stage_on_temp": "freeze_protection_failed",
    "preheater_freeze.stages": "freeze_protection_failed",
    # A heater live without airflow, or without its automatic or manual-reset limit, is not safe to
    # leave on for the season (NFPA 70 424.63, 424.64): it fails the freeze-protection test too.
    "preheater_freeze.airflow_interlock": "freeze_protection_failed",
    "preheater_freeze.primary_limit": "freeze_protection_failed",
    "preheater_freeze.high_limit": "freeze_protection_failed",
    # A heater left on a lowered set point or in test mode, a preheat coil valve that fails shut, a coil pump that
    # does not run or a glycol too weak for its design: the first coil can freeze (common practice).
    "preheater_freeze.set_points_restored": "freeze_protection_failed",
    "preheater_freeze.coil_valve_fail_open": "freeze_protection_failed",
    "preheater_freeze.coil_pump_runs": "freeze_protection_failed",
    "preheater_freeze.glycol_freeze_point": "freeze_protection_failed",
    "damper_actuator.stroke_time": "damper_position",
    "damper_actuator.linkage": "damper_position",
    # A valve that will not shut is the same repair as one that shuts and passes water.
    "coil_valve_leak.valve_closed": "valve_leak",
}


@dataclass
class Result:
    check: str
    item: str
    component: Any = None  # inventory Component or None
    verdict: str = Verdict.OK
    reason: str = ""
    method: str = ""
    derived: dict[str, Any] = field(default_factory=dict)
    condition_code: str = ""
    # The reason as text and quantities (inspections.reasons), for readers in other units.
    parts: list = field(default_factory=list)

    def say(self, *pieces) -> None:
        """Set the reason from text and quantity parts; ``reason`` is their SI rendering."""
        self.parts = rs.flatten(*pieces)
        self.reason = rs.render(self.parts, "si")

    @property
    def reason_parts(self) -> list:
        # A reason set as plain text (no quantities) is its own single part.
        if self.parts and rs.render(self.parts, "si") == self.reason:
            return self.parts
        return [self.reason] if self.reason else []

    @property
    def severity(self) -> str:
        return SEVERITY.get(self.condition_code or self.check, "medium")
