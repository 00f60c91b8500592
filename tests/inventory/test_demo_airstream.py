"""Every demo unit lists its parts in an order a ventilation engineer would find along the air: the outdoor-air
intake and its damper first, a filter bank before any preheater, pre-filters before final filters, and the
heat-recovery device's supply side before any preheater or heating coil.

Sources: the registry's own help ("a lower number comes first (a pre-filter before the preheater, for
example)"); a filter bank upstream of preheaters so their fins and elements stay clean, and an outdoor-air damper at
the intake that shuts the unit off from the outdoors: common practice. Heat recovery first, then the heaters: the
recovered heat warms the air before any bought heat does, and the heaters make up only the rest to the set point
(common practice; a preheater placed ahead of a wheel or plate to keep it from frosting is a cold-climate design
choice the demo does not use).

The registry lists a unit's parts in one order, supply and exhaust together, and a filter bank names no
airstream (stage pre or final only): the exhaust side after the extract filter cannot be told from the data,
so it is not checked here.
"""

import pytest

from inventory.demo import demo_registry_load
from inventory.models import AHU

PREHEAT = "preheat"


def _is_preheater(comp) -> bool:
    return comp.kind == "electric_preheater" or (comp.kind == "coil" and comp.specs.get("duty") == PREHEAT)


def airstream_problems(ahu: AHU) -> list[str]:
    """What is out of a plausible airstream order among the unit's top-level parts (parts inside others are
    placed within their parent)."""
    parts = list(ahu.components.filter(parent__isnull=True, retired_on__isnull=True).order_by("position", "id"))
    names = [f"{c.position} {c.name}" for c in parts]
    problems: list[str] = []
    if len({c.position for c in parts}) != len(parts):
        problems.append(f"{ahu.tag}: two parts share a place: {names}")
    if parts and parts[0].kind not in {"intake_screen", "damper"}:
        problems.append(f"{ahu.tag}: the first part is {names[0]}, not the intake screen or outdoor-air damper")
    oa = [i for i, c in enumerate(parts) if c.kind == "damper" and c.specs.get("role") == "outdoor"]
    treats = [i for i, c in enumerate(parts) if c.kind not in {"intake_screen", "damper", "sensor"}]
    if oa and treats and oa[0] > treats[0]:
        problems.append(f"{ahu.tag}: {names[treats[0]]} comes before the outdoor-air damper {names[oa[0]]}")
    filters = [i for i, c in enumerate(parts) if c.kind == "filter_bank"]
    for i, c in enumerate(parts):
        if _is_preheater(c) and (not filters or i < filters[0]):
            problems.append(f"{ahu.tag}: preheater {names[i]} comes before the first filter bank")
    recovery = [i for i, c in enumerate(parts) if c.kind == "heat_recovery"]
    for i, c in enumerate(parts):
        if recovery and _is_heater(c) and i < recovery[0]:
            problems.append(f"{ahu.tag}: {names[i]} comes before the heat recovery {names[recovery[0]]}")
    pre = [i for i in filters if parts[i].specs.get("stage") == "pre"]
    final = [i for i in filters if parts[i].specs.get("stage") == "final"]
    if pre and final and min(final) < max(pre):
        problems.append(f"{ahu.tag}: a final filter comes before a pre-filter: {names}")
    return problems


def _is_heater(comp) -> bool:
    return _is_preheater(comp) or (comp.kind == "coil" and comp.specs.get("duty") == "heating")


@pytest.mark.django_db
def test_every_demo_units_parts_are_in_a_plausible_airstream_order():
    demo_registry_load()
    units = list(AHU.objects.order_by("building__site__code", "tag"))
    assert len(units) >= 10
    assert any(_is_preheater(c) for u in units for c in u.components.all())  # the preheater rule is exercised
    # the heat-recovery rule too, with a preheater on a unit with heat recovery
    assert any({"heat_recovery", "electric_preheater"} <= {c.kind for c in u.components.all()} for u in units)
    problems = [p for u in units for p in airstream_problems(u)]
    assert problems == []
