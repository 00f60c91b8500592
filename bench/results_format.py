"""How ``bench/results.md`` writes a figure, a verdict, a skipped scenario and a growth across sizes."""

from __future__ import annotations

import math

MET, MISSED = "met", "**MISSED**"


def verdict(ok: bool | None) -> str:
    if ok is None:
        return "—"
    return MET if ok else MISSED


def num(value, fmt: str = "{:.3f}") -> str:
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "—"
    return fmt.format(value)


def below(value, limit) -> bool | None:
    """Whether a figure is under its limit; None (shown as —) when there is no figure."""
    return None if value is None else value < limit


def at_least(value, floor) -> bool | None:
    return None if value is None else value >= floor


def skipped(section: dict | None) -> str | None:
    if section is None:
        return "not run: the harness did not reach this scenario"
    if "not_run" in section:
        return f"not run: {section['not_run']}"
    if "error" in section:
        return f"not run: error — {section['error']}"
    return None


def growth_text(sizes: list[dict], getter) -> str:
    """How a figure grows from the smallest to the largest size, beside how the unit count grows."""
    points = []
    for s in sizes:
        try:
            value = getter(s)
        except (KeyError, TypeError):
            value = None
        if value:
            points.append((s["ahus"], value))
    if len(points) < 2:
        return ""
    (a0, v0), (a1, v1) = points[0], points[-1]
    return f"Growth from {a0} to {a1} units (×{a1 / a0:g}): ×{v1 / v0:.2f}."
