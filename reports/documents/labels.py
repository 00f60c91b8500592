"""Label sheets: one QR label per chosen unit or component, the code in text under the QR.

Two sheet layouts of Plenum's own dimensions (not any label maker's product):

| layout        | paper      | grid   | label            | column gap | row gap  | top / left margin   |
| ------------- | ---------- | ------ | ---------------- | ---------- | -------- | ------------------- |
| ``a4-3x8``    | A4         | 3 × 8  | 64 × 34 mm       | 3 mm       | 0 mm     | 12.5 mm / 6 mm      |
| ``letter-3x10`` | US Letter | 3 × 10 | 2.55 × 0.95 in  | 0.15 in    | 0.05 in  | 0.525 in / 0.275 in |

Each row of the table adds up to the paper: 6 + 3×64 + 2×3 + 6 = 210 mm and
12.5 + 8×34 + 12.5 = 297 mm; 0.275 + 3×2.55 + 2×0.15 + 0.275 = 8.5 in and
0.525 + 10×0.95 + 9×0.05 + 0.525 = 11 in.
"""

from __future__ import annotations

import io
import math
from dataclasses import dataclass

import segno
from django.conf import settings
from django.core.exceptions import ValidationError
from django.urls import NoReverseMatch

from inventory import selectors as inv
from inventory import services as inv_services
from inventory.display import usual_zone
from inventory.models import AHU, Component
from reports.rendering import html_render, svg_data_uri

from . import Built, Prepared, id_list, refuse_missing, single_organisation


@dataclass(frozen=True)
class Layout:
    code: str
    name: str
    page_size: str  # CSS @page size
    unit: str  # CSS length unit for every number below
    columns: int
    rows: int
    label_w: float
    label_h: float
    gap_x: float
    gap_y: float
    margin_top: float
    margin_left: float
    qr: float  # QR side
    code_h: float  # text line under the QR

    @property
    def per_page(self) -> int:
        return self.columns * self.rows

    def position(self, index: int) -> tuple[str, str]:
        row, col = divmod(index % self.per_page, self.columns)
        top = self.margin_top + row * (self.label_h + self.gap_y)
        left = self.margin_left + col * (self.label_w + self.gap_x)
        return f"{top:.3f}{self.unit}", f"{left:.3f}{self.unit}"


LAYOUTS = {
    "a4-3x8": Layout(
        "a4-3x8", "A4, 3 × 8 labels of 64 × 34 mm", "210mm 297mm", "mm", 3, 8, 64, 34, 3, 0, 12.5, 6, qr=24, code_h=4
    ),
    "letter-3x10": Layout(
        "letter-3x10",
        "US Letter, 3 × 10 labels of 2.55 × 0.95 in",
        "8.5in 11in",
        "in",
        3,
        10,
        2.55,
        0.95,
        0.15,
        0.05,
        0.525,
        0.275,
        qr=0.7,
        code_h=0.14,
    ),
}
MAX_LABELS = 2000


def prepare(*, user, parameters: dict, requested_at) -> Prepared:
    unit_ids = id_list(parameters, "units")
    component_ids = id_list(parameters, "components")
    if not unit_ids and not component_ids:
        raise ValidationError({"units": "choose at least one unit or component to label"})
    if len(unit_ids) + len(component_ids) > MAX_LABELS:
        raise ValidationError({"units": f"at most {MAX_LABELS} labels on one sheet run"})
    layout = parameters.get("layout") or "a4-3x8"
    if not isinstance(layout, str) or layout not in LAYOUTS:
        raise ValidationError({"layout": f"layout={layout!r}: allowed are {', '.join(sorted(LAYOUTS))}"})
    units = list(
        inv.ahus_visible_to(user=user)
        .filter(pk__in=unit_ids)
        .values_list("pk", "building__site_id", "building__site__organisation_id")
    )
    refuse_missing("units", unit_ids, {u[0] for u in units}, "unit")
    comps = list(
        inv.components_visible_to(user=user)
        .filter(pk__in=component_ids)
        .values_list("pk", "ahu__building__site_id", "ahu__building__site__organisation_id")
    )
    refuse_missing("components", component_ids, {c[0] for c in comps}, "component")
    rows = units + comps
    return Prepared(
        parameters={"units": unit_ids, "components": component_ids, "layout": layout},
        site_ids=sorted({r[1] for r in rows}),
        organisation_id=single_organisation({r[2] for r in rows}, "units"),
    )


def label_items(*, unit_ids: list[int], component_ids: list[int]) -> list[dict]:
    """What each label says, units first (by site, tag), then components (by unit, airstream order)."""
    items = []
    units = (
        AHU.objects.filter(pk__in=unit_ids)
        .select_related("building__site")
        .order_by("building__site__name", "tag", "pk")
    )
    for ahu in units:
        items.append(
            {
                "code": ahu.label_code,
                "title": ahu.tag,
                "line2": ahu.area_served or ahu.location,
                "line3": f"{ahu.building.site.name} · {ahu.building.name}",
                "zone": ahu.building.site.time_zone,
            }
        )
    comps = (
        Component.objects.filter(pk__in=component_ids)
        .select_related("ahu__building__site")
        .order_by("ahu__building__site__name", "ahu__tag", "position", "pk")
    )
    for comp in comps:
        items.append(
            {
                "code": comp.label_code,
                "title": comp.name,
                "line2": f"{comp.get_kind_display()} · {comp.ahu.tag}",
                "line3": comp.ahu.building.site.name,
                "zone": comp.ahu.building.site.time_zone,
            }
        )
    return items


def _label_url_and_qr(code: str) -> tuple[str, str]:
    """The label's address and its QR SVG, from the registry's own label functions.

    Falls back to ``PLENUM_PUBLIC_URL + /l/<code>/`` (the registry's documented label address) only while
    the registry's label page is not routed, so a sheet never fails for want of a URL name.
    """
    try:
        return inv_services.label_absolute_url(code=code), inv_services.label_qr_svg(code=code)
    except NoReverseMatch:
        url = settings.PLENUM_PUBLIC_URL.rstrip("/") + f"/l/{code}/"
        buffer = io.BytesIO()
        segno.make(url, error="m").save(buffer, kind="svg", scale=4, xmldecl=False, border=4)
        return url, buffer.getvalue().decode("utf-8")


def build(*, report) -> Built:
    params = report.parameters
    layout = LAYOUTS[params["layout"]]
    items = label_items(unit_ids=params["units"], component_ids=params["components"])
    for index, item in enumerate(items):
        item["top"], item["left"] = layout.position(index)
        item["url"], svg = _label_url_and_qr(item["code"])
        item["qr"] = svg_data_uri(svg)
    pages = [items[i : i + layout.per_page] for i in range(0, len(items), layout.per_page)]
    title = f"Label sheet ({layout.name})"
    u = layout.unit
    html = html_render(
        template="reports/labels.html",
        context={
            "layout": layout,
            "pages": pages,
            "css": {
                "label_w": f"{layout.label_w}{u}",
                "label_h": f"{layout.label_h}{u}",
                "qr": f"{layout.qr}{u}",
                "code_h": f"{layout.code_h}{u}",
                "pad": f"{layout.label_h * 0.06:.3f}{u}",
                "text_left": f"{layout.qr + layout.label_h * 0.12:.3f}{u}",
            },
        },
        title=title,
        generated_at=report.created_at,
        zone=usual_zone([item["zone"] for item in items]),
        subject=f"{len(items)} labels",
    )
    return Built(html=html, title=title, extra={"expected_pages": max(1, math.ceil(len(items) / layout.per_page))})
