"""Plausibility of a registry's specifications across parts: a filter size, a filter bank's airflow against its
unit's, a fan motor's rating against the fan's air power.

A size that cannot be read is refused; the cross-part rules are warnings (odd plants exist), except a motor
rated below the fan's air power, which no fan can run on at its design point (its efficiency would exceed 1).
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass

from engineering import validate as v
from engineering.fans import fan_air_power_w
from engineering.formatting import quantity_text

__all__ = [
    "FILTER_AIRFLOW_SHARE",
    "FILTER_DEPTH_MM",
    "FILTER_FACE_MM",
    "MOTOR_OVERALL_EFFICIENCY",
    "MOTOR_SIZING_FACTOR",
    "SIZE_ALLOWED",
    "FilterSize",
    "SpecWarning",
    "filter_airflow_warning",
    "filter_size_parse",
    "motor_power_below_air_power",
    "motor_power_warning",
    "spec_warnings",
]

# A filter's face (width and height) and depth in whole mm. Common cell sizes (EN ISO 16890 / EN 779 ranges,
# from memory): 592×592, 287×592, 490×592 faces; panels 25–100 mm deep, bags and compacts 290–750 mm deep.
# The face band is a filter cell's to a whole bank's; the depth band starts at a 10 mm pad (common practice).
FILTER_FACE_MM = (100, 3000)
FILTER_DEPTH_MM = (10, 1000)
SIZE_ALLOWED = (
    f"width × height × depth in whole mm, e.g. 592x592x292 ('x', 'X' or '×', spaces allowed); width and height "
    f"{FILTER_FACE_MM[0]}–{FILTER_FACE_MM[1]} mm, depth {FILTER_DEPTH_MM[0]}–{FILTER_DEPTH_MM[1]} mm"
)
_SIZE = re.compile(r"^\s*(\d+)\s*[xX×]\s*(\d+)\s*[xX×]\s*(\d+)\s*(?:mm)?\s*$")

# A bank in the main airstream carries the unit's air: its design airflow is about 50–110 % of the unit's design
# supply airflow (common practice; less where a bank filters only the outdoor air of a mixing unit).
FILTER_AIRFLOW_SHARE = (0.5, 1.1)

# Overall efficiency fan × motor × drive at the design point: about 0.4–0.8 (ASHRAE Handbook—HVAC Systems and
# Equipment, "Fans" chapter, for the air power Q·p; the efficiency range from memory). A motor rated over 4× or
# under 0.8× the power so found is implausible (common practice: motors are chosen with some margin).
MOTOR_OVERALL_EFFICIENCY = (0.4, 0.8)
MOTOR_SIZING_FACTOR = (0.8, 4.0)


@dataclass(frozen=True)
class FilterSize:
    width_mm: int
    height_mm: int
    depth_mm: int

    def text(self) -> str:
        """The size as stored: '592x592x292'."""
        return f"{self.width_mm}x{self.height_mm}x{self.depth_mm}"


@dataclass(frozen=True)
class SpecWarning:
    """A value that is allowed but unlikely: the spec field it is about and the words that say why."""

    field: str
    message: str


def filter_size_parse(text: str) -> FilterSize:
    """A nominal filter size typed as W×H×D in mm; raises ValueError saying what is wrong (the caller names the
    field, the value and ``SIZE_ALLOWED``)."""
    found = _SIZE.match(text)
    if found is None:
        raise ValueError("is not three whole numbers of mm as width × height × depth")
    width, height, depth = (int(part) for part in found.groups())
    for name, value, (low, high) in (
        ("width", width, FILTER_FACE_MM),
        ("height", height, FILTER_FACE_MM),
        ("depth", depth, FILTER_DEPTH_MM),
    ):
        if not low <= value <= high:
            raise ValueError(f"has a {name} of {value} mm, outside {low}–{high} mm")
    return FilterSize(width, height, depth)


def filter_airflow_warning(*, bank_airflow_m3s: float, unit_airflow_m3s: float, system: str) -> SpecWarning | None:
    """A warning when a filter bank's design airflow is outside ``FILTER_AIRFLOW_SHARE`` of its unit's design
    supply airflow; None when it is within."""
    bank = v.positive("bank_airflow_m3s", bank_airflow_m3s, unit="m³/s", label="filter bank airflow")
    unit = v.positive("unit_airflow_m3s", unit_airflow_m3s, unit="m³/s", label="unit design airflow")
    low, high = FILTER_AIRFLOW_SHARE
    if low * unit <= bank <= high * unit:
        return None

    def flow(x: float) -> str:
        return quantity_text(x, quantity="airflow", system=system)

    return SpecWarning(
        field="design_airflow_m3s",
        message=(
            f"Design airflow: {flow(bank)} is {bank / unit:.0%} of the unit's design supply airflow of {flow(unit)}; "
            f"a bank in the main airstream usually carries {low:.0%}–{high:.0%} of it ({flow(low * unit)}–"
            f"{flow(high * unit)}, common practice). Check the value and its unit (L/s or m³/s)."
        ),
    )


def _air_power(flow_m3s: float, pressure_pa: float) -> float:
    return fan_air_power_w(flow_m3s=flow_m3s, pressure_pa=pressure_pa)


def motor_power_below_air_power(*, motor_power_w: float, flow_m3s: float, pressure_pa: float) -> str | None:
    """A refusal's words when a motor is rated below the fan's air power Q·p (the fan, drive and motor would
    together have to be over 100 % efficient); None otherwise. SI words: the spec table speaks SI."""
    motor = v.positive("motor_power_w", motor_power_w, unit="W", label="motor power")
    air = _air_power(flow_m3s, pressure_pa)
    if motor >= air:
        return None
    return (
        f"Motor rated power: {motor / 1000:g} kW is below the fan's air power of {air / 1000:.2f} kW "
        f"({flow_m3s:g} m³/s × {pressure_pa:g} Pa, fan air power Q·p); no fan runs its design point on it; "
        f"allowed: a motor rated at least {air / 1000:.2f} kW"
    )


def motor_power_warning(
    *, motor_power_w: float, flow_m3s: float, pressure_pa: float, system: str
) -> SpecWarning | None:
    """A warning when a fan motor's rating is far from the power its design point needs: the air power Q·p over
    an overall efficiency of ``MOTOR_OVERALL_EFFICIENCY``, times ``MOTOR_SIZING_FACTOR``; None when within."""
    motor = v.positive("motor_power_w", motor_power_w, unit="W", label="motor power")
    air = _air_power(flow_m3s, pressure_pa)
    needed_low, needed_high = air / MOTOR_OVERALL_EFFICIENCY[1], air / MOTOR_OVERALL_EFFICIENCY[0]
    low, high = MOTOR_SIZING_FACTOR[0] * needed_low, MOTOR_SIZING_FACTOR[1] * needed_high
    if low <= motor <= high:
        return None

    def power(x: float) -> str:
        return quantity_text(x, quantity="motor_power", system=system)

    flow = quantity_text(flow_m3s, quantity="airflow", system=system)
    pressure = quantity_text(pressure_pa, quantity="pressure", system=system)
    return SpecWarning(
        field="motor_power_w",
        message=(
            f"Motor rated power: {power(motor)} is far from what the design point needs: {flow} at {pressure} is "
            f"{power(air)} of air power (Q·p), {power(needed_low)}–{power(needed_high)} at an overall fan, motor and "
            f"drive efficiency of {MOTOR_OVERALL_EFFICIENCY[0]:g}–{MOTOR_OVERALL_EFFICIENCY[1]:g}; a motor of "
            f"{power(low)}–{power(high)} is usual. Check the value and its unit."
        ),
    )


def _number(specs: Mapping[str, object], name: str) -> float | None:
    value = specs.get(name)
    return float(value) if isinstance(value, int | float) and not isinstance(value, bool) and value > 0 else None


def spec_warnings(
    *, kind: str, specs: Mapping[str, object], unit_airflow_m3s: float | None, system: str
) -> list[SpecWarning]:
    """Every warning a part's checked specs (SI) raise against each other and its unit's design supply airflow
    (None when the unit has none): the filter bank's airflow, the fan motor's rating."""
    found: list[SpecWarning | None] = []
    if kind == "filter_bank":
        bank = _number(specs, "design_airflow_m3s")
        if bank is not None and unit_airflow_m3s:
            found.append(
                filter_airflow_warning(bank_airflow_m3s=bank, unit_airflow_m3s=unit_airflow_m3s, system=system)
            )
    if kind == "fan":
        motor, flow = _number(specs, "motor_power_w"), _number(specs, "design_flow_m3s")
        pressure = _number(specs, "design_pressure_pa")
        if motor is not None and flow is not None and pressure is not None:
            found.append(motor_power_warning(motor_power_w=motor, flow_m3s=flow, pressure_pa=pressure, system=system))
    return [w for w in found if w is not None]
