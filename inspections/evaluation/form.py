"""What the evaluation reads of one submitted form: its values (``Value``, ``Form``) and the supply airflow."""

from __future__ import annotations

import datetime as dt
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from typing import Any

from engineering import formatting as fmt
from engineering import units as eng_units
from engineering.fans import expected_flow_at_speed
from engineering.filters import FilterPoint
from inspections.reasons import q as qty
from inspections.reasons import span

# A reading's key in a form: (item api key, part id or None).
Key = tuple[str, int | None]


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
    # Numbers outside their plausible range (kept and flagged at the sync), set aside: {key: why, in reason parts}.
    # ``num`` answers None for them, so every check does what it does without them; ``asked`` records the ones a
    # check asked for, whose words ``evaluate`` adds to that check's reasons.
    set_aside: dict[Key, list] = field(init=False)
    asked: set[Key] = field(init=False, default_factory=set)

    def __post_init__(self) -> None:
        self.set_aside = implausible_values(self.slots, self.values)

    def num(self, key: str, component=None) -> float | None:
        k = (key, component.pk if component is not None else None)
        if k in self.set_aside:
            self.asked.add(k)
            return None
        v = self.values.get(k)
        return v.number if v is not None and not v.na else None

    def own(self, key: str, component=None) -> float | None:
        """A number as typed, set aside or not: for a check that judges that reading on its own (the frost
        thermostat's trip setting, ``freeze_checks``), as ``reading_result`` judges any reading against its band."""
        v = self.values.get((key, component.pk if component is not None else None))
        return v.number if v is not None and not v.na else None

    def text(self, key: str, component=None) -> str:
        v = self.values.get((key, component.pk if component is not None else None))
        return v.text if v is not None else ""


def _shown_decimals(item) -> int | None:
    """Decimals a set-aside value shows in SI: the item's own (else its quantity's), and a tenth where those are
    whole units, so a typed 12.5 rpm reads 12.5, not 12 or 13."""
    d = item.decimals if item.decimals is not None else fmt.decimals_of(quantity=item.quantity or "", system="si")
    return 1 if d == 0 else d


def implausible_values(slots: list[Any], values: dict[Key, Value]) -> dict[Key, list]:
    """The form's numbers outside their item's plausible range (the range ``services.reading_check`` flags by), in
    slot order, each with its words: "supply fan speed now 12.5 rpm not used: outside the plausible 50–5000 rpm"."""
    out: dict[Key, list] = {}
    for slot in slots:
        it = slot.item
        key = (it.api_key, slot.component.pk if slot.component is not None else None)
        v = values.get(key)
        lim = slot.limits or {}
        lo, hi = lim.get("plausible_min"), lim.get("plausible_max")
        if v is None or v.na or v.number is None or it.kind != "number":
            continue
        x, quantity = v.number, it.quantity or ""
        if not ((lo is not None and x < lo) or (hi is not None and x > hi)):
            continue
        out[key] = [
            f"{it.label.lower()} ",
            qty(x, quantity, _shown_decimals(it)),
            " not used: ",
            *_outside(lo, hi, quantity),
        ]
    return out


def _outside(lo: float | None, hi: float | None, quantity: str) -> list:
    """Where a number lies against its plausible range, as reason parts: "outside the plausible 50–5000 rpm"."""
    if lo is not None and hi is not None:
        return ["outside the plausible ", span(lo, hi, quantity)]
    return (
        ["below the plausible ", qty(lo, quantity)] if lo is not None else ["above the plausible ", qty(hi, quantity)]
    )


def set_aside_parts(item: Any, value: float | None, limits: dict) -> list:
    """Why a reading set aside as implausible was not judged, as reason parts: "75.0 °C is outside the plausible
    0.0–60.0 °C; re-check the reading" (a limit may well apply to it; it was not judged because no check used it,
    ``Form.set_aside``); [] for a value within its plausible range. The phone's twin: evaluate.js setAsideParts."""
    lo, hi = limits.get("plausible_min"), limits.get("plausible_max")
    if (
        value is None
        or item.kind != "number"
        or not ((lo is not None and value < lo) or (hi is not None and value > hi))
    ):
        return []
    quantity = item.quantity or ""
    return [qty(value, quantity, _shown_decimals(item)), " is ", *_outside(lo, hi, quantity), "; re-check the reading"]


def _fan(form: Form):
    fans = [c for c in form.components if c.kind == "fan" and c.specs.get("role") == "supply"]
    return fans[0] if fans else None


def fixed_speed_words(specs: dict) -> str:
    """Said beside a speed reading's use when the fan has no variable-speed drive (its twin in evaluate.js)."""
    if specs.get("vsd") is False:
        return " (the fan has no variable-speed drive: its speed moves only with belt slip or a pulley change)"
    return ""


def supply_airflow(form: Form) -> tuple[float, str]:
    """Airflow at the time of the visit, m³/s, and how it was found: measured, else from the fan speed by the first fan
    law (airflow ∝ speed; ASHRAE Handbook—HVAC Systems and Equipment, the fans chapter; from memory), else the
    design. A reading set aside as implausible (``Form.set_aside``) is passed over as if not given."""
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
        as_typed = fmt.format_number(rpm, decimals=fmt.typed_decimals(rpm, decimals=0))  # 12.5 rpm, never "12 rpm"
        return q, f"from fan speed {as_typed} rpm by the first fan law{fixed_speed_words(fan.specs)}"
    return form.ahu.design_supply_airflow_m3s, "design airflow assumed (not measured)"
