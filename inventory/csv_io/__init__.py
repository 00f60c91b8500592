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

One module per job: ``file_format`` (columns, cells, marks, errors), ``export``, ``importing``
(``registry_import``), ``rows`` (each kind of row checked), ``plan`` (the registry read once, the bulk
write) and ``words`` (each problem in plain words). The package answers with the public names.
"""

from __future__ import annotations

from .export import registry_export
from .file_format import (
    BYTE_ORDER_MARK,
    CONTROL_CHARACTERS,
    KINDS,
    ImportFailed,
    ImportResult,
    RowError,
    binary_problem,
    decode_upload,
    header,
)
from .importing import control_character_errors, data_rows, registry_import

__all__ = [
    "BYTE_ORDER_MARK",
    "CONTROL_CHARACTERS",
    "KINDS",
    "ImportFailed",
    "ImportResult",
    "RowError",
    "binary_problem",
    "control_character_errors",
    "data_rows",
    "decode_upload",
    "header",
    "registry_export",
    "registry_import",
]
