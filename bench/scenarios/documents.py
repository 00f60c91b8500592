"""4. PDFs: an inspection report and a compliance report of up to 500 units, vs a one-page minimal HTML;
5. the PWA shell: compressed bytes of a first load (page, service worker, its precache list)."""

from __future__ import annotations

import datetime as dt
import gzip
import json
import re

from ..generate import Portfolio
from .common import NotRun, median, timed, url

MINIMAL_HTML = (
    "<!doctype html><html><head><title>Baseline</title></head><body><h1>Baseline</h1><p>One page.</p></body></html>"
)


def reports_render(*, portfolio: Portfolio, runs: int, work_order_public_id: str | None) -> dict:
    """The inspection report, the compliance report of the first sites up to 500 units and, when the main
    organisation has more, of all its units (5,000 at the large size): render cost per 100 units, target ≤ 1 s."""
    from accounts.models import User
    from inventory.models import AHU
    from reports.models import Report
    from reports.rendering import pdf_render
    from reports.services import report_request

    supervisor = User.objects.get(username=portfolio.main.supervisor)
    units_per_site: dict[int, int] = {}
    for site_id in AHU.objects.filter(building__site_id__in=portfolio.main.site_ids).values_list(
        "building__site_id", flat=True
    ):
        units_per_site[site_id] = units_per_site.get(site_id, 0) + 1
    site_ids, units = [], 0
    for site_id in sorted(units_per_site):
        if units >= 500:
            break
        site_ids.append(site_id)
        units += units_per_site[site_id]
    end = portfolio.today
    start = end - dt.timedelta(days=365)
    period = {"start": start.isoformat(), "end": end.isoformat()}
    kinds = {
        "inspection": {"work_order": work_order_public_id},
        "compliance": {"sites": site_ids, **period},
    }
    all_units = sum(units_per_site.values())
    out: dict = {"compliance_units": units, "compliance_sites": len(site_ids)}
    if all_units > units:
        # Every unit of the organisation in one report: whether render cost grows linearly with the units.
        kinds["compliance_all"] = {"sites": sorted(units_per_site), **period}
        out["compliance_all_units"] = all_units
        out["compliance_all_sites"] = len(units_per_site)
    # First renders load fonts and WeasyPrint's caches: done once, untimed, for the baseline and each kind.
    pdf_render(html=MINIMAL_HTML, identifier="bench-warm-up")
    base_times = []
    for _ in range(runs):
        t, _ = timed(lambda: pdf_render(html=MINIMAL_HTML, identifier="bench-baseline"))
        base_times.append(t)
    out["baseline_s"] = median(base_times)
    for kind, params in kinds.items():
        times, pages, status, error = [], 0, "", ""
        # The report of every unit is timed without a warm-up of its own: the smaller one warmed the caches.
        for _ in range(runs if kind == "compliance_all" else runs + 1):
            try:
                t, report = timed(
                    lambda kind=kind, params=params: report_request(
                        user=supervisor, kind="compliance" if kind == "compliance_all" else kind, parameters=params
                    )
                )
            except Exception as exc:  # a document not written yet refuses its inputs; record it, go on
                out[kind] = {"not_run": f"{type(exc).__name__}: {exc}"[:300]}
                break
            report = Report.objects.get(pk=report.pk)
            status, error, pages = report.status, report.error, report.page_count
            times.append(t)
            # The same request again within minutes is answered with this report; each run must render anew.
            report.delete()
        else:
            if kind != "compliance_all":
                times = times[1:]  # the first was the warm-up
            out[kind] = {
                "seconds": median(times),
                "pages": pages,
                "status": status,
                "error": error[:300],
                "over_baseline": round(median(times) / out["baseline_s"], 1),
            }
            n_units = {"compliance": units, "compliance_all": all_units}.get(kind)
            if n_units:
                out[kind]["units"] = n_units
                out[kind]["seconds_per_100_units"] = round(median(times) / n_units * 100, 3)
    return out


TEXT_TYPES = (".css", ".js", ".json", ".webmanifest", ".html", ".svg", "")


def pwa_shell(*, portfolio: Portfolio) -> dict:
    from django.contrib.staticfiles import finders
    from django.test import Client

    from accounts.models import User

    client = Client()
    client.force_login(User.objects.get(username=portfolio.main.technicians[0]))
    sw = client.get("/sw.js")
    if sw.status_code != 200:
        raise NotRun(f"/sw.js answered {sw.status_code}")
    sw_text = sw.content.decode()
    match = re.search(r"const PRECACHE = (\[.*?\]);", sw_text, re.S)
    if not match:
        raise NotRun("no PRECACHE list found in /sw.js")
    precache = json.loads(match.group(1))
    today_url = url("frontend:today")
    files = []

    def add(path: str, content: bytes, compressible: bool) -> None:
        packed = len(gzip.compress(content, compresslevel=9)) if compressible else len(content)
        files.append({"path": path, "bytes": len(content), "transferred": min(packed, len(content))})

    page = client.get(today_url)
    add(today_url + " (first page)", page.content, True)
    add("/sw.js", sw.content, True)
    from django.conf import settings

    for path in precache:
        if path.startswith(settings.STATIC_URL):
            found = finders.find(path[len(settings.STATIC_URL) :])
            if not found:
                files.append({"path": path, "bytes": 0, "transferred": 0, "missing": True})
                continue
            with open(found, "rb") as fh:
                content = fh.read()
            # whitenoise gzips text files and leaves images (already compressed) as they are.
            add(path, content, not path.lower().endswith((".png", ".jpg", ".jpeg", ".webp", ".woff2")))
        else:
            resp = client.get(path)
            add(path, resp.content, True)
    total = sum(f["transferred"] for f in files)
    return {
        "files": files,
        "total_bytes": sum(f["bytes"] for f in files),
        "transferred_bytes": total,
        "target_bytes": 150_000,
        "targets": {"transferred < 150 kB": total < 150_000},
    }
