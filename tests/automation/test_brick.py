"""Brick export and import of a site's registry and point map."""

import pytest
from rdflib.compare import isomorphic

from automation.brick import BrickImportFailed, brick_validate, site_brick_graph, site_brick_turtle
from automation.brick_import import parse_turtle, site_brick_import
from automation.models import Point
from inventory.models import AHU, Component, Site
from tests.factories.accounts import OrganisationFactory
from tests.factories.inventory import make_full_unit


def _rows(site):
    """The registry and point map of a site as plain values, without database ids, label codes or times."""
    ahus = AHU.objects.filter(building__site=site).order_by("tag")
    skip = {"id", "building", "label_code", "created_at", "ahu", "parent", "organisation", "site", "component"}

    def values(obj):
        return {f.name: getattr(obj, f.name) for f in obj._meta.concrete_fields if f.name not in skip}

    return {
        "site": {k: v for k, v in values(site).items() if k not in {"client"}},
        "buildings": [values(b) for b in site.buildings.order_by("code")],
        "units": [values(a) for a in ahus],
        "parts": [
            (values(c), c.parent.name if c.parent else None)
            for c in Component.objects.filter(ahu__in=ahus).order_by("ahu__tag", "position", "name")
        ],
        "points": [
            {**values(p), "component": p.component.name if p.component else None, "last_value_at": None}
            for p in Point.objects.filter(ahu__in=ahus).order_by("name")
        ],
    }


def test_export_is_a_valid_brick_model(plant):
    """The site's export conforms to the Brick ontology's SHACL shapes (brickschema) and names each point's
    Brick class, its part and its unit."""
    graph = site_brick_graph(site=plant.site)
    conforms, report = brick_validate(graph)
    assert conforms, report
    text = site_brick_turtle(site=plant.site)
    assert "brick:Filter_Differential_Pressure_Sensor" in text
    assert "brick:Supply_Fan" in text
    assert "unit:PA" in text


def test_round_trip_into_an_empty_organisation(plant):
    """Export, import into a fresh organisation, export again: the same graph and the same rows."""
    first = site_brick_turtle(site=plant.site)
    fresh = OrganisationFactory(name="Fresh Air", slug="fresh")
    copy = site_brick_import(organisation=fresh, text=first)
    assert copy.organisation == fresh
    second = site_brick_turtle(site=copy)
    assert isomorphic(parse_turtle(first), parse_turtle(second))
    assert _rows(copy) == _rows(plant.site)
    assert Point.objects.filter(ahu__building__site=copy).count() == len(plant.points)


def test_import_lists_every_problem_and_saves_nothing(plant):
    """A model with a bad unit airflow, a point of a class Plenum does not map and a point in the wrong unit
    is refused with each problem named (thing, field, value, what is allowed), and nothing is saved."""
    second = make_full_unit(building=plant.ahu.building, tag="AHU-02")
    AHU.objects.filter(pk=second.pk).update(design_supply_airflow_m3s=-4.0)  # stored out of bounds by hand
    text = site_brick_turtle(site=plant.site)
    text = text.replace("brick:hasUnit unit:DEG_C", "brick:hasUnit unit:PA", 1)
    text = text.replace("a brick:CO2_Level_Sensor", "a brick:Zone_Air_Humidity_Sensor")
    fresh = OrganisationFactory(name="Fresh Air", slug="fresh")
    with pytest.raises(BrickImportFailed) as caught:
        site_brick_import(organisation=fresh, text=text, validate=False)
    problems = {p.field: p for p in caught.value.problems}
    assert set(problems) == {"design_supply_airflow_m3s", "unit", "brick_class"}
    assert problems["design_supply_airflow_m3s"].subject == "unit-main-AHU-02"
    assert problems["design_supply_airflow_m3s"].value == "-4.0"
    assert "0.01" in problems["design_supply_airflow_m3s"].reason
    assert "'PA'" in problems["unit"].reason and "allowed: DEG_C" in problems["unit"].reason
    assert problems["brick_class"].value == "Zone_Air_Humidity_Sensor"
    assert "Supply_Air_Temperature_Sensor" in problems["brick_class"].reason
    assert not Site.objects.filter(organisation=fresh).exists()
    assert not AHU.objects.filter(building__site__organisation=fresh).exists()
    assert str(caught.value).startswith("3 problems found in the Brick model")


def test_import_refuses_text_that_is_not_turtle(db):
    """A file that is not Turtle is refused with the parser's reason."""
    with pytest.raises(BrickImportFailed) as caught:
        site_brick_import(organisation=OrganisationFactory(), text="this is { not turtle")
    assert caught.value.problems[0].field == "turtle"
    assert str(caught.value) == "1 problem found in the Brick model; nothing was imported"  # a count, not "(s)"
