"""CSV import and export of the registry: sites, units (with their buildings) and components.

The columns are the ones export writes, so an exported file imports back
unchanged. Import checks every row through the same model validation as the
admin and the API (``full_clean`` and ``validate_specs``); if any row is bad,
nothing is imported and every problem is reported with its line, column,
value and reason. Columns are documented in fixtures/README.md.

Files are made to open safely in a spreadsheet:

- Export writes UTF-8 with a byte-order mark (so accents survive) and CRLF line ends;
  import reads UTF-8 with or without the mark and either line end.
- A text cell that a spreadsheet would run as a formula (beginning with ``=``, ``+``,
  ``-``, ``@``, ``|``, ``%``, a tab or a carriage return) is written with a leading
  apostrophe, the spreadsheet's own "this is text" mark (defusedcsv, plus tab and CR).
  Numbers are written as numbers: ``-5`` in a numeric column stays a number a
  spreadsheet can add up, because a number is never a formula. Import removes the mark
  again, so the round trip is exact.
- A cell holding NUL or another control character is refused with its line and column.

Import checks the whole file in memory against the registry read once (keys, label
codes, parents) and then writes it with bulk inserts and updates in one transaction,
so a 100,000-row file takes seconds, not the minutes that a query per row would.
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import itertools
import math
import re
from collections.abc import Callable, Iterable
from dataclasses import asdict, dataclass
from typing import Any, TextIO

from defusedcsv import csv as defused_csv
from django.core.exceptions import NON_FIELD_ERRORS, ValidationError
from django.db import IntegrityError, transaction
from django.db.models import QuerySet

from accounts.changes import organisation_changed
from accounts.models import Organisation

from .models import AHU, Building, Component, Site, new_component_code, new_unit_code
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
    ("ventilation_zones", "ventilation_zones", _opt_text),
    ("air_distribution", "air_distribution", _opt_text),
    ("occupant_diversity", "occupant_diversity", _float),
    ("system_ventilation_efficiency", "system_ventilation_efficiency", _float),
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
BYTE_ORDER_MARK = "\ufeff"
# defusedcsv marks a text cell beginning with one of these (except a plain number such as -5).
FORMULA_LEADS = ("=", "+", "-", "@", "|", "%")
# It leaves these alone, yet a spreadsheet may drop them and read what follows as a formula
# (OWASP's CSV-injection list); the apostrophe itself is marked so that import's removal of the
# mark never eats a person's own leading apostrophe.
OTHER_LEADS = ("\t", "\r", "'")
TEXT_MARK = "'"


def _is_marked(cell: str) -> bool:
    """True when ``cell`` starts with the text mark that export put before a formula-like cell."""
    # defusedcsv writes a leading | as \| after the mark.
    return cell[:1] == TEXT_MARK and (cell[1:2] in FORMULA_LEADS + OTHER_LEADS or cell[1:3] == "\\|")


def _unmark(cell: str) -> str:
    """The cell as it was before export marked it (defusedcsv also writes ``|`` as ``\\|`` there)."""
    if not _is_marked(cell):
        return cell
    rest = cell[1:]
    return rest.replace("\\|", "|") if rest[0] in FORMULA_LEADS or rest[:2] == "\\|" else rest


def _out(value: Any) -> Any:
    """One export cell: numbers stay numbers (never formulas); text that could run gets the mark.

    defusedcsv's writer marks text beginning with ``= + - @ | %``; a tab, a carriage return or an
    apostrophe before such a character is marked here, before the writer sees it.
    """
    if isinstance(value, bool) or value is None or not isinstance(value, int | float):
        text = _fmt(value)
        if text[:1] in ("\t", "\r") or _is_marked(text):
            return TEXT_MARK + text
        return text
    if isinstance(value, float) and value.is_integer():
        return int(value)
    return value


def registry_export(*, kind: str, sites: QuerySet[Site], out: TextIO) -> int:
    """Write the rows of ``kind`` for ``sites`` (already tenancy-filtered) as CSV; return the row count.

    UTF-8 byte-order mark first and CRLF line ends, so a spreadsheet reads accents right;
    text cells that could run as formulas are marked (see the module docstring).
    """
    out.write(BYTE_ORDER_MARK)
    writer = defused_csv.DictWriter(out, fieldnames=header(kind), lineterminator="\r\n")
    writer.writeheader()
    count = 0
    for row in _export_rows(kind, sites):
        writer.writerow(row)
        count += 1
    return count


def _export_rows(kind: str, sites: QuerySet[Site]) -> Iterable[dict[str, Any]]:
    if kind == "sites":
        for site in sites.select_related("client").order_by("code"):
            row = {col: _out(getattr(site, attr)) for col, attr, _ in SITE_COLUMNS}
            row["client"] = _out(site.client.slug if site.client else "")
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
                "site_code": _out(ahu.building.site.code),
                "building_code": _out(ahu.building.code),
                "building_name": _out(ahu.building.name),
                "building_floors": _out(ahu.building.floors),
                "tag": _out(ahu.tag),
                "label_code": _out(ahu.label_code),
            }
            row.update({col: _out(getattr(ahu, attr)) for col, attr, _ in AHU_COLUMNS})
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
                "site_code": _out(ahu.building.site.code),
                "building_code": _out(ahu.building.code),
                "ahu_tag": _out(ahu.tag),
                "name": _out(comp.name),
                "kind": _out(comp.kind),
                "parent": _out(names.get(comp.parent_id, "")),
                "position": _out(comp.position),
                "installed_on": _out(comp.installed_on),
                "label_code": _out(comp.label_code),
            }
            row.update({f"spec.{k}": _out(v) for k, v in comp.specs.items()})
            yield row
            stack.extend(reversed(node["children"]))


# ---------------------------------------------------------------------------
# Import
# ---------------------------------------------------------------------------
# C0 control characters and DEL; tab, line feed and carriage return are ordinary in text.
CONTROL_CHARACTERS = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f\x7f]")
PROGRESS_EVERY = 1000

Progress = Callable[[int, int], None]


def _visible(text: str) -> str:
    """``text`` with control characters written as ``\\x00``, so an error can show (and store) it."""
    return CONTROL_CHARACTERS.sub(lambda m: f"\\x{ord(m.group()):02x}", text)


def _control_problem(cell: str) -> str | None:
    found = CONTROL_CHARACTERS.search(cell)
    if found is None:
        return None
    char = found.group()
    name = "NUL" if char == "\x00" else "DEL" if char == "\x7f" else "a control character"
    return (
        f"contains {name} (U+{ord(char):04X}) at character {found.start() + 1}; "
        "a cell may hold text, tabs and line breaks only"
    )


def control_character_errors(text: str) -> list[RowError]:
    """Every cell of ``text`` holding a control character, as row errors (none when the text has none).

    A background job stores the file before checking it, and PostgreSQL refuses NUL in text:
    such a file is refused at once, with the same errors the import would give.
    """
    if CONTROL_CHARACTERS.search(text) is None:
        return []
    reader = csv.reader(io.StringIO(text.removeprefix(BYTE_ORDER_MARK), newline=""))
    found, columns = [], []
    try:
        for record in reader:
            if not columns:
                columns = [_visible(c) for c in record]
            for index, cell in enumerate(record):
                problem = _control_problem(cell)
                if problem:
                    column = columns[index] if index < len(columns) else f"column {index + 1}"
                    found.append(RowError(reader.line_num, column, _visible(cell), problem))
    except csv.Error as exc:
        found.append(RowError(reader.line_num, "", "", f"this line cannot be read as CSV: {exc}"))
    return found


def data_rows(text: str, *, at_most: int | None = None) -> int:
    """How many records (not lines) ``text`` holds below its header; what the import would check.

    With ``at_most`` the count stops there (deciding whether a file is large reads no further)."""
    records = (record for record in csv.reader(io.StringIO(text, newline="")) if record)
    try:
        return max(sum(1 for _ in itertools.islice(records, None if at_most is None else at_most + 1)) - 1, 0)
    except csv.Error:
        return 0


def registry_import(
    *,
    kind: str,
    source: TextIO,
    organisation: Organisation,
    dry_run: bool = False,
    progress: Progress | None = None,
    finish: Callable[[ImportResult], None] | None = None,
) -> ImportResult:
    """Import a CSV of ``kind`` into ``organisation``: all rows or none.

    Every row is checked in memory first (a component may name a parent from an
    earlier line); if every row is good and this is no ``dry_run``, the rows are
    written in bulk in one transaction. Raises ImportFailed listing every bad row.
    ``progress(done, total)`` is called as rows are checked; ``finish(result)`` runs inside
    the write's transaction (a job records its outcome with the rows it wrote, or neither).
    """
    if kind not in KINDS:
        raise ValueError(f"kind={kind!r} is not one of {', '.join(KINDS)}")
    text = source.read()
    total = data_rows(text)
    reader = csv.DictReader(io.StringIO(text.removeprefix(BYTE_ORDER_MARK), newline=""))
    try:
        fieldnames = reader.fieldnames
    except csv.Error as exc:
        raise ImportFailed([RowError(1, "", "", f"the header row cannot be read as CSV: {exc}")]) from None
    if not fieldnames:
        raise ImportFailed([RowError(1, "", "", "the file is empty; expected a header row")])
    errors: list[RowError] = []
    known = set(header(kind))
    for column in fieldnames:
        if column not in known:
            allowed = "spec.<field> of the kind" if kind == "components" else ", ".join(header(kind))
            errors.append(RowError(1, _visible(column), _visible(column), f"unknown column; allowed: {allowed}"))
    if errors:
        raise ImportFailed(errors)
    plan = _Plan(kind=kind, organisation=organisation, text=text)
    checker = {"sites": _check_site, "ahus": _check_ahu, "components": _check_component}[kind]
    result = ImportResult(kind=kind, dry_run=dry_run)
    done = 0
    while True:
        try:
            row = next(reader)
        except StopIteration:
            break
        except csv.Error as exc:
            errors.append(RowError(reader.line_num, "", "", f"this line cannot be read as CSV: {exc}"))
            break
        errors.extend(_check_row(checker, row, reader.line_num, plan, result))
        done += 1
        if progress is not None and done % PROGRESS_EVERY == 0:
            progress(done, total)
    if progress is not None:
        progress(done, max(total, done))
    if errors:
        raise ImportFailed(errors)
    if not dry_run:
        plan.write(finish=lambda: finish(result) if finish is not None else None)
    elif finish is not None:
        finish(result)
    return result


def _check_row(checker, raw: dict, line: int, plan: _Plan, result: ImportResult) -> list[RowError]:
    row: dict[str, str] = {}
    bad = []
    for column, cell in raw.items():
        if column is None:
            continue
        cell = cell or ""
        problem = _control_problem(cell)
        if problem:
            bad.append(RowError(line, column, _visible(cell), problem))
        row[column] = _unmark(cell)
    if bad:
        return bad
    try:
        created = checker(row, plan)
    except _RowProblems as exc:
        return [RowError(line, col, row.get(col, ""), reason) for col, reason in exc.problems]
    except ValidationError as exc:
        return _validation_errors(exc, row, line)
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


class _Plan:
    """What one file will change: the registry read once, rows checked against it, written in bulk."""

    def __init__(self, *, kind: str, organisation: Organisation, text: str):
        self.organisation = organisation
        self.new: dict[type, list] = {Site: [], Building: [], AHU: [], Component: []}
        self.new_ids: set[int] = set()
        self.changed: dict[type, dict[int, Any]] = {Site: {}, Building: {}, AHU: {}, Component: {}}
        self.changed_fields: dict[type, set[str]] = {Site: set(), Building: set(), AHU: set(), Component: set()}
        self.labelled: dict[str, Any] = {}  # label codes given in the file -> the record that took each
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
            by_pk = {b.pk: b for b in self.buildings.values()}
            for ahu in AHU.objects.filter(building__site_id__in=site_ids):
                building = by_pk[ahu.building_id]
                ahu.building = building  # one object per building, so a renamed building is written once
                self.ahus[(building.site_id, building.code, ahu.tag)] = ahu
        if kind == "components":
            self._load_components()

    # -- lookups --------------------------------------------------------------
    def site(self, code: str, column: str = "site_code") -> Site:
        site = self.sites.get(code)
        if site is None or site.pk is None:
            raise _RowProblems(
                [(column, f"no site with this code in {self.organisation.slug}; import the sites first")]
            )
        return site

    def _load_components(self) -> None:
        by_id: dict[int, Component] = {}
        ahu_ids = [a.pk for a in self.ahus.values()]
        for chunk in _chunks(ahu_ids):
            for comp in Component.objects.filter(ahu_id__in=chunk).order_by("ahu", "position", "id"):
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
            raise _RowProblems([("label_code", f"this row's record already has label {instance.label_code}")])
        if self.labelled.get(code) is instance:
            return {}
        if code in self.labels_in_use or code in self.labelled:
            raise _RowProblems([("label_code", "this label code belongs to another record")])
        return {"label_code": code}

    # -- staging --------------------------------------------------------------
    def stage(self, instance, values: dict[str, Any]) -> None:
        """Apply ``values`` and check the record; remember it for the write. Raises ValidationError."""
        for attr, value in values.items():
            setattr(instance, attr, value)
        _model_clean(instance)
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
                cell = _unmark(row.get(column) or "").strip()
                if cell and CONTROL_CHARACTERS.search(cell) is None:  # refused per row; never sent in a query
                    cells.add(cell.upper() if column == "label_code" else cell)
    except csv.Error:
        pass  # the checking pass reports the line
    return found


def _check_site(row: dict[str, str], plan: _Plan) -> bool:
    _require(row, ["code", "name"])
    values = _parse(row, SITE_COLUMNS, Site)
    client_slug = row.get("client", "").strip()
    values["client"] = None
    if client_slug:
        values["client"] = plan.clients.get(client_slug)
        if values["client"] is None:
            raise _RowProblems([("client", "no organisation has this slug")])
    site = plan.sites.get(values["code"])
    created = site is None
    site = site or Site(organisation=plan.organisation)
    plan.stage(site, values)
    plan.sites[site.code] = site
    return created


def _check_ahu(row: dict[str, str], plan: _Plan) -> bool:
    _require(row, ["site_code", "building_code", "tag"])
    site = plan.site(row["site_code"].strip())
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
    code, tag = row["building_code"].strip(), row["tag"].strip()
    building = plan.buildings.get((site.pk, code))
    name = row.get("building_name", "").strip()
    if building is None:
        building = Building(site=site, code=code, name=name or code, floors=floors)
        _building_stage(plan, building, {})
        plan.buildings[(site.pk, code)] = building
    elif name and (building.name != name or building.floors != floors):
        _building_stage(plan, building, {"name": name, "floors": floors})
    ahu = plan.ahus.get((site.pk, code, tag))
    created = ahu is None
    ahu = ahu or AHU(building=building, tag=tag)
    values.update(plan.label(row, ahu))
    plan.stage(ahu, values)
    plan.ahus[(site.pk, code, tag)] = ahu
    return created


def _building_stage(plan: _Plan, building: Building, values: dict[str, Any]) -> None:
    try:
        plan.stage(building, values)
    except ValidationError as exc:
        raise _RowProblems([(f"building_{k}", " ".join(v)) for k, v in exc.message_dict.items()]) from None


def _check_component(row: dict[str, str], plan: _Plan) -> bool:
    _require(row, ["site_code", "building_code", "ahu_tag", "name", "kind"])
    site = plan.site(row["site_code"].strip())
    ahu = plan.ahus.get((site.pk, row["building_code"].strip(), row["ahu_tag"].strip()))
    if ahu is None:
        raise _RowProblems([("ahu_tag", "no unit with this tag in that building; import the units first")])
    values = _parse(row, [("position", "position", _int), ("installed_on", "installed_on", _date)], Component)
    values["kind"] = row["kind"].strip()
    values["name"] = row["name"].strip()
    values["specs"] = {
        col.removeprefix("spec."): cell.strip() for col, cell in row.items() if col.startswith("spec.") and cell.strip()
    }
    named = plan.components.setdefault(ahu.pk, {})
    parent_name = row.get("parent", "").strip()
    values["parent"] = None
    if parent_name:
        parents = named.get(parent_name)
        if not parents:
            raise _RowProblems([("parent", "no component of this name in the unit on an earlier line")])
        values["parent"] = parents[0]
    matches = named.get(values["name"], [])
    if len(matches) > 1:
        raise _RowProblems([("name", "the unit has two components of this name; rename one first")])
    component = matches[0] if matches else Component(ahu=ahu)
    created = not matches
    values.update(plan.label(row, component))
    plan.stage(component, values)
    if created:
        named.setdefault(values["name"], []).append(component)
    return created
