"""One row of each kind of file (sites, units with their buildings, components) checked against the plan
and staged for the write."""

from __future__ import annotations

from typing import Any

from accounts.inputs import (
    shown,
)

from ..models import AHU, Building, Component, ComponentKind, Site
from ..services import component_warnings
from ..today import today_for
from .file_format import AHU_COLUMNS, COMPONENT_COLUMNS, SITE_COLUMNS, parse_int
from .plan import ImportPlan, RowProblems
from .words import KEY_ALLOWED, parse_row, read_cell, required_problems


def check_site_row(row: dict[str, str], plan: ImportPlan) -> bool:
    """Check and stage one row of a sites file; True when it adds a site. Raises RowProblems."""
    problems = required_problems(row, ["code", "name"])
    values = parse_row(row, SITE_COLUMNS, Site, problems, today=plan.today)
    client_slug = row.get("client", "").strip()
    values["client"] = None
    if client_slug:
        values["client"] = plan.clients.get(client_slug)
        if values["client"] is None:
            problems.append(("client", f"Client: no organisation has the slug {shown(client_slug)}; allowed: "
                                       "the slug of a client organisation, or empty"))  # fmt: skip
    code = row.get("code", "").strip()
    site = plan.sites.get(code) if code else None
    created = site is None
    site = site or Site(organisation=plan.organisation)
    plan.check(site, values, problems)
    if problems:
        raise RowProblems(problems)
    plan.remember(site, values)
    plan.sites[site.code] = site
    return created


def check_ahu_row(row: dict[str, str], plan: ImportPlan) -> bool:
    """Check and stage one row of a units file (its building made or renamed too); True when it adds a unit.
    Raises RowProblems."""
    problems = required_problems(row, ["site_code", "building_code", "tag"])
    site_code = row.get("site_code", "").strip()
    site = plan.site(site_code, problems) if site_code else None
    floors = None
    if "building_floors" in row:
        floors, problem = read_cell(
            Building, "building_floors", "floors", parse_int, row["building_floors"], today=plan.today
        )
        if problem:
            problems.append(("building_floors", problem))
    values = parse_row(row, AHU_COLUMNS, AHU, problems, today=today_for(site) if site else plan.today)
    code, tag = row.get("building_code", "").strip(), row.get("tag", "").strip()
    name = row.get("building_name", "").strip()
    if site is None or not code or not tag:
        # Nothing to file it under: the row's own values are still checked, so every problem is said at once.
        ahu = AHU(tag=tag)
        plan.check(ahu, values, problems)
        raise RowProblems(problems)
    building = plan.buildings.get((site.pk, code))
    if building is None:
        building = Building(site=site, code=code, name=name or code, floors=floors)
        _building_stage(plan, building, {}, problems)
        plan.buildings[(site.pk, code)] = building
    elif name and (building.name != name or building.floors != floors):
        _building_stage(plan, building, {"name": name, "floors": floors}, problems)
    ahu = plan.ahus.get((site.pk, code, tag))
    created = ahu is None
    ahu = ahu or AHU(building=building, tag=tag)
    try:
        values.update(plan.label(row, ahu))
    except RowProblems as exc:
        problems.extend(exc.problems)
    plan.check(ahu, values, problems)
    if problems:
        raise RowProblems(problems)
    plan.remember(ahu, values)
    plan.ahus[(site.pk, code, tag)] = ahu
    return created


def _building_stage(plan: ImportPlan, building: Building, values: dict[str, Any], problems: list) -> None:
    found: list[tuple[str, str]] = []
    plan.check(building, values, found)
    if found:
        problems.extend((f"building_{c}" if not c.startswith("building_") else c, r) for c, r in found)
    else:
        plan.remember(building, values)


def _unit_of_row(row: dict[str, str], plan: ImportPlan, site: Site | None, problems: list) -> AHU | None:
    """The unit a component row names (site, building and tag), or None; a unit the plan lacks is a problem
    that lists the units there are."""
    site_code = row.get("site_code", "").strip()
    building_code, tag = row.get("building_code", "").strip(), row.get("ahu_tag", "").strip()
    if site is None or not building_code or not tag:
        return None
    ahu = plan.ahus.get((site.pk, building_code, tag))
    if ahu is None:
        tags = sorted(t for (s, b, t) in plan.ahus if s == site.pk and b == building_code)
        problems.append(
            (
                "ahu_tag",
                f"Unit tag: no unit {shown(tag)} in building {shown(building_code)} of site {shown(site_code)}; "
                + (f"units there: {', '.join(tags[:20])}" if tags else "that building has no units yet")
                + " (import the units first)",
            )
        )
    return ahu


def check_component_row(row: dict[str, str], plan: ImportPlan) -> bool:
    """Check and stage one row of a components file (its parent named on an earlier line or in the registry);
    True when it adds a part. Raises RowProblems."""
    problems = required_problems(row, ["site_code", "building_code", "ahu_tag", "name", "kind"])
    site_code = row.get("site_code", "").strip()
    site = plan.site(site_code, problems) if site_code else None
    ahu = _unit_of_row(row, plan, site, problems)
    values = parse_row(row, COMPONENT_COLUMNS, Component, problems, today=today_for(site) if site else plan.today)
    installed, retired = values.get("installed_on"), values.get("retired_on")
    if installed and retired and retired < installed:
        problems.append(
            (
                "retired_on",
                f"Retired on: {retired.isoformat()} is before installed on {installed.isoformat()}; "
                "allowed: the day it was installed or later, or empty",
            )
        )
    kind = row.get("kind", "").strip()
    if kind and kind not in ComponentKind.values:
        problems.append(
            ("kind", f"Kind of part: {shown(kind)} is not one of the choices; allowed: {KEY_ALLOWED['kind']}")
        )
    values["kind"] = kind
    values["name"] = row.get("name", "").strip()
    values["specs"] = {
        col.removeprefix("spec."): cell.strip() for col, cell in row.items() if col.startswith("spec.") and cell.strip()
    }
    if ahu is None:
        plan.check(Component(), values, problems)
        raise RowProblems(problems)
    named = plan.components.setdefault(ahu.pk, {})
    parent_name = row.get("parent", "").strip()
    values["parent"] = None
    if parent_name:
        parents = named.get(parent_name)
        if not parents:
            problems.append(
                (
                    "parent",
                    f"Parent part: no part named {shown(parent_name)} in unit {ahu.tag} on an earlier line or in the "
                    "registry; allowed: the name of a part of the same unit, or empty",
                )
            )
        else:
            values["parent"] = parents[0]
    matches = named.get(values["name"], []) if values["name"] else []
    if len(matches) > 1:
        problems.append(("name", f"Name: unit {ahu.tag} has two parts named {shown(values['name'])}; rename one first"))
        matches = []
    component = matches[0] if matches else Component(ahu=ahu)
    created = not matches
    try:
        values.update(plan.label(row, component))
    except RowProblems as exc:
        problems.extend(exc.problems)
    plan.check(component, values, problems)
    if problems:
        raise RowProblems(problems)
    plan.remember(component, values)
    if created:
        named.setdefault(values["name"], []).append(component)
    # Allowed but unlikely (a bank's airflow far from its unit's, a motor far from its fan's design point): the
    # report says so beside the cell; the file is imported (odd plants exist). A file's values are SI.
    plan.warnings.extend((f"spec.{w.field}", w.message) for w in component_warnings(component=component, system="si"))
    return created
