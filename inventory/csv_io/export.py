"""Export of the registry as CSV: one row per site, unit or component, in the columns import reads back."""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any, TextIO

from defusedcsv import csv as defused_csv
from django.db.models import QuerySet

from ..models import AHU, Site
from ..selectors import component_tree
from .file_format import AHU_COLUMNS, BYTE_ORDER_MARK, SITE_COLUMNS, TEXT_MARK, cell_text, header, is_marked, rounded


def _out(value: Any) -> Any:
    """One export cell: numbers stay numbers (never formulas); text that could run gets the mark.

    defusedcsv's writer marks text beginning with ``= + - @ | %``; a tab, a carriage return or an
    apostrophe before such a character is marked here, before the writer sees it.
    """
    if isinstance(value, bool) or value is None or not isinstance(value, int | float):
        text = cell_text(value)
        if text[:1] in ("\t", "\r") or is_marked(text):
            return TEXT_MARK + text
        return text
    if isinstance(value, float):
        value = rounded(value)
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
