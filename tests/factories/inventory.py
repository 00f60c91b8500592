import factory

from inventory.models import AHU, Building, Component, ComponentKind, Site

from .accounts import OrganisationFactory


class SiteFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = Site

    organisation = factory.SubFactory(OrganisationFactory)
    code = factory.Sequence(lambda n: f"site-{n}")
    name = factory.Sequence(lambda n: f"Test Site {n}")
    address = "1 Invented Road, Testville"
    latitude = 52.0
    longitude = 5.0
    time_zone = "Europe/Amsterdam"


class BuildingFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = Building

    site = factory.SubFactory(SiteFactory)
    code = factory.Sequence(lambda n: f"b{n}")
    name = factory.Sequence(lambda n: f"Building {n}")


class AHUFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = AHU

    building = factory.SubFactory(BuildingFactory)
    tag = factory.Sequence(lambda n: f"AHU-{n:02d}")
    location = "Roof plant room"
    area_served = "Offices level 1–3"
    space_kind = "office"
    floor_area_m2 = 1200.0
    design_occupants = 60
    design_supply_airflow_m3s = 3.0
    design_min_oa_fraction = 0.25
    supply_air_setpoint_c = 17.0
    duct_static_setpoint_pa = 250.0


FILTER_SPECS = {
    "stage": "final",
    "merv": "13",
    "iso_16890": "ePM1",
    "iso_16890_pct": 55,
    "size": "592x592x600",
    "count": 6,
    "clean_dp_pa": 90,
    "final_dp_pa": 250,
    "design_airflow_m3s": 3.0,
}


class ComponentFactory(factory.django.DjangoModelFactory):
    class Meta:
        model = Component

    ahu = factory.SubFactory(AHUFactory)
    kind = ComponentKind.FILTER_BANK
    name = "Final filters"
    specs = factory.LazyFunction(lambda: dict(FILTER_SPECS))


def make_full_unit(**ahu_fields) -> AHU:
    """A mixed-air unit with the usual tree: screen, dampers, filters, coils, fan, sensors, pan."""
    ahu = AHUFactory(**ahu_fields)
    parts = [
        ("intake_screen", "Intake screen", {"free_area_m2": 1.2, "mesh_mm": 12}),
        ("damper", "Outdoor-air damper", {"role": "outdoor", "actuator": "spring_return", "stroke_time_s": 90}),
        ("damper", "Return-air damper", {"role": "return", "actuator": "modulating", "stroke_time_s": 90}),
        ("damper", "Mixing damper", {"role": "mixing", "actuator": "modulating", "stroke_time_s": 90}),
        (
            "filter_bank",
            "Pre-filters",
            {**FILTER_SPECS, "stage": "pre", "merv": "8", "iso_16890": "ePM10", "clean_dp_pa": 50, "final_dp_pa": 150},
        ),
        ("filter_bank", "Final filters", dict(FILTER_SPECS)),
        (
            "coil",
            "Heating coil",
            {
                "duty": "heating",
                "fluid": "water",
                "design_capacity_w": 60000,
                "design_water_flow_m3s": 0.0007,
                "entering_water_c": 70,
                "leaving_water_c": 50,
            },
        ),
        (
            "coil",
            "Cooling coil",
            {
                "duty": "cooling",
                "fluid": "water",
                "design_capacity_w": 80000,
                "design_water_flow_m3s": 0.0032,
                "entering_water_c": 6,
                "leaving_water_c": 12,
            },
        ),
        ("drain_pan", "Drain pan", {"has_trap": True, "trap_depth_mm": 80}),
        (
            "fan",
            "Supply fan",
            {
                "role": "supply",
                "fan_type": "plug",
                "drive": "direct",
                "vsd": True,
                "motor_power_w": 5500,
                "design_flow_m3s": 3.0,
                "design_pressure_pa": 800,
                "design_speed_rpm": 1450,
            },
        ),
        (
            "sensor",
            "Return CO2 sensor",
            {"measures": "co2", "location": "return duct", "range_low": 0, "range_high": 2000, "accuracy": 50},
        ),
        (
            "sensor",
            "Supply temperature sensor",
            {"measures": "temperature", "location": "supply duct", "accuracy": 0.3},
        ),
    ]
    for position, (kind, name, specs) in enumerate(parts):
        ComponentFactory(ahu=ahu, kind=kind, name=name, specs=specs, position=position)
    return ahu
