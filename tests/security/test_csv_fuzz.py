"""Hostile values through the CSV importers, cell by cell: never a 500 or a crash, and a refused file saves nothing.

The registry CSV goes in over the API as the supervisor sends it: each kind's own export is imported back with
one cell replaced by a hostile value (NaN, ±Infinity, 1e309, NUL and control characters, years 1 and 9999,
2³¹ and 2⁶³, brackets, far too much text); a refusal is a 400 in JSON whose errors name the line and column,
with every row count unchanged. Whole files that are not CSV at all (not UTF-8, NUL bytes, no header, a
thousand columns) are refused the same way. The meter CSV goes through its service the same way: a refusal is
a ValidationError naming the row, never another exception, and stores no reading. Deterministic.
"""

from __future__ import annotations

import csv
import io

import pytest
from django.core.exceptions import ValidationError
from django.core.files.uploadedfile import SimpleUploadedFile
from django.db import transaction
from django.test import Client

from scheduling.models import MeterReading
from scheduling.services.meters import meter_readings_import_csv
from tests.security.test_api_fuzz import row_counts
from tests.security.test_form_fuzz import FORM_VALUES
from tests.tenancy.world import World, build

CELL_VALUES = (*FORM_VALUES, "=1+1", '"', "\r\n", "1e-400", "2025-02-30", "25:61")
BROKEN_FILES = (
    b"\xff\xfe\x00n\x00o\x00t",
    b"code,name\x00\n\x00,\x00\n",
    b"",
    b"\n\n\n",
    ("," * 1000 + "\n" + "x," * 1000 + "\n").encode(),
    b'"unterminated,quote\n',
)


@pytest.fixture
def world(db) -> World:
    return build()


def _rows(text: str) -> list[list[str]]:
    return list(csv.reader(io.StringIO(text, newline="")))


def _text(rows: list[list[str]]) -> str:
    out = io.StringIO()
    csv.writer(out, lineterminator="\r\n").writerows(rows)
    return out.getvalue()


def _import(client: Client, kind: str, data: bytes):
    upload = SimpleUploadedFile(f"{kind}.csv", data, content_type="text/csv")
    return client.post(f"/api/inventory/import/{kind}/", {"file": upload, "background": "false"})


def _judge(what: str, response, before: dict[str, int]) -> list[str]:
    if response.status_code >= 500:
        return [f"{what} -> {response.status_code}"]
    if response.status_code < 400:
        return []
    problems = [] if row_counts() == before else [f"{what} -> {response.status_code} but rows changed"]
    body = response.json()
    if not (isinstance(body, dict) and body.get("detail") and body.get("errors")):
        problems.append(f"{what} -> {response.status_code} names nothing: {body!r:.300}")
    return problems


def test_registry_csv_import_refuses_a_hostile_cell_naming_line_and_column_and_saves_nothing(world):
    """Each cell of each kind's exported first row, in turn, holds a hostile value: the answer is never a 5xx, a
    refusal is JSON naming the line and column, and a refused file leaves every row count as it was."""
    client = Client(raise_request_exception=False)
    client.force_login(world.supervisor)
    problems: list[str] = []
    for kind in ("sites", "ahus", "components"):
        exported = client.get(f"/api/inventory/export/{kind}/", {"site": world.a.site.code})
        assert exported.status_code == 200, (kind, exported.status_code)
        rows = _rows(exported.content.decode("utf-8-sig"))
        header, first = rows[0], rows[1]
        back = _import(client, kind, _text([header, first]).encode())
        assert back.status_code == 200, (kind, back.content[:300])  # the export itself is taken back
        for column, name in enumerate(header):
            for value in CELL_VALUES:
                cells = [*first]
                cells[column] = value
                before = row_counts()
                response = _import(client, kind, _text([header, cells]).encode())
                what = f"{kind} {name}={value!r:.30}"
                problems += _judge(what, response, before)
                if response.status_code == 400 and isinstance(response.json().get("errors"), list):
                    named = " ".join(str(e) for e in response.json()["errors"])
                    if "line" not in named or "column" not in named:
                        problems.append(f"{what}: errors name no line and column: {named:.200}")
        for data in BROKEN_FILES:
            before = row_counts()
            problems += _judge(f"{kind} file {data[:20]!r}", _import(client, kind, data), before)
    assert not problems, f"{len(problems)} problems:\n" + "\n".join(problems[:60])


def test_meter_csv_import_refuses_a_hostile_cell_by_row_and_stores_nothing(world):
    """Each cell of a valid meter CSV row, in turn, holds a hostile value: the service either stores the file or
    raises ValidationError naming the row; no other exception, and a refused file stores no reading."""
    header = ["unit_label", "taken_at", "hours", "component_label", "is_reset"]
    first = [world.a.ahu.label_code, "2025-01-01T08:00:00+00:00", "100", "", "false"]
    with transaction.atomic():
        stored = meter_readings_import_csv(organisation=world.ours, text=_text([header, first]), by=world.supervisor)
        assert len(stored) == 1  # the valid file is taken, so each mutation below is refused for its one cell
        transaction.set_rollback(True)
    problems: list[str] = []
    for column, name in enumerate(header):
        for value in CELL_VALUES:
            cells = [*first]
            cells[column] = value
            before = MeterReading.objects.count()
            what = f"{name}={value!r:.30}"
            try:
                with transaction.atomic():  # each file from the same start: an accepted one is rolled back
                    meter_readings_import_csv(organisation=world.ours, text=_text([header, cells]), by=world.supervisor)
                    transaction.set_rollback(True)
            except ValidationError as exc:
                if MeterReading.objects.count() != before:
                    problems.append(f"{what}: refused but a reading was stored")
                named = exc.message_dict if hasattr(exc, "error_dict") else {"": exc.messages}
                if not any("row" in m or k == "file" for k, ms in named.items() for m in ms):
                    problems.append(f"{what}: refused naming no row: {named}")
            except Exception as exc:
                problems.append(f"{what}: {type(exc).__name__}: {exc}")
    for data in BROKEN_FILES:
        try:
            meter_readings_import_csv(organisation=world.ours, text=data.decode("utf-8", "replace"), by=None)
        except ValidationError:
            pass
        except Exception as exc:
            problems.append(f"file {data[:20]!r}: {type(exc).__name__}: {exc}")
    assert not problems, f"{len(problems)} problems:\n" + "\n".join(problems[:60])
