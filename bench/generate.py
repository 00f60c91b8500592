"""A deterministic synthetic portfolio for the benchmarks: ``portfolio_generate``.

The same ``seed`` and ``today`` give the same rows (names, label codes,
coordinates, readings); only database ids and ``created_at`` stamps differ.
Everything is invented: companies, places, people. Rows go in with
``bulk_create`` in large batches, because the point is to reach thousands of
units quickly; the domain services are used only where they install shared
data (the task and checklist libraries). History rows (completed work orders,
inspections, readings, findings) use occurrence keys starting ``hist-`` so
they never collide with the due-date engine's own keys.
"""

from __future__ import annotations

import datetime as dt
import math
import random
import uuid
from dataclasses import dataclass, field

from django.contrib.auth.hashers import make_password
from django.db import connection, transaction
from django.utils import timezone

BENCH_PASSWORD = "bench-pass-not-secret-1"  # a throwaway bench database only
BATCH = 2000

# ---------------------------------------------------------------------------
# Component parts, shaped like the demo's (fixtures/demo/registry.json). "@airflow" is the unit's design airflow.
# ---------------------------------------------------------------------------
PARTS: dict[str, tuple[str, str, dict]] = {
    "intake_screen": (
        "intake_screen",
        "Outdoor-air intake screen",
        {"free_area_m2": 1.6, "mesh_mm": 12, "has_louvre": True},
    ),
    "oa_damper": (
        "damper",
        "Outdoor-air damper",
        {
            "role": "outdoor",
            "width_mm": 1400,
            "height_mm": 900,
            "actuator": "spring_return",
            "stroke_time_s": 90,
            "fail_position": "closed",
        },
    ),
    "ra_damper": (
        "damper",
        "Return-air damper",
        {
            "role": "return",
            "width_mm": 1400,
            "height_mm": 900,
            "actuator": "modulating",
            "stroke_time_s": 150,
            "fail_position": "open",
        },
    ),
    "ea_damper": (
        "damper",
        "Exhaust-air damper",
        {
            "role": "exhaust",
            "width_mm": 1400,
            "height_mm": 900,
            "actuator": "spring_return",
            "stroke_time_s": 90,
            "fail_position": "closed",
        },
    ),
    "mix_damper": (
        "damper",
        "Mixing damper",
        {
            "role": "mixing",
            "width_mm": 1200,
            "height_mm": 800,
            "actuator": "modulating",
            "stroke_time_s": 150,
            "fail_position": "last",
        },
    ),
    "pre_filter": (
        "filter_bank",
        "Pre-filters",
        {
            "stage": "pre",
            "merv": "8",
            "iso_16890": "ePM10",
            "iso_16890_pct": 60,
            "size": "592x592x360",
            "count": 6,
            "clean_dp_pa": 45,
            "final_dp_pa": 150,
            "design_airflow_m3s": "@airflow",
        },
    ),
    "final_filter": (
        "filter_bank",
        "Final filters",
        {
            "stage": "final",
            "merv": "14",
            "iso_16890": "ePM1",
            "iso_16890_pct": 70,
            "size": "592x592x600",
            "count": 6,
            "clean_dp_pa": 95,
            "final_dp_pa": 300,
            "design_airflow_m3s": "@airflow",
        },
    ),
    "single_filter": (
        "filter_bank",
        "Filters",
        {
            "stage": "final",
            "merv": "13",
            "iso_16890": "ePM1",
            "iso_16890_pct": 55,
            "size": "592x592x520",
            "count": 4,
            "clean_dp_pa": 80,
            "final_dp_pa": 250,
            "design_airflow_m3s": "@airflow",
        },
    ),
    "glycol_preheat": (
        "coil",
        "Glycol preheat coil",
        {
            "duty": "preheat",
            "fluid": "glycol",
            "glycol_pct": 35,
            "glycol_kind": "propylene",
            "design_capacity_w": 55000,
            "design_airflow_m3s": "@airflow",
            "entering_air_c": -16,
            "leaving_air_c": 5,
            "entering_water_c": 60,
            "leaving_water_c": 40,
            "rows": 2,
        },
    ),
    "electric_preheater": (
        "electric_preheater",
        "Electric preheater",
        {"power_w": 18000, "stages": 3, "switch_on_c": -5, "high_limit_c": 70, "voltage_v": 400},
    ),
    "heating_coil": (
        "coil",
        "Heating coil",
        {
            "duty": "heating",
            "fluid": "water",
            "design_capacity_w": 45000,
            "design_airflow_m3s": "@airflow",
            "entering_air_c": 8,
            "leaving_air_c": 22,
            "entering_water_c": 70,
            "leaving_water_c": 50,
            "rows": 2,
        },
    ),
    "cooling_coil": (
        "coil",
        "Cooling coil",
        {
            "duty": "cooling",
            "fluid": "water",
            "design_capacity_w": 70000,
            "design_airflow_m3s": "@airflow",
            "entering_air_c": 28,
            "leaving_air_c": 13,
            "entering_water_c": 6,
            "leaving_water_c": 12,
            "rows": 6,
        },
    ),
    "drain_pan": (
        "drain_pan",
        "Cooling-coil drain pan",
        {"material": "stainless", "has_trap": True, "trap_depth_mm": 80},
    ),
    "supply_fan_direct": (
        "fan",
        "Supply fan",
        {
            "role": "supply",
            "fan_type": "plug",
            "drive": "direct",
            "vsd": True,
            "motor_power_w": 5500,
            "design_flow_m3s": "@airflow",
            "design_pressure_pa": 850,
            "design_speed_rpm": 1650,
            "motor_full_load_a": 10.6,
        },
    ),
    "supply_fan_belt": (
        "fan",
        "Supply fan",
        {
            "role": "supply",
            "fan_type": "centrifugal",
            "drive": "belt",
            "vsd": False,
            "motor_power_w": 7500,
            "design_flow_m3s": "@airflow",
            "design_pressure_pa": 900,
            "design_speed_rpm": 1120,
            "motor_full_load_a": 14.2,
            "belt_size": "SPA 1250",
            "belt_count": 2,
        },
    ),
    "return_fan_direct": (
        "fan",
        "Return fan",
        {
            "role": "return",
            "fan_type": "plug",
            "drive": "direct",
            "vsd": True,
            "motor_power_w": 3000,
            "design_flow_m3s": "@airflow",
            "design_pressure_pa": 400,
            "design_speed_rpm": 1400,
            "motor_full_load_a": 6.1,
        },
    ),
    "exhaust_fan_direct": (
        "fan",
        "Exhaust fan",
        {
            "role": "exhaust",
            "fan_type": "plug",
            "drive": "direct",
            "vsd": True,
            "motor_power_w": 4000,
            "design_flow_m3s": "@airflow",
            "design_pressure_pa": 500,
            "design_speed_rpm": 1500,
            "motor_full_load_a": 7.9,
        },
    ),
    "wheel": (
        "heat_recovery",
        "Heat-recovery wheel",
        {"recovery_type": "wheel", "design_effectiveness_pct": 75, "has_bypass": True},
    ),
    "co2_sensor": (
        "sensor",
        "Return-air CO2 sensor",
        {
            "measures": "co2",
            "location": "return duct after the room",
            "range_low": 0,
            "range_high": 2000,
            "accuracy": 50,
            "calibration_interval_days": 365,
        },
    ),
    "sat_sensor": (
        "sensor",
        "Supply-air temperature sensor",
        {
            "measures": "temperature",
            "location": "supply duct, 3 m after the fan",
            "range_low": -20,
            "range_high": 60,
            "accuracy": 0.3,
            "calibration_interval_days": 730,
        },
    ),
    "oat_sensor": (
        "sensor",
        "Outdoor-air temperature sensor",
        {
            "measures": "temperature",
            "location": "north wall by the intake",
            "range_low": -40,
            "range_high": 50,
            "accuracy": 0.5,
        },
    ),
    "frost_sensor": (
        "sensor",
        "Frost thermostat",
        {
            "measures": "temperature",
            "location": "after the preheat coil",
            "range_low": -10,
            "range_high": 30,
            "accuracy": 0.5,
        },
    ),
}

# Unit kinds: (heat_recovery, full_outdoor_air, parts along the airstream). ("cooling_coil", "drain_pan")
# puts the drain pan under the coil in the tree, as in the demo.
UNIT_KINDS: list[tuple[str, bool, list]] = [
    (
        "none",
        False,
        [
            "intake_screen",
            "oa_damper",
            "ra_damper",
            "mix_damper",
            "ea_damper",
            "pre_filter",
            "final_filter",
            "heating_coil",
            ("cooling_coil", "drain_pan"),
            "supply_fan_belt",
            "return_fan_direct",
            "co2_sensor",
            "sat_sensor",
        ],
    ),
    (
        "wheel",
        False,
        [
            "intake_screen",
            "oa_damper",
            "ea_damper",
            "wheel",
            "pre_filter",
            "final_filter",
            "glycol_preheat",
            "heating_coil",
            ("cooling_coil", "drain_pan"),
            "supply_fan_direct",
            "exhaust_fan_direct",
            "sat_sensor",
            "frost_sensor",
        ],
    ),
    (
        "none",
        True,
        [
            "intake_screen",
            "oa_damper",
            "electric_preheater",
            "single_filter",
            "heating_coil",
            ("cooling_coil", "drain_pan"),
            "supply_fan_direct",
            "sat_sensor",
            "oat_sensor",
        ],
    ),
]

PLACE_A = [
    "Alder",
    "Brack",
    "Cormor",
    "Dunmere",
    "Eskholt",
    "Fenwith",
    "Garrow",
    "Hollin",
    "Ivel",
    "Jessop",
    "Kestle",
    "Larch",
    "Marrow",
    "Nettle",
    "Orrin",
    "Pellow",
    "Quenby",
    "Rooke",
    "Sallow",
    "Tarn",
    "Umber",
    "Vantry",
    "Wexley",
    "Yarrow",
]
PLACE_B = ["Court", "Works", "House", "Yard", "Exchange", "Hall", "Quarter", "Gate", "Mews", "Point", "Row"]
FIRST = [
    "Ada",
    "Bram",
    "Cleo",
    "Dov",
    "Edda",
    "Finn",
    "Gala",
    "Hugo",
    "Ilse",
    "Joss",
    "Kira",
    "Lev",
    "Mira",
    "Nils",
    "Orla",
    "Piet",
    "Rhea",
    "Sten",
    "Tova",
    "Ugo",
    "Vera",
    "Wim",
    "Xan",
    "Yule",
    "Zora",
]
LAST = [
    "Ashdown",
    "Birchley",
    "Crane",
    "Dorrit",
    "Elsworth",
    "Fallow",
    "Greave",
    "Hythe",
    "Ingram",
    "Jolliffe",
    "Kemble",
    "Lorrimer",
    "Moss",
    "Norcott",
    "Oakes",
    "Pryor",
    "Quill",
    "Rathbone",
    "Selwyn",
    "Thorne",
]
SPACE_KINDS = ["office", "classroom", "retail", "conference", "lobby", "library"]
LABEL_ALPHABET = "23456789ABCDEFGHJKMNPQRSTUVWXYZ"  # as inventory.models.LABEL_ALPHABET


@dataclass
class OrgSummary:
    organisation_id: int
    slug: str
    site_ids: list[int]
    ahu_ids: list[int]
    supervisor: str
    technicians: list[str]
    property_manager: str
    tokens: dict[str, str] = field(default_factory=dict)


@dataclass
class Portfolio:
    main: OrgSummary
    other: OrgSummary
    today: dt.date
    counts: dict[str, int] = field(default_factory=dict)


class _Codes:
    """Label codes from the seeded generator, unique across the whole run."""

    def __init__(self, rng: random.Random):
        self.rng = rng
        self.seen: set[str] = set()

    def new(self, prefix: str) -> str:
        while True:
            code = prefix + "".join(self.rng.choice(LABEL_ALPHABET) for _ in range(6))
            if code not in self.seen:
                self.seen.add(code)
                return code


def _normals(lat: float) -> tuple[list[float], list[float]]:
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


def _aware(day: dt.date, hour: int = 9, minute: int = 0) -> dt.datetime:
    return dt.datetime(day.year, day.month, day.day, hour, minute, tzinfo=dt.UTC)


def _bulk(model, rows: list) -> list:
    return model.objects.bulk_create(rows, batch_size=BATCH)


def _people(*, org, slug: str, n_techs: int, rng: random.Random, password: str) -> dict[str, object]:
    from accounts.models import Membership, Role, User

    specs = [(f"{slug}-supervisor", Role.SUPERVISOR), (f"{slug}-manager", Role.PROPERTY_MANAGER)]
    specs += [(f"{slug}-tech{i:02d}", Role.TECHNICIAN) for i in range(1, n_techs + 1)]
    users = []
    for username, _role in specs:
        users.append(
            User(
                username=username,
                first_name=rng.choice(FIRST),
                last_name=rng.choice(LAST),
                email=f"{username}@example.invalid",
                password=password,
                skills=["mechanical", "electrical", "controls"],
                unit_system="si",
            )
        )
    users = _bulk(User, users)
    _bulk(Membership, [Membership(user=u, organisation=org, role=r) for u, (_, r) in zip(users, specs, strict=True)])
    return {u.username: u for u in users}


def _tokens(users, rng: random.Random) -> dict[str, str]:
    from rest_framework.authtoken.models import Token

    rows = [Token(key=f"{rng.getrandbits(160):040x}", user=u) for u in users]
    _bulk(Token, rows)
    return {t.user.username: t.key for t in rows}


def _org_build(
    *,
    org,
    slug: str,
    n_sites: int,
    n_ahus: int,
    years: int,
    today: dt.date,
    rng: random.Random,
    codes: _Codes,
    password: str,
    counts: dict[str, int],
) -> OrgSummary:
    from accounts.models import SiteGrant
    from inspections.models import ChecklistItem, Evaluation, Finding, Inspection, Reading
    from inventory.models import AHU, Building, Component, Site
    from scheduling.models import MeterReading, OutdoorTemperature, TaskDefinition, WorkOrder, WorkOrderTask

    n_techs = max(2, min(40, n_ahus // 250))
    people = _people(org=org, slug=slug, n_techs=n_techs, rng=rng, password=password)
    techs = [u for name, u in people.items() if "-tech" in name]
    supervisor = people[f"{slug}-supervisor"]
    manager = people[f"{slug}-manager"]

    # Sites, each with 1–3 buildings.
    sites = []
    for i in range(n_sites):
        lat = round(rng.uniform(44.0, 60.0), 4)
        lon = round(rng.uniform(-5.0, 25.0), 4)
        mins, maxs = _normals(lat)
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
    sites = _bulk(Site, sites)
    buildings = []
    for site in sites:
        for b in range(rng.randint(1, 3)):
            buildings.append(
                Building(site=site, code=f"b{b + 1}", name=f"Block {chr(65 + b)}", floors=rng.randint(1, 12))
            )
    buildings = _bulk(Building, buildings)
    _bulk(SiteGrant, [SiteGrant(user=manager, site=s) for s in sites[: max(1, len(sites) // 5)]])

    # Units spread round-robin over the buildings, so every site has some.
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
                label_code=codes.new("U"),
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
                service_start=today - dt.timedelta(days=rng.randint(years * 365 + 30, 20 * 365)),
            )
        )
        kinds.append(kind_index)
    ahus = _bulk(AHU, ahus)
    counts["ahus"] = counts.get("ahus", 0) + len(ahus)

    # Component trees: top-level parts first, then the children that point at them.
    def _specs(part: str, airflow: float) -> dict:
        return {k: (airflow if v == "@airflow" else v) for k, v in PARTS[part][2].items()}

    tops, pending_children = [], []
    for ahu, kind_index in zip(ahus, kinds, strict=True):
        for pos, entry in enumerate(UNIT_KINDS[kind_index][2]):
            part, child = (entry, None) if isinstance(entry, str) else entry
            kind, name, _ = PARTS[part]
            comp = Component(
                ahu=ahu,
                kind=kind,
                name=name,
                label_code=codes.new("C"),
                specs=_specs(part, ahu.design_supply_airflow_m3s),
                position=pos * 10,
            )
            tops.append(comp)
            if child:
                pending_children.append((comp, child, pos * 10 + 1))
    tops = _bulk(Component, tops)
    children = []
    for parent, part, pos in pending_children:
        kind, name, _ = PARTS[part]
        children.append(
            Component(
                ahu_id=parent.ahu_id,
                parent=parent,
                kind=kind,
                name=name,
                label_code=codes.new("C"),
                specs=_specs(part, 0),
                position=pos,
            )
        )
    _bulk(Component, children)
    counts["components"] = counts.get("components", 0) + len(tops) + len(children)
    filters_by_ahu: dict[int, list] = {}
    for comp in tops:
        if comp.kind == "filter_bank":
            filters_by_ahu.setdefault(comp.ahu_id, []).append(comp)

    # Outdoor temperatures: daily for the history period, from the normals plus weather noise.
    temps = []
    start = today - dt.timedelta(days=years * 365)
    for site in sites:
        day = start
        while day <= today:
            m = day.month - 1
            noise = rng.gauss(0, 2.5)
            lo = round(site.normals_min_c[m] + noise, 1)
            hi = round(max(lo + 1, site.normals_max_c[m] + noise + rng.gauss(0, 1)), 1)
            temps.append(
                OutdoorTemperature(
                    site=site,
                    date=day,
                    min_c=lo,
                    max_c=hi,
                    mean_c=round((lo + hi) / 2, 1),
                    source=OutdoorTemperature.Source.CSV,
                )
            )
            day += dt.timedelta(days=1)
    _bulk(OutdoorTemperature, temps)
    counts["outdoor_temperatures"] = counts.get("outdoor_temperatures", 0) + len(temps)

    # Run-hour meter readings, monthly, from building automation.
    meters, hours_at = [], {}
    months = years * 12
    for ahu in ahus:
        # Run-hours a month (30 days = 720 h of clock time): never more than the clock allows.
        rate = rng.choice([250.0, 400.0, 600.0, 650.0])
        hours = rng.uniform(5_000, 60_000)
        for k in range(months, -1, -1):
            taken = _aware(today - dt.timedelta(days=30 * k), 6)
            hours += rate * rng.uniform(0.9, 1.05)
            meters.append(
                MeterReading(ahu=ahu, hours=round(hours, 1), taken_at=taken, source=MeterReading.Source.BAS_CSV)
            )
            hours_at[(ahu.pk, k)] = round(hours, 1)
    _bulk(MeterReading, meters)
    counts["meter_readings"] = counts.get("meter_readings", 0) + len(meters)

    # History: a quarterly filter-check visit per unit, completed and verified, with its inspection.
    filter_task = TaskDefinition.objects.filter(organisation__isnull=True, code="filter_check").first()
    items = {
        (i.template.code, i.key): i
        for i in ChecklistItem.objects.select_related("template").filter(
            template__code__in=["visit", "filter_check"], template__version=1
        )
    }
    if filter_task is None or ("filter_check", "dp") not in items:
        counts["history_skipped"] = 1
        return OrgSummary(
            org.pk,
            slug,
            [s.pk for s in sites],
            [a.pk for a in ahus],
            supervisor.username,
            [t.username for t in techs],
            manager.username,
            _tokens(people.values(), rng),
        )
    visits = years * 4
    wos, plan = [], []
    for a_index, ahu in enumerate(ahus):
        tech = techs[a_index % len(techs)]
        for q in range(visits, 0, -1):
            due = today - dt.timedelta(days=91 * q)
            done = _aware(due + dt.timedelta(days=rng.randint(-3, 5)), 10, rng.randint(0, 59))
            wos.append(
                WorkOrder(
                    public_id=uuid.UUID(int=rng.getrandbits(128), version=4),
                    organisation=org,
                    ahu=ahu,
                    kind=WorkOrder.Kind.PREVENTIVE,
                    state=WorkOrder.State.VERIFIED,
                    title="Filter pressure-drop check",
                    assignee=tech,
                    due_date=due,
                    overdue_on=due + dt.timedelta(days=8),  # first day after a 7-day grace
                    scheduled_for=due,
                    started_at=done - dt.timedelta(minutes=40),
                    completed_at=done,
                    verified_at=done + dt.timedelta(days=1),
                    version=5,
                )
            )
            plan.append((ahu, tech, q, due, done))
    wos = _bulk(WorkOrder, wos)
    tasks = []
    for wo, (ahu, _tech, _q, due, done) in zip(wos, plan, strict=True):
        for comp in filters_by_ahu.get(ahu.pk, []):
            tasks.append(
                WorkOrderTask(
                    work_order=wo,
                    task=filter_task,
                    task_code="filter_check",
                    ahu=ahu,
                    component=comp,
                    component_key=comp.pk,
                    due_date=due,
                    occurrence_key=f"hist-{due.isoformat()}",
                    completed_at=done,
                )
            )
    _bulk(WorkOrderTask, tasks)
    counts["work_orders_history"] = counts.get("work_orders_history", 0) + len(wos)

    inspections = []
    latest_visits = 0
    for wo, (ahu, tech, q, _due, done) in zip(wos, plan, strict=True):
        # One in five of the latest visits (the first of them always) is left flagged for a supervisor.
        flagged = q == 1 and latest_visits % 5 == 0
        latest_visits += q == 1
        flags = [{"code": "improbable_value", "reason": "a reading outside the plausible range"}] if flagged else []
        inspections.append(
            Inspection(
                client_uuid=uuid.UUID(int=rng.getrandbits(128), version=4),
                organisation=org,
                work_order=wo,
                ahu=ahu,
                technician=tech,
                state=Inspection.State.SUBMITTED if flagged else Inspection.State.VERIFIED,
                flags=flags,
                flag_reason=flags[0]["reason"] if flags else "",
                template_versions={"visit": 1, "filter_check": 1},
                unit_system="si",
                work_order_version_seen=4,
                started_at=done - dt.timedelta(minutes=40),
                finished_at=done,
                received_at=done + dt.timedelta(minutes=5),
                complete=True,
                work_order_completed=True,
                signature_name=str(tech),
                signature_image="signatures/bench.png",
                signed_at=done,
                verified_at=None if flagged else done + dt.timedelta(days=1),
                verified_by=None if flagged else supervisor,
            )
        )
    inspections = _bulk(Inspection, inspections)
    counts["inspections"] = counts.get("inspections", 0) + len(inspections)

    readings, evaluations, eval_meta = [], [], []
    latest_banks = 0
    dp_item, seated, media, run_item = (
        items[("filter_check", "dp")],
        items.get(("filter_check", "seated")),
        items.get(("filter_check", "media")),
        items.get(("visit", "run_hours")),
    )
    for insp, (ahu, _tech, q, _due, _done) in zip(inspections, plan, strict=True):
        if run_item is not None:
            readings.append(
                Reading(
                    inspection=insp,
                    item=run_item,
                    value_si=hours_at.get((ahu.pk, q * 3)),
                    entered=hours_at.get((ahu.pk, q * 3)),
                    verdict="ok",
                )
            )
        for comp in filters_by_ahu.get(ahu.pk, []):
            clean, final = comp.specs["clean_dp_pa"], comp.specs["final_dp_pa"]
            loading = ((visits - q) % 4 + rng.random()) / 4  # filters loaded over a year, then changed
            if q == 1:
                # Every fourth bank on the latest visit (the first always) is at its change value: open findings.
                if latest_banks % 4 == 0:
                    loading = 0.97
                latest_banks += 1
            dp = round(clean + loading * (final - clean), 0)
            verdict = "fail" if loading > 0.95 else ("watch" if loading > 0.75 else "ok")
            readings.append(
                Reading(inspection=insp, item=dp_item, component=comp, value_si=dp, entered=dp, verdict=verdict)
            )
            if seated is not None:
                readings.append(Reading(inspection=insp, item=seated, component=comp, value_text="ok", verdict="ok"))
            if media is not None:
                readings.append(
                    Reading(
                        inspection=insp,
                        item=media,
                        component=comp,
                        value_text="loaded" if loading > 0.5 else "clean",
                        verdict="ok",
                    )
                )
            if verdict == "fail":
                evaluations.append(
                    Evaluation(
                        inspection=insp,
                        check_name="filter_loading",
                        item_key="filter_check.dp",
                        component=comp,
                        verdict="fail",
                        reason=f"filter at {loading * 100:.0f} % of its clean-to-final span",
                        method="dp against the clean-to-final span",
                        derived={"loading_pct": round(loading * 100, 1)},
                        condition_code="filter_loaded",
                    )
                )
                eval_meta.append((insp, ahu, comp, q))
    _bulk(Reading, readings)
    counts["readings"] = counts.get("readings", 0) + len(readings)
    evaluations = _bulk(Evaluation, evaluations)
    # An open finding has its corrective work proposed, awaiting a supervisor's approval.
    proposals = [
        WorkOrder(
            public_id=uuid.UUID(int=rng.getrandbits(128), version=4),
            organisation=org,
            ahu=ahu,
            component=comp,
            kind=WorkOrder.Kind.CORRECTIVE,
            approval=WorkOrder.Approval.PENDING,
            title=f"Replace {comp.name.lower()}",
            reason=ev.reason,
            condition_code="filter_loaded",
            source_ref=f"inspection {insp.pk}",
            due_date=today + dt.timedelta(days=7),
            overdue_on=today + dt.timedelta(days=15),  # first day after a 14-day grace
        )
        for ev, (insp, ahu, comp, q) in zip(evaluations, eval_meta, strict=True)
        if q == 1
    ]
    proposal_of = dict(
        zip(
            [ev.pk for ev, m in zip(evaluations, eval_meta, strict=True) if m[3] == 1],
            _bulk(WorkOrder, proposals),
            strict=True,
        )
    )
    counts["corrective_proposed"] = counts.get("corrective_proposed", 0) + len(proposals)
    findings = []
    for ev, (insp, ahu, comp, q) in zip(evaluations, eval_meta, strict=True):
        closed = q > 1
        findings.append(
            Finding(
                organisation=org,
                inspection=insp,
                evaluation=ev,
                ahu=ahu,
                component=comp,
                severity=Finding.Severity.MEDIUM,
                title=f"{comp.name} loaded",
                reason=ev.reason,
                condition_code="filter_loaded",
                state=Finding.State.CLOSED if closed else Finding.State.OPEN,
                opened_at=insp.finished_at,
                closed_at=insp.finished_at + dt.timedelta(days=14) if closed else None,
                corrective_work_order=proposal_of.get(ev.pk),
            )
        )
    _bulk(Finding, findings)
    counts["findings"] = counts.get("findings", 0) + len(findings)
    return OrgSummary(
        org.pk,
        slug,
        [s.pk for s in sites],
        [a.pk for a in ahus],
        supervisor.username,
        [t.username for t in techs],
        manager.username,
        _tokens(people.values(), rng),
    )


def portfolio_generate(
    *, sites: int, ahus: int, years: int = 2, seed: int = 1, today: dt.date | None = None, prefix: str = ""
) -> Portfolio:
    """Write a synthetic portfolio of ``sites`` sites and ``ahus`` units for one organisation, plus a
    second, twentieth-sized organisation (to see that tenancy holds at scale).

    Installs the shipped task and checklist libraries first (idempotent). ``prefix`` keeps the usernames
    and organisation slugs of two portfolios in one database apart (``main-supervisor`` without it,
    ``<prefix>-main-supervisor`` with it).
    """
    from accounts.models import Organisation
    from inspections.services.library import checklist_library_install
    from scheduling.services import task_library_install

    if sites < 1 or ahus < 1:
        raise ValueError(f"sites={sites}, ahus={ahus}: both must be at least 1")
    if years < 1:
        raise ValueError(f"years={years}: at least 1")
    # The server's date on purpose: the synthetic history is anchored to one day, before any site exists.
    today = today or timezone.localdate()
    rng = random.Random(seed)
    codes = _Codes(rng)
    password = make_password(BENCH_PASSWORD, salt="benchsalt")
    counts: dict[str, int] = {}
    with transaction.atomic():
        task_library_install()
        checklist_library_install()
        head = f"{prefix}-" if prefix else ""
        main = Organisation.objects.create(name="Bench Air Services", slug=f"{head}bench-main-{seed}")
        other = Organisation.objects.create(name="Bench Other Contractor", slug=f"{head}bench-other-{seed}")
        main_summary = _org_build(
            org=main,
            slug=f"{head}main",
            n_sites=sites,
            n_ahus=ahus,
            years=years,
            today=today,
            rng=rng,
            codes=codes,
            password=password,
            counts=counts,
        )
        other_summary = _org_build(
            org=other,
            slug=f"{head}other",
            n_sites=max(1, sites // 20),
            n_ahus=max(1, ahus // 20),
            years=years,
            today=today,
            rng=rng,
            codes=codes,
            password=password,
            counts=counts,
        )
    # Planner statistics, as any database that has been running has them (autovacuum would gather them
    # within minutes); without them the first queries of a run are planned for empty tables.
    with connection.cursor() as cursor:
        cursor.execute("ANALYZE")
    return Portfolio(main=main_summary, other=other_summary, today=today, counts=counts)


def organisations_add(
    *, count: int, sites: int, ahus: int, today: dt.date, years: int = 2, seed: int = 2
) -> list[OrgSummary]:
    """``count`` further organisations of ``sites`` sites and ``ahus`` units each (``day1``, ``day2``, …): the
    other contractors of the mixed-day benchmark, added to a database that already holds a portfolio.

    Label codes are drawn apart from every code already stored, so the new rows never collide with the
    portfolio's whatever the seed.
    """
    from accounts.models import Organisation
    from inventory.models import AHU, Component

    if count < 1 or sites < 1 or ahus < 1:
        raise ValueError(f"count={count}, sites={sites}, ahus={ahus}: each must be at least 1")
    rng = random.Random(seed)
    codes = _Codes(rng)
    codes.seen.update(AHU.objects.values_list("label_code", flat=True))
    codes.seen.update(Component.objects.values_list("label_code", flat=True))
    password = make_password(BENCH_PASSWORD, salt="benchsalt")
    counts: dict[str, int] = {}
    added = []
    with transaction.atomic():
        for n in range(1, count + 1):
            org = Organisation.objects.create(name=f"Bench Day Contractor {n}", slug=f"bench-day{n}-{seed}")
            added.append(
                _org_build(
                    org=org,
                    slug=f"day{n}",
                    n_sites=sites,
                    n_ahus=ahus,
                    years=years,
                    today=today,
                    rng=rng,
                    codes=codes,
                    password=password,
                    counts=counts,
                )
            )
    with connection.cursor() as cursor:
        cursor.execute("ANALYZE")
    return added
