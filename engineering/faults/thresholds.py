"""Default thresholds, sensor error allowances and delays of the AHU fault rules.

ASHRAE Guideline 36-2018, section 5.16.14 ("AHU fault detection and
diagnostics"; the section number and every value below are from memory — no
printed copy was at hand). The guideline states them in I-P units; the SI
values here are exact conversions of the I-P values (2 °F = 1.11 K, 0.1 in.
w.c. = 24.9 Pa), not the guideline's own rounded SI figures.

Each value was cross-checked against the public open-source implementation
open-fdd (github.com/bbartling/open-fdd, its AHU example configuration
``DUCT_STATIC_INCHES_ERR_THRES`` … ``ROLLING_WINDOW_SIZE``); where the two
differ, the field's comment says which was taken and why.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, fields

from engineering import validate as v

F_TO_K = 5.0 / 9.0  # a temperature difference of 1 °F in K
IN_WC_TO_PA = 249.0889  # 1 in. w.c. at 4 °C in Pa


@dataclass(frozen=True)
class FaultThresholds:
    """Allowances and delays; every field is SI (K, Pa, fractions 0–1, s).

    Defaults, with the guideline value from memory and the public cross-check:
    """

    # εSAT, supply air temperature sensor error: 2 °F (from memory); open-fdd SUPPLY_DEGF_ERR_THRES = 2.0.
    eps_sat_k: float = 2.0 * F_TO_K
    # εRAT, return air temperature sensor error: 2 °F (from memory); open-fdd RETURN_DEGF_ERR_THRES = 2.0.
    eps_rat_k: float = 2.0 * F_TO_K
    # εMAT, mixed air temperature sensor error: 5 °F (from memory); open-fdd MIX_DEGF_ERR_THRES = 5.0.
    eps_mat_k: float = 5.0 * F_TO_K
    # εOAT, outdoor air temperature sensor error. From memory the guideline gives 2 °F; open-fdd uses
    # OUTDOOR_DEGF_ERR_THRES = 5.0. The public 5 °F is taken: it is the one that can be checked, and an
    # outdoor sensor in sun or near an exhaust reads worse than a duct sensor.
    eps_oat_k: float = 5.0 * F_TO_K
    # εCCET/εCCLT/εHCET/εHCLT, coil entering/leaving air temperature sensor errors: 2 °F (from memory;
    # open-fdd has no default, its FC14 tests use 1 °F).
    eps_coil_k: float = 2.0 * F_TO_K
    # ΔTSF, temperature rise across the supply fan: 2 °F (from memory); open-fdd DELTA_T_SUPPLY_FAN = 2.0.
    dt_supply_fan_k: float = 2.0 * F_TO_K
    # ΔTmin, least |RAT − OAT| for the outdoor-air fraction to mean anything: 10 °F (from memory);
    # open-fdd OAT_RAT_DELTA_MIN = 10.
    dt_min_k: float = 10.0 * F_TO_K
    # εF, allowed error of the outdoor-air fraction against its minimum: 30 % (from memory);
    # open-fdd AIRFLOW_ERR_THRES = 0.3.
    eps_oa_fraction: float = 0.30
    # εVFDSPD, fan speed command error: 5 % (from memory); open-fdd VFD_SPEED_PERCENT_ERR_THRES = 0.05.
    eps_fan_speed: float = 0.05
    # εDSP, duct static pressure error: 0.1 in. w.c. (from memory); open-fdd DUCT_STATIC_INCHES_ERR_THRES = 0.1.
    eps_duct_static_pa: float = 0.1 * IN_WC_TO_PA
    # "Full" command of a fan, heating or cooling valve: 99 % (from memory); open-fdd
    # VFD_SPEED_PERCENT_MAX = 0.99; the FC#7/#13 rules in github.com/gtfierro/metadata-cost-estimation
    # (rules/5.16.14.8-vav-ahu-fault.json) use 0.99.
    full_command: float = 0.99
    # ΔOSmax, most operating-state changes in the moving hour: 7 (from memory); open-fdd DELTA_OS_MAX = 7.
    max_state_changes: int = 7
    # Moving window of the state-change count: 60 min (from memory; open-fdd resamples to 60 min).
    state_window_s: float = 3600.0
    # Moving average of the measured values before the rules compare them: 5 min (from memory); open-fdd
    # averages 1-minute data over 5 min (apply_rolling_average_if_needed, rolling_window="5min").
    average_window_s: float = 300.0
    # ModeDelay, rule evaluation suspended after an operating-state change: 15 min (from memory; open-fdd
    # has none).
    mode_delay_s: float = 900.0
    # AlarmDelay, a condition must hold this long before it is a fault: 30 min (from memory; open-fdd
    # counts ROLLING_WINDOW_SIZE = 5 consecutive samples instead).
    alarm_delay_s: float = 1800.0
    # A command at or below this reads as "off"/"closed", within it of a limit as "at the limit". Not from
    # the guideline (it compares with 0 and 100 %); 1 % absorbs a controller's output that never reaches
    # exactly zero (common practice).
    command_tolerance: float = 0.01

    @property
    def coil_change_k(self) -> float:
        """The most an inactive coil may change the air's temperature before its valve is said to leak (FC#14
        cooling drop, FC#15 heating rise): the two coil sensors' errors added in quadrature plus the supply
        fan's heat, ``√(εCCET² + εCCLT²) + ΔTSF`` (2 °F each, from memory: 2.83 °F = 1.57 K + 1.11 K = 2.68 K
        with the defaults). The trend rules and the technician's leak-by test judge with this one figure."""
        return float(math.hypot(self.eps_coil_k, self.eps_coil_k) + self.dt_supply_fan_k)

    def __post_init__(self) -> None:
        for f in fields(self):
            low, high, unit = _BOUNDS[f.name]
            v.in_range(f.name, getattr(self, f.name), low, high, unit=unit)


_BOUNDS: dict[str, tuple[float, float, str]] = {
    "eps_sat_k": (0.0, 10.0, "K"),
    "eps_rat_k": (0.0, 10.0, "K"),
    "eps_mat_k": (0.0, 10.0, "K"),
    "eps_oat_k": (0.0, 10.0, "K"),
    "eps_coil_k": (0.0, 10.0, "K"),
    "dt_supply_fan_k": (0.0, 10.0, "K"),
    "dt_min_k": (0.5, 30.0, "K"),
    "eps_oa_fraction": (0.0, 1.0, ""),
    "eps_fan_speed": (0.0, 0.5, ""),
    "eps_duct_static_pa": (0.0, 500.0, "Pa"),
    "full_command": (0.5, 1.0, ""),
    "max_state_changes": (1, 60, ""),
    "state_window_s": (600.0, 86_400.0, "s"),
    "average_window_s": (0.0, 3600.0, "s"),
    "mode_delay_s": (0.0, 7200.0, "s"),
    "alarm_delay_s": (0.0, 86_400.0, "s"),
    "command_tolerance": (0.0, 0.2, ""),
}

G36_DEFAULTS = FaultThresholds()
