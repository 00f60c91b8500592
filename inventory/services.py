"""Writes to the registry. Every path in (admin, API, CSV) validates the same way."""

import datetime as dt
import io
from typing import TYPE_CHECKING, Any, TypeVar

import segno
from django.conf import settings
from django.core.exceptions import ValidationError
from django.db import models, transaction
from django.db.models import ProtectedError
from django.urls import reverse

from accounts.changes import organisation_changed, organisations_changed
from engineering.registry_checks import SpecWarning, spec_warnings

from .models import AHU, Building, Component, Site
from .specs import SpecErrors, validate_specs

if TYPE_CHECKING:
    from accounts.models import User

M = TypeVar("M", bound=models.Model)
Record = Site | Building | AHU | Component


def _save_new(instance: M) -> M:
    instance.full_clean()
    instance.save()
    return instance


def _update(instance: M, fields: dict[str, Any]) -> M:
    for name, value in fields.items():
        setattr(instance, name, value)
    instance.full_clean()
    instance.save(update_fields=list(fields) if fields else None)
    return instance


def component_full_clean(component: Component, **options: Any) -> None:
    """``full_clean`` with spec problems keyed per spec field (``specs.final_dp_pa``).

    The model's own ``clean`` files every spec problem under ``specs`` so the admin
    form can show them beside the specs box; API and CSV callers want to know which
    spec field was wrong, so the spec errors are re-keyed here. ``options`` go to
    ``full_clean`` (the CSV import checks keys and relations itself, in memory).
    """
    try:
        component.full_clean(**options)
    except ValidationError as exc:
        errors = dict(exc.message_dict)
        if "specs" in errors:
            try:
                validate_specs(kind=component.kind, specs=component.specs)
            except SpecErrors as spec_exc:
                errors.pop("specs")
                for key, message in spec_exc.errors.items():
                    target = key if key in {"kind", "specs"} else f"specs.{key}"
                    errors.setdefault(target, []).append(message)
        raise ValidationError(errors) from None


def _audit(by: "User | None", obj: Record, action: str, changes: dict[str, Any] | None = None) -> None:
    """One audit event for a registry change made by a person (a page or the API); none for a command."""
    if by is None:
        return
    from accounts.services import audit_record

    audit_record(actor=by, obj=obj, action=action, changes=changes or {}, organisation=_site(obj).organisation)


def _site(obj: Record) -> Site:
    """The site a registry record belongs to."""
    if isinstance(obj, Site):
        return obj
    if isinstance(obj, Building):
        return obj.site
    if isinstance(obj, AHU):
        return obj.building.site
    return obj.ahu.building.site


def _organisation_id(obj: Record) -> int:
    """The organisation a registry record belongs to (its site's)."""
    return _site(obj).organisation_id


def _changed(*objs: Record) -> None:
    """Today and the board name sites, buildings, units and parts: their organisations' answers are stale."""
    organisations_changed(organisation_ids=[_organisation_id(o) for o in objs])


def _said(fields: dict[str, Any]) -> dict[str, Any]:
    """The changed fields as the audit trail keeps them (a related record by its key)."""

    def said(value: object) -> object:
        if isinstance(value, models.Model):
            return value.pk
        if isinstance(value, dt.date):
            return value.isoformat()
        return value

    return {k: said(v) for k, v in fields.items()}


@transaction.atomic
def site_create(*, by: "User | None" = None, **fields: Any) -> Site:
    site = _save_new(Site(**fields))
    _audit(by, site, "site_create", _said(fields))
    _changed(site)
    return site


@transaction.atomic
def site_update(*, site: Site, by: "User | None" = None, **fields: Any) -> Site:
    before = Site(organisation_id=site.organisation_id)
    _update(site, fields)
    _audit(by, site, "site_update", _said(fields))
    _changed(before, site)
    return site


@transaction.atomic
def building_create(*, by: "User | None" = None, **fields: Any) -> Building:
    building = _save_new(Building(**fields))
    _audit(by, building, "building_create", _said(fields))
    _changed(building)
    return building


@transaction.atomic
def building_update(*, building: Building, by: "User | None" = None, **fields: Any) -> Building:
    _update(building, fields)
    _audit(by, building, "building_update", _said(fields))
    _changed(building)
    return building


@transaction.atomic
def ahu_create(*, by: "User | None" = None, **fields: Any) -> AHU:
    ahu = _save_new(AHU(**fields))
    _audit(by, ahu, "ahu_create", _said(fields))
    _changed(ahu)
    return ahu


@transaction.atomic
def ahu_update(*, ahu: AHU, by: "User | None" = None, **fields: Any) -> AHU:
    _update(ahu, fields)
    _audit(by, ahu, "ahu_update", _said(fields))
    _changed(ahu)
    return ahu


@transaction.atomic
def ahu_move(*, ahu: AHU, building: Building, by: "User | None" = None) -> AHU:
    """Move a unit to another building of the same organisation; its records and components go with it."""
    if building.site.organisation_id != ahu.building.site.organisation_id:
        raise ValidationError({"building": ["a unit moves only to a building of its own organisation"]})
    if AHU.objects.filter(building=building, tag=ahu.tag).exclude(pk=ahu.pk).exists():
        raise ValidationError(
            {"building": [f"{building.name} already has a unit tagged {ahu.tag}; change one of the tags first"]}
        )
    before = ahu.building_id
    _update(ahu, {"building": building})
    _audit(by, ahu, "ahu_move", {"building": [before, building.pk]})
    _changed(ahu)
    return ahu


@transaction.atomic
def ahu_retire(*, ahu: AHU, by: "User | None" = None, reason: str = "") -> AHU:
    """Retire a unit: it keeps its components and every record, stays in the registry marked retired and
    gets no new preventive work (the engine plans in-service units only)."""
    if ahu.status == AHU.Status.RETIRED:
        raise ValidationError({"status": [f"{ahu.tag} is already retired"]})
    before = ahu.status
    _update(ahu, {"status": AHU.Status.RETIRED})
    _audit(by, ahu, "ahu_retire", {"status": [before, ahu.status], "reason": reason})
    _changed(ahu)
    return ahu


@transaction.atomic
def component_create(*, by: "User | None" = None, **fields: Any) -> Component:
    component = Component(**fields)
    parent = component.parent if component.parent_id is not None else None
    if parent is not None and parent.retired_on is not None:
        raise ValidationError({"parent": [f"{parent.name} is retired; a part cannot be added to it"]})
    component_full_clean(component)
    component.save()
    _audit(by, component, "component_create", _said(fields))
    _changed(component)
    return component


@transaction.atomic
def component_update(*, component: Component, by: "User | None" = None, **fields: Any) -> Component:
    for name, value in fields.items():
        setattr(component, name, value)
    component_full_clean(component)
    component.save(update_fields=list(fields) if fields else None)
    _audit(by, component, "component_update", _said(fields))
    _changed(component)
    return component


def component_warnings(*, component: Component, system: str = "si") -> list[SpecWarning]:
    """What is allowed but unlikely in a saved part's specs (each with its spec field), in words in ``system``'s
    units: a filter bank's
    airflow far from its unit's, a fan motor far from its design point's power (engineering.registry_checks).
    Saving goes ahead (odd plants exist); the page and the CSV import's report say these."""
    return spec_warnings(
        kind=component.kind,
        specs=component.specs or {},
        unit_airflow_m3s=component.ahu.design_supply_airflow_m3s,
        system=system,
    )


def unit_warnings(*, ahu: AHU, system: str = "si") -> list[tuple[Component, SpecWarning]]:
    """What is allowed but unlikely in the specs of a unit's parts in service, each with its part: after the unit's
    own design supply airflow changes its filter banks are judged against it anew (component_warnings)."""
    parts = ahu.components.filter(retired_on__isnull=True).order_by("position", "pk")
    return [(part, warning) for part in parts for warning in component_warnings(component=part, system=system)]


@transaction.atomic
def component_retire(
    *, component: Component, on: dt.date, by: "User | None" = None, reason: str = ""
) -> list[Component]:
    """Retire a part and the parts it contains from ``on``: the rows stay with their readings, findings and
    work as history; they get no new work and checklists leave them out. Returns the parts retired."""
    if component.retired_on is not None:
        raise ValidationError({"component": [f"{component.name} was already retired on {component.retired_on}"]})
    by_parent: dict[int | None, list[Component]] = {}
    for part in component.ahu.components.filter(retired_on__isnull=True):
        by_parent.setdefault(part.parent_id, []).append(part)
    retired, todo = [], [component]
    while todo:
        part = todo.pop()
        retired.append(part)
        todo.extend(by_parent.get(part.pk, []))
    Component.objects.filter(pk__in=[p.pk for p in retired]).update(retired_on=on)
    for part in retired:
        part.retired_on = on
        _audit(by, part, "component_retire", {"retired_on": on.isoformat(), "reason": reason})
    _changed(component)
    return retired


@transaction.atomic
def component_delete(*, component: Component) -> None:
    """Remove a component and the parts it contains (the tree below it).

    A component that inspection records or work point to stays: those records are evidence.
    """
    organisation_id = _organisation_id(component)
    try:
        with transaction.atomic():
            component.delete()
    except ProtectedError as exc:
        kinds = sorted({str(obj._meta.verbose_name_plural) for obj in exc.protected_objects})
        raise ValidationError(
            {
                "component": [
                    f"{component.name} ({component.label_code}) is named by {', '.join(kinds)}; "
                    "records that point to it are kept, so it cannot be removed"
                ]
            }
        )
    organisation_changed(organisation_id=organisation_id)


def label_absolute_url(*, code: str) -> str:
    """The address printed on a label: the public base URL plus ``/l/<code>/``."""
    base = settings.PLENUM_PUBLIC_URL.rstrip("/")
    return base + reverse("inventory:label", kwargs={"code": code})


def label_qr_svg(*, code: str, scale: int = 4) -> str:
    """An SVG QR code of the label's absolute URL (error correction M, survives a scuffed label)."""
    qr = segno.make(label_absolute_url(code=code), error="m")
    buffer = io.BytesIO()
    qr.save(buffer, kind="svg", scale=scale, xmldecl=False, title=f"Label {code}", border=4)
    return buffer.getvalue().decode("utf-8")


def label_qr_png(*, code: str, scale: int = 10) -> bytes:
    """The same QR code as ``label_qr_svg`` as a PNG image (10 px a module: about 4 cm at 300 dpi)."""
    qr = segno.make(label_absolute_url(code=code), error="m")
    buffer = io.BytesIO()
    qr.save(buffer, kind="png", scale=scale, border=4)
    return buffer.getvalue()
