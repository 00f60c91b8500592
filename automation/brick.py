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
ontology's SHACL shapes (``brickschema.Graph.validate``); an import is checked by them too.
"""

from __future__ import annotations

import datetime as dt
import functools
import json
from dataclasses import asdict, dataclass
from typing import Any
from urllib.parse import quote

import brickschema
from brickschema.namespaces import BRICK, QUDT, REC, UNIT
from django.core.exceptions import ValidationError
from django.db import models, transaction
from rdflib import RDF, RDFS, Literal, Namespace, URIRef
from rdflib.exceptions import ParserError
from rdflib.term import Node

from accounts.models import Organisation, User
from inventory import services as registry
from inventory.models import AHU, Building, Component, Site
from inventory.specs import SpecErrors, validate_specs

from .models import Point
from .services import point_create
from .trends import point_headers
from .vocabulary import POINT_CLASSES, component_brick_class

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
        super().__init__(f"{len(problems)} problem(s) found in the Brick model; nothing was imported")


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
def _brick_ontology() -> brickschema.Graph:
    """The Brick ontology with its SHACL shapes, read once per process from the brickschema package."""
    return brickschema.Graph(load_brick=True, brick_version=BRICK_VERSION)


def brick_validate(graph: brickschema.Graph) -> tuple[bool, str]:
    """Validate ``graph`` against the Brick ontology's SHACL shapes: (conforms, the report as text)."""
    conforms, _results, text = graph.validate(extra_graphs=[_brick_ontology()])
    return bool(conforms), str(text)


# ---------------------------------------------------------------------------
# Import
# ---------------------------------------------------------------------------
def _local(ref: Node) -> str:
    text = str(ref)
    return text.rsplit("#", 1)[-1] if "#" in text else text


class _Reader:
    """Reads one Brick graph into field values, collecting every problem."""

    def __init__(self, graph: brickschema.Graph):
        self.graph = graph
        self.problems: list[BrickProblem] = []

    def problem(self, subject: Node, field: str, value: Any, reason: str) -> None:
        self.problems.append(BrickProblem(_local(subject), field, "" if value is None else str(value), reason))

    def label(self, subject: Node) -> str:
        value = self.graph.value(subject, RDFS.label)
        if value is None:
            self.problem(subject, "name", "", "has no rdfs:label; allowed: the name as text")
            return ""
        return str(value)

    def fields(self, subject: Node, model: type[models.Model], names: tuple[str, ...]) -> dict[str, Any]:
        values: dict[str, Any] = {}
        for name in names:
            literal = self.graph.value(subject, PLENUM[name])
            if literal is None:
                continue
            if not isinstance(literal, Literal):
                self.problem(subject, name, literal, "is not a literal value")
                continue
            field = model._meta.get_field(name)
            if literal.datatype == RDF.JSON:
                try:
                    values[name] = json.loads(str(literal))
                except ValueError:
                    self.problem(subject, name, literal, "is not JSON; allowed: a JSON value")
                continue
            value = literal.toPython()
            if isinstance(field, models.DateField) and isinstance(value, str):
                try:
                    value = dt.date.fromisoformat(value)
                except ValueError:
                    self.problem(subject, name, value, "is not a date; allowed: YYYY-MM-DD")
                    continue
            values[name] = value
        return values

    def of_type(self, *classes: URIRef) -> list[Node]:
        found: set[Node] = set()
        for cls in classes:
            found.update(self.graph.subjects(RDF.type, cls))
        return sorted(found, key=str)

    def part_of(self, parent: Node, child: Node) -> bool:
        return (parent, BRICK.hasPart, child) in self.graph or (child, BRICK.isPartOf, parent) in self.graph

    def children(self, parent: Node) -> list[Node]:
        found = set(self.graph.objects(parent, BRICK.hasPart)) | set(self.graph.subjects(BRICK.isPartOf, parent))
        return sorted(found, key=_part_order)


def _unit_name(unit: Node | None) -> str:
    """A QUDT unit's name (``unit:DEG_C`` is DEG_C); any other IRI whole, so the refusal shows it."""
    if unit is None:
        return ""
    text = str(unit)
    return text.removeprefix(str(UNIT))


def _part_order(ref: Node) -> tuple[int, str]:
    tail = str(ref).rsplit("-part-", 1)[-1]
    return (int(tail), str(ref)) if tail.isdigit() else (10**9, str(ref))


def _errors_to_problems(subject: Node, exc: ValidationError, given: dict[str, Any]) -> list[BrickProblem]:
    out = []
    for field, messages in exc.message_dict.items():
        value = given.get(field.split(".", 1)[0])
        shown = "" if value is None else str(getattr(value, "name", value))
        for message in messages:
            out.append(BrickProblem(_local(subject), field, shown, message))
    return out


def _saved(reader: _Reader, subject: Node, action, **kwargs):
    """Run one create service in a savepoint; a refusal becomes problems of ``subject`` and returns None."""
    try:
        with transaction.atomic():
            return action(**kwargs)
    except ValidationError as exc:
        reader.problems.extend(_errors_to_problems(subject, exc, kwargs))
        return None


def parse_turtle(text: str) -> brickschema.Graph:
    """The Turtle text as a graph, or ``BrickImportFailed`` saying where it cannot be read."""
    graph = brickschema.Graph(brick_version=BRICK_VERSION)
    try:
        graph.parse(data=text, format="turtle")
    except (ParserError, SyntaxError, ValueError) as exc:
        raise BrickImportFailed([BrickProblem("file", "turtle", "", f"cannot be read as Turtle: {exc}")]) from None
    return graph


@transaction.atomic
def site_brick_import(*, organisation: Organisation, text: str, by: User | None = None, validate: bool = True) -> Site:
    """Create the site, buildings, units, parts and points of a Brick model in ``organisation``: all or none.

    The model is checked by the Brick ontology's SHACL shapes first (``validate``), then every record through
    the same services as the API; ``BrickImportFailed`` lists every problem and nothing is saved."""
    graph = parse_turtle(text)
    reader = _Reader(graph)
    sites = reader.of_type(REC.Site, BRICK.Site)
    if len(sites) != 1:
        raise BrickImportFailed(
            [BrickProblem("file", "site", str(len(sites)), "the model must hold exactly one rec:Site")]
        )
    if validate:
        conforms, report = brick_validate(graph)
        if not conforms:
            raise BrickImportFailed(
                [BrickProblem("file", "shacl", "", "does not conform to the Brick ontology's shapes: " + report)]
            )
    site_ref = sites[0]
    site_values = reader.fields(site_ref, Site, SITE_FIELDS)
    code = site_values.get("code")
    if code and Site.objects.filter(organisation=organisation, code=code).exists():
        reader.problem(site_ref, "code", code, f"{organisation} already has a site with this code; allowed: a new code")
        raise BrickImportFailed(reader.problems)
    site = _saved(reader, site_ref, registry.site_create, by=by, organisation=organisation,
                  name=reader.label(site_ref), **site_values)  # fmt: skip
    if site is None:
        raise BrickImportFailed(reader.problems)
    buildings: dict[Node, Building | None] = {}
    for ref in reader.of_type(REC.Building, BRICK.Building):
        if not reader.part_of(site_ref, ref):
            reader.problem(ref, "site", "", "is not a part of the model's site")
            continue
        values = reader.fields(ref, Building, BUILDING_FIELDS)
        buildings[ref] = _saved(reader, ref, registry.building_create, by=by, site=site, name=reader.label(ref),
                                **values)  # fmt: skip
    units: dict[Node, AHU | None] = {}
    for ref in reader.of_type(BRICK.AHU, BRICK.Air_Handling_Unit):
        located = [b for b in graph.objects(ref, BRICK.hasLocation) if b in buildings]
        if len(located) != 1:
            reader.problem(ref, "building", "", "must be located (brick:hasLocation) in one building of the site")
            continue
        building = buildings[located[0]]
        if building is None:
            continue  # the building's own problems are listed
        values = reader.fields(ref, AHU, AHU_FIELDS)
        units[ref] = _saved(reader, ref, registry.ahu_create, by=by, building=building, tag=reader.label(ref),
                            **values)  # fmt: skip
    parts: dict[Node, Component | None] = {}

    def add_parts(parent_ref: Node, ahu: AHU, parent: Component | None) -> None:
        for ref in reader.children(parent_ref):
            if ref in parts:
                reader.problem(ref, "parent", "", "is a part of more than one thing; allowed: one parent")
                continue
            values = reader.fields(ref, Component, COMPONENT_FIELDS)
            retired_on = values.pop("retired_on", None)
            part = _saved(reader, ref, registry.component_create, by=by, ahu=ahu, parent=parent, name=reader.label(ref),
                          **values)  # fmt: skip
            if part is not None and retired_on is not None:
                Component.objects.filter(pk=part.pk).update(retired_on=retired_on)
                part.retired_on = retired_on
            parts[ref] = part
            if part is not None:
                add_parts(ref, ahu, part)

    for ref, ahu in units.items():
        if ahu is not None:
            add_parts(ref, ahu, None)
    owners = {**{r: (u, None) for r, u in units.items()}, **{r: (p.ahu if p else None, p) for r, p in parts.items()}}
    # The parts of a unit that could not be made are known too: their points wait on the unit's problems.
    todo = [r for r, u in units.items() if u is None]
    while todo:
        for child in reader.children(todo.pop()):
            if child not in owners:
                owners[child] = (None, None)
                todo.append(child)
    for ref in sorted({s for s, _p, _o in graph.triples((None, BRICK.isPointOf, None))}, key=str):
        owner_ref = graph.value(ref, BRICK.isPointOf)
        classes = [_local(c) for c in graph.objects(ref, RDF.type) if str(c).startswith(str(BRICK))]
        known = [c for c in classes if c in POINT_CLASSES]
        if len(known) != 1:
            reader.problem(ref, "brick_class", ", ".join(classes), "is not one Brick point class Plenum maps; "
                           f"allowed: {', '.join(POINT_CLASSES)}")  # fmt: skip
            continue
        if owner_ref not in owners:
            reader.problem(ref, "isPointOf", _local(owner_ref), "is not a unit or a part of a unit in the model")
            continue
        ahu, component = owners[owner_ref]
        if ahu is None:
            continue  # its unit's or part's problems are listed
        unit = graph.value(ref, BRICK.hasUnit)
        values = reader.fields(ref, Point, POINT_FIELDS)
        _saved(reader, ref, point_create, by=by, ahu=ahu, component=component, name=reader.label(ref),
               brick_class=known[0], unit=_unit_name(unit),
               **values)  # fmt: skip
    if reader.problems:
        raise BrickImportFailed(reader.problems)
    return site
