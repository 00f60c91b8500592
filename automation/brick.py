"""A site's registry and point map as a Brick model (Turtle), and back.

Made with the ``brickschema`` library on the Brick Schema 1.5 it ships: the site and its buildings are REC
locations (``rec:Site``, ``rec:Building``; Brick 1.4 moved them there), a unit is a ``brick:AHU`` located in
its building, its parts are Brick equipment (``automation.vocabulary.component_brick_class``) joined by
``brick:hasPart``, and each point is its Brick class, ``brick:isPointOf`` the unit or the part, with its QUDT
unit (``brick:hasUnit``). What Brick has no term for (a unit's design airflow, a filter's final pressure drop,
the site's climate normals, a point's BACnet address) travels as ``plenum:`` properties, so an exported file
imported into an empty organisation gives the same registry and point map.

Names in the file come from the site's code, building codes, unit tags, part order and point names, never
from database ids, so exporting the imported copy gives the same graph (but for ``plenum:trendHeader``, the
name a trend CSV uses for a point, which holds the unit's label code where two units share a point name: the
import does not read it, and a copy's units get label codes anew). ``brick_validate`` runs the Brick
ontology's SHACL shapes (``brickschema.Graph.validate``); an import is checked by them too. This module holds
the model's terms and writes it; ``automation.brick_import`` reads it back.
"""

from __future__ import annotations

import functools
import json
from dataclasses import asdict, dataclass
from typing import Any
from urllib.parse import quote

import brickschema
from brickschema.namespaces import BRICK, QUDT, REC, UNIT
from django.db import models
from rdflib import RDF, RDFS, Literal, Namespace, URIRef

from engineering.formatting import count_text
from inventory.models import AHU, Component, Site
from inventory.specs import SpecErrors, validate_specs

from .models import Point
from .trends import point_headers
from .vocabulary import component_brick_class

BRICK_VERSION = "1.5"
PLENUM = Namespace("https://plenum.invalid/schema#")
SITE_BASE = "https://plenum.invalid/site/"

# Fields carried as plenum: properties (the name travels as rdfs:label; keys and computed fields stay home).
SITE_FIELDS = (
    "code",
    "address",
    "access_notes",
    "latitude",
    "longitude",
    "altitude_m",
    "time_zone",
    "normals_min_c",
    "normals_max_c",
    "preheat_threshold_c",
    "cooling_threshold_c",
)
BUILDING_FIELDS = ("code", "floors")
_AHU_SKIP = {"id", "building", "label_code", "created_at", "tag"}  # the tag is its rdfs:label
AHU_FIELDS = tuple(f.name for f in AHU._meta.concrete_fields if f.name not in _AHU_SKIP)
COMPONENT_FIELDS = ("kind", "specs", "position", "installed_on", "retired_on")
POINT_FIELDS = ("bacnet_device_instance", "bacnet_object_type", "bacnet_object_instance")


@dataclass(frozen=True)
class BrickProblem:
    """One problem of an imported Brick model: the thing (its name in the file), the field, the value, why."""

    subject: str
    field: str
    value: str
    reason: str

    def as_dict(self) -> dict[str, str]:
        return asdict(self)

    def __str__(self) -> str:
        return f"{self.subject} {self.field}: value {self.value!r}: {self.reason}"


class BrickImportFailed(Exception):
    def __init__(self, problems: list[BrickProblem]):
        self.problems = problems
        super().__init__(f"{count_text(len(problems), 'problem')} found in the Brick model; nothing was imported")


# ---------------------------------------------------------------------------
# Names
# ---------------------------------------------------------------------------
def site_namespace(code: str) -> Namespace:
    return Namespace(f"{SITE_BASE}{quote(code, safe='')}#")


def _name(*parts: str) -> str:
    return "-".join(quote(str(p), safe="") for p in parts)


def _literal(field: models.Field, value: Any) -> Literal | None:
    if value is None or value == "":
        return None
    if isinstance(field, models.JSONField):
        return Literal(json.dumps(value, sort_keys=True, ensure_ascii=False), datatype=RDF.JSON)
    if isinstance(field, models.FloatField):
        return Literal(float(value))
    return Literal(value)


def _add_fields(graph: brickschema.Graph, subject: URIRef, obj: models.Model, names: tuple[str, ...]) -> None:
    for name in names:
        literal = _literal(obj._meta.get_field(name), getattr(obj, name))
        if literal is not None:
            graph.add((subject, PLENUM[name], literal))


# ---------------------------------------------------------------------------
# Export
# ---------------------------------------------------------------------------
def site_brick_graph(*, site: Site) -> brickschema.Graph:
    """The site's registry and point map as a Brick graph (the Brick ontology itself is not included)."""
    graph = brickschema.Graph(brick_version=BRICK_VERSION)
    ns = site_namespace(site.code)
    graph.bind("plenum", PLENUM)
    graph.bind("site", ns)
    graph.bind("unit", UNIT)
    graph.bind("qudt", QUDT)
    site_ref = ns["site"]
    graph.add((site_ref, RDF.type, REC.Site))
    graph.add((site_ref, RDFS.label, Literal(site.name)))
    _add_fields(graph, site_ref, site, SITE_FIELDS)
    units_used: set[str] = set()
    buildings = list(site.buildings.order_by("code"))
    ahus = AHU.objects.filter(building__site=site).select_related("building").order_by("building__code", "tag")
    parts_by_unit: dict[int, list[Component]] = {}
    for part in Component.objects.filter(ahu__building__site=site).order_by("ahu_id", "position", "id"):
        parts_by_unit.setdefault(part.ahu_id, []).append(part)
    points_by_unit: dict[int, list[Point]] = {}
    site_points = list(Point.objects.filter(ahu__building__site=site).select_related("ahu").order_by("ahu_id", "name"))
    for point in site_points:
        points_by_unit.setdefault(point.ahu_id, []).append(point)
    # The exact name a trend CSV of this site uses for each point (for the reader; the import does not read it:
    # a qualified name holds the unit's label code, which a copy of the site gets anew).
    headers = point_headers(site_points)
    for building in buildings:
        ref = ns[_name("building", building.code)]
        graph.add((ref, RDF.type, REC.Building))
        graph.add((ref, RDFS.label, Literal(building.name)))
        graph.add((site_ref, BRICK.hasPart, ref))
        _add_fields(graph, ref, building, BUILDING_FIELDS)
    for ahu in ahus:
        unit_name = _name("unit", ahu.building.code, ahu.tag)
        unit_ref = ns[unit_name]
        graph.add((unit_ref, RDF.type, BRICK.AHU))
        graph.add((unit_ref, RDFS.label, Literal(ahu.tag)))
        graph.add((unit_ref, BRICK.hasLocation, ns[_name("building", ahu.building.code)]))
        _add_fields(graph, unit_ref, ahu, AHU_FIELDS)
        part_refs: dict[int, URIRef] = {}
        for number, part in enumerate(parts_by_unit.get(ahu.pk, []), start=1):
            part_refs[part.pk] = ns[f"{unit_name}-part-{number}"]
        for part in parts_by_unit.get(ahu.pk, []):
            ref = part_refs[part.pk]
            graph.add((ref, RDF.type, BRICK[component_brick_class(kind=part.kind, specs=part.specs)]))
            graph.add((ref, RDFS.label, Literal(part.name)))
            graph.add((part_refs.get(part.parent_id, unit_ref), BRICK.hasPart, ref))
            _add_fields(graph, ref, part, COMPONENT_FIELDS[:1])
            graph.add(
                (
                    ref,
                    PLENUM.specs,
                    _literal(Component._meta.get_field("specs"), _stored_specs(part))
                    or Literal("{}", datatype=RDF.JSON),
                )
            )
            _add_fields(graph, ref, part, COMPONENT_FIELDS[2:])
        for point in points_by_unit.get(ahu.pk, []):
            ref = ns[f"{unit_name}-point-{_name(point.name)}"]
            graph.add((ref, RDF.type, BRICK[point.brick_class]))
            graph.add((ref, RDFS.label, Literal(point.name)))
            graph.add((ref, BRICK.isPointOf, part_refs[point.component_id] if point.component_id else unit_ref))
            graph.add((ref, BRICK.hasUnit, UNIT[point.unit]))
            graph.add((ref, PLENUM.trendHeader, Literal(headers[point.pk])))
            units_used.add(point.unit)
            _add_fields(graph, ref, point, POINT_FIELDS)
    # The QUDT vocabulary is not part of the Brick ontology: the units used are declared, as its shapes ask.
    for unit in sorted(units_used):
        graph.add((UNIT[unit], RDF.type, QUDT.Unit))
    return graph


def _stored_specs(part: Component) -> dict:
    """The part's specs as the registry stores them once validated (numbers as numbers in SI), so the copy an
    import makes exports the same; specs stored out of bounds go out as they are (the import then names them)."""
    try:
        return validate_specs(kind=part.kind, specs=part.specs)
    except SpecErrors:
        return part.specs


def site_brick_turtle(*, site: Site) -> str:
    return site_brick_graph(site=site).serialize(format="turtle")


@functools.cache
def brick_ontology() -> brickschema.Graph:
    """The Brick ontology with its SHACL shapes, read once per process from the brickschema package."""
    return brickschema.Graph(load_brick=True, brick_version=BRICK_VERSION)


def brick_validate(graph: brickschema.Graph) -> tuple[bool, str]:
    """Validate ``graph`` against the Brick ontology's SHACL shapes: (conforms, the report as text)."""
    conforms, _results, text = graph.validate(extra_graphs=[brick_ontology()])
    return bool(conforms), str(text)
