"""Writes to the registry. Every path in (admin, API, CSV) validates the same way."""

from typing import Any

from django.db import transaction

from .models import AHU, Building, Component, Site


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
    return _save_new(Component(**fields))


@transaction.atomic
def component_update(*, component: Component, **fields: Any) -> Component:
    return _update(component, fields)
