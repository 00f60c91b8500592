"""The invented demo registry: organisations, people, sites, buildings, units and their component trees.

The data lives in fixtures/demo/registry.json; this module only loads it,
through the same services and validation as every other way in. Loading is
idempotent: records are found by their natural keys (organisation slug,
username, site code, building code, unit tag, component name in its unit),
created when missing and changed only where they differ from the file.
"""

from __future__ import annotations

import copy
import datetime as dt
import json
from decimal import Decimal
from pathlib import Path
from typing import Any

from django.conf import settings
from django.db import transaction

from accounts.models import Membership, Organisation, User
from accounts.services import site_grant, user_create

from . import services
from .models import AHU, Building, Component, Site

DEMO_FILE = Path(settings.BASE_DIR) / "fixtures" / "demo" / "registry.json"
SITE_FIELDS = ("name", "address", "access_notes", "latitude", "longitude", "altitude_m", "time_zone", "normals_min_c",
               "normals_max_c", "preheat_threshold_c")  # fmt: skip


def demo_data(path: Path | None = None) -> dict[str, Any]:
    return json.loads((path or DEMO_FILE).read_text(encoding="utf-8"))


@transaction.atomic
def demo_registry_load(*, path: Path | None = None) -> dict[str, Any]:
    """Load (or bring up to date) the demo registry; return the records keyed by name.

    Keys: ``organisations`` (slug), ``people`` (username), ``sites`` (code),
    ``buildings`` ("site/building"), ``ahus`` ("site/building/tag"), ``logins``
    (list of (role, username, password)) and ``changed`` (how many records
    were created or changed; 0 on a second run).
    """
    data = demo_data(path)
    out: dict[str, Any] = {"organisations": {}, "people": {}, "sites": {}, "buildings": {}, "ahus": {}, "logins": []}
    changes = [0]
    for org in data["organisations"]:
        out["organisations"][org["slug"]] = _organisation(org, changes)
    maintainer = out["organisations"][data["maintainer"]]
    client = out["organisations"].get(data.get("client"))
    for site_data in data["sites"]:
        site = _site(site_data, maintainer, client, changes)
        out["sites"][site.code] = site
        for b_data in site_data["buildings"]:
            building = _building(b_data, site, changes)
            out["buildings"][f"{site.code}/{building.code}"] = building
            for ahu_data in b_data["ahus"]:
                ahu = _ahu(ahu_data, building, changes)
                out["ahus"][f"{site.code}/{building.code}/{ahu.tag}"] = ahu
                _components(ahu, ahu_data["components"], data["parts"], changes)
    for person in data["people"]:
        user = _person(person, maintainer, out["sites"], changes)
        out["people"][user.username] = user
        out["logins"].append((person["role"], person["username"], person["password"]))
    out["changed"] = changes[0]
    return out


def demo_logins_table(logins: list[tuple[str, str, str]]) -> str:
    rows = [("role", "username", "password"), *logins]
    widths = [max(len(r[i]) for r in rows) for i in range(3)]
    lines = ["  ".join(cell.ljust(w) for cell, w in zip(row, widths, strict=True)).rstrip() for row in rows]
    return "\n".join(lines) + "\n(demo passwords only — never use them on a real installation)"


def _differs(instance, fields: dict[str, Any]) -> dict[str, Any]:
    return {k: v for k, v in fields.items() if getattr(instance, k) != v}


def _organisation(org: dict, changes) -> Organisation:
    obj = Organisation.objects.filter(slug=org["slug"]).first()
    if obj is None:
        obj = Organisation(slug=org["slug"], name=org["name"], kind=org["kind"])
        obj.full_clean()
        obj.save()
        changes[0] += 1
    return obj


def _site(data: dict, org, client, changes) -> Site:
    fields = {k: data[k] for k in SITE_FIELDS if k in data}
    fields["client"] = client
    site = Site.objects.filter(organisation=org, code=data["code"]).first()
    if site is None:
        changes[0] += 1
        return services.site_create(organisation=org, code=data["code"], **fields)
    diff = _differs(site, fields)
    if diff:
        changes[0] += 1
        services.site_update(site=site, **diff)
    return site


def _building(data: dict, site, changes) -> Building:
    fields = {"name": data["name"], "floors": data.get("floors")}
    building = Building.objects.filter(site=site, code=data["code"]).first()
    if building is None:
        changes[0] += 1
        return services.building_create(site=site, code=data["code"], **fields)
    diff = _differs(building, fields)
    if diff:
        changes[0] += 1
        services.building_update(building=building, **diff)
    return building


def _ahu(data: dict, building, changes) -> AHU:
    fields = {k: v for k, v in data.items() if k not in {"tag", "components"}}
    if "service_start" in fields:
        fields["service_start"] = dt.date.fromisoformat(fields["service_start"])
    ahu = AHU.objects.filter(building=building, tag=data["tag"]).first()
    if ahu is None:
        changes[0] += 1
        return services.ahu_create(building=building, tag=data["tag"], **fields)
    diff = _differs(ahu, fields)
    if diff:
        changes[0] += 1
        services.ahu_update(ahu=ahu, **diff)
    return ahu


def _expand(item, parts: dict, ahu: AHU) -> dict:
    """A component entry: a part name, or {"part": name, "specs": overrides, "name": ...}."""
    entry = {"part": item} if isinstance(item, str) else dict(item)
    part = copy.deepcopy(parts[entry["part"]])
    specs = {**part["specs"], **entry.get("specs", {})}
    # "@airflow" stands for the unit's design supply airflow, so shared parts fit each unit.
    specs = {k: (ahu.design_supply_airflow_m3s if v == "@airflow" else v) for k, v in specs.items()}
    return {
        "kind": part["kind"],
        "name": entry.get("name", part["name"]),
        "specs": specs,
        "children": entry.get("children", part.get("children", [])),
    }


def _components(ahu: AHU, items: list, parts: dict, changes, parent: Component | None = None) -> None:
    existing = {(c.name, c.parent_id): c for c in ahu.components.all()}
    step = 10 if parent is None else 1
    for index, item in enumerate(items):
        entry = _expand(item, parts, ahu)
        fields = {"kind": entry["kind"], "specs": entry["specs"], "position": index * step}
        comp = existing.get((entry["name"], parent.pk if parent else None))
        if comp is None:
            changes[0] += 1
            comp = services.component_create(ahu=ahu, parent=parent, name=entry["name"], **fields)
        else:
            diff = _differs(comp, fields)
            if diff:
                changes[0] += 1
                services.component_update(component=comp, **diff)
        if entry["children"]:
            _components(ahu, entry["children"], parts, changes, parent=comp)


def _person(data: dict, org, sites: dict[str, Site], changes) -> User:
    user = User.objects.filter(username=data["username"]).first()
    if user is None:
        changes[0] += 1
        user = user_create(
            username=data["username"],
            password=data["password"],
            organisation=org,
            role=data["role"],
            first_name=data["first_name"],
            last_name=data["last_name"],
            email=f"{data['username']}@example.invalid",
            unit_system=data.get("unit_system", User.UnitSystem.SI),
        )
    else:
        if not user.check_password(data["password"]):
            changes[0] += 1
            user.set_password(data["password"])
            user.save(update_fields=["password"])
        membership, created = Membership.objects.get_or_create(
            user=user, organisation=org, defaults={"role": data["role"]}
        )
        if created or membership.role != data["role"]:
            changes[0] += 1
            membership.role = data["role"]
            membership.save(update_fields=["role"])
    extra = {
        "skills": data.get("skills", []),
        "daily_capacity_hours": Decimal(data.get("daily_capacity_hours", "7.5")),
    }
    diff = _differs(user, extra)
    if diff:
        for k, v in diff.items():
            setattr(user, k, v)
        user.save(update_fields=list(diff))
    for code in data.get("grants", []):
        if not user.site_grants.filter(site=sites[code]).exists():
            changes[0] += 1
            site_grant(user=user, site=sites[code])
    return user
