"""A Brick model (Turtle) read back into a site's registry and point map, all or nothing: every problem of the file
named (the thing, the field, the value, why), the Brick ontology's SHACL shapes checked, each row made through the
registry's and the point map's own services. The model's terms are ``automation.brick``'s, which writes it."""

from __future__ import annotations

import datetime as dt
import json
from typing import Any

import brickschema
from brickschema.namespaces import BRICK, REC, UNIT
from django.core.exceptions import ValidationError
from django.db import models, transaction
from rdflib import RDF, RDFS, Literal, URIRef
from rdflib.exceptions import ParserError
from rdflib.term import Node

from accounts.models import Organisation, User
from inventory import services as registry
from inventory.models import AHU, Building, Component, Site

from .brick import (
    AHU_FIELDS,
    BRICK_VERSION,
    BUILDING_FIELDS,
    COMPONENT_FIELDS,
    PLENUM,
    POINT_FIELDS,
    SITE_FIELDS,
    BrickImportFailed,
    BrickProblem,
    brick_validate,
)
from .models import Point
from .services import point_create
from .vocabulary import POINT_CLASSES


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
