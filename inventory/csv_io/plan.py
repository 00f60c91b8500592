"""What one file will change: the registry read once, rows checked against it, then written in bulk in one
transaction."""

from __future__ import annotations

import csv
import io
from collections.abc import Callable, Iterable
from typing import Any

from django.core.exceptions import ValidationError
from django.db import IntegrityError, transaction

from accounts.changes import organisation_changed
from accounts.inputs import (
    shown,
)
from accounts.models import Organisation

from ..models import AHU, Building, Component, Site, new_component_code, new_unit_code
from ..services import component_full_clean
from ..today import today_for
from .file_format import BYTE_ORDER_MARK, CONTROL_CHARACTERS, ImportFailed, RowError, unmark
from .words import plain_model_errors


class RowProblems(Exception):
    def __init__(self, problems: list[tuple[str, str]]):
        self.problems = problems


# Relations the plan sets itself from records it has read; their existence needs no query per row.
RELATIONS = {Site: ["organisation", "client"], Building: ["site"], AHU: ["building"], Component: ["ahu", "parent"]}
CHUNK = 2000


def _model_clean(instance) -> None:
    # Keys and label codes are checked against the plan's lookups, not by a query per row.
    options = {"exclude": RELATIONS[type(instance)], "validate_unique": False, "validate_constraints": False}
    if isinstance(instance, Component):
        component_full_clean(instance, **options)
    else:
        instance.full_clean(**options)


def _chunks(items: list, size: int = CHUNK) -> Iterable[list]:
    for start in range(0, len(items), size):
        yield items[start : start + size]


class ImportPlan:
    """What one file will change: the registry read once, rows checked against it, written in bulk."""

    def __init__(self, *, kind: str, organisation: Organisation, text: str):
        self.organisation = organisation
        self.today = today_for(organisation)  # a row's day while it names no site of the organisation
        self.new: dict[type, list] = {Site: [], Building: [], AHU: [], Component: []}
        self.new_ids: set[int] = set()
        self.changed: dict[type, dict[int, Any]] = {Site: {}, Building: {}, AHU: {}, Component: {}}
        self.changed_fields: dict[type, set[str]] = {Site: set(), Building: set(), AHU: set(), Component: set()}
        self.labelled: dict[str, Any] = {}  # label codes given in the file -> the record that took each
        self.warnings: list[tuple[str, str]] = []  # (column, words) of the row just checked: saved, but unlikely
        keys = _key_cells(text, kind)
        self.sites = {s.code: s for s in Site.objects.filter(organisation=organisation)}
        self.clients = {o.slug: o for o in Organisation.objects.filter(slug__in=keys["client"])}
        model = {"ahus": AHU, "components": Component}.get(kind)
        self.labels_in_use: set[str] = set()
        if model is not None:
            codes = sorted(keys["label_code"])
            for chunk in _chunks(codes):
                self.labels_in_use.update(
                    model.objects.filter(label_code__in=chunk).values_list("label_code", flat=True)
                )
        self.buildings: dict[tuple[int, str], Building] = {}
        self.ahus: dict[tuple[int, str, str], AHU] = {}
        self.components: dict[int, dict[str, list[Component]]] = {}
        if kind in ("ahus", "components"):
            site_ids = [s.pk for s in self.sites.values()]
            for building in Building.objects.filter(site_id__in=site_ids):
                self.buildings[(building.site_id, building.code)] = building
            sites_by_pk = {s.pk: s for s in self.sites.values()}
            for building in self.buildings.values():
                building.site = sites_by_pk[building.site_id]  # read by the unit's check (its site's today)
            by_pk = {b.pk: b for b in self.buildings.values()}
            for ahu in AHU.objects.filter(building__site_id__in=site_ids):
                building = by_pk[ahu.building_id]
                ahu.building = building  # one object per building, so a renamed building is written once
                self.ahus[(building.site_id, building.code, ahu.tag)] = ahu
        if kind == "components":
            self._load_components()

    # -- lookups --------------------------------------------------------------
    def site(self, code: str, problems: list[tuple[str, str]], column: str = "site_code") -> Site | None:
        """The organisation's site of ``code``, or None with the problem said (and the codes there are)."""
        site = self.sites.get(code)
        if site is None or site.pk is None:
            codes = sorted(c for c, s in self.sites.items() if s.pk is not None)
            listed = ", ".join(codes[:20]) + (f" and {len(codes) - 20} more" if len(codes) > 20 else "")
            problems.append(
                (
                    column,
                    f"Site code: no site with code {shown(code)} in your organisation; "
                    + (f"your site codes: {listed}" if codes else "your organisation has no sites yet")
                    + " (import the sites first)",
                )
            )
            return None
        return site

    def _load_components(self) -> None:
        by_id: dict[int, Component] = {}
        ahus_by_pk = {a.pk: a for a in self.ahus.values()}
        ahu_ids = list(ahus_by_pk)
        for chunk in _chunks(ahu_ids):
            for comp in Component.objects.filter(ahu_id__in=chunk).order_by("ahu", "position", "id"):
                comp.ahu = ahus_by_pk[comp.ahu_id]  # read by the part's check (its site's today)
                by_id[comp.pk] = comp
                self.components.setdefault(comp.ahu_id, {}).setdefault(comp.name, []).append(comp)
        for comp in by_id.values():
            if comp.parent_id is not None and comp.parent_id in by_id:
                comp.parent = by_id[comp.parent_id]  # the loop check walks parents in memory

    def label(self, row: dict[str, str], instance) -> dict[str, str]:
        """The label code the row gives its record, checked against the registry and the file's earlier rows."""
        code = row.get("label_code", "").strip().upper()
        if not code or (instance.pk and instance.label_code == code):
            return {}
        if instance.pk:
            raise RowProblems(
                [
                    (
                        "label_code",
                        f"Label code: this row's record already has label {instance.label_code}; "
                        f"allowed: {instance.label_code} or empty",
                    )
                ]
            )
        if self.labelled.get(code) is instance:
            return {}
        if code in self.labels_in_use or code in self.labelled:
            raise RowProblems(
                [("label_code", f"Label code: {shown(code)} belongs to another record; allowed: a free code or empty")]
            )
        return {"label_code": code}

    # -- staging --------------------------------------------------------------
    def check(self, instance, values: dict[str, Any], problems: list[tuple[str, str]]) -> None:
        """Apply ``values`` and add the record's own refusals to ``problems``, but for columns already refused
        (one problem per cell; the cross-field rules still speak about the readable ones)."""
        for attr, value in values.items():
            setattr(instance, attr, value)
        said = {column for column, _ in problems}
        try:
            _model_clean(instance)
        except ValidationError as exc:
            for column, reason in plain_model_errors(exc, type(instance), {}):
                if column not in said:
                    problems.append((column, reason))

    def stage(self, instance, values: dict[str, Any]) -> None:
        """Apply ``values`` and check the record; remember it for the write. Raises RowProblems."""
        problems: list[tuple[str, str]] = []
        self.check(instance, values, problems)
        if problems:
            raise RowProblems(problems)
        self.remember(instance, values)

    def warnings_taken(self) -> list[tuple[str, str]]:
        """The warnings of the row just checked, (column, words); the list is emptied for the next row."""
        taken, self.warnings = self.warnings, []
        return taken

    def remember(self, instance, values: dict[str, Any]) -> None:
        """Keep a checked record for the write."""
        if "label_code" in values:
            self.labelled[values["label_code"]] = instance
        if instance.pk is None:
            if id(instance) not in self.new_ids:
                self.new_ids.add(id(instance))
                self.new[type(instance)].append(instance)
        else:
            self.changed[type(instance)][instance.pk] = instance
            self.changed_fields[type(instance)].update(values)

    # -- writing --------------------------------------------------------------
    def write(self, *, finish: Callable[[], None]) -> None:
        """Write every staged record in bulk, in one transaction; a refusal by the database imports nothing."""
        try:
            with transaction.atomic():
                for model in (Site, Building, AHU):
                    if model is AHU:
                        self._fresh_labels(AHU)
                    model.objects.bulk_create(self.new[model], batch_size=500)
                    self._update(model)
                self._fresh_labels(Component)
                pending = self.new[Component]
                while pending:
                    # Parents before children: a parent made by this file needs its id first.
                    ready = [c for c in pending if c.parent is None or c.parent.pk is not None]
                    if not ready:
                        raise IntegrityError("a component's parent could not be written before it")
                    Component.objects.bulk_create(ready, batch_size=500)
                    pending = [c for c in pending if c.pk is None]
                self._update(Component)
                organisation_changed(organisation_id=self.organisation.pk)  # a registry import renames and adds
                finish()
        except IntegrityError as exc:
            raise ImportFailed([RowError(0, "", "", f"the database refused the file, nothing was imported: {exc}")])

    def _update(self, model) -> None:
        records = list(self.changed[model].values())
        fields = sorted(self.changed_fields[model])
        if records and fields:
            model.objects.bulk_update(records, fields, batch_size=500)

    def _fresh_labels(self, model) -> None:
        """New records without a label code from the file get random ones; redraw any already taken."""
        drawn = [r for r in self.new[model] if self.labelled.get(r.label_code) is not r]
        make = new_unit_code if model is AHU else new_component_code
        while drawn:
            codes = [r.label_code for r in drawn]
            taken = set(self.labelled)
            for chunk in _chunks(codes):
                taken.update(model.objects.filter(label_code__in=chunk).values_list("label_code", flat=True))
            seen: set[str] = set()
            again = []
            for record in drawn:
                if record.label_code in taken or record.label_code in seen:
                    record.label_code = make()
                    again.append(record)
                seen.add(record.label_code)
            drawn = again


def _key_cells(text: str, kind: str) -> dict[str, set[str]]:
    """The label codes and client slugs the file names, read in one light pass for the plan's queries."""
    found: dict[str, set[str]] = {"label_code": set(), "client": set()}
    try:
        for row in csv.DictReader(io.StringIO(text.removeprefix(BYTE_ORDER_MARK), newline="")):
            for column, cells in found.items():
                cell = unmark(row.get(column) or "").strip()
                if cell and CONTROL_CHARACTERS.search(cell) is None:  # refused per row; never sent in a query
                    cells.add(cell.upper() if column == "label_code" else cell)
    except csv.Error:
        pass  # the checking pass reports the line
    return found
