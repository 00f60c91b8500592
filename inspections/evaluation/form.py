"""What the evaluation reads of one submitted form: its values (``Value``, ``Form``) and the supply airflow."""

from __future__ import annotations

import datetime as dt
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from typing import Any

from engineering import units as eng_units
from engineering.fans import expected_flow_at_speed
from engineering.filters import FilterPoint


def _alone(reading: FilterPoint | None) -> list[FilterPoint]:
    """A form's own filter reading with no earlier points (a form with no history given), dated by its day."""
    if reading is None:
        return []
    when = reading.when.date() if isinstance(reading.when, dt.datetime) else reading.when
    return [replace(reading, when=when)]


@dataclass
class Value:
    number: float | None = None
    text: str = ""

    @property
    def na(self) -> bool:
        return self.text == "na"


@dataclass
class Form:
    """What the evaluation needs of one submitted form."""

    ahu: Any
    components: list[Any]
    values: dict[tuple[str, int | None], Value]
    slots: list[Any]  # inspections.selectors.checklist.Slot
    finished_at: dt.datetime
    # Earlier (run_hours, dp_pa, airflow_m3s, when) points of a filter bank since its last change, on one meter;
    # ``filter_points(bank, reading)``: with this form's own reading joined to them (FilterLife.forecast_points).
    filter_points: Callable[..., list[FilterPoint]] = field(default=lambda component, reading=None: _alone(reading))

    def num(self, key: str, component=None) -> float | None:
        v = self.values.get((key, component.pk if component is not None else None))
        return v.number if v is not None and not v.na else None

    def text(self, key: str, component=None) -> str:
        v = self.values.get((key, component.pk if component is not None else None))
        return v.text if v is not None else ""


def _fan(form: Form):
    fans = [c for c in form.components if c.kind == "fan" and c.specs.get("role") == "supply"]
    return fans[0] if fans else None


def supply_airflow(form: Form) -> tuple[float, str]:
    """Airflow at the time of the visit, m³/s, and how it was found."""
    measured = form.num("visit.supply_airflow")
    if measured:
        return measured, "measured"
    speed = form.num("visit.supply_fan_speed")
    fan = _fan(form)
    if speed and fan is not None and fan.specs.get("design_speed_rpm") and fan.specs.get("design_flow_m3s"):
        rpm = eng_units.to_display(value=speed, quantity="rotational_speed", system="si")
        q = expected_flow_at_speed(
            design_flow_m3s=fan.specs["design_flow_m3s"], design_speed=fan.specs["design_speed_rpm"], measured_speed=rpm
        )
        return q, f"from fan speed {rpm:.0f} rpm by the first fan law"
    return form.ahu.design_supply_airflow_m3s, "design airflow assumed (not measured)"
