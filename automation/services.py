"""Writes to the point map: create, change and remove a unit's automation points.

Check, then do: ``point_check`` takes the values as they arrived (API body, Brick import, admin) and returns
clean values or raises ``ValidationError`` with every problem, each naming the field, the value and what is
allowed; the actions below write clean values only, in one transaction, with an audit event.
"""

from __future__ import annotations

from typing import Any

from django.core.exceptions import ValidationError
from django.db import transaction

from accounts.inputs import FieldErrors, check_integer, check_text, shown
from accounts.models import User
from inventory.models import AHU, Component

from .models import BACNET_DEVICE_MAX, BACNET_INSTANCE_MAX, BacnetObjectType, Point
from .vocabulary import POINT_CLASSES, PointUnit, allowed_point_classes

POINT_FIELDS = (
    "name",
    "brick_class",
    "unit",
    "component",
    "bacnet_device_instance",
    "bacnet_object_type",
    "bacnet_object_instance",
)
_BACNET = ("bacnet_device_instance", "bacnet_object_type", "bacnet_object_instance")


def _unit_text(unit: str) -> str:
    return f"{unit} ({PointUnit(unit).label})"


def point_check(*, ahu: AHU, values: dict[str, Any], point: Point | None = None) -> dict[str, Any]:
    """The point's values made clean, or ``ValidationError`` naming every problem.

    ``values`` holds the fields to set (all of ``POINT_FIELDS`` for a new point, those that change for an
    update); an empty unit takes the Brick class's own SI unit. ``component`` is a ``Component`` (or its id)."""
    errors = FieldErrors()
    unknown = sorted(set(values) - set(POINT_FIELDS))
    for key in unknown:
        errors.add(key, f"{key} is not a point field; allowed: {', '.join(POINT_FIELDS)}")
    current = {name: getattr(point, name) for name in POINT_FIELDS} if point is not None else {}
    merged = {**dict.fromkeys(POINT_FIELDS), **current, **{k: v for k, v in values.items() if k in POINT_FIELDS}}
    clean: dict[str, Any] = {}

    clean["name"] = check_text(
        merged["name"], key="name", label="Point name", max_length=200, errors=errors, required=True
    )

    brick_class = merged["brick_class"]
    point_class = POINT_CLASSES.get(brick_class) if isinstance(brick_class, str) else None
    if point_class is None:
        errors.add(
            "brick_class",
            f"Brick class {shown(brick_class)} is not one Plenum maps; allowed: {allowed_point_classes()}",
        )
    clean["brick_class"] = brick_class

    unit = merged["unit"]
    if unit in (None, "") and point_class is not None:
        unit = point_class.unit
    if unit in (None, "") and point_class is None:
        pass  # the class's refusal says it: the unit follows from the class
    elif unit not in PointUnit.values:
        errors.add("unit", f"Unit {shown(unit)} is not an SI unit Plenum keeps; allowed: {', '.join(PointUnit.values)}")
    elif point_class is not None and unit != point_class.unit:
        errors.add(
            "unit",
            f"Unit {shown(unit)} is not the unit of a {point_class.name}; allowed: {_unit_text(point_class.unit)}",
        )
    clean["unit"] = unit

    component = merged["component"]
    if component is not None and not isinstance(component, Component):
        found = None
        if isinstance(component, int) and not isinstance(component, bool):
            found = Component.objects.filter(pk=component, ahu=ahu).first()
        if found is None:
            errors.add("component", f"Component {shown(component)} is not a part of {ahu.tag}")
        component = found
    if component is not None and component.ahu_id != ahu.pk:
        errors.add("component", f"Component {component.name!r} is a part of another unit, not of {ahu.tag}")
    elif point_class is not None:
        kinds = point_class.component_kinds
        if component is None and point_class.component_required:
            errors.add(
                "component",
                f"A {point_class.name} belongs to a part of the unit; "
                f"allowed: a component of kind {' or '.join(kinds)}",
            )
        elif component is not None and component.kind not in kinds:
            allowed = f"a component of kind {' or '.join(kinds)}" if kinds else "none (the unit's own point)"
            errors.add(
                "component",
                f"Component {component.name!r} is a {component.kind}; a {point_class.name} may name {allowed}",
            )
    clean["component"] = component

    device = check_integer(
        merged["bacnet_device_instance"],
        key="bacnet_device_instance",
        label="BACnet device instance",
        maximum=BACNET_DEVICE_MAX,
        errors=errors,
    )
    instance = check_integer(
        merged["bacnet_object_instance"],
        key="bacnet_object_instance",
        label="BACnet object instance",
        maximum=BACNET_INSTANCE_MAX,
        errors=errors,
    )
    object_type = merged["bacnet_object_type"] or ""
    if object_type not in ("", *BacnetObjectType.values):
        errors.add(
            "bacnet_object_type",
            f"BACnet object type {shown(object_type)} is not allowed; allowed: {', '.join(BacnetObjectType.values)}",
        )
    given = [merged[k] not in (None, "") for k in _BACNET]
    if any(given) and not all(given):
        for key, present in zip(_BACNET, given, strict=True):
            if not present:
                errors.add(
                    key,
                    "A BACnet address needs all three parts (device instance, object type, object instance) or none",
                )
    clean.update(bacnet_device_instance=device, bacnet_object_type=object_type, bacnet_object_instance=instance)

    if clean["name"] and "name" not in errors:
        same = Point.objects.filter(ahu=ahu, name=clean["name"])
        if point is not None:
            same = same.exclude(pk=point.pk)
        if same.exists():
            errors.add("name", f"Point name {clean['name']!r} is already used on {ahu.tag}; allowed: a name of its own")
    if all(given) and not any(k in errors for k in _BACNET):
        same = Point.objects.filter(
            ahu__building__site=ahu.building.site,
            bacnet_device_instance=device,
            bacnet_object_type=object_type,
            bacnet_object_instance=instance,
        )
        if point is not None:
            same = same.exclude(pk=point.pk)
        other = same.select_related("ahu").first()
        if other is not None:
            errors.add(
                "bacnet_object_instance",
                f"BACnet address {device}/{object_type}/{instance} is already the point {other.name!r} "
                f"of {other.ahu.tag}; allowed: an address no other point of the site has",
            )
    if errors:
        raise ValidationError(dict(errors))
    if point is None:
        return clean
    return {k: clean[k] for k in POINT_FIELDS if k in values}


def _said(fields: dict[str, Any]) -> dict[str, Any]:
    return {k: (v.pk if isinstance(v, Component) else v) for k, v in fields.items()}


def _audit(by: User | None, point: Point, action: str, changes: dict[str, Any]) -> None:
    if by is None:
        return
    from accounts.services import audit_record

    audit_record(actor=by, obj=point, action=action, changes=changes, organisation=point.ahu.building.site.organisation)


@transaction.atomic
def point_create(*, ahu: AHU, by: User | None = None, **values: Any) -> Point:
    """Map a new automation point to ``ahu`` (and one of its components)."""
    clean = point_check(ahu=ahu, values=values)
    point = Point(ahu=ahu, **clean)
    point.full_clean()
    point.save()
    _audit(by, point, "point_create", _said(clean))
    return point


@transaction.atomic
def point_update(*, point: Point, by: User | None = None, **values: Any) -> Point:
    """Change a point's name, class, unit, component or BACnet address."""
    clean = point_check(ahu=point.ahu, values=values, point=point)
    for name, value in clean.items():
        setattr(point, name, value)
    point.full_clean()
    point.save(update_fields=list(clean) or None)
    _audit(by, point, "point_update", _said(clean))
    return point


@transaction.atomic
def point_delete(*, point: Point, by: User | None = None) -> None:
    """Remove a point and its stored trend."""
    _audit(by, point, "point_delete", {"name": point.name, "brick_class": point.brick_class})
    point.delete()
