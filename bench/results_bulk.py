"""``bench/results.md``'s tables of the larger jobs and payloads: the PDF reports, the registry import, the trend
ingest and the PWA shell's first load."""

from __future__ import annotations

from .results_format import MISSED, growth_text, num, skipped, verdict

REPORT_S_PER_100_UNITS = 1.0  # issue 17: the compliance report's render cost, seconds per 100 units


def reports_table(sizes: list[dict]) -> list[str]:
    out = [
        "## PDF reports",
        "",
        "Time to request and render through `reports.services.report_request` (the render task runs "
        "in-process). Baseline: `reports.rendering.pdf_render` of a one-page minimal HTML with the same "
        "WeasyPrint. The compliance report of the first sites up to 500 units and, where the organisation has "
        "more, of all its units (5,000 at the large size). Target: render cost grows linearly with the units, "
        f"≤ {REPORT_S_PER_100_UNITS:g} s per 100 units for every compliance row.",
        "",
        "| units | report | pages | seconds | s per 100 units | ÷ baseline | status | target |",
        "|---|---|---|---|---|---|---|---|",
    ]
    for s in sizes:
        r = s.get("reports")
        why = skipped(r)
        if why:
            out.append(f"| {s['ahus']} | {why} |||||||")
            continue
        out.append(f"| {s['ahus']} | baseline (minimal one page) | 1 | {num(r['baseline_s'])} | — | 1 | — | — |")
        kinds = ["inspection", "compliance"] + (["compliance_all"] if "compliance_all" in r else [])
        for kind in kinds:
            k = r.get(kind) or {"not_run": "missing"}
            if kind == "inspection":
                label = kind
            elif kind == "compliance":
                label = f"compliance, {r['compliance_units']} units"
            else:
                label = f"compliance, all {r['compliance_all_units']} units"
            if "not_run" in k:
                target = "—" if kind == "inspection" else MISSED
                out.append(f"| {s['ahus']} | {label} | not run: {k['not_run']} |||||| {target} |")
                continue
            status = k["status"] + (f" ({k['error']})" if k.get("error") else "")
            per_100 = k.get("seconds_per_100_units")
            if kind == "inspection":
                target = "—"
            else:
                target = verdict(k["status"] == "done" and per_100 is not None and per_100 <= REPORT_S_PER_100_UNITS)
            out.append(
                f"| {s['ahus']} | {label} | {k['pages']} | {num(k['seconds'])} | {num(per_100, '{:.2f}')} | "
                f"{num(k['over_baseline'], '{:.1f}')}× | {status} | {target} |"
            )
    return out


def registry_import_table(sizes: list[dict]) -> list[str]:
    out = [
        "## Registry CSV import",
        "",
        "A units file (100 units per building) imported by `inventory.csv_io.registry_import`: every row "
        "checked in memory, then written in bulk in one transaction, as the background import job does. "
        "Baseline: `bulk_create` of the same buildings and units, nothing checked. No numeric target is set; "
        "the ratio is the figure to watch. Files of the background threshold or more run as a job, so a "
        "web worker's timeout (30 s in gunicorn by default) never cuts them off.",
        "",
        "| units | rows | seconds | rows/s | ÷ baseline | background from | would fit a 30 s request |",
        "|---|---|---|---|---|---|---|",
    ]
    for s in sizes:
        r = s.get("registry_import")
        why = skipped(r)
        if why:
            out.append(f"| {s['ahus']} | {why} ||||||")
            continue
        out.append(
            f"| {s['ahus']} | {r['rows']:,} | {num(r['import_s'], '{:.1f}')} | {r['rows_per_s'] or '—'} | "
            f"{num(r['import_over_baseline'], '{:.1f}')}× | {r['background_rows']:,} rows | "
            f"{'yes' if r['fits_request'] else 'no'} |"
        )
    return out


def trend_ingest_table(sizes: list[dict]) -> list[str]:
    from .trends import INGEST_OVER_BASELINE, JUDGE_OVER_INGEST

    out = [
        "## Building-automation trends: one day ingested and judged",
        "",
        "20 points on every unit of the main organisation, one site-local day of 15-minute samples (96 a point; "
        "5,000 units: 9.6 million values), stored through `automation.trends.trend_samples_store` one site a "
        "transaction, then every unit's day judged by `automation.judging.trends_judge` (run-hours, filter days, "
        "the guideline's fault rules, freeze events). Baseline: the same rows (time, point id, value) into a plain "
        "table — binary `COPY` on PostgreSQL, `executemany` INSERT on SQLite. Targets: ingest ≤ "
        f"{INGEST_OVER_BASELINE:g}× the baseline; judging ≤ {JUDGE_OVER_INGEST:g}× the ingest time. A value not "
        "stored or a unit not judged fails the scenario.",
        "",
        "| units | values | baseline | baseline s | ingest s | ÷ baseline | target | values/s | judge s | "
        "judge ÷ ingest | target | faults opened | filter days |",
        "|---|---|---|---|---|---|---|---|---|---|---|---|---|",
    ]
    for s in sizes:
        r = s.get("trend_ingest")
        why = skipped(r)
        if why:
            out.append(f"| {s['ahus']} | {why} ||||||||||||")
            continue
        ingest_ok, judge_ok = r["targets"].values()
        out.append(
            f"| {s['ahus']} | {r['values']:,} | {r['baseline']} | {num(r['baseline_s'])} | {num(r['ingest_s'])} | "
            f"{num(r['ingest_over_baseline'], '{:.2f}')}× | {verdict(ingest_ok)} | {r['values_per_s'] or '—'} | "
            f"{num(r['judge_s'])} | {num(r['judge_over_ingest'], '{:.2f}')}× | {verdict(judge_ok)} | "
            f"{r['faults_opened']} | {r['filter_days']} |"
        )
    growth = growth_text(sizes, lambda s: s["trend_ingest"]["judge_s"])
    return out + (["", f"Judging: {growth}"] if growth else [])


def shell_table(sizes: list[dict]) -> list[str]:
    out = [
        "## PWA app shell, first load",
        "",
        "Bytes a phone downloads on first load, without photos: the technician's first page, `/sw.js` and "
        "everything in its precache list; text gzip-compressed (level 9, as whitenoise stores it), images as "
        "they are. Target: < 150 kB (150,000 bytes).",
        "",
    ]
    shell = next((s.get("pwa_shell") for s in reversed(sizes) if s.get("pwa_shell")), None)
    why = skipped(shell)
    if why:
        return [*out, why]
    out += ["| file | bytes | transferred |", "|---|---|---|"]
    for f in shell["files"]:
        out.append(f"| {f['path']}{' (missing)' if f.get('missing') else ''} | {f['bytes']} | {f['transferred']} |")
    total = shell["transferred_bytes"]
    out += [
        f"| **total** | {shell['total_bytes']} | **{total}** |",
        "",
        f"{total / 1000:.1f} kB transferred against 150 kB: {verdict(total < 150_000)}.",
    ]
    return out
