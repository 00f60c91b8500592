"""``bench/results.md`` from the figures: one table per scenario, one row per size, each target judged plainly.

The figures and verdicts are written by ``results_format``; the scenarios' tables by ``results_serving`` (work
orders, load, sync, the mixed day) and ``results_bulk`` (reports, the registry import, trends, the PWA shell).
"""

from __future__ import annotations

from .results_bulk import registry_import_table, reports_table, shell_table, trend_ingest_table
from .results_serving import load_table, mixed_day_table, sync_table, work_orders_table


def results_markdown(doc: dict) -> str:
    sizes = [s for s in doc["sizes"] if "error" not in s]
    lines = [
        "# Benchmark results",
        "",
        f"Generated {doc['generated_at']} by `make bench` on {doc['database']} "
        f"({doc['machine']['cpus']} CPUs, Python {doc['machine']['python']}); median of "
        f"{doc['runs_per_figure']} runs per figure; whole run {doc['total_s']} s"
        + (
            f"; machine load average {doc['machine']['load_average'][0]} at the start, "
            f"{doc['machine']['load_average'][1]} at the end."
            if doc["machine"].get("load_average")
            else "."
        ),
        "Every figure is a ratio to a baseline measured in the same run, on the same database. "
        "A target that is not reached says **MISSED**; targets are as set in issues 8, 17 and 19 and are not relaxed.",
        "",
    ]
    for s in doc["sizes"]:
        if "error" in s:
            lines += [f"- {s['ahus']} units: not run: {s['error']}", ""]
    lines += [
        "## Portfolio",
        "",
        "| units | sites | components | inspections | readings | findings | meter readings "
        "| outdoor temperatures | generate s | whole size s |",
        "|---|---|---|---|---|---|---|---|---|---|",
    ]
    for s in sizes:
        p = s.get("portfolio", {})
        lines.append(
            f"| {s['ahus']} (+{p.get('ahus', 0) - s['ahus']} other org) | {s['sites']} | "
            f"{p.get('components')} | {p.get('inspections')} | {p.get('readings')} | {p.get('findings')} | "
            f"{p.get('meter_readings')} | {p.get('outdoor_temperatures')} | {s.get('generate_s')} | "
            f"{s.get('wall_s', '—')} |"
        )
    lines += [
        "",
        *work_orders_table(sizes),
        "",
        *load_table(sizes, doc),
        "",
        *sync_table(sizes),
        "",
        *mixed_day_table(sizes),
        "",
        *reports_table(sizes),
        "",
        *registry_import_table(sizes),
        "",
        *trend_ingest_table(sizes),
        "",
        *shell_table(sizes),
        "",
    ]
    return "\n".join(lines)
