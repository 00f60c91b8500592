"""Ventilation requirement (ASHRAE 62.1 ventilation rate procedure) and the
steady-state CO2 method of ASTM D6245.

Table values below are from memory of ANSI/ASHRAE Standard 62.1-2019,
Table 6-1 "Minimum Ventilation Rates in Breathing Zone" (SI edition), whose
figures for these space kinds are unchanged since 62.1-2004. Verify against
the printed standard adopted by the local code before relying on them.
"""

from __future__ import annotations

from dataclasses import dataclass

from engineering import validate as v
from engineering.errors import EngineeringInputError

__all__ = [
    "CO2_GENERATION_OFFICE_L_S",
    "MET_LEVELS",
    "SPACE_KINDS",
    "VENTILATION_SYSTEMS",
    "ZONE_AIR_DISTRIBUTION_EFFECTIVENESS",
    "OutdoorAirIntake",
    "SpaceKind",
    "breathing_zone_outdoor_airflow",
    "co2_differential_for_outdoor_air",
    "co2_generation_for_activity",
    "outdoor_air_intake",
    "outdoor_air_per_person_from_co2",
    "system_ventilation_efficiency",
    "zone_outdoor_airflow",
]


@dataclass(frozen=True)
class SpaceKind:
    label: str
    rp_l_s_person: float  # people outdoor air rate Rp, L/s·person
    ra_l_s_m2: float  # area outdoor air rate Ra, L/s·m²
    default_occupants_per_100m2: float | None  # default occupant density
    source: str


_T61 = "ASHRAE 62.1-2019 Table 6-1 (from memory)"

SPACE_KINDS: dict[str, SpaceKind] = {
    "office": SpaceKind("Office space", 2.5, 0.3, 5, _T61),
    "reception": SpaceKind("Reception area", 2.5, 0.3, 30, _T61),
    "office_lobby": SpaceKind("Main entry lobby (office building)", 2.5, 0.3, 10, _T61),
    "telephone_data_entry": SpaceKind("Telephone/data entry", 2.5, 0.3, 60, _T61),
    "conference_room": SpaceKind("Conference/meeting room", 2.5, 0.3, 50, _T61),
    "classroom_age_5_8": SpaceKind("Classroom (ages 5–8)", 5.0, 0.6, 25, _T61),
    "classroom_age_9_plus": SpaceKind("Classroom (age 9 plus)", 5.0, 0.6, 35, _T61),
    "lecture_classroom": SpaceKind("Lecture classroom", 3.8, 0.3, 65, _T61),
    "lecture_hall": SpaceKind("Lecture hall (fixed seats)", 3.8, 0.3, 150, _T61),
    "computer_lab": SpaceKind("Computer lab", 5.0, 0.6, 25, _T61),
    "library": SpaceKind("Library", 2.5, 0.6, 10, _T61),
    "retail_sales": SpaceKind("Sales (retail)", 3.8, 0.6, 15, _T61),
    "supermarket": SpaceKind("Supermarket", 3.8, 0.3, 8, _T61),
    "restaurant_dining": SpaceKind("Restaurant dining room", 3.8, 0.9, 70, _T61),
    "cafeteria_fast_food": SpaceKind("Cafeteria/fast-food dining", 3.8, 0.9, 100, _T61),
    "bar_lounge": SpaceKind("Bar, cocktail lounge", 3.8, 0.9, 100, _T61),
    "health_club_aerobics": SpaceKind("Health club/aerobics room", 10.0, 0.3, 40, _T61),
    "health_club_weights": SpaceKind("Health club/weight room", 10.0, 0.3, 10, _T61),
    "hotel_bedroom": SpaceKind("Hotel bedroom/living room", 2.5, 0.3, 10, _T61),
    "hotel_lobby": SpaceKind("Hotel lobby", 3.8, 0.3, 30, _T61),
    "auditorium": SpaceKind("Auditorium seating area", 2.5, 0.3, 150, _T61),
    "place_of_worship": SpaceKind("Place of religious worship", 2.5, 0.3, 120, _T61),
    "museum_gallery": SpaceKind("Museum/gallery", 3.8, 0.3, 40, _T61),
    "daycare": SpaceKind("Daycare (through age 4)", 5.0, 0.9, 25, _T61),
    "corridor": SpaceKind("Corridor", 0.0, 0.3, None, _T61),
}

# Ez, ASHRAE 62.1-2019 section 6.2.2.2, "Zone Air Distribution
# Effectiveness" table (Table 6-4 in 2016/2019, Table 6-2 in 2010; from
# memory). "warm" means supply warmer than the space.
ZONE_AIR_DISTRIBUTION_EFFECTIVENESS: dict[str, tuple[float, str]] = {
    "ceiling_supply_cool": (1.0, "Ceiling supply of cool air"),
    "ceiling_supply_warm_floor_return": (1.0, "Ceiling supply of warm air and floor return"),
    "ceiling_supply_warm_8k_ceiling_return": (
        0.8,
        "Ceiling supply of warm air 8 K (15 °F) or more above space and ceiling return",
    ),
    "ceiling_supply_warm_under_8k_ceiling_return": (
        1.0,
        "Ceiling supply of warm air less than 8 K (15 °F) above space and ceiling return, "
        "with the 0.8 m/s (150 fpm) jet reaching within 1.4 m (4.5 ft) of the floor",
    ),
    "floor_supply_cool_ceiling_return": (
        1.0,
        "Floor supply of cool air and ceiling return, jet 0.8 m/s (150 fpm) reaching "
        "1.4 m (4.5 ft) or more above the floor (underfloor air distribution)",
    ),
    "displacement_ventilation": (
        1.2,
        "Floor supply of cool air and ceiling return, low-velocity displacement ventilation",
    ),
    "floor_supply_warm_floor_return": (1.0, "Floor supply of warm air and floor return"),
    "floor_supply_warm_ceiling_return": (0.7, "Floor supply of warm air and ceiling return"),
    "makeup_far_from_exhaust": (0.8, "Makeup supply drawn in on the opposite side of the room from the exhaust/return"),
    "makeup_near_exhaust": (0.5, "Makeup supply drawn in near the exhaust/return"),
}

# CO2 generation of an adult at about 1.2 met (sedentary office work):
# 0.0052 L/s (0.31 L/min), the figure used with ASTM D6245 (from memory).
CO2_GENERATION_OFFICE_L_S = 0.0052
_OFFICE_MET = 1.2

# Metabolic rates, ASHRAE Handbook—Fundamentals 2017 ch.9 Table 4 (from memory).
MET_LEVELS: dict[str, float] = {
    "seated_quiet": 1.0,
    "reading_seated": 1.0,
    "typing": 1.1,
    "office_work": 1.2,
    "filing_standing": 1.4,
    "walking_about": 1.7,
    "light_machine_work": 2.2,
    "heavy_machine_work": 4.0,
    "calisthenics": 3.5,
}


def breathing_zone_outdoor_airflow(*, space_kind: str, floor_area_m2: float, occupants: float | None = None) -> float:
    """Breathing-zone outdoor airflow Vbz = Rp·Pz + Ra·Az, in m³/s.

    ASHRAE 62.1-2019 section 6.2.2.1, eq. 6-1, with Rp, Ra and the default
    occupant density of Table 6-1 (``SPACE_KINDS``; from memory). Without
    ``occupants`` the zone population Pz is the default density × Az.
    """
    kind = SPACE_KINDS[v.choice("space_kind", space_kind, SPACE_KINDS)]
    az = v.in_range("floor_area_m2", floor_area_m2, 0.0, 1_000_000.0, unit="m²", label="floor area", low_open=True)
    if occupants is None:
        if kind.default_occupants_per_100m2 is None:
            raise EngineeringInputError(
                field="occupants",
                value=None,
                allowed="a number of people",
                message=f"occupants is required for {kind.label}: the table gives no default density",
            )
        pz = kind.default_occupants_per_100m2 * az / 100.0
    else:
        pz = v.in_range("occupants", occupants, 0.0, 100_000.0, unit="people", label="occupants")
    return (kind.rp_l_s_person * pz + kind.ra_l_s_m2 * az) / 1000.0


def zone_outdoor_airflow(*, vbz: float, ez: float | str = 1.0) -> float:
    """Zone outdoor airflow Voz = Vbz / Ez, m³/s.

    ASHRAE 62.1-2019 section 6.2.2.3, eq. 6-2. ``ez`` is a number or a key
    of ``ZONE_AIR_DISTRIBUTION_EFFECTIVENESS`` (section 6.2.2.2; from memory).
    """
    q = v.non_negative("vbz", vbz, unit="m³/s", label="breathing-zone outdoor airflow")
    if isinstance(ez, str):
        e = ZONE_AIR_DISTRIBUTION_EFFECTIVENESS[v.choice("ez", ez, ZONE_AIR_DISTRIBUTION_EFFECTIVENESS)][0]
    else:
        e = v.in_range("ez", ez, 0.1, 2.0, label="zone air distribution effectiveness")
    return q / e


# How the outdoor-air intake follows from the zone requirement, ASHRAE 62.1-2019 section 6.2.3
# (single zone), 6.2.4 (100 % outdoor air) and 6.2.5 (multiple-zone recirculating) (from memory).
VENTILATION_SYSTEMS: dict[str, str] = {
    "single_zone": "single-zone system: intake = zone outdoor airflow",
    "full_outdoor_air": "100 % outdoor-air system: intake = zone outdoor airflow",
    "multi_zone": "multiple-zone recirculating system: intake = uncorrected intake / system ventilation efficiency",
}
# Simplified procedure for Ev (62.1-2016 6.2.5.3.1, 62.1-2019 6.2.4.3.1; from memory):
# Ev = 0.88·D + 0.22 for D < 0.60, Ev = 0.75 for D ≥ 0.60.
EV_SIMPLIFIED_D_LIMIT = 0.60
EV_SIMPLIFIED_HIGH_D = 0.75


def system_ventilation_efficiency(*, occupant_diversity: float) -> float:
    """System ventilation efficiency Ev of a multiple-zone recirculating system by the
    simplified procedure: Ev = 0.88·D + 0.22 for D < 0.60, 0.75 for D ≥ 0.60, with D the
    occupant diversity Ps/ΣPz (ASHRAE 62.1-2016 6.2.5.3.1 / 62.1-2019 6.2.4.3.1; from memory)."""
    d = v.in_range("occupant_diversity", occupant_diversity, 0.0, 1.0, label="occupant diversity", low_open=True)
    return 0.88 * d + 0.22 if round(d, 9) < EV_SIMPLIFIED_D_LIMIT else EV_SIMPLIFIED_HIGH_D


@dataclass(frozen=True)
class OutdoorAirIntake:
    """The outdoor air one unit must take in by the ventilation rate procedure (m³/s)."""

    system: str  # a key of VENTILATION_SYSTEMS
    vbz_m3s: float  # breathing-zone outdoor airflow Rp·Pz + Ra·Az
    ez: float  # zone air distribution effectiveness
    voz_m3s: float  # zone outdoor airflow Vbz/Ez
    occupant_diversity: float | None  # D, multi-zone only
    vou_m3s: float | None  # uncorrected outdoor-air intake D·Rp·Pz + Ra·Az, multi-zone only
    ev: float | None  # system ventilation efficiency, multi-zone only
    ev_given: bool  # Ev taken from the design rather than the simplified procedure
    vot_m3s: float  # outdoor-air intake the unit must deliver
    method: str


def outdoor_air_intake(
    *,
    space_kind: str,
    floor_area_m2: float,
    occupants: float | None = None,
    air_distribution: str | float = "ceiling_supply_cool",
    system: str = "single_zone",
    occupant_diversity: float | None = None,
    ev: float | None = None,
) -> OutdoorAirIntake:
    """Outdoor-air intake Vot a unit must deliver to the space it serves, m³/s.

    Vbz = Rp·Pz + Ra·Az (eq. 6-1) and Voz = Vbz/Ez (eq. 6-2) for the one zone the registry
    knows per unit. Single-zone and 100 % outdoor-air systems: Vot = Voz (62.1-2019 6.2.3,
    6.2.4). Multiple-zone recirculating systems: Vou = D·Rp·Pz + Ra·Az and Vot = Vou/Ev, with
    Ev given by the design or found by the simplified procedure from D
    (``system_ventilation_efficiency``); without D, D = 1 (no diversity: the larger intake).
    In the simplified procedure Ez does not enter Vot (all from memory of 62.1-2016/2019).
    """
    sysname = v.choice("system", system, VENTILATION_SYSTEMS)
    vbz = breathing_zone_outdoor_airflow(space_kind=space_kind, floor_area_m2=floor_area_m2, occupants=occupants)
    ez = (
        ZONE_AIR_DISTRIBUTION_EFFECTIVENESS[
            v.choice("air_distribution", air_distribution, ZONE_AIR_DISTRIBUTION_EFFECTIVENESS)
        ][0]
        if isinstance(air_distribution, str)
        else v.in_range("air_distribution", air_distribution, 0.1, 2.0, label="zone air distribution effectiveness")
    )
    voz = zone_outdoor_airflow(vbz=vbz, ez=ez)
    if sysname != "multi_zone":
        for name, value in (("occupant_diversity", occupant_diversity), ("ev", ev)):
            if value is not None:
                raise EngineeringInputError(
                    field=name,
                    value=value,
                    allowed="nothing unless the system is multi_zone",
                    message=f"{name}={v.fmt(value)} applies only to a multiple-zone recirculating system",
                )
        return OutdoorAirIntake(
            system=sysname,
            vbz_m3s=vbz,
            ez=ez,
            voz_m3s=voz,
            occupant_diversity=None,
            vou_m3s=None,
            ev=None,
            ev_given=False,
            vot_m3s=voz,
            method=f"Vbz = Rp·Pz + Ra·Az, Voz = Vbz/Ez with Ez = {ez:g}; {VENTILATION_SYSTEMS[sysname]}",
        )
    kind = SPACE_KINDS[space_kind]
    d = (
        1.0
        if occupant_diversity is None
        else v.in_range("occupant_diversity", occupant_diversity, 0.0, 1.0, label="occupant diversity", low_open=True)
    )
    people_part = vbz - kind.ra_l_s_m2 * floor_area_m2 / 1000.0  # Rp·Pz
    vou = d * people_part + (vbz - people_part)
    if ev is None:
        e, given = system_ventilation_efficiency(occupant_diversity=d), False
        how = f"Ev = {e:.3g} by the simplified procedure from D = {d:g}"
    else:
        e, given = v.in_range("ev", ev, 0.1, 1.0, label="system ventilation efficiency", low_open=True), True
        how = f"Ev = {e:g} from the design"
    return OutdoorAirIntake(
        system=sysname,
        vbz_m3s=vbz,
        ez=ez,
        voz_m3s=voz,
        occupant_diversity=d,
        vou_m3s=vou,
        ev=e,
        ev_given=given,
        vot_m3s=vou / e,
        method=f"Vou = D·Rp·Pz + Ra·Az, Vot = Vou/Ev, {how}; {VENTILATION_SYSTEMS[sysname]}",
    )


def co2_generation_for_activity(*, met: float | str) -> float:
    """CO2 generation per person, L/s, scaled in proportion to metabolic rate
    from 0.0052 L/s at 1.2 met (proportional scaling is common practice;
    ASTM D6245 and ASHRAE 62.1 Appendix C relate generation to activity).
    ``met`` is a number or a key of ``MET_LEVELS``."""
    if isinstance(met, str):
        m = MET_LEVELS[v.choice("met", met, MET_LEVELS)]
    else:
        m = v.in_range("met", met, 0.7, 10.0, unit="met", label="metabolic rate")
    return CO2_GENERATION_OFFICE_L_S * m / _OFFICE_MET


def outdoor_air_per_person_from_co2(
    *,
    co2_indoor_ppm: float,
    co2_outdoor_ppm: float,
    co2_generation_l_s_per_person: float = CO2_GENERATION_OFFICE_L_S,
) -> float:
    """Outdoor air per person from a steady-state indoor–outdoor CO2
    difference, in m³/s per person.

    Vo = N / (C_in − C_out), ASTM D6245 (steady-state mass balance). Valid
    only once the space has reached steady state with constant occupancy
    (roughly three time constants); otherwise it underestimates the
    difference and overestimates the ventilation. With the default
    N = 0.0052 L/s, 7.5 L/s per person gives about 700 ppm (from memory).
    """
    ci = v.co2("co2_indoor_ppm", co2_indoor_ppm)
    co = v.co2("co2_outdoor_ppm", co2_outdoor_ppm)
    n = v.in_range(
        "co2_generation_l_s_per_person",
        co2_generation_l_s_per_person,
        0.0,
        0.1,
        unit="L/s",
        label="CO2 generation",
        low_open=True,
    )
    if ci - co <= 0:
        raise EngineeringInputError(
            field="co2_indoor_ppm",
            value=ci,
            allowed=f"above outdoor {v.fmt(co)} ppm",
            message=(
                f"CO2 concentration co2_indoor_ppm={v.fmt(ci)} must be above outdoor "
                f"{v.fmt(co)} ppm for the steady-state method"
            ),
            low=co,
            unit="ppm",
        )
    return (n / 1000.0) / ((ci - co) * 1e-6)


def co2_differential_for_outdoor_air(
    *,
    outdoor_air_per_person_m3s: float,
    co2_generation_l_s_per_person: float = CO2_GENERATION_OFFICE_L_S,
) -> float:
    """Steady-state indoor–outdoor CO2 difference, ppm, for a given outdoor
    air per person: ΔC = N / Vo (ASTM D6245, inverse of
    ``outdoor_air_per_person_from_co2``)."""
    vo = v.in_range(
        "outdoor_air_per_person_m3s",
        outdoor_air_per_person_m3s,
        0.0,
        1.0,
        unit="m³/s",
        label="outdoor air per person",
        low_open=True,
    )
    n = v.in_range(
        "co2_generation_l_s_per_person",
        co2_generation_l_s_per_person,
        0.0,
        0.1,
        unit="L/s",
        label="CO2 generation",
        low_open=True,
    )
    return (n / 1000.0) / vo * 1e6
