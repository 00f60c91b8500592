"""The registry's files from the pages: CSV import (check first, then confirm), CSV export, label sheets, QR images.

Import is the command line's and the API's (``inventory.csv_io.registry_import``): every row is checked
with the admin's and the API's rules, and one bad row imports nothing. The page runs it twice: a dry run
when the file is chosen (every bad row listed with its line, column, value and what is allowed), then, for a
clean file, the import itself when the person confirms, all rows or none, checked again against the
registry as it is then. Between the two the file's text waits in the person's session, never on disk.
The file field refuses what is not a CSV file of the chosen kind before any row is read.

Export writes ``csv_io.registry_export``'s file (defusedcsv: a cell a spreadsheet would run as a formula is
marked as text). Label sheets are the PDF record ``labels`` (reports), asked for per site or per building;
a unit's QR image comes from ``inventory.services`` as SVG or PNG.
"""

from __future__ import annotations

import csv
import io
import uuid

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import PermissionDenied
from django.db.models import Prefetch
from django.http import Http404, HttpResponse
from django.shortcuts import redirect, render
from django.views.decorators.http import require_GET, require_http_methods, require_POST

from accounts.services import audit_record
from inventory import csv_io
from inventory.import_jobs import BACKGROUND_ROWS
from inventory.models import AHU, Building, Component, Site
from inventory.selectors import sites_managed_by
from inventory.services import label_qr_png, label_qr_svg

from .records import LAYOUTS
from .staff import managed_ahu, managed_organisation

KIND_NAMES = {"sites": "Sites", "ahus": "Units and their buildings", "components": "Components of units"}
# What a file of each kind must have in its first row (the rest of its columns are optional).
KEY_COLUMNS = {
    "sites": ("code", "name"),
    "ahus": ("site_code", "building_code", "tag"),
    "components": ("site_code", "building_code", "ahu_tag", "name", "kind"),
}
MAX_BYTES = 2 * 1024 * 1024
MAX_ROWS = BACKGROUND_ROWS - 1  # larger files go through the API's background import
SESSION_KEY = "registry_csv_checked"
SHOWN_ROWS = 200  # rows listed after an import; the counts cover them all


def _size(n: int) -> str:
    return f"{n / 1024 / 1024:.1f} MB" if n >= 1024 * 1024 else f"{max(n // 1024, 1)} KB"


# ---------------------------------------------------------------------------
# Checking the file field
# ---------------------------------------------------------------------------
def upload_check(*, kind: str, upload) -> tuple[str | None, dict[str, str]]:
    """The uploaded file's text, or messages for the form's fields ("kind", "file") saying what is wrong.

    Refused before any row is read: no file, not a .csv name, a spreadsheet workbook or other binary file,
    empty, over ``MAX_BYTES``, not UTF-8, a first row that is not the column names of ``kind``, no rows.
    """
    if kind not in csv_io.KINDS:
        allowed = ", ".join(KIND_NAMES.values())
        return None, {"kind": f"What the file holds: {kind[:30]!r} is not offered; choose one of {allowed}"}
    if upload is None:
        return None, {"file": "Choose a CSV file to check."}
    name = upload.name or ""
    shown = repr(name[:80])
    if not name.lower().endswith(".csv"):
        return None, {
            "file": f"{shown} is not a CSV file; allowed: a .csv file (in a spreadsheet: Save as, CSV UTF-8)."
        }
    if upload.size == 0:
        return None, {"file": f"{shown} is empty; allowed: a CSV file with a header row and at least one row."}
    if upload.size > MAX_BYTES:
        return None, {
            "file": f"{shown} is {_size(upload.size)}; at most {_size(MAX_BYTES)} is accepted here. Split the file, "
            "or send it through the API's background import."
        }
    data = upload.read()
    if data[:2] == b"PK" or b"\x00" in data[:4096]:
        return None, {
            "file": f"{shown} is a spreadsheet workbook or another binary file, not CSV text; "
            "allowed: a .csv file (in a spreadsheet: Save as, CSV UTF-8)."
        }
    try:
        text = csv_io.decode_upload(data).read()
    except csv_io.ImportFailed as exc:
        return None, {"file": f"{shown}: {exc.errors[0].reason}; allowed: UTF-8 text (Save as, CSV UTF-8)."}
    problem = header_problem(kind=kind, text=text)
    if problem:
        return None, {"file": f"{shown}: {problem}"}
    rows = csv_io.data_rows(text.removeprefix(csv_io.BYTE_ORDER_MARK), at_most=MAX_ROWS + 1)
    if rows == 0:
        return None, {"file": f"{shown} has the column names but no rows to import."}
    if rows > MAX_ROWS:
        return None, {
            "file": f"{shown} has more than {MAX_ROWS:,} rows; at most {MAX_ROWS:,} are imported here. Split the "
            "file, or send it through the API's background import."
        }
    return text, {}


def header_problem(*, kind: str, text: str) -> str | None:
    """What is wrong with the first row for a file of ``kind`` (None when it names that kind's columns)."""
    try:
        first = next(csv.reader(io.StringIO(text.removeprefix(csv_io.BYTE_ORDER_MARK), newline="")), [])
    except csv.Error as exc:
        return f"the first row cannot be read as CSV ({exc})."
    columns = [c.strip() for c in first]
    if not any(columns):
        return "the first row is empty; it must hold the column names."
    known = set(csv_io.header(kind))
    missing = [c for c in KEY_COLUMNS[kind] if c not in columns]
    unknown = [c for c in columns if c not in known]
    if not missing and not unknown:
        return None
    other = next(
        (
            k
            for k in csv_io.KINDS
            if k != kind
            and all(c in columns for c in KEY_COLUMNS[k])
            and all(c in set(csv_io.header(k)) for c in columns)
        ),
        None,
    )
    if other is not None:
        return (
            f"the columns are those of a file of {KIND_NAMES[other].lower()}, not of {KIND_NAMES[kind].lower()}; "
            f"choose “{KIND_NAMES[other]}” above, or another file."
        )
    parts = []
    if missing:
        parts.append(f"missing column{'s' if len(missing) > 1 else ''}: {', '.join(missing)}")
    if unknown:
        listed = ", ".join(repr(c[:40]) for c in unknown[:5]) + (" …" if len(unknown) > 5 else "")
        parts.append(f"unknown column{'s' if len(unknown) > 1 else ''}: {listed}")
    allowed = (
        "the key columns and spec.<field> of the component's kind"
        if kind == "components"
        else ", ".join(csv_io.header(kind))
    )
    return (
        f"the first row is not the column names of a file of {KIND_NAMES[kind].lower()} ({'; '.join(parts)}); "
        f"allowed: {allowed}."
    )


# ---------------------------------------------------------------------------
# The page
# ---------------------------------------------------------------------------
def _page(request, *, org, status: int = 200, **context):
    sites = (
        sites_managed_by(user=request.user)
        .filter(organisation=org)
        .prefetch_related(
            Prefetch(
                "buildings",
                queryset=Building.objects.order_by("name").prefetch_related(
                    Prefetch("ahus", queryset=AHU.objects.order_by("tag").only("pk", "tag", "building_id"))
                ),
            )
        )
        .order_by("name")
    )
    label_groups = []
    for site in sites:
        buildings = [(b, [a.pk for a in b.ahus.all()]) for b in site.buildings.all()]
        with_units = [(b, ids) for b, ids in buildings if ids]
        if with_units:  # a site without units has no labels to print
            label_groups.append({"site": site, "buildings": with_units})
    system = getattr(request.user, "unit_system", "si")
    return render(
        request,
        "frontend/registry_files/files.html",
        {
            "org": org,
            "kinds": list(KIND_NAMES.items()),
            "kind": context.pop("kind", "sites"),
            "label_groups": label_groups,
            "layouts": LAYOUTS,
            "default_layout": "letter-3x10" if system == "us" else "a4-3x8",
            "max_size": _size(MAX_BYTES),
            "max_rows": f"{MAX_ROWS:,}",
            **context,
        },
        status=status,
    )


def _row_errors(errors: list[csv_io.RowError]) -> tuple[list[dict], list[str]]:
    """Row problems for the table, and problems of the file as a whole (line 0) for the file field."""
    rows, whole = [], []
    for e in errors:
        if e.line <= 0:
            whole.append(e.reason)
        else:
            rows.append({"line": e.line, "column": e.column or "(the whole row)", "value": e.value, "reason": e.reason})
    return rows, whole


@login_required
@require_http_methods(["GET", "POST"])
def files(request):
    """GET: the page. POST: check a chosen file (a dry run: nothing is written) and show what it would do."""
    org = managed_organisation(request)
    if request.method == "GET":
        return _page(request, org=org)
    kind = request.POST.get("kind", "")
    text, field_errors = upload_check(kind=kind, upload=request.FILES.get("file"))
    if field_errors:
        return _page(request, org=org, status=400, kind=kind, field_errors=field_errors)
    name = request.FILES["file"].name
    try:
        result = csv_io.registry_import(kind=kind, source=io.StringIO(text, newline=""), organisation=org, dry_run=True)
    except csv_io.ImportFailed as exc:
        request.session.pop(SESSION_KEY, None)
        rows, whole = _row_errors(exc.errors)
        if whole and not rows:
            return _page(request, org=org, status=400, kind=kind, field_errors={"file": " ".join(whole)})
        refused = {"name": name, "rows": rows, "whole": whole}
        return _page(request, org=org, status=400, kind=kind, refused=refused)
    token = uuid.uuid4().hex
    request.session[SESSION_KEY] = {"token": token, "kind": kind, "org": org.pk, "text": text, "name": name}
    checked = {
        "name": name,
        "kind": KIND_NAMES[kind],
        "created": result.created,
        "updated": result.updated,
        "warnings": result.warnings,
    }
    return _page(request, org=org, kind=kind, checked=checked, token=token)


def _row_keys(*, kind: str, text: str, org) -> list[tuple[int, str, bool]]:
    """(line, the row's record in words, whether it exists now) for each row: what an import creates or updates."""
    reader = csv.DictReader(io.StringIO(text.removeprefix(csv_io.BYTE_ORDER_MARK), newline=""))

    def cell(row, name):
        return (row.get(name) or "").strip()

    if kind == "sites":
        have = set(Site.objects.filter(organisation=org).values_list("code", flat=True))
        return [(reader.line_num, cell(r, "code"), cell(r, "code") in have) for r in reader]
    units = set(
        AHU.objects.filter(building__site__organisation=org).values_list(
            "building__site__code", "building__code", "tag"
        )
    )
    if kind == "ahus":
        out = []
        for r in reader:
            key = (cell(r, "site_code"), cell(r, "building_code"), cell(r, "tag"))
            out.append((reader.line_num, f"{key[2]} in {key[1]} at {key[0]}", key in units))
        return out
    parts = set(
        Component.objects.filter(ahu__building__site__organisation=org).values_list(
            "ahu__building__site__code", "ahu__building__code", "ahu__tag", "name"
        )
    )
    out = []
    for r in reader:
        key = (cell(r, "site_code"), cell(r, "building_code"), cell(r, "ahu_tag"), cell(r, "name"))
        out.append((reader.line_num, f"{key[3]} of {key[2]} in {key[1]} at {key[0]}", key in parts))
    return out


@login_required
@require_POST
def import_confirm(request):
    """Import the file checked a moment ago: every row again against the registry as it is now; all or none."""
    org = managed_organisation(request)
    kept = request.session.get(SESSION_KEY)
    token = request.POST.get("token", "")
    if not isinstance(kept, dict) or kept.get("token") != token or kept.get("org") != org.pk:
        messages.error(
            request, "Nothing was imported: that check is no longer open (a newer file was checked, or you signed "
            "out). Choose the file again."
        )  # fmt: skip
        return redirect("frontend:registry_files")
    kind, text, name = kept["kind"], kept["text"], kept["name"]
    keys = _row_keys(kind=kind, text=text, org=org)

    def finish(result: csv_io.ImportResult) -> None:
        # In the import's own transaction: the audit line is stored with the rows, or neither is.
        audit_record(
            actor=request.user,
            obj=org,
            action="registry_import",
            changes={"kind": kind, "file": name[:200], "created": result.created, "updated": result.updated},
            organisation=org,
        )

    try:
        result = csv_io.registry_import(
            kind=kind, source=io.StringIO(text, newline=""), organisation=org, dry_run=False, finish=finish
        )
    except csv_io.ImportFailed as exc:
        request.session.pop(SESSION_KEY, None)
        rows, whole = _row_errors(exc.errors)
        return _page(
            request,
            org=org,
            status=400,
            kind=kind,
            refused={"name": name, "rows": rows, "whole": whole, "again": True},
        )
    request.session.pop(SESSION_KEY, None)
    done = {
        "name": name,
        "kind": KIND_NAMES[kind],
        "created": result.created,
        "updated": result.updated,
        "rows": [{"line": line, "what": what, "new": not existed} for line, what, existed in keys[:SHOWN_ROWS]],
        "more": max(len(keys) - SHOWN_ROWS, 0),
        "warnings": result.warnings,
    }
    messages.success(
        request, f"Imported {name}: {result.created} new, {result.updated} updated ({KIND_NAMES[kind].lower()})."
    )
    # The next file in the import's order is the likely next one.
    following = csv_io.KINDS[min(csv_io.KINDS.index(kind) + 1, len(csv_io.KINDS) - 1)]
    return _page(request, org=org, kind=following, done=done)


# ---------------------------------------------------------------------------
# Downloads
# ---------------------------------------------------------------------------
@login_required
@require_GET
def export(request, kind: str):
    """The registry of the sites the person manages as CSV (the import's format, defused for spreadsheets)."""
    if kind not in csv_io.KINDS:
        raise Http404(f"No registry file called {kind[:30]!r}; offered: {', '.join(csv_io.KINDS)}.")
    sites = sites_managed_by(user=request.user)
    if not sites.exists():
        raise PermissionDenied("Only a supervisor or administrator of the organisation may download the registry.")
    asked = request.GET.get("site", "").strip()
    if asked:
        sites = sites.filter(code=asked)
        if not sites.exists():
            raise Http404(f"Site {asked[:40]!r}: no site with that code among the sites you manage.")
    response = HttpResponse(content_type="text/csv; charset=utf-8")
    suffix = f"-{asked}" if asked else ""
    response["Content-Disposition"] = f'attachment; filename="plenum-{kind}{suffix}.csv"'
    csv_io.registry_export(kind=kind, sites=sites, out=response)
    return response


@login_required
@require_GET
def unit_qr(request, pk: int, fmt: str):
    """A unit's QR label image to download: SVG (any size, for a label printer) or PNG (for documents)."""
    ahu = managed_ahu(request, pk)
    if fmt == "svg":
        response = HttpResponse(label_qr_svg(code=ahu.label_code), content_type="image/svg+xml")
    elif fmt == "png":
        response = HttpResponse(label_qr_png(code=ahu.label_code), content_type="image/png")
    else:
        raise Http404(f"No QR image as {fmt[:10]!r}; offered: svg, png.")
    response["Content-Disposition"] = f'attachment; filename="plenum-label-{ahu.label_code}.{fmt}"'
    response["Cache-Control"] = "private, max-age=3600"
    return response
