"""AHU fault detection from automation trends, by published rules.

- ``evaluate_ahu`` / ``evaluate_ahus``: ASHRAE Guideline 36's AHU fault
  conditions FC#1–FC#15 with its operating states, sensor allowances, moving
  averages, mode-change suppression and alarm delay; per fault the evidence
  windows, the share of applicable operating time and, where the inputs
  allow, a ventilation or energy consequence.
- ``freeze_events``: supply air below the freeze-protection stages.
- ``resample`` / ``evaluate_ahu_logs``: irregular or change-of-value logs onto one
  regular grid (zero-order hold with a staleness limit), then judged.

Pure numpy, vectorised over units × samples; no Django, DRF or Celery.
"""

from engineering.faults.consequences import Consequence
from engineering.faults.engine import (
    AhuFaults,
    FaultResult,
    FaultWindow,
    evaluate_ahu,
    evaluate_ahu_logs,
    evaluate_ahus,
)
from engineering.faults.freeze import (
    G36_FREEZE_STAGES,
    FreezeEvent,
    FreezeStage,
    freeze_events,
    freeze_events_batch,
)
from engineering.faults.rules import RULES, RULES_BY_CODE, FaultRule
from engineering.faults.series import ROLES, Resampled, resample
from engineering.faults.states import STATE_NAMES, OperatingState, operating_states
from engineering.faults.thresholds import G36_DEFAULTS, FaultThresholds

__all__ = [
    "G36_DEFAULTS",
    "G36_FREEZE_STAGES",
    "ROLES",
    "RULES",
    "RULES_BY_CODE",
    "STATE_NAMES",
    "AhuFaults",
    "Consequence",
    "FaultResult",
    "FaultRule",
    "FaultThresholds",
    "FaultWindow",
    "FreezeEvent",
    "FreezeStage",
    "OperatingState",
    "Resampled",
    "evaluate_ahu",
    "evaluate_ahu_logs",
    "evaluate_ahus",
    "freeze_events",
    "freeze_events_batch",
    "operating_states",
    "resample",
]
