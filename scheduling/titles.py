"""Work-order titles that fit their column whole: a title is never cut inside a word.

A preventive visit is titled by the tasks it bundles; when they do not all fit, as many whole task names
as fit and how many more there are (the checklist lists every task). Any other title too long for the
column is cut at the last word that fits, with an ellipsis.
"""

from __future__ import annotations

from collections.abc import Iterable

from .models import WorkOrder

TITLE_MAX: int = WorkOrder._meta.get_field("title").max_length or 200  # the column's length (200)
VISIT_PREFIX = "Preventive maintenance: "
ELLIPSIS = "…"
# Punctuation and spaces left dangling before the ellipsis ("Coil inspection, …" reads "Coil inspection…").
_DANGLING = " ,;:-–—(/"


def title_fit(text: str, *, limit: int = TITLE_MAX) -> str:
    """``text`` if it fits in ``limit`` characters; else its words up to the last one that fits, then "…"."""
    text = " ".join(text.split())
    if len(text) <= limit:
        return text
    # The room for words is limit - 1; one character more shows whether the last word ends right there.
    # One word longer than the column has nothing better than a cut.
    head = text[: limit - len(ELLIPSIS) + 1]
    head = head[: head.rfind(" ")] if " " in head else head[:-1]
    return head.rstrip(_DANGLING) + ELLIPSIS


def visit_title(names: Iterable[str], *, limit: int = TITLE_MAX) -> str:
    """ "Preventive maintenance: A, B, C" of the tasks' names (sorted, each once), or when they do not all fit
    "Preventive maintenance: A, B, and 5 more tasks": whole names only."""
    ordered = sorted({" ".join(n.split()) for n in names if n and n.strip()})
    whole = VISIT_PREFIX + ", ".join(ordered)
    if len(whole) <= limit:
        return whole
    for shown in range(len(ordered) - 1, 0, -1):
        rest = len(ordered) - shown
        title = f"{VISIT_PREFIX}{', '.join(ordered[:shown])}, and {rest} more task{'s' if rest > 1 else ''}"
        if len(title) <= limit:
            return title
    return title_fit(f"{VISIT_PREFIX}{ordered[0]} and {len(ordered) - 1} more tasks", limit=limit)
