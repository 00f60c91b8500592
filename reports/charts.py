"""Charts as SVG (matplotlib, Agg backend), deterministic: fixed ids, no date stamp, text kept as text."""

from __future__ import annotations

import io
from collections.abc import Sequence
from datetime import date

import matplotlib

matplotlib.use("Agg")

from matplotlib import dates as mdates
from matplotlib import pyplot as plt
from matplotlib.figure import Figure

STYLE = {
    "svg.fonttype": "none",  # text stays text: searchable, and the PDF's own font draws it
    "svg.hashsalt": "plenum",  # fixed element ids, so the same data gives the same SVG
    "font.family": "DejaVu Sans",
    "font.size": 8,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.grid": True,
    "grid.color": "#dddddd",
    "grid.linewidth": 0.5,
}
# Greys and one blue: readable when printed in black and white.
ON_TIME_C, LATE_C, MISSED_C, PENDING_C = "#2b5c8a", "#9bb8d3", "#333333", "#ffffff"


def _svg(fig: Figure) -> str:
    out = io.StringIO()
    fig.savefig(out, format="svg", bbox_inches="tight", metadata={"Date": None, "Creator": "Plenum"})
    plt.close(fig)
    return out.getvalue()


def compliance_bars(categories: Sequence) -> str:
    """Horizontal stacked bars per task category: on time, late, missed, not yet due."""
    with plt.rc_context(STYLE):
        labels = [c.label for c in categories] or ["(no preventive work due)"]
        n = len(labels)
        fig, ax = plt.subplots(figsize=(6.8, 0.35 * n + 1.0))
        left = [0] * n
        series = [
            ("on_time", "On time", ON_TIME_C),
            ("late", "Late", LATE_C),
            ("missed", "Missed", MISSED_C),
            ("not_yet_due", "Not yet due", PENDING_C),
        ]
        for key, name, colour in series:
            values = [c.counts[key] for c in categories] or [0]
            ax.barh(
                range(n), values, left=left, color=colour, edgecolor="#333333", linewidth=0.5, label=name, height=0.6
            )
            left = [a + b for a, b in zip(left, values, strict=True)]
        ax.set_yticks(range(n), labels)
        ax.invert_yaxis()
        ax.set_xlabel("Task occurrences due in the period")
        ax.xaxis.get_major_locator().set_params(integer=True)
        ax.grid(axis="y", visible=False)
        ax.legend(ncols=4, loc="lower left", bbox_to_anchor=(0, 1.0), frameon=False, fontsize=7)
        return _svg(fig)


def time_series(
    *,
    series: Sequence[tuple[str, Sequence[date], Sequence[float], str]],
    y_label: str,
    hlines: Sequence[tuple[float, str]] = (),
    band: tuple[Sequence[date], Sequence[float], Sequence[float]] | None = None,
    markers: Sequence[tuple[date, str]] = (),
) -> str:
    """Lines over dates. ``series`` are (name, dates, values, style) with style 'line', 'dashed' or 'points'."""
    with plt.rc_context(STYLE):
        return _svg(time_series_figure(series=series, y_label=y_label, hlines=hlines, band=band, markers=markers))


def time_series_figure(
    *,
    series: Sequence[tuple[str, Sequence[date], Sequence[float], str]],
    y_label: str,
    hlines: Sequence[tuple[float, str]] = (),
    band: tuple[Sequence[date], Sequence[float], Sequence[float]] | None = None,
    markers: Sequence[tuple[date, str]] = (),
) -> Figure:
    """``time_series``'s figure (call inside ``plt.rc_context(STYLE)``). Labels never lie on a line or a point:
    a horizontal line's name stands right of the plot, at its height; a dated marker's name above the plot, over
    its vertical line, markers close together on alternate rows; the legend below the plot."""
    fig, ax = plt.subplots(figsize=(6.8, 3.4))
    for name, xs, ys, style in series:
        if not xs:
            continue
        if style == "points":
            ax.plot(xs, ys, "o", markersize=3.5, color=ON_TIME_C, label=name)
        else:
            ax.plot(
                xs,
                ys,
                "--" if style == "dashed" else "-",
                color=ON_TIME_C if style == "line" else "#333333",
                linewidth=1.2,
                marker="o" if style == "line" else None,
                markersize=3,
                label=name,
            )
    if band is not None and band[0]:
        ax.fill_between(band[0], band[1], band[2], color=LATE_C, alpha=0.35, linewidth=0, label="Forecast range")
    for y, name in hlines:
        ax.axhline(y, color="#333333", linewidth=0.8, linestyle=":")
        ax.annotate(
            name, xy=(1, y), xycoords=("axes fraction", "data"), xytext=(3, 0), textcoords="offset points",
            ha="left", va="center", fontsize=7, annotation_clip=False,
        )  # fmt: skip
    _marker_labels(ax, markers)
    ax.set_ylabel(y_label)
    ax.xaxis.set_major_formatter(mdates.DateFormatter("%Y-%m-%d"))
    fig.autofmt_xdate()
    if ax.get_legend_handles_labels()[0]:
        ax.legend(
            loc="upper left", bbox_to_anchor=(0, -0.3), ncols=3, frameon=False, fontsize=7, borderaxespad=0
        )  # below the dates, never over the data
    return fig


def _marker_labels(ax, markers: Sequence[tuple[date, str]]) -> None:
    """Each dated marker a thin vertical line with its name above the plot, over the line; a name closer
    than a fifth of the axis to the one before it goes a row higher, so names never run into each other."""
    for x, _ in markers:
        ax.axvline(x, color="#777777", linewidth=0.6)
    if not markers:
        return
    lo, hi = ax.get_xlim()
    span = (hi - lo) or 1.0
    row, before = 0, None
    for x, name in sorted(markers, key=lambda m: m[0]):
        at = mdates.date2num(x)
        row = row + 1 if before is not None and (at - before) / span < 0.2 else 0
        before = at
        # Near either end a name ends (or starts) at its line, so it never runs past the plot into a line's name.
        where = (at - lo) / span
        ha = "right" if where > 0.85 else "left" if where < 0.15 else "center"
        ax.annotate(
            name, xy=(x, 1), xycoords=("data", "axes fraction"), xytext=(0, 2 + 9 * row), textcoords="offset points",
            ha=ha, va="bottom", fontsize=7, annotation_clip=False,
        )  # fmt: skip
