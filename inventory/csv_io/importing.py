"""Import of a registry CSV: all rows or none. The header and every row are checked first (``rows``,
against the ``plan``); only a file without a problem is written."""

from __future__ import annotations

import csv
import io
import itertools
from collections.abc import Callable
from typing import TextIO

from django.core.exceptions import ValidationError

from accounts.models import Organisation

from .file_format import (
    BYTE_ORDER_MARK,
    CONTROL_CHARACTERS,
    KINDS,
    ImportFailed,
    ImportResult,
    RowError,
    control_problem,
    header,
    unmark,
    visible,
)
from .plan import ImportPlan, RowProblems
from .rows import check_ahu_row, check_component_row, check_site_row
from .words import plain_model_errors

PROGRESS_EVERY = 1000

Progress = Callable[[int, int], None]


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
                columns = [visible(c) for c in record]
            for index, cell in enumerate(record):
                problem = control_problem(cell)
                if problem:
                    column = columns[index] if index < len(columns) else f"column {index + 1}"
                    found.append(RowError(reader.line_num, column, visible(cell), problem))
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
    _check_header(kind, reader)
    errors: list[RowError] = []
    plan = ImportPlan(kind=kind, organisation=organisation, text=text)
    checker = {"sites": check_site_row, "ahus": check_ahu_row, "components": check_component_row}[kind]
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


def _check_header(kind: str, reader: csv.DictReader) -> None:
    """Refuse a file whose header cannot be read, is missing, or names a column the kind does not have."""
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
            errors.append(RowError(1, visible(column), visible(column), f"unknown column; allowed: {allowed}"))
    if errors:
        raise ImportFailed(errors)


def _check_row(checker, raw: dict, line: int, plan: ImportPlan, result: ImportResult) -> list[RowError]:
    row: dict[str, str] = {}
    bad = []
    for column, cell in raw.items():
        if column is None:
            continue
        cell = cell or ""
        problem = control_problem(cell)
        if problem:
            bad.append(RowError(line, column, visible(cell), problem))
        row[column] = unmark(cell)
    if bad:
        return bad
    try:
        created = checker(row, plan)
    except RowProblems as exc:
        return [RowError(line, col, row.get(col, ""), reason) for col, reason in exc.problems]
    except ValidationError as exc:
        return _validation_errors(exc, row, line)
    if created:
        result.created += 1
    else:
        result.updated += 1
    result.warnings.extend(RowError(line, col, row.get(col, ""), words) for col, words in plan.warnings_taken())
    return []


def _validation_errors(exc: ValidationError, row: dict[str, str], line: int) -> list[RowError]:
    return [RowError(line, col, row.get(col, ""), reason) for col, reason in plain_model_errors(exc, None, row)]
