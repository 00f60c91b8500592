"""Layout checks on a report's HTML as WeasyPrint lays it out (not on the PDF's pixels)."""

from __future__ import annotations


def cells_overflowing(html: str, *, base_url: str | None = None, tolerance_pt: float = 0.5) -> list[str]:
    """Every table cell whose text runs past its right edge into the next column: "page N: '<text>' by X pt".

    A word too long for its column (and not allowed to wrap) spills over its neighbour in the PDF; the page-margin
    check cannot see it, as the ink stays on the paper."""
    from weasyprint import HTML
    from weasyprint.formatting_structure import boxes

    document = HTML(string=html, base_url=base_url).render()
    problems: list[str] = []
    for number, page in enumerate(document.pages, start=1):
        for cell in page._page_box.descendants():
            if not isinstance(cell, boxes.TableCellBox):
                continue
            right = cell.content_box_x() + cell.width
            for box in cell.descendants():
                if isinstance(box, boxes.TextBox) and box.text.strip():
                    over = box.position_x + box.width - right
                    if over > tolerance_pt:
                        problems.append(f"page {number}: {box.text.strip()!r} by {over:.1f} pt")
    return problems
