"""The checklist library, as data: one template per task code of the maintenance library.

Values are SI storage units (Pa, °C, m³/s, ppm, rev/s, A, s, h, %). Limits:
``physical`` — outside it the value cannot be true (the form is refused);
``plausible`` — outside it the value is improbable (accepted, flagged);
``ok``/``watch`` — the bands of a simple verdict. Where a band depends on the
unit or the part (a filter's clean and final pressure drop, a motor's
full-load current, a damper's rated stroke time) ``limits_from`` names the
rule in ``inspections.limits.dynamic_limits`` that sets it. Each limit says where it comes from;
most are common practice (no published source), said so.

Bump a template's ``version`` whenever its items change; ``checklist_library_load``
then adds the new version and leaves the old one for the inspections filled
against it.
"""

from __future__ import annotations

from typing import Any

from .cautions import (
    ELECTRIC,
    HEATER_SAFETIES,
    HOT_COILS,
    LOADED_FILTERS,
    LOCAL_CODES,
    LOCKOUT,
    RUNNING_FAN,
    SHUT_COIL_COLD_AIR,
)
from .checklist_freeze import PREHEAT_COIL_ITEMS, STAGE_ON_HELP, STAGES_HELP, STAGES_SOURCE, glycol_freeze_point
from .checklist_items import (
    CO2_PHYSICAL,
    LIQUIDS,
    PCT,
    air_temp,
    check,
    choice,
    fluid_temp,
    item,
    photo,
)

CP = "common practice, no published source"

# Electric duct heaters (preheaters): NFPA 70 (NEC) Article 424 Part VI — 424.63 the fan circuit is
# energised whenever a heater circuit is (airflow interlock), 424.64 an integral automatic-reset
# temperature limit plus an independent supplementary limit that is manually reset or replaced.
# Checked against published summaries of Art. 424 Part VI; UL 1996 (duct heaters) from memory.
DUCT_HEATER_SOURCE = (
    "NFPA 70 (NEC) 424.63 fan interlock, 424.64 automatic-reset limit plus manual-reset supplementary "
    "limit; UL 1996 from memory"
)
# Frost thermostat: commonly set near 3.3 °C (38 °F), common practice. ASHRAE Guideline 36-2021
# 5.16.12 stages its freeze protection at supply air below 4.4 °C, 3.3 °C and, for the last stage
# (fans off, outdoor air closed), 3.3 °C for 15 min or 1 °C for 5 min (as summarised in PNNL's
# ConStrain rule library). A trip below 2 °C leaves too little margin over 1 °C and fails; 2.0–2.5 °C
# is watch; ok 2.5–5.5 °C covers the 38 °F habit and the 5 °C (41 °F) European one. Above 5.5 °C it
# still protects the coil but trips on mild mornings and stops the unit when it need not: watch
# (nuisance trips), never fail, however high (inspections.evaluation.freeze_checks judges the item).
FREEZE_TRIP_OK = (2.5, 5.5)
FREEZE_TRIP_WATCH = (2.0, None)
FREEZE_TRIP_SOURCE = (
    "ok 2.5–5.5 °C, watch 2–2.5 °C, fail below 2 °C, above 5.5 °C watch (nuisance trips): usual setting about "
    "3.3 °C (38 °F), common practice; ASHRAE Guideline 36-2021 5.16.12 last freeze stage below 1 °C"
)

# ``unit_where``: the unit fields an item needs (value or list of values), so an item whose
# input the unit cannot have is never asked. A 100 % outdoor-air unit has no return or mixed air.
RECIRCULATING = {"full_outdoor_air": False}

# The visit block is added to every checklist: the unit's run-hour meter and
# the airflow at the time, which filter and coil evaluations need.
VISIT = {
    "code": "visit",
    "version": 1,
    "title": "Unit at the time of the visit",
    "cautions": [],
    "items": [
        item(
            "run_hours",
            "number",
            "Run-hour meter",
            quantity="run_hours",
            physical=(0, 1_000_000),
            plausible=(0, 300_000),
            decimals=0,
            required=True,
            help="Read the unit's run-hour meter (or the BMS run-hour point).",
        ),
        item(
            "supply_airflow",
            "number",
            "Supply airflow now (if measured or shown by the BMS)",
            quantity="airflow",
            physical=(0, 100),
            plausible=(0.05, 50),
            decimals=2,
            help="Leave empty if unknown; the fan speed below is used instead.",
        ),
        item(
            "supply_fan_speed",
            "number",
            "Supply fan speed now",
            quantity="rotational_speed",
            physical=(0, 10_000 / 60),
            plausible=(50 / 60, 5_000 / 60),
            decimals=0,
        ),
        item("general_notes", "text", "Anything else seen on the unit"),
    ],
}

TEMPLATES: list[dict[str, Any]] = [
    {
        "code": "filter_check",
        "version": 1,
        "title": "Filter check",
        "cautions": [LOCKOUT, LOCAL_CODES],
        "items": [
            item(
                "dp",
                "number",
                "Pressure drop across the bank",
                quantity="pressure",
                per="filter_bank",
                physical=(0, 5_000),
                plausible=(5, 1_000),
                limits_from="filter_span",
                server=True,
                required=True,
                decimals=0,
                source=(
                    "bands at 75 % / 95 % of the clean-to-final span; below 80 % / 50 % of clean "
                    "(missing, torn or bypassed media), " + CP
                ),
                help="Read the gauge across this bank with the fan at its normal speed.",
            ),
            check(
                "seated",
                "Filters seated; frames and seals tight, no bypass gaps",
                per="filter_bank",
                required=True,
                photo=True,
            ),
            item(
                "media",
                "choice",
                "Media condition",
                per="filter_bank",
                required=True,
                photo=True,
                choices=[
                    choice("clean", "Clean"),
                    choice("loaded", "Loaded, intact"),
                    choice("damaged", "Torn, wet or collapsed", ok=False),
                ],
            ),
            photo("photo", "Photo of the bank", per="filter_bank"),
        ],
    },
    {
        "code": "filter_replace",
        "version": 2,
        "title": "Filter replacement",
        "cautions": [LOCKOUT, LOADED_FILTERS, LOCAL_CODES],
        "items": [
            check(
                "replaced",
                "Filters replaced with the class and size on the label",
                per="filter_bank",
                required=True,
            ),
            item(
                "dp_after",
                "number",
                "Pressure drop after the change",
                quantity="pressure",
                per="filter_bank",
                physical=(0, 5_000),
                plausible=(5, 1_000),
                limits_from="filter_clean",
                decimals=0,
                required=True,
                source="ok within 0.8–1.2 × the rated clean pressure drop, watch 0.5–1.5 × (" + CP + ")",
            ),
            check("old_bagged", "Used filters bagged and removed", per="filter_bank"),
            photo("photo", "Photo of the new filters", per="filter_bank"),
        ],
    },
    {
        "code": "belt_drive",
        "version": 1,
        "title": "Belts and drive",
        "cautions": [LOCKOUT, LOCAL_CODES],
        "items": [
            item(
                "belt_condition",
                "choice",
                "Belt condition",
                per="fan",
                where={"drive": "belt"},
                required=True,
                photo=True,
                choices=[
                    choice("good", "Good"),
                    choice("worn", "Worn or glazed", ok=False),
                    choice("cracked", "Cracked or frayed", ok=False),
                ],
            ),
            item(
                "belt_tension",
                "choice",
                "Belt tension (deflection test)",
                per="fan",
                where={"drive": "belt"},
                required=True,
                choices=[
                    choice("correct", "Within the maker's deflection"),
                    choice("loose", "Loose", ok=False),
                    choice("tight", "Too tight", ok=False),
                ],
            ),
            check(
                "alignment",
                "Pulleys aligned (straight edge)",
                per="fan",
                where={"drive": "belt"},
            ),
            check(
                "guard",
                "Belt guard refitted",
                per="fan",
                where={"drive": "belt"},
                required=True,
            ),
            photo("photo", "Photo of the drive", per="fan", where={"drive": "belt"}),
        ],
    },
    {
        "code": "fan_bearings",
        "version": 1,
        "title": "Fan and motor bearings",
        "cautions": [LOCKOUT, LOCAL_CODES],
        "items": [
            item(
                "vibration",
                "choice",
                "Vibration and bearing noise",
                per="fan",
                required=True,
                choices=[
                    choice("normal", "Normal"),
                    choice("rough", "Rough or noisy", ok=False),
                    choice("severe", "Severe", ok=False),
                ],
            ),
            check(
                "lubricated",
                "Bearings lubricated to the maker's schedule (n.a. if sealed)",
                per="fan",
            ),
            item(
                "fan_speed",
                "number",
                "Fan speed",
                quantity="rotational_speed",
                per="fan",
                physical=(0, 10_000 / 60),
                plausible=(50 / 60, 5_000 / 60),
                decimals=0,
            ),
            item(
                "motor_current",
                "number",
                "Motor current (highest phase)",
                quantity="current",
                per="fan",
                physical=(0, 5_000),
                plausible=(0.05, 2_000),
                limits_from="motor_fla",
                decimals=1,
                source="ok up to the nameplate full-load current, watch to 1.1 × (service factor; " + CP + ")",
            ),
        ],
    },
    {
        "code": "fan_proving",
        "version": 2,  # v2: the running-fan caution
        "title": "Fan proving",
        "cautions": [RUNNING_FAN, LOCAL_CODES],
        "items": [
            check(
                "proving_test",
                "Proving switch / flow status drops out when the fan stops and the alarm shows",
                per="fan",
                required=True,
            ),
            check(
                "running_status",
                "Fan status shows running when the fan runs",
                per="fan",
                required=True,
            ),
        ],
    },
    {
        "code": "coil_clean",
        # 2: the fluid readings are asked of glycol coils too (the heat balance takes the glycol's properties).
        # 3: a glycol heating coil's freezing point (a glycol preheat coil's is asked in its freeze-protection test).
        "version": 3,
        "title": "Coils",
        "cautions": [LOCKOUT, HOT_COILS, LOCAL_CODES],
        "items": [
            item(
                "fins",
                "choice",
                "Fin condition",
                per="coil",
                required=True,
                photo=True,
                choices=[
                    choice("clean", "Clean"),
                    choice("dirty", "Dirty: cleaned now"),
                    choice("blocked", "Blocked or damaged", ok=False),
                ],
            ),
            air_temp("air_in", "Entering air temperature", per="coil"),
            air_temp("air_out", "Leaving air temperature", per="coil"),
            fluid_temp(
                "water_in",
                "Entering water or glycol temperature",
                per="coil",
                where={"fluid": LIQUIDS},
            ),
            fluid_temp(
                "water_out",
                "Leaving water or glycol temperature",
                per="coil",
                where={"fluid": LIQUIDS},
            ),
            item(
                "water_flow",
                "number",
                "Water or glycol flow (meter or balancing valve)",
                quantity="water_flow",
                per="coil",
                where={"fluid": LIQUIDS},
                physical=(0, 1),
                plausible=(0.000_01, 0.5),
                decimals=2,
            ),
            glycol_freeze_point(duty="heating"),
            photo("photo", "Photo of the coil face", per="coil"),
        ],
    },
    {
        "code": "drain_pan",
        "version": 1,
        "title": "Condensate drain pan",
        "cautions": [LOCKOUT, LOCAL_CODES],
        "items": [
            item(
                "pan_condition",
                "choice",
                "Pan condition",
                per="drain_pan",
                required=True,
                photo=True,
                choices=[
                    choice("clean", "Clean and dry or draining"),
                    choice("slime", "Slime or debris: cleaned now"),
                    choice("standing", "Standing water", ok=False),
                    choice("corroded", "Corroded or leaking", ok=False),
                ],
            ),
            check(
                "drains_freely",
                "Water poured into the pan drains away freely",
                per="drain_pan",
                required=True,
            ),
            check("trap_primed", "Trap primed (n.a. if no trap)", per="drain_pan"),
            photo("photo", "Photo of the pan", per="drain_pan"),
        ],
    },
    {
        "code": "cooling_season_check",
        # 2: chilled-fluid readings asked of glycol cooling coils too.
        "version": 2,
        "title": "Cooling season check",
        "cautions": [LOCKOUT, LOCAL_CODES],
        "items": [
            air_temp(
                "air_in",
                "Air entering the cooling coil",
                per="coil",
                where={"duty": "cooling"},
            ),
            air_temp(
                "air_out",
                "Air leaving the cooling coil",
                per="coil",
                where={"duty": "cooling"},
            ),
            fluid_temp(
                "water_in",
                "Chilled water or glycol entering",
                per="coil",
                where={"duty": "cooling", "fluid": LIQUIDS},
            ),
            fluid_temp(
                "water_out",
                "Chilled water or glycol leaving",
                per="coil",
                where={"duty": "cooling", "fluid": LIQUIDS},
            ),
            item(
                "water_flow",
                "number",
                "Chilled water flow",
                quantity="water_flow",
                per="coil",
                where={"duty": "cooling", "fluid": LIQUIDS},
                physical=(0, 1),
                plausible=(0.000_01, 0.5),
                decimals=2,
            ),
            air_temp("supply_air", "Supply-air temperature", server=True, required=True),
            air_temp(
                "supply_setpoint",
                "Supply-air set point (as shown on the controller)",
                required=True,
            ),
            check(
                "valve_strokes",
                "Chilled-water valve strokes fully open and closed",
                required=True,
            ),
        ],
    },
    {
        "code": "damper_actuator",
        "version": 1,
        "title": "Dampers and actuators",
        "cautions": [LOCKOUT, LOCAL_CODES],
        "items": [
            item(
                "command",
                "number",
                "Commanded position",
                quantity="percent",
                per="damper",
                physical=PCT,
                plausible=PCT,
                decimals=0,
                required=True,
            ),
            item(
                "position",
                "number",
                "Measured position (blade or actuator scale)",
                quantity="percent",
                per="damper",
                physical=PCT,
                plausible=PCT,
                decimals=0,
                required=True,
                server=True,
            ),
            item(
                "stroke_time",
                "number",
                "Stroke time, closed to open",
                quantity="time",
                per="damper",
                physical=(0, 3_600),
                plausible=(1, 900),
                limits_from="damper_stroke",
                decimals=0,
                source="ok up to 1.2 × rated stroke time, watch to 1.5 × (" + CP + ")",
            ),
            check(
                "linkage",
                "Linkage tight, blades move freely, seals intact",
                per="damper",
                required=True,
                photo=True,
            ),
            check(
                "fail_safe",
                "Goes to its fail-safe position on loss of power (n.a. if none)",
                per="damper",
            ),
        ],
    },
    {
        "code": "preheater_freeze",
        # 2: airflow interlock and automatic-reset primary limit added (electric duct heaters); the frost
        # thermostat fails below 2 °C instead of only asking to watch it. 3: a frost thermostat set above its
        # band is a watch (nuisance trips), never a fail: no upper watch limit. 4: how to make the stages call on a
        # mild day (through the controller, never around the heater's safeties) and set points restored; a preheat
        # coil's valve fail-safe position, its pump and a glycol coil's freezing point.
        "version": 4,
        "title": "Preheater and freeze protection",
        "cautions": [LOCKOUT, ELECTRIC, HEATER_SAFETIES, HOT_COILS, LOCAL_CODES],
        "items": [
            air_temp(
                "stage_on_temp",
                "Entering-air temperature at which stage 1 switched on",
                per="electric_preheater",
                limits_from="preheat_threshold",
                required=True,
                source="ok within 1 K of the set threshold, watch within 2 K (" + CP + ")",
                help=STAGE_ON_HELP,
            ),
            check(
                "stages",
                "Every stage energises in sequence and its current is drawn",
                per="electric_preheater",
                required=True,
                source=STAGES_SOURCE,
                help=STAGES_HELP,
            ),
            check(
                "airflow_interlock",
                "Fan stopped or airflow switch open: every stage switches off, none can be energised without airflow",
                per="electric_preheater",
                required=True,
                source=DUCT_HEATER_SOURCE,
                help="Stop the fan (or open the airflow switch) with the heater called on: every stage must drop out.",
            ),
            check(
                "primary_limit",
                "Automatic-reset primary limit opens on overheat and closes again once cooled",
                per="electric_preheater",
                required=True,
                source=DUCT_HEATER_SOURCE,
            ),
            check(
                "high_limit",
                "High-limit cut-out trips and needs a manual reset",
                per="electric_preheater",
                required=True,
                source=DUCT_HEATER_SOURCE,
            ),
            check(
                "set_points_restored",
                "Set points, sensor inputs and the controller's test mode put back as found after the test",
                per="electric_preheater",
                required=True,
                source=CP,
                help="Write down each value before changing it; read the controller again after the test.",
            ),
            *PREHEAT_COIL_ITEMS,
            air_temp(
                "freeze_trip_temp",
                "Freeze-protection trip temperature (air leaving the first coil)",
                ok=FREEZE_TRIP_OK,
                watch=FREEZE_TRIP_WATCH,
                required=True,
                source=FREEZE_TRIP_SOURCE,
            ),
            check(
                "freeze_trip_test",
                "On trip: fan stops, outdoor damper closes, heating valve opens, alarm shows",
                required=True,
                photo=False,
            ),
        ],
    },
    {
        "code": "sensor_calibration",
        "version": 1,
        "title": "Sensor calibration",
        "cautions": [LOCAL_CODES],
        "items": [
            item(
                "co2_sensor",
                "number",
                "CO2 sensor reading (BMS)",
                quantity="co2",
                per="sensor",
                where={"measures": "co2"},
                physical=CO2_PHYSICAL,
                plausible=(300, 5_000),
                decimals=0,
                required=True,
            ),
            item(
                "co2_reference",
                "number",
                "Reference meter CO2 beside the sensor",
                quantity="co2",
                per="sensor",
                where={"measures": "co2"},
                physical=CO2_PHYSICAL,
                plausible=(300, 5_000),
                decimals=0,
                required=True,
                server=True,
            ),
            air_temp(
                "temp_sensor",
                "Temperature sensor reading (BMS)",
                per="sensor",
                where={"measures": "temperature"},
                required=True,
            ),
            air_temp(
                "temp_reference",
                "Reference thermometer beside the sensor",
                per="sensor",
                where={"measures": "temperature"},
                required=True,
                server=True,
            ),
            item(
                "rh_sensor",
                "number",
                "Humidity sensor reading (BMS)",
                quantity="relative_humidity",
                per="sensor",
                where={"measures": "humidity"},
                physical=PCT,
                plausible=(2, 98),
                required=True,
            ),
            item(
                "rh_reference",
                "number",
                "Reference hygrometer beside the sensor",
                quantity="relative_humidity",
                per="sensor",
                where={"measures": "humidity"},
                physical=PCT,
                plausible=(2, 98),
                required=True,
                server=True,
            ),
            item(
                "pressure_sensor",
                "number",
                "Pressure sensor reading (BMS)",
                quantity="pressure",
                per="sensor",
                where={"measures": "pressure"},
                physical=(-10_000, 10_000),
                plausible=(-2_500, 2_500),
                decimals=0,
                required=True,
            ),
            item(
                "pressure_reference",
                "number",
                "Reference manometer beside the sensor",
                quantity="pressure",
                per="sensor",
                where={"measures": "pressure"},
                physical=(-10_000, 10_000),
                plausible=(-2_500, 2_500),
                decimals=0,
                required=True,
                server=True,
            ),
        ],
    },
    {
        "code": "heat_recovery",
        "version": 1,
        "title": "Heat recovery",
        "cautions": [LOCKOUT, LOCAL_CODES],
        "items": [
            item(
                "condition",
                "choice",
                "Exchanger condition",
                per="heat_recovery",
                required=True,
                photo=True,
                choices=[
                    choice("clean", "Clean"),
                    choice("dirty", "Dirty: cleaned now"),
                    choice("damaged", "Damaged or leaking", ok=False),
                ],
            ),
            check("seals", "Seals and brushes intact", per="heat_recovery", required=True),
            check(
                "drive",
                "Wheel turns / bypass damper works (n.a. if none)",
                per="heat_recovery",
            ),
            air_temp("outdoor_in", "Outdoor air entering", per="heat_recovery"),
            air_temp(
                "supply_out",
                "Outdoor air leaving (after recovery)",
                per="heat_recovery",
            ),
            air_temp("extract_in", "Extract air entering", per="heat_recovery"),
        ],
    },
    {
        "code": "intake_screen",
        "version": 1,
        "title": "Outdoor-air intake screen",
        "cautions": [LOCAL_CODES],
        "items": [
            item(
                "screen",
                "choice",
                "Screen and louvre",
                per="intake_screen",
                required=True,
                photo=True,
                choices=[
                    choice("clear", "Clear"),
                    choice("partly", "Partly blocked: cleared now"),
                    choice("blocked", "Blocked or damaged", ok=False),
                ],
            ),
            check(
                "surroundings",
                "No exhaust, cooling-tower drift or rubbish near the intake",
                per="intake_screen",
            ),
            photo("photo", "Photo of the intake", per="intake_screen"),
        ],
    },
    {
        "code": "humidifier",
        "version": 1,
        "title": "Humidifier",
        "cautions": [LOCKOUT, HOT_COILS, LOCAL_CODES],
        "items": [
            item(
                "condition",
                "choice",
                "Cylinder / nozzles / media",
                per="humidifier",
                required=True,
                photo=True,
                choices=[
                    choice("clean", "Clean"),
                    choice("scaled", "Scaled: cleaned now"),
                    choice("fouled", "Fouled, leaking or biofilm", ok=False),
                ],
            ),
            check("drain", "Drain and flush work", per="humidifier", required=True),
            item(
                "rh_downstream",
                "number",
                "Relative humidity downstream",
                quantity="relative_humidity",
                per="humidifier",
                physical=PCT,
                plausible=(5, 95),
                ok=(None, 80),
                watch=(None, 90),
                source="keep duct air below about 80 % RH to avoid wetting (" + CP + ")",
            ),
        ],
    },
    {
        "code": "controls_check",
        "version": 1,
        "title": "Controls",
        "cautions": [LOCAL_CODES],
        "items": [
            air_temp(
                "supply_air",
                "Supply-air temperature",
                required=True,
                server=True,
            ),
            air_temp(
                "supply_setpoint",
                "Supply-air set point (as shown on the controller)",
                required=True,
            ),
            item(
                "duct_static",
                "number",
                "Duct static pressure",
                quantity="pressure",
                physical=(-5_000, 5_000),
                plausible=(0, 2_500),
                decimals=0,
                server=True,
            ),
            item(
                "duct_static_setpoint",
                "number",
                "Duct static set point",
                quantity="pressure",
                physical=(0, 5_000),
                plausible=(10, 2_500),
                decimals=0,
            ),
            check(
                "alarms",
                "No standing alarms on the controller",
                required=True,
            ),
            check("schedule", "Time schedule matches the building's hours", required=True),
        ],
    },
    {
        "code": "ventilation_check",
        "version": 3,  # v2: no return or mixed air on a 100 % outdoor-air unit; v3: nor supply CO2
        "title": "Outdoor air and ventilation",
        "cautions": [LOCAL_CODES],
        "items": [
            air_temp("outdoor_air", "Outdoor air temperature", required=True),
            air_temp(
                "return_air",
                "Return air temperature",
                required=True,
                unit_where=RECIRCULATING,
            ),
            air_temp(
                "mixed_air",
                "Mixed air temperature",
                required=True,
                server=True,
                unit_where=RECIRCULATING,
            ),
            item(
                "outdoor_co2",
                "number",
                "Outdoor CO2",
                quantity="co2",
                physical=CO2_PHYSICAL,
                plausible=(350, 700),
                decimals=0,
            ),
            item(
                "return_co2",
                "number",
                "Return CO2",
                quantity="co2",
                unit_where=RECIRCULATING,
                physical=CO2_PHYSICAL,
                plausible=(350, 5_000),
                decimals=0,
            ),
            item(
                "supply_co2",
                "number",
                "Supply (or mixed) CO2",
                quantity="co2",
                unit_where=RECIRCULATING,
                physical=CO2_PHYSICAL,
                plausible=(350, 5_000),
                decimals=0,
                server=True,
            ),
            item(
                "oa_damper_position",
                "number",
                "Outdoor-air damper position",
                quantity="percent",
                physical=PCT,
                plausible=PCT,
                decimals=0,
            ),
        ],
    },
    {
        # Raised by a leaking-valve fault in the trends (FC#8, FC#14, FC#15) or a supervisor: the valve
        # commanded shut with the fan running, the coil must leave the air as it found it, within the
        # sensors' errors and the fan's heat (engineering.controls.valve_leak_check; the same figure as the
        # trend rules). Ten minutes for the coil to settle: common practice. 2: the freeze caution (a valve held
        # shut with cold outdoor air on its coil).
        "code": "coil_valve_leak",
        "version": 2,
        "title": "Coil valve leak-by test",
        "cautions": [SHUT_COIL_COLD_AIR, HOT_COILS, RUNNING_FAN, LOCAL_CODES],
        "items": [
            check(
                "valve_closed",
                "Valve commanded closed at the controller, its actuator at the closed end of its stroke",
                per="coil",
                required=True,
                help="If it will not close, say why in the note: the actuator or linkage is the fault, not the seat.",
            ),
            check(
                "settled",
                "Fan running and the valve shut for at least 10 minutes before reading",
                per="coil",
                required=True,
                help="Outdoor air below about 5 °C: only with the outdoor-air damper closed or the unit on "
                "recirculation, watching the frost thermostat (see the cautions).",
            ),
            air_temp("leak_air_in", "Air temperature entering the coil (valve shut)", per="coil", required=True),
            air_temp(
                "leak_air_out",
                "Air temperature leaving the coil (valve shut)",
                per="coil",
                required=True,
                server=True,
            ),
        ],
    },
]

TASK_CODES = [t["code"] for t in TEMPLATES]


def all_templates() -> list[dict[str, Any]]:
    return [VISIT, *TEMPLATES]
