"""The registry's CSV files: their columns and cells (parsed and written), the marks that keep a cell from
running as a spreadsheet formula, the characters a cell may not hold, and the import's errors and result."""

from __future__ import annotations

import datetime as dt
import io
import math
import re
from collections.abc import Callable
from dataclasses import asdict, dataclass, field
from typing import Any, TextIO

from django.core.exceptions import NON_FIELD_ERRORS

from engineering.formatting import count_text

from ..specs import SPECS

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
        super().__init__(f"{count_text(len(errors), 'problem')} found; nothing was imported")


@dataclass
class ImportResult:
    kind: str
    created: int = 0
    updated: int = 0
    dry_run: bool = False
    # Values taken but unlikely (inventory.services.component_warnings), by line and column like a refusal.
    warnings: list[RowError] = field(default_factory=list)

    def as_dict(self) -> dict[str, Any]:
        return {
            "kind": self.kind,
            "created": self.created,
            "updated": self.updated,
            "dry_run": self.dry_run,
            "warnings": [w.as_dict() for w in self.warnings],
        }


class CellError(ValueError):
    pass


def parse_text(raw: str) -> str:
    return raw.strip()


def parse_opt_text(raw: str) -> str | None:
    return raw.strip() or None


def parse_float(raw: str) -> float | None:
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


def parse_int(raw: str) -> int | None:
    value = parse_float(raw)
    if value is None:
        return None
    if value != int(value):
        raise CellError("is not a whole number")
    return int(value)


def parse_bool(raw: str) -> bool | None:
    text = raw.strip().lower()
    if not text:
        return None
    if text in {"true", "yes", "1"}:
        return True
    if text in {"false", "no", "0"}:
        return False
    raise CellError("is not true or false")


def parse_date(raw: str) -> dt.date | None:
    raw = raw.strip()
    if not raw:
        return None
    try:
        return dt.date.fromisoformat(raw)
    except ValueError:
        raise CellError("is not a date as YYYY-MM-DD") from None


def parse_twelve(raw: str) -> list[float] | None:
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


def rounded(value: float) -> float:
    return float(f"{value:.{EXPORT_DIGITS}g}") if math.isfinite(value) else value


def cell_text(value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        value = rounded(value)
        return repr(int(value)) if value.is_integer() else repr(value)
    if isinstance(value, (dt.date, dt.datetime)):
        return value.isoformat()
    if isinstance(value, list):
        return LIST_SEPARATOR.join(cell_text(v) for v in value)
    return str(value)


# (column, model field, parser); a parser returning None means "leave the model default".
Column = tuple[str, str, Callable[[str], Any]]

SITE_COLUMNS: list[Column] = [
    ("code", "code", parse_text),
    ("name", "name", parse_text),
    ("address", "address", parse_text),
    ("latitude", "latitude", parse_float),
    ("longitude", "longitude", parse_float),
    ("altitude_m", "altitude_m", parse_float),
    ("time_zone", "time_zone", parse_opt_text),
    ("normals_min_c", "normals_min_c", parse_twelve),
    ("normals_max_c", "normals_max_c", parse_twelve),
    ("preheat_threshold_c", "preheat_threshold_c", parse_float),
    ("cooling_threshold_c", "cooling_threshold_c", parse_float),
]
SITE_EXTRA = ["client"]

AHU_KEY = ["site_code", "building_code", "building_name", "building_floors", "tag", "label_code"]
AHU_COLUMNS: list[Column] = [
    ("location", "location", parse_text),
    ("area_served", "area_served", parse_text),
    ("space_kind", "space_kind", parse_text),
    ("floor_area_m2", "floor_area_m2", parse_float),
    ("design_occupants", "design_occupants", parse_int),
    ("design_supply_airflow_m3s", "design_supply_airflow_m3s", parse_float),
    ("design_min_oa_fraction", "design_min_oa_fraction", parse_float),
    ("full_outdoor_air", "full_outdoor_air", parse_bool),
    ("ventilation_zones", "ventilation_zones", parse_opt_text),
    ("air_distribution", "air_distribution", parse_opt_text),
    ("occupant_diversity", "occupant_diversity", parse_float),
    ("system_ventilation_efficiency", "system_ventilation_efficiency", parse_float),
    ("heat_recovery", "heat_recovery", parse_opt_text),
    ("supply_air_setpoint_c", "supply_air_setpoint_c", parse_float),
    ("duct_static_setpoint_pa", "duct_static_setpoint_pa", parse_float),
    ("service_start", "service_start", parse_date),
    ("status", "status", parse_opt_text),
    ("notes", "notes", parse_text),
]

COMPONENT_KEY = ["site_code", "building_code", "ahu_tag", "name", "kind", "parent", "position", "installed_on",
                 "retired_on", "label_code"]  # fmt: skip
COMPONENT_COLUMNS: list[Column] = [
    ("position", "position", parse_int),
    ("installed_on", "installed_on", parse_date),
    ("retired_on", "retired_on", parse_date),
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
    """Text stream of an uploaded file; UTF-8 with or without a byte-order mark (spreadsheets add one).

    A file that is not text at all (``binary_problem``) is refused in one sentence saying what it seems to be; a
    text file that is not UTF-8 names the line and byte where it stops being UTF-8."""
    problem = binary_problem(data)
    if problem:
        raise ImportFailed([RowError(1, "", visible(data[:8].decode("latin-1")), problem)])
    try:
        return io.StringIO(data.decode("utf-8-sig"), newline="")
    except UnicodeDecodeError as exc:
        line = data.count(b"\n", 0, exc.start) + 1
        start = data.rfind(b"\n", 0, exc.start) + 1
        shown = data[start : exc.start].decode("utf-8", "replace")[-40:]
        bad = " ".join(f"0x{b:02x}" for b in data[exc.start : exc.end])
        raise ImportFailed(
            [
                RowError(
                    line,
                    "",
                    visible(shown + "".join(f"\\x{b:02x}" for b in data[exc.start : exc.end])),
                    f"the file is not UTF-8 text: byte {bad} on line {line} (byte {exc.start + 1} of the file: "
                    f"{exc.reason})",
                )
            ]
        ) from None


# The first bytes of files that are not CSV text, and what they are.
_BINARY_LEADS = (
    (b"PK\x03\x04", "a spreadsheet workbook (.xlsx, .ods) or another zip archive"),
    (b"\xd0\xcf\x11\xe0", "an older spreadsheet workbook (.xls) or another Office document"),
    (b"%PDF", "a PDF document"),
    (b"\x89PNG", "a PNG image"),
    (b"\xff\xd8\xff", "a JPEG image"),
    (b"GIF8", "a GIF image"),
    (b"\xff\xfe\x00\x00", "UTF-32 text"),
    (b"\x00\x00\xfe\xff", "UTF-32 text"),
    (b"\xff\xfe", "UTF-16 text (a spreadsheet's “Unicode text”)"),
    (b"\xfe\xff", "UTF-16 text (a spreadsheet's “Unicode text”)"),
)
NOT_TEXT_ALLOWED = "allowed: a CSV file saved as UTF-8 text (in a spreadsheet: Save as, CSV UTF-8)"


def binary_problem(data: bytes) -> str:
    """Why ``data`` is no CSV text at all, with what is allowed ("" when it may be text): a workbook, a PDF or an
    image by its first bytes, UTF-16 or UTF-32 text by its byte-order mark, or binary data by its NUL bytes (more
    than one in a hundred of the first 4 kB; a NUL in one cell of a text file is named with its cell instead)."""
    for lead, what in _BINARY_LEADS:
        if data.startswith(lead):
            return f"the file is {what}, not CSV text; {NOT_TEXT_ALLOWED}"
    head = data[:4096]
    if head.count(0) > max(1, len(head) // 100):
        return f"the file holds binary data (NUL bytes), not CSV text; {NOT_TEXT_ALLOWED}"
    return ""


BYTE_ORDER_MARK = "\ufeff"
# defusedcsv marks a text cell beginning with one of these (except a plain number such as -5).
FORMULA_LEADS = ("=", "+", "-", "@", "|", "%")
# It leaves these alone, yet a spreadsheet may drop them and read what follows as a formula
# (OWASP's CSV-injection list); the apostrophe itself is marked so that import's removal of the
# mark never eats a person's own leading apostrophe.
OTHER_LEADS = ("\t", "\r", "'")
TEXT_MARK = "'"


def is_marked(cell: str) -> bool:
    """True when ``cell`` starts with the text mark that export put before a formula-like cell."""
    # defusedcsv writes a leading | as \| after the mark.
    return cell[:1] == TEXT_MARK and (cell[1:2] in FORMULA_LEADS + OTHER_LEADS or cell[1:3] == "\\|")


def unmark(cell: str) -> str:
    """The cell as it was before export marked it (defusedcsv also writes ``|`` as ``\\|`` there)."""
    if not is_marked(cell):
        return cell
    rest = cell[1:]
    return rest.replace("\\|", "|") if rest[0] in FORMULA_LEADS or rest[:2] == "\\|" else rest


# C0 control characters and DEL; tab, line feed and carriage return are ordinary in text.
CONTROL_CHARACTERS = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f\x7f]")


def visible(text: str) -> str:
    """``text`` with control characters written as ``\\x00``, so an error can show (and store) it."""
    return CONTROL_CHARACTERS.sub(lambda m: f"\\x{ord(m.group()):02x}", text)


def control_problem(cell: str) -> str | None:
    found = CONTROL_CHARACTERS.search(cell)
    if found is None:
        return None
    char = found.group()
    name = "NUL" if char == "\x00" else "DEL" if char == "\x7f" else "a control character"
    return (
        f"contains {name} (U+{ord(char):04X}) at character {found.start() + 1}; "
        "a cell may hold text, tabs and line breaks only"
    )
