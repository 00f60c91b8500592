"""An organisation's registry: sites with their buildings and invented normals, units spread over the
buildings, and each unit's component tree."""

from __future__ import annotations

import datetime as dt
import math

from .common import GenerationRun, bulk
from .names import PLACE_A, PLACE_B, SPACE_KINDS
from .parts import PARTS, UNIT_KINDS


def normals(lat: float) -> tuple[list[float], list[float]]:
    """Invented monthly normals, colder further north; minimum below maximum every month."""
    base = 24.0 - 0.55 * (lat - 30)
    amp = 6 + 0.12 * (lat - 30)
    mins, maxs = [], []
    for m in range(12):
        season = -math.cos(2 * math.pi * (m + 0.5 - 0.5) / 12)  # coldest in January
        mean = base - 12 + amp * season
        mins.append(round(mean - 4.5, 1))
        maxs.append(round(mean + 4.5, 1))
    return mins, maxs


def sites_create(*, org, slug: str, n_sites: int, manager, run: GenerationRun) -> tuple[list, list]:
    """``n_sites`` sites, each with 1–3 buildings; the property manager is granted the first fifth.
    Returns (sites, buildings)."""
    from accounts.models import SiteGrant
    from inventory.models import Building, Site

    rng = run.rng
    sites = []
    for i in range(n_sites):
        lat = round(rng.uniform(44.0, 60.0), 4)
        lon = round(rng.uniform(-5.0, 25.0), 4)
        mins, maxs = normals(lat)
        sites.append(
            Site(
                organisation=org,
                code=f"{slug}-s{i:04d}",
                name=f"{rng.choice(PLACE_A)} {rng.choice(PLACE_B)} {i}",
                address=f"{rng.randint(1, 200)} {rng.choice(PLACE_A)} Road, Invented Town",
                latitude=lat,
                longitude=lon,
                altitude_m=round(rng.uniform(0, 400)),
                time_zone="Europe/Berlin",
                normals_min_c=mins,
                normals_max_c=maxs,
            )
        )
    sites = bulk(Site, sites)
    buildings = []
    for site in sites:
        for b in range(rng.randint(1, 3)):
            buildings.append(
                Building(site=site, code=f"b{b + 1}", name=f"Block {chr(65 + b)}", floors=rng.randint(1, 12))
            )
    buildings = bulk(Building, buildings)
    bulk(SiteGrant, [SiteGrant(user=manager, site=s) for s in sites[: max(1, len(sites) // 5)]])
    return sites, buildings


def ahus_create(*, buildings: list, n_ahus: int, run: GenerationRun) -> tuple[list, list[int]]:
    """``n_ahus`` units spread round-robin over the buildings, so every site has some.
    Returns (units, the index in ``UNIT_KINDS`` of each unit's kind)."""
    from inventory.models import AHU

    rng = run.rng
    ahus, kinds = [], []
    per_building: dict[int, int] = {}
    for i in range(n_ahus):
        building = buildings[i % len(buildings)]
        per_building[building.pk] = per_building.get(building.pk, 0) + 1
        kind_index = rng.randrange(len(UNIT_KINDS))
        heat_recovery, full_oa, _parts = UNIT_KINDS[kind_index]
        airflow = round(rng.uniform(0.8, 8.0), 2)
        ahus.append(
            AHU(
                building=building,
                tag=f"AHU-{per_building[building.pk]:02d}",
                label_code=run.codes.new("U"),
                location=rng.choice(["Roof plant room", "Basement plant room", "Level 2 plant room"]),
                area_served=f"Floors {rng.randint(1, 3)}–{rng.randint(4, 9)}",
                space_kind=rng.choice(SPACE_KINDS),
                floor_area_m2=round(airflow * 700),
                design_occupants=int(airflow * 50),
                design_supply_airflow_m3s=airflow,
                design_min_oa_fraction=1.0 if full_oa else round(rng.uniform(0.15, 0.5), 2),
                full_outdoor_air=full_oa,
                heat_recovery=heat_recovery,
                supply_air_setpoint_c=round(rng.uniform(15, 19), 1),
                duct_static_setpoint_pa=round(rng.uniform(200, 350)),
                service_start=run.today - dt.timedelta(days=rng.randint(run.years * 365 + 30, 20 * 365)),
            )
        )
        kinds.append(kind_index)
    ahus = bulk(AHU, ahus)
    run.counted("ahus", len(ahus))
    return ahus, kinds


# IEC standard motor ratings, W (IEC 60072-1, common practice): a fan's motor is the part's listed one or, on a unit
# whose airflow needs more, the next size up from the air power at an overall efficiency of 0.7, so every generated
# fan passes the registry's spec check (a motor never below its fan's air power; engineering.registry_checks).
MOTOR_SIZES_W = (750, 1100, 1500, 2200, 3000, 4000, 5500, 7500, 11000, 15000, 18500, 22000, 30000, 37000, 45000)


def part_specs(part: str, airflow: float) -> dict:
    """The specs of ``part`` with "@airflow" read as ``airflow``, and a fan's motor sized up where that needs it."""
    specs = {k: (airflow if v == "@airflow" else v) for k, v in PARTS[part][2].items()}
    if "motor_power_w" in specs and "design_pressure_pa" in specs:
        needed = airflow * specs["design_pressure_pa"] / 0.7
        if specs["motor_power_w"] < needed:
            specs["motor_power_w"] = next((s for s in MOTOR_SIZES_W if s >= needed), MOTOR_SIZES_W[-1])
    return specs


def components_create(*, ahus: list, kinds: list[int], run: GenerationRun) -> dict[int, list]:
    """Each unit's component tree: top-level parts first, then the children that point at them.
    Returns each unit's filter banks by unit id."""
    from inventory.models import Component

    tops, pending_children = [], []
    for ahu, kind_index in zip(ahus, kinds, strict=True):
        for pos, entry in enumerate(UNIT_KINDS[kind_index][2]):
            part, child = (entry, None) if isinstance(entry, str) else entry
            kind, name, _ = PARTS[part]
            comp = Component(
                ahu=ahu,
                kind=kind,
                name=name,
                label_code=run.codes.new("C"),
                specs=part_specs(part, ahu.design_supply_airflow_m3s),
                position=pos * 10,
            )
            tops.append(comp)
            if child:
                pending_children.append((comp, child, pos * 10 + 1))
    tops = bulk(Component, tops)
    children = []
    for parent, part, pos in pending_children:
        kind, name, _ = PARTS[part]
        children.append(
            Component(
                ahu_id=parent.ahu_id,
                parent=parent,
                kind=kind,
                name=name,
                label_code=run.codes.new("C"),
                specs=part_specs(part, 0),
                position=pos,
            )
        )
    bulk(Component, children)
    run.counted("components", len(tops) + len(children))
    filters_by_ahu: dict[int, list] = {}
    for comp in tops:
        if comp.kind == "filter_bank":
            filters_by_ahu.setdefault(comp.ahu_id, []).append(comp)
    return filters_by_ahu
