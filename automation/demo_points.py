"""The demo units' building-automation points, mapped through ``automation.services.point_create`` with invented
BACnet addresses.
"""

from __future__ import annotations

from inventory.models import AHU, Component

from .models import BacnetObjectType, Point
from .services import point_create


def _first(components: list[Component], kind: str, **specs: str) -> Component | None:
    for c in components:
        if c.kind == kind and all(str((c.specs or {}).get(k, "")) == v for k, v in specs.items()):
            return c
    return None


DEMO_DEVICE_BASE = 20_000


def _object_type(brick_class: str) -> str:
    """The BACnet object a demo point reads: a status a binary input, a command an analog output, a set point an
    analog value, a sensor an analog input (common practice for controllers' object lists)."""
    if brick_class.endswith("_Status"):
        return BacnetObjectType.BINARY_INPUT
    if brick_class.endswith("_Command"):
        return BacnetObjectType.ANALOG_OUTPUT
    if brick_class.endswith("_Setpoint"):
        return BacnetObjectType.ANALOG_VALUE
    return BacnetObjectType.ANALOG_INPUT


def unit_points(ahu: AHU) -> tuple[dict[str, Point], int]:
    """The unit's demo points by job (created once through the point service)."""
    parts = list(ahu.components.filter(retired_on__isnull=True).order_by("position", "pk"))
    sensors = [c for c in parts if c.kind == "sensor"]
    oat_sensor = next((c for c in sensors if "outdoor" in c.name.lower()), None)
    sat_sensor = next((c for c in sensors if c.name.lower().startswith("supply-air temp")), None)
    fan = _first(parts, "fan", role="supply")
    damper = _first(parts, "damper", role="outdoor")
    heating = _first(parts, "coil", duty="heating")
    cooling = _first(parts, "coil", duty="cooling")
    want: list[tuple[str, str, Component | None]] = [
        ("oat", "Outside_Air_Temperature_Sensor", oat_sensor),
        ("sat", "Supply_Air_Temperature_Sensor", sat_sensor),
        ("sat_sp", "Supply_Air_Temperature_Setpoint", None),
    ]
    if not ahu.full_outdoor_air:
        want += [("rat", "Return_Air_Temperature_Sensor", None), ("mat", "Mixed_Air_Temperature_Sensor", None)]
    if fan is not None:
        want += [("fan_status", "Fan_Status", fan), ("fan_speed", "Fan_Speed_Command", fan)]
    if damper is not None:
        want.append(("oa_damper", "Damper_Position_Command", damper))
    if heating is not None:
        want.append(("heating_valve", "Valve_Position_Command", heating))
    if cooling is not None:
        want.append(("cooling_valve", "Valve_Position_Command", cooling))
    for bank in parts:
        if bank.kind == "filter_bank":
            want.append((f"filter:{bank.pk}", "Filter_Differential_Pressure_Sensor", bank))
    # A unit with freeze protection: the air after its preheater, its frost thermostat and a preheat coil's valve
    # (an electric preheater's stages have no command class in the point vocabulary), after the others so a rerun
    # keeps the numbers of the points mapped before.
    preheater = next((c for c in parts if c.kind == "electric_preheater"), None) or _first(
        parts, "coil", duty="preheat"
    )
    if preheater is not None:
        if preheater.kind == "coil":
            want.append(("preheat_valve", "Valve_Position_Command", preheater))
        want.append(("preheat_leaving", "Preheat_Supply_Air_Temperature_Sensor", preheater))
        want.append(("frost_stat", "Freeze_Status", preheater))
    names = {
        "oat": "OAT",
        "sat": "SAT",
        "sat_sp": "SAT-SP",
        "rat": "RAT",
        "mat": "MAT",
        "fan_status": "SF-STS",
        "fan_speed": "SF-SPD",
        "oa_damper": "OAD-CMD",
        "heating_valve": "HC-VLV",
        "cooling_valve": "CC-VLV",
        "preheat_valve": "PH-VLV",
        "preheat_leaving": "PH-LAT",
        "frost_stat": "FRZ-STAT",
    }
    existing = {p.name: p for p in Point.objects.filter(ahu=ahu).select_related("component")}
    out, created = {}, 0
    for number, (job, brick_class, component) in enumerate(want, start=1):
        suffix = f"FLT-DP.{component.position}" if job.startswith("filter:") else names[job]
        name = f"{ahu.tag}.{suffix}"
        point = existing.get(name)
        if point is None:
            # Invented addresses: one controller per unit (device DEMO_DEVICE_BASE + the unit's key), its objects
            # numbered in the order above; sensors are inputs, commands outputs, the set point a value.
            point = point_create(
                ahu=ahu,
                name=name,
                brick_class=brick_class,
                unit="",
                component=component,
                bacnet_device_instance=DEMO_DEVICE_BASE + ahu.pk,
                bacnet_object_type=_object_type(brick_class),
                bacnet_object_instance=number,
            )
            created += 1
        out[job] = point
    return out, created
