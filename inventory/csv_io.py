"""CSV import and export of the registry: sites, units (with their buildings) and components.

The columns are the ones export writes, so an exported file imports back
unchanged. Import checks every row through the same model validation as the
admin and the API (``full_clean`` and ``validate_specs``); if any row is bad,
nothing is imported and every problem is reported with its line, column,
value and reason. Columns are documented in fixtures/README.md.
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import math
from collections.abc import Callable, Iterable
from dataclasses import asdict, dataclass, field
from typing import Any, TextIO

from django.core.exceptions import NON_FIELD_ERRORS, ValidationError
from django.db import IntegrityError, transaction
from django.db.models import QuerySet

from accounts.models import Organisation

from .models import AHU, Building, Component, Site
from .selectors import component_tree
from .services import component_full_clean
from .specs import SPECS

KINDS = ("sites", "ahus", "components")
LIST_SEPARATOR = ";"


@dataclass(frozen=True)
class RowError:
    line: int
    column: str
    value: str
    reason: str

    def as_dict(self) -> dict[str, Any]:
        return asdict(self)

    def __str__(self) -> str:
        where = f"line {self.line}" + (f", column {self.column}" if self.column else "")
        return f"{where}: value {self.value!r}: {self.reason}"


class ImportFailed(Exception):
    def __init__(self, errors: list[RowError]):
        self.errors = errors
        super().__init__(f"{len(errors)} problem(s) found; nothing was imported")


@dataclass
class ImportResult:
    kind: str
    created: int = 0
    updated: int = 0
    dry_run: bool = False
    objects: list = field(default_factory=list, repr=False)

    def as_dict(self) -> dict[str, Any]:
        return {"kind": self.kind, "created": self.created, "updated": self.updated, "dry_run": self.dry_run}


class CellError(ValueError):
    pass


# ---------------------------------------------------------------------------
# Cell parsers and formatters
# ---------------------------------------------------------------------------
def _text(raw: str) -> str:
    return raw.strip()


def _opt_text(raw: str) -> str | None:
    return raw.strip() or None


def _float(raw: str) -> float | None:
    raw = raw.strip()
    if not raw:
        return None
    try:
        value = float(raw)
    except ValueError:
        raise CellError("is not a number (use a point as the decimal mark)") from None
    if not math.isfinite(value):
        raise CellError("is not a finite number")
    return value


def _int(raw: str) -> int | None:
    value = _float(raw)
    if value is None:
        return None
    if value != int(value):
        raise CellError("is not a whole number")
    return int(value)


def _bool(raw: str) -> bool | None:
    text = raw.strip().lower()
    if not text:
        return None
    if text in {"true", "yes", "1"}:
        return True
    if text in {"false", "no", "0"}:
        return False
    raise CellError("is not true or false")


def _date(raw: str) -> dt.date | None:
    raw = raw.strip()
    if not raw:
        return None
    try:
        return dt.date.fromisoformat(raw)
    except ValueError:
        raise CellError("is not a date as YYYY-MM-DD") from None


def _twelve(raw: str) -> list[float] | None:
    raw = raw.strip()
    if not raw:
        return None
    parts = [p.strip() for p in raw.split(LIST_SEPARATOR)]
    if len(parts) != 12:
        raise CellError(f"expected 12 monthly values in °C separated by '{LIST_SEPARATOR}', got {len(parts)}")
    values = []
    for month, part in enumerate(parts, start=1):
        try:
            values.append(float(part))
        except ValueError:
            raise CellError(f"month {month}: {part!r} is not a number in °C") from None
    return values


def _fmt(value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return repr(int(value)) if value.is_integer() else repr(value)
    if isinstance(value, (dt.date, dt.datetime)):
        return value.isoformat()
    if isinstance(value, list):
        return LIST_SEPARATOR.join(_fmt(v) for v in value)
    return str(value)


# (column, model field, parser); a parser returning None means "leave the model default".
Column = tuple[str, str, Callable[[str], Any]]

SITE_COLUMNS: list[Column] = [
    ("code", "code", _text),
    ("name", "name", _text),
    ("address", "address", _text),
    ("latitude", "latitude", _float),
    ("longitude", "longitude", _float),
    ("altitude_m", "altitude_m", _float),
    ("time_zone", "time_zone", _opt_text),
    ("normals_min_c", "normals_min_c", _twelve),
    ("normals_max_c", "normals_max_c", _twelve),
    ("preheat_threshold_c", "preheat_threshold_c", _float),
    ("cooling_threshold_c", "cooling_threshold_c", _float),
]
SITE_EXTRA = ["client"]

AHU_KEY = ["site_code", "building_code", "building_name", "building_floors", "tag", "label_code"]
AHU_COLUMNS: list[Column] = [
    ("location", "location", _text),
    ("area_served", "area_served", _text),
    ("space_kind", "space_kind", _text),
    ("floor_area_m2", "floor_area_m2", _float),
    ("design_occupants", "design_occupants", _int),
    ("design_supply_airflow_m3s", "design_supply_airflow_m3s", _float),
    ("design_min_oa_fraction", "design_min_oa_fraction", _float),
    ("full_outdoor_air", "full_outdoor_air", _bool),
    ("heat_recovery", "heat_recovery", _opt_text),
    ("supply_air_setpoint_c", "supply_air_setpoint_c", _float),
    ("duct_static_setpoint_pa", "duct_static_setpoint_pa", _float),
    ("service_start", "service_start", _date),
    ("status", "status", _opt_text),
    ("notes", "notes", _text),
]

COMPONENT_KEY = ["site_code", "building_code", "ahu_tag", "name", "kind", "parent", "position", "installed_on",
                 "label_code"]  # fmt: skip
SPEC_COLUMNS = sorted({f"spec.{f.name}" for fields in SPECS.values() for f in fields})

# Which column a model field's error belongs to.
FIELD_TO_COLUMN = {
    "building": "building_code",
    "ahu": "ahu_tag",
    "organisation": "code",
    NON_FIELD_ERRORS: "",
}


def header(kind: str) -> list[str]:
    if kind == "sites":
        return [c[0] for c in SITE_COLUMNS] + SITE_EXTRA
    if kind == "ahus":
        return AHU_KEY + [c[0] for c in AHU_COLUMNS]
    if kind == "components":
        return COMPONENT_KEY + SPEC_COLUMNS
    raise ValueError(f"kind={kind!r} is not one of {', '.join(KINDS)}")


def decode_upload(data: bytes) -> TextIO:
    """Text stream of an uploaded file; UTF-8 with or without a byte-order mark (spreadsheets add one)."""
    try:
        return io.StringIO(data.decode("utf-8-sig"), newline="")
    except UnicodeDecodeError as exc:
        raise ImportFailed([RowError(0, "", "", f"the file is not UTF-8 text ({exc.reason} at byte {exc.start})")])


# ---------------------------------------------------------------------------
# Export
# ---------------------------------------------------------------------------
def registry_export(*, kind: str, sites: QuerySet[Site], out: TextIO) -> int:
    """Write the rows of ``kind`` for ``sites`` (already tenancy-filtered) as CSV; return the row count."""
    writer = csv.DictWriter(out, fieldnames=header(kind), lineterminator="\n")
    writer.writeheader()
    count = 0
    for row in _export_rows(kind, sites):
        writer.writerow(row)
        count += 1
    return count


def _export_rows(kind: str, sites: QuerySet[Site]) -> Iterable[dict[str, str]]:
    if kind == "sites":
        for site in sites.select_related("client").order_by("code"):
            row = {col: _fmt(getattr(site, attr)) for col, attr, _ in SITE_COLUMNS}
            row["client"] = site.client.slug if site.client else ""
            yield row
        return
    ahus = (
        AHU.objects.filter(building__site__in=sites)
        .select_related("building__site")
        .order_by("building__site__code", "building__code", "tag")
    )
    if kind == "ahus":
        for ahu in ahus:
            row = {
                "site_code": ahu.building.site.code,
                "building_code": ahu.building.code,
                "building_name": ahu.building.name,
                "building_floors": _fmt(ahu.building.floors),
                "tag": ahu.tag,
                "label_code": ahu.label_code,
            }
            row.update({col: _fmt(getattr(ahu, attr)) for col, attr, _ in AHU_COLUMNS})
            yield row
        return
    for ahu in ahus.prefetch_related("components"):
        # Pre-order walk, so a parent is always written (and imported) before its children.
        stack = list(reversed(component_tree(ahu=ahu)))
        names = {c.pk: c.name for c in ahu.components.all()}
        while stack:
            node = stack.pop()
            comp = node["component"]
            row = {
                "site_code": ahu.building.site.code,
                "building_code": ahu.building.code,
                "ahu_tag": ahu.tag,
                "name": comp.name,
                "kind": comp.kind,
                "parent": names.get(comp.parent_id, ""),
                "position": _fmt(comp.position),
                "installed_on": _fmt(comp.installed_on),
                "label_code": comp.label_code,
            }
            row.update({f"spec.{k}": _fmt(v) for k, v in comp.specs.items()})
            yield row
            stack.extend(reversed(node["children"]))


# ---------------------------------------------------------------------------
# Import
# ---------------------------------------------------------------------------
def registry_import(*, kind: str, source: TextIO, organisation: Organisation, dry_run: bool = False) -> ImportResult:
    """Import a CSV of ``kind`` into ``organisation``: all rows or none.

    Rows are saved one by one inside one transaction (so a component can name a
    parent from an earlier line); at the end, any error or ``dry_run`` rolls the
    whole file back. Raises ImportFailed listing every bad row.
    """
    if kind not in KINDS:
        raise ValueError(f"kind={kind!r} is not one of {', '.join(KINDS)}")
    reader = csv.DictReader(source)
    errors: list[RowError] = []
    known = set(header(kind))
    if not reader.fieldnames:
        raise ImportFailed([RowError(1, "", "", "the file is empty; expected a header row")])
    for column in reader.fieldnames:
        if column not in known:
            allowed = "spec.<field> of the kind" if kind == "components" else ", ".join(header(kind))
            errors.append(RowError(1, column, column, f"unknown column; allowed: {allowed}"))
    if errors:
        raise ImportFailed(errors)
    importer = {"sites": _import_site, "ahus": _import_ahu, "components": _import_component}[kind]
    result = ImportResult(kind=kind, dry_run=dry_run)
    with transaction.atomic():
        for row in reader:
            line = reader.line_num
            row_errors = _import_row(importer, row, line, organisation, result)
            errors.extend(row_errors)
        if errors or dry_run:
            transaction.set_rollback(True)
    if errors:
        raise ImportFailed(errors)
    return result


def _import_row(importer, row, line, organisation, result) -> list[RowError]:
    row = {k: (v or "") for k, v in row.items() if k is not None}
    try:
        with transaction.atomic():
            obj, created = importer(row, organisation)
    except _RowProblems as exc:
        return [RowError(line, col, row.get(col, ""), reason) for col, reason in exc.problems]
    except ValidationError as exc:
        return _validation_errors(exc, row, line)
    except IntegrityError as exc:
        return [RowError(line, "", "", f"the database refused the row: {exc}")]
    result.objects.append(obj)
    if created:
        result.created += 1
    else:
        result.updated += 1
    return []


class _RowProblems(Exception):
    def __init__(self, problems: list[tuple[str, str]]):
        self.problems = problems


def _validation_errors(exc: ValidationError, row: dict[str, str], line: int) -> list[RowError]:
    found = []
    messages = exc.message_dict if hasattr(exc, "error_dict") else {NON_FIELD_ERRORS: exc.messages}
    for model_field, texts in messages.items():
        if model_field.startswith("specs."):
            column = "spec." + model_field.removeprefix("specs.")
        else:
            column = FIELD_TO_COLUMN.get(model_field, model_field)
        for text in texts:
            found.append(RowError(line, column, row.get(column, ""), text))
    return found


def _parse(row: dict[str, str], columns: list[Column], model) -> dict[str, Any]:
    """Typed values of the row's cells; an empty cell clears a nullable field and keeps others' defaults."""
    values, problems = {}, []
    for column, attr, parser in columns:
        if column not in row:
            continue
        try:
            value = parser(row[column])
        except CellError as exc:
            problems.append((column, str(exc)))
            continue
        if value is not None:
            values[attr] = value
        elif model._meta.get_field(attr).null:
            values[attr] = None
    if problems:
        raise _RowProblems(problems)
    return values


def _require(row: dict[str, str], columns: list[str]) -> None:
    missing = [(c, "required; this cell is empty") for c in columns if not row.get(c, "").strip()]
    if missing:
        raise _RowProblems(missing)


def _apply(instance, values: dict[str, Any], clean=None):
    for attr, value in values.items():
        setattr(instance, attr, value)
    (clean or (lambda obj: obj.full_clean()))(instance)
    instance.save()
    return instance


def _import_site(row, organisation):
    _require(row, ["code", "name"])
    values = _parse(row, SITE_COLUMNS, Site)
    client_slug = row.get("client", "").strip()
    values["client"] = None
    if client_slug:
        values["client"] = Organisation.objects.filter(slug=client_slug).first()
        if values["client"] is None:
            raise _RowProblems([("client", "no organisation has this slug")])
    site = Site.objects.filter(organisation=organisation, code=values["code"]).first()
    created = site is None
    site = site or Site(organisation=organisation)
    return _apply(site, values), created


def _site_in(organisation, code: str, column="site_code") -> Site:
    site = Site.objects.filter(organisation=organisation, code=code).first()
    if site is None:
        raise _RowProblems([(column, f"no site with this code in {organisation.slug}; import the sites first")])
    return site


def _label_code(row, model, instance) -> dict[str, str]:
    code = row.get("label_code", "").strip().upper()
    if not code or (instance.pk and instance.label_code == code):
        return {}
    if instance.pk:
        raise _RowProblems([("label_code", f"this row's record already has label {instance.label_code}")])
    if model.objects.filter(label_code=code).exists():
        raise _RowProblems([("label_code", "this label code belongs to another record")])
    return {"label_code": code}


def _import_ahu(row, organisation):
    _require(row, ["site_code", "building_code", "tag"])
    site = _site_in(organisation, row["site_code"].strip())
    problems = []
    try:
        floors = _int(row.get("building_floors", ""))
    except CellError as exc:
        problems.append(("building_floors", str(exc)))
        floors = None
    try:
        values = _parse(row, AHU_COLUMNS, AHU)
    except _RowProblems as exc:
        problems.extend(exc.problems)
    if problems:
        raise _RowProblems(problems)
    building = Building.objects.filter(site=site, code=row["building_code"].strip()).first()
    if building is None:
        name = row.get("building_name", "").strip() or row["building_code"].strip()
        building = Building(site=site, code=row["building_code"].strip(), name=name, floors=floors)
        try:
            building.full_clean()
        except ValidationError as exc:
            raise _RowProblems([(f"building_{k}", " ".join(v)) for k, v in exc.message_dict.items()])
        building.save()
    elif row.get("building_name", "").strip() and (
        building.name != row["building_name"].strip() or building.floors != floors
    ):
        building.name, building.floors = row["building_name"].strip(), floors
        building.save(update_fields=["name", "floors"])
    ahu = AHU.objects.filter(building=building, tag=row["tag"].strip()).first()
    created = ahu is None
    ahu = ahu or AHU(building=building, tag=row["tag"].strip())
    values.update(_label_code(row, AHU, ahu))
    return _apply(ahu, values), created


def _import_component(row, organisation):
    _require(row, ["site_code", "building_code", "ahu_tag", "name", "kind"])
    site = _site_in(organisation, row["site_code"].strip())
    ahu = AHU.objects.filter(building__site=site, building__code=row["building_code"].strip(),
                             tag=row["ahu_tag"].strip()).first()  # fmt: skip
    if ahu is None:
        raise _RowProblems([("ahu_tag", "no unit with this tag in that building; import the units first")])
    values = _parse(row, [("position", "position", _int), ("installed_on", "installed_on", _date)], Component)
    values["kind"] = row["kind"].strip()
    values["name"] = row["name"].strip()
    values["specs"] = {
        col.removeprefix("spec."): cell.strip() for col, cell in row.items() if col.startswith("spec.") and cell.strip()
    }
    parent_name = row.get("parent", "").strip()
    values["parent"] = None
    if parent_name:
        values["parent"] = ahu.components.filter(name=parent_name).first()
        if values["parent"] is None:
            raise _RowProblems([("parent", "no component of this name in the unit on an earlier line")])
    matches = list(ahu.components.filter(name=values["name"])[:2])
    if len(matches) > 1:
        raise _RowProblems([("name", "the unit has two components of this name; rename one first")])
    component = matches[0] if matches else Component(ahu=ahu)
    created = not matches
    values.update(_label_code(row, Component, component))
    return _apply(component, values, clean=component_full_clean), created
