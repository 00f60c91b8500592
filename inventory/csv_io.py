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
from django.core.exceptions import NON_FIELD_ERRORS, FieldDoesNotExist, ValidationError
from django.core.validators import MaxValueValidator, MinValueValidator
from django.db import IntegrityError, transaction
from django.db.models import QuerySet

from accounts.changes import organisation_changed
from accounts.inputs import (
    INT16_MAX,
    equipment_date_problem,
    equipment_date_window,
    number_allowed,
    number_problem,
    shown,
    text_problem,
)
from accounts.models import Organisation

from .inputs import AHU_DATES, AHU_NUMBERS, AHU_TEXTS, COMPONENT_DATES, COMPONENT_TEXTS, PLANNED_DATES
from .models import AHU, Building, Component, ComponentKind, Site, new_component_code, new_unit_code
from .selectors import component_tree
from .services import component_full_clean
from .specs import SPECS
from .today import today_for

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


# Exported numbers keep 12 significant digits: far finer than any measurement, and coarse enough to drop the
# float noise of a unit conversion (2400 L/s is 2.4 m³/s, not 2.4000000000000004), so a round trip is unchanged.
EXPORT_DIGITS = 12


def _rounded(value: float) -> float:
    return float(f"{value:.{EXPORT_DIGITS}g}") if math.isfinite(value) else value


def _fmt(value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        value = _rounded(value)
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
                 "retired_on", "label_code"]  # fmt: skip
COMPONENT_COLUMNS: list[Column] = [
    ("position", "position", _int),
    ("installed_on", "installed_on", _date),
    ("retired_on", "retired_on", _date),
]
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
    if isinstance(value, float):
        value = _rounded(value)
        if value.is_integer():
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
                "retired_on": _out(comp.retired_on),
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
    return [RowError(line, col, row.get(col, ""), reason) for col, reason in _plain_model_errors(exc, None, row)]


# ---------------------------------------------------------------------------
# Plain words: each cell's problem names the field, the value and what is allowed, with its unit
# (the input policy's wording, accounts.inputs and inventory.inputs, as the registry's page forms say it).
# ---------------------------------------------------------------------------
LABELS = {
    "code": "Site code",
    "altitude_m": "Altitude",
    "time_zone": "Time zone",
    "normals_min_c": "Monthly mean daily minimums",
    "normals_max_c": "Monthly mean daily maximums",
    "preheat_threshold_c": "Freeze-season threshold",
    "cooling_threshold_c": "Cooling-season threshold",
    "client": "Client",
    "site_code": "Site code",
    "building_code": "Building code",
    "building_name": "Building name",
    "building_floors": "Building floors",
    "floors": "Building floors",
    "ahu_tag": "Unit tag",
    "space_kind": "Kind of space served",
    "full_outdoor_air": "100 % outdoor air",
    "ventilation_zones": "Zones served",
    "air_distribution": "Air distribution",
    "heat_recovery": "Heat recovery",
    "status": "Status",
    "kind": "Kind of part",
    "parent": "Parent part",
    "position": "Position along the airstream",
    "retired_on": "Retired on",
    "label_code": "Label code",
}
KEY_ALLOWED = {
    "code": "a short code of letters, digits, - and _",
    "name": "the name as people know it, text",
    "site_code": "the code of one of your sites",
    "building_code": "the building's code within its site",
    "tag": "the unit's tag as painted on it",
    "ahu_tag": "the tag of a unit in that building",
    "kind": "one of " + ", ".join(ComponentKind.values),
}
UNIT_OF_SUFFIX = (("_m3s", "m³/s"), ("_m2", "m²"), ("_pa", "Pa"), ("_c", "°C"), ("_m", "m"))
WHOLE_RANGES = {"position": (0, INT16_MAX), "floors": (0, INT16_MAX), "design_occupants": (0, 100_000)}
BOOL_ALLOWED = "true or false (yes/no and 1/0 are read too)"


def _label(model, attr: str) -> str:
    if model is AHU and attr in AHU_NUMBERS:
        return AHU_NUMBERS[attr].label
    for table in (AHU_DATES, COMPONENT_DATES):
        if attr in table:
            return table[attr]
    for table in (AHU_TEXTS, COMPONENT_TEXTS):
        if attr in table:
            return table[attr][0]
    if attr in LABELS:
        return LABELS[attr]
    try:
        name = str(model._meta.get_field(attr).verbose_name)
    except FieldDoesNotExist:  # a column that is no model field keeps its own name
        name = attr.replace("_", " ")
    return name[:1].upper() + name[1:]


def _number_range(model, attr: str) -> tuple[float | None, float | None, str]:
    """The number's allowed range and unit: the input policy's table, else the field's own validators."""
    if model is AHU and attr in AHU_NUMBERS:
        r = AHU_NUMBERS[attr]
        return r.minimum, r.maximum, r.unit
    lo = hi = None
    if attr in WHOLE_RANGES:
        lo, hi = WHOLE_RANGES[attr]
    else:
        for validator in model._meta.get_field(attr)._validators:
            if isinstance(validator, MinValueValidator):
                lo = validator.limit_value
            elif isinstance(validator, MaxValueValidator):
                hi = validator.limit_value
    unit = next((u for s, u in UNIT_OF_SUFFIX if attr.endswith(s)), "")
    if attr in {"latitude", "longitude"}:
        unit = "degrees"
    if attr == "design_occupants":
        unit = "people"
    return lo, hi, unit


def _allowed(model, attr: str, parser=None, *, today: dt.date | None = None) -> str:
    """What a cell of ``attr`` may hold, in words; a date's window ends on ``today``, the row's site's."""
    if attr in KEY_ALLOWED and parser is None:
        return KEY_ALLOWED[attr]
    try:
        field = model._meta.get_field(attr)
    except FieldDoesNotExist:
        field = None
    if field is not None and field.choices:
        return "one of " + ", ".join(str(value) for value, _ in field.choices)
    if parser is _twelve or attr in {"normals_min_c", "normals_max_c"}:
        return f"12 numbers in °C separated by '{LIST_SEPARATOR}', January first"
    if parser is _bool:
        return BOOL_ALLOWED
    if parser is _date or (field is not None and field.get_internal_type() == "DateField"):
        if today is None:  # a model's own refusal (never of a date: every date may be empty)
            return "a date as YYYY-MM-DD"
        earliest, latest = equipment_date_window(today=today, planned=attr in PLANNED_DATES)
        return f"a date as YYYY-MM-DD from {earliest.isoformat()} to {latest.isoformat()}"
    if parser in (_float, _int) or (parser is None and field is not None and _is_number(model, attr)):
        lo, hi, unit = _number_range(model, attr)
        if lo is not None and hi is not None:
            if parser is _int:
                return f"a whole number from {lo:g} to {hi:g}{f' {unit}' if unit else ''}"
            return number_allowed(minimum=lo, maximum=hi, unit=unit)
        if lo is not None:
            return f"a number of at least {lo:g}{f' {unit}' if unit else ''}"
        return "a number" if parser is _float else "a whole number"
    if field is not None and getattr(field, "max_length", None):
        return f"text of at most {field.max_length} characters"
    return "text"


def _cell(model, column: str, attr: str, parser, raw: str, *, today: dt.date) -> tuple[Any, str | None]:
    """The cell's typed value, or None with what is wrong in plain words; a date judged on ``today``."""
    label, text = _label(model, attr), raw.strip()
    field = model._meta.get_field(attr)
    if parser in (_opt_text, _text) and field.choices:
        if text and text not in {str(v) for v, _ in field.choices}:
            return None, f"{label}: {shown(text)} is not one of the choices; allowed: {_allowed(model, attr)}"
        return parser(raw), None
    try:
        value = parser(raw)
    except CellError as exc:
        if parser is _twelve:
            return None, f"{label}: {exc}; allowed: {_allowed(model, attr, parser, today=today)}"
        reason = {_date: "is not a date", _bool: "is not true or false"}.get(parser, str(exc))
        return None, f"{label}: {shown(text)} {reason}; allowed: {_allowed(model, attr, parser, today=today)}"
    if value is None:
        return None, None
    if parser in (_float, _int):
        lo, hi, unit = _number_range(model, attr)
        if lo is not None and hi is not None:
            problem = number_problem(value, label=label, minimum=lo, maximum=hi, unit=unit)
            if problem and parser is _int:
                problem = f"{label}: {value} is out of range; allowed: {_allowed(model, attr, parser, today=today)}"
            return (None, problem) if problem else (value, None)
    if parser is _date:
        problem = equipment_date_problem(value, label=label, today=today, planned=attr in PLANNED_DATES)
        return (None, problem[:1].upper() + problem[1:]) if problem else (value, None)
    if isinstance(value, str) and getattr(field, "max_length", None):
        problem = text_problem(value, label=label, max_length=field.max_length, lines=True)
        return (None, problem) if problem else (value, None)
    return value, None


def _plain_model_errors(exc: ValidationError, model, row: dict[str, str]) -> list[tuple[str, str]]:
    """The model's refusals as (column, plain reason); Django's stock wording replaced by the policy's."""
    found = []
    errors = exc.error_dict if hasattr(exc, "error_dict") else {NON_FIELD_ERRORS: exc.error_list}
    for field_name, items in errors.items():
        if field_name.startswith("specs."):
            column = "spec." + field_name.removeprefix("specs.")
        else:
            column = FIELD_TO_COLUMN.get(field_name, field_name)
        for item in items:
            for error in item.error_list if hasattr(item, "error_list") else [item]:
                found.append((column, _plain(model, field_name, error, row.get(column, ""))))
    return found


def _plain(model, attr: str, error: ValidationError, raw: str) -> str:
    text = " ".join(error.messages)
    if model is None or attr.startswith("specs") or attr == NON_FIELD_ERRORS:
        return text
    try:
        model._meta.get_field(attr)
    except FieldDoesNotExist:
        return text
    label = _label(model, attr)
    if error.code in {"null", "blank", "required"}:
        return f"{label} is required; allowed: {_allowed(model, attr)}"
    if error.code == "invalid_choice":
        return f"{label}: {shown(raw.strip())} is not one of the choices; allowed: {_allowed(model, attr)}"
    if error.code in {"min_value", "max_value"}:
        lo, hi, unit = _number_range(model, attr)
        allowed = number_allowed(minimum=lo, maximum=hi, unit=unit) if None not in (lo, hi) else str(text)
        return f"{label}: {raw.strip()}{f' {unit}' if unit else ''} is out of range; allowed: {allowed}"
    if error.code == "max_length":
        return f"{label}: {len(raw.strip())} characters is too long; allowed: {_allowed(model, attr)}"
    return text if text.startswith(label) else f"{label}: {text}"


def _is_number(model, attr: str) -> bool:
    return model._meta.get_field(attr).get_internal_type() in {
        "FloatField", "IntegerField", "PositiveIntegerField", "PositiveSmallIntegerField", "DecimalField"
    }  # fmt: skip


def _parse(
    row: dict[str, str], columns: list[Column], model, problems: list[tuple[str, str]], *, today: dt.date
) -> dict[str, Any]:
    """Typed values of the row's readable cells (an empty cell clears a nullable field and keeps others'
    defaults); every unreadable cell's problem is added to ``problems``. Dates are judged on ``today``: the
    day of the row's site (``inventory.today``), the organisation's while the row names none."""
    values = {}
    for column, attr, parser in columns:
        if column not in row:
            continue
        value, problem = _cell(model, column, attr, parser, row[column], today=today)
        if problem:
            problems.append((column, problem))
            continue
        if value is not None:
            values[attr] = value
        elif model._meta.get_field(attr).null:
            values[attr] = None
    return values


def _required(row: dict[str, str], columns: list[str]) -> list[tuple[str, str]]:
    return [
        (c, f"{LABELS.get(c, c.replace('_', ' ').capitalize())} is required; allowed: {KEY_ALLOWED.get(c, 'text')}")
        for c in columns
        if not row.get(c, "").strip()
    ]


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
        self.today = today_for(organisation)  # a row's day while it names no site of the organisation
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
            raise _RowProblems(
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
            raise _RowProblems(
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
            for column, reason in _plain_model_errors(exc, type(instance), {}):
                if column not in said:
                    problems.append((column, reason))

    def stage(self, instance, values: dict[str, Any]) -> None:
        """Apply ``values`` and check the record; remember it for the write. Raises _RowProblems."""
        problems: list[tuple[str, str]] = []
        self.check(instance, values, problems)
        if problems:
            raise _RowProblems(problems)
        self.remember(instance, values)

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
                cell = _unmark(row.get(column) or "").strip()
                if cell and CONTROL_CHARACTERS.search(cell) is None:  # refused per row; never sent in a query
                    cells.add(cell.upper() if column == "label_code" else cell)
    except csv.Error:
        pass  # the checking pass reports the line
    return found


def _check_site(row: dict[str, str], plan: _Plan) -> bool:
    problems = _required(row, ["code", "name"])
    values = _parse(row, SITE_COLUMNS, Site, problems, today=plan.today)
    client_slug = row.get("client", "").strip()
    values["client"] = None
    if client_slug:
        values["client"] = plan.clients.get(client_slug)
        if values["client"] is None:
            problems.append(("client", f"Client: no organisation has the slug {shown(client_slug)}; allowed: "
                                       "the slug of a client organisation, or empty"))  # fmt: skip
    code = row.get("code", "").strip()
    site = plan.sites.get(code) if code else None
    created = site is None
    site = site or Site(organisation=plan.organisation)
    plan.check(site, values, problems)
    if problems:
        raise _RowProblems(problems)
    plan.remember(site, values)
    plan.sites[site.code] = site
    return created


def _check_ahu(row: dict[str, str], plan: _Plan) -> bool:
    problems = _required(row, ["site_code", "building_code", "tag"])
    site_code = row.get("site_code", "").strip()
    site = plan.site(site_code, problems) if site_code else None
    floors = None
    if "building_floors" in row:
        floors, problem = _cell(Building, "building_floors", "floors", _int, row["building_floors"], today=plan.today)
        if problem:
            problems.append(("building_floors", problem))
    values = _parse(row, AHU_COLUMNS, AHU, problems, today=today_for(site) if site else plan.today)
    code, tag = row.get("building_code", "").strip(), row.get("tag", "").strip()
    name = row.get("building_name", "").strip()
    if site is None or not code or not tag:
        # Nothing to file it under: the row's own values are still checked, so every problem is said at once.
        ahu = AHU(tag=tag)
        plan.check(ahu, values, problems)
        raise _RowProblems(problems)
    building = plan.buildings.get((site.pk, code))
    if building is None:
        building = Building(site=site, code=code, name=name or code, floors=floors)
        _building_stage(plan, building, {}, problems)
        plan.buildings[(site.pk, code)] = building
    elif name and (building.name != name or building.floors != floors):
        _building_stage(plan, building, {"name": name, "floors": floors}, problems)
    ahu = plan.ahus.get((site.pk, code, tag))
    created = ahu is None
    ahu = ahu or AHU(building=building, tag=tag)
    try:
        values.update(plan.label(row, ahu))
    except _RowProblems as exc:
        problems.extend(exc.problems)
    plan.check(ahu, values, problems)
    if problems:
        raise _RowProblems(problems)
    plan.remember(ahu, values)
    plan.ahus[(site.pk, code, tag)] = ahu
    return created


def _building_stage(plan: _Plan, building: Building, values: dict[str, Any], problems: list) -> None:
    found: list[tuple[str, str]] = []
    plan.check(building, values, found)
    if found:
        problems.extend((f"building_{c}" if not c.startswith("building_") else c, r) for c, r in found)
    else:
        plan.remember(building, values)


def _check_component(row: dict[str, str], plan: _Plan) -> bool:
    problems = _required(row, ["site_code", "building_code", "ahu_tag", "name", "kind"])
    site_code = row.get("site_code", "").strip()
    site = plan.site(site_code, problems) if site_code else None
    building_code, tag = row.get("building_code", "").strip(), row.get("ahu_tag", "").strip()
    ahu = None
    if site is not None and building_code and tag:
        ahu = plan.ahus.get((site.pk, building_code, tag))
        if ahu is None:
            tags = sorted(t for (s, b, t) in plan.ahus if s == site.pk and b == building_code)
            problems.append(
                (
                    "ahu_tag",
                    f"Unit tag: no unit {shown(tag)} in building {shown(building_code)} of site {shown(site_code)}; "
                    + (f"units there: {', '.join(tags[:20])}" if tags else "that building has no units yet")
                    + " (import the units first)",
                )
            )
    values = _parse(row, COMPONENT_COLUMNS, Component, problems, today=today_for(site) if site else plan.today)
    installed, retired = values.get("installed_on"), values.get("retired_on")
    if installed and retired and retired < installed:
        problems.append(
            (
                "retired_on",
                f"Retired on: {retired.isoformat()} is before installed on {installed.isoformat()}; "
                "allowed: the day it was installed or later, or empty",
            )
        )
    kind = row.get("kind", "").strip()
    if kind and kind not in ComponentKind.values:
        problems.append(
            ("kind", f"Kind of part: {shown(kind)} is not one of the choices; allowed: {KEY_ALLOWED['kind']}")
        )
    values["kind"] = kind
    values["name"] = row.get("name", "").strip()
    values["specs"] = {
        col.removeprefix("spec."): cell.strip() for col, cell in row.items() if col.startswith("spec.") and cell.strip()
    }
    if ahu is None:
        plan.check(Component(), values, problems)
        raise _RowProblems(problems)
    named = plan.components.setdefault(ahu.pk, {})
    parent_name = row.get("parent", "").strip()
    values["parent"] = None
    if parent_name:
        parents = named.get(parent_name)
        if not parents:
            problems.append(
                (
                    "parent",
                    f"Parent part: no part named {shown(parent_name)} in unit {ahu.tag} on an earlier line or in the "
                    "registry; allowed: the name of a part of the same unit, or empty",
                )
            )
        else:
            values["parent"] = parents[0]
    matches = named.get(values["name"], []) if values["name"] else []
    if len(matches) > 1:
        problems.append(("name", f"Name: unit {ahu.tag} has two parts named {shown(values['name'])}; rename one first"))
        matches = []
    component = matches[0] if matches else Component(ahu=ahu)
    created = not matches
    try:
        values.update(plan.label(row, component))
    except _RowProblems as exc:
        problems.extend(exc.problems)
    plan.check(component, values, problems)
    if problems:
        raise _RowProblems(problems)
    plan.remember(component, values)
    if created:
        named.setdefault(values["name"], []).append(component)
    return created
