"""The builders of checklist items (``item`` and its shorthands) and the physical ranges of readings.

``inspections.checklists`` writes its templates with these; an item is a dict of the fields the library
rows hold (``inspections.services.library``).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from engineering.controls import band_in_order

# Ranges that no reading in an AHU can leave (SI). Air from −60 to 120 °C
# covers any climate and a heater outlet; fluids −40 to 200 °C cover brine to
# steam condensate. Beyond these, the number is a typo or a wrong unit.
AIR_T_PHYSICAL = (-60.0, 120.0)
AIR_T_PLAUSIBLE = (-40.0, 60.0)
FLUID_T_PHYSICAL = (-40.0, 200.0)
FLUID_T_PLAUSIBLE = (-10.0, 130.0)
CO2_PHYSICAL = (0.0, 50_000.0)
PCT = (0.0, 100.0)

OK_CHOICE = "ok"  # marker key in choice dicts

# An item's ok/watch band, in the order its limits must keep (engineering.controls.BAND_ORDER): below watch_min
# fails, below ok_min a watch, above ok_max a watch, above watch_max fails; any may be blank (open).
BAND_FIELDS = ("watch_min", "ok_min", "ok_max", "watch_max")
BAND_ALLOWED = "watch_min ≤ ok_min ≤ ok_max ≤ watch_max, each at most the next (any may be blank)"


def band_order_problem(limits: Mapping[str, float | None]) -> str:
    """What is wrong with a band whose limits are out of order, and what is allowed; "" when they are in order.

    The one rule (``band_in_order``) the evaluation holds readings to: a library template installed
    (``services.library.template_check``) or a template row cleaned is refused by it, and the limit rules
    (``inspections.limits.dynamic_limits``) are held to it over every part the registry accepts
    (tests/inspections/test_band_order.py). A band out of order that still reaches a reading (a row changed in the
    database, specs saved before the registry checked them) is judged never ok (``evaluation.readings``)."""
    w_lo, ok_lo, ok_hi, w_hi = (limits.get(k) for k in BAND_FIELDS)
    if band_in_order(watch_low=w_lo, ok_low=ok_lo, ok_high=ok_hi, watch_high=w_hi):
        return ""
    given = ", ".join(f"{k} {limits[k]:g}" for k in BAND_FIELDS if limits.get(k) is not None)
    return f"limits {given} are not in order; allowed: {BAND_ALLOWED}"


def choice(value: str, label: str, ok: bool = True) -> dict:
    return {"value": value, "label": label, "ok": ok}


def item(
    key: str,
    kind: str,
    label: str,
    *,
    quantity: str = "",
    per: str = "",
    where: dict | None = None,
    unit_where: dict | None = None,
    physical: tuple[float | None, float | None] = (None, None),
    plausible: tuple[float | None, float | None] = (None, None),
    ok: tuple[float | None, float | None] = (None, None),
    watch: tuple[float | None, float | None] = (None, None),
    limits_from: str = "",
    source: str = "",
    required: bool = False,
    photo: bool = False,
    server: bool = False,
    choices: list[dict] | None = None,
    help: str = "",
    decimals: int = 1,
) -> dict[str, Any]:
    return {
        "key": key,
        "kind": kind,
        "label": label,
        "help": help,
        "quantity": quantity,
        "decimals": decimals,
        "component_kind": per,
        "component_filter": where or {},
        "unit_filter": unit_where or {},
        "choices": choices or [],
        "physical_min": physical[0],
        "physical_max": physical[1],
        "plausible_min": plausible[0],
        "plausible_max": plausible[1],
        "ok_min": ok[0],
        "ok_max": ok[1],
        "watch_min": watch[0],
        "watch_max": watch[1],
        "limits_from": limits_from,
        "limits_source": source,
        "judged_on_server": server,
        "required": required,
        "photo_required_when_not_ok": photo,
    }


def air_temp(key: str, label: str, **kw) -> dict:
    return item(
        key,
        "number",
        label,
        quantity="temperature",
        physical=AIR_T_PHYSICAL,
        plausible=AIR_T_PLAUSIBLE,
        **kw,
    )


# Coil fluids whose heat flow and temperatures give the fluid-side heat (engineering.airside.water_side_heat_w).
LIQUIDS = ["water", "glycol"]


def fluid_temp(key: str, label: str, **kw) -> dict:
    return item(
        key,
        "number",
        label,
        quantity="temperature",
        physical=FLUID_T_PHYSICAL,
        plausible=FLUID_T_PLAUSIBLE,
        **kw,
    )


def check(key: str, label: str, **kw) -> dict:
    return item(key, "check", label, **kw)


def photo(key: str = "photo", label: str = "Photo", **kw) -> dict:
    return item(key, "photo", label, **kw)
