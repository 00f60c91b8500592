"""Writes to the registry. Every path in (admin, API, CSV) validates the same way."""

import io
from typing import Any

import segno
from django.conf import settings
from django.core.exceptions import ValidationError
from django.db import transaction
from django.db.models import ProtectedError
from django.urls import reverse

from .models import AHU, Building, Component, Site
from .specs import SpecErrors, validate_specs


def _save_new(instance):
    instance.full_clean()
    instance.save()
    return instance


def _update(instance, fields: dict[str, Any]):
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


@transaction.atomic
def site_create(**fields: Any) -> Site:
    return _save_new(Site(**fields))


@transaction.atomic
def site_update(*, site: Site, **fields: Any) -> Site:
    return _update(site, fields)


@transaction.atomic
def building_create(**fields: Any) -> Building:
    return _save_new(Building(**fields))


@transaction.atomic
def building_update(*, building: Building, **fields: Any) -> Building:
    return _update(building, fields)


@transaction.atomic
def ahu_create(**fields: Any) -> AHU:
    return _save_new(AHU(**fields))


@transaction.atomic
def ahu_update(*, ahu: AHU, **fields: Any) -> AHU:
    return _update(ahu, fields)


@transaction.atomic
def component_create(**fields: Any) -> Component:
    component = Component(**fields)
    component_full_clean(component)
    component.save()
    return component


@transaction.atomic
def component_update(*, component: Component, **fields: Any) -> Component:
    for name, value in fields.items():
        setattr(component, name, value)
    component_full_clean(component)
    component.save(update_fields=list(fields) if fields else None)
    return component


@transaction.atomic
def component_delete(*, component: Component) -> None:
    """Remove a component and the parts it contains (the tree below it).

    A component that inspection records or work point to stays: those records are evidence.
    """
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
