"""PDF records from the pages: ask for one (a POST form), then the list of reports with their state.

The inputs are checked, tenancy included, by reports.services.report_request; a site,
unit or work order the person may not see is a 404 there, and so here. The PDF itself
is served by reports' own download view.
"""

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import ValidationError
from django.http import Http404
from django.shortcuts import redirect, render
from django.urls import reverse
from django.utils.http import url_has_allowed_host_and_scheme
from django.views.decorators.http import require_GET, require_POST

from inventory.selectors import ahus_visible_to, sites_visible_to
from reports import selectors as report_selectors
from scheduling.selectors import person_time_zone

from .. import backends

KINDS = ("compliance", "unit_history", "inspection", "labels")
PDFA_KINDS = ("compliance", "inspection")
LAYOUTS = (("a4-3x8", "A4 (3 × 8 labels)"), ("letter-3x10", "US Letter (3 × 10 labels)"))


def _ids(post, name: str) -> list[int]:
    raw = [v for v in post.getlist(name) if v != ""]
    try:
        return [int(v) for v in raw]
    except ValueError:
        raise ValidationError({name: f"{name}={raw!r}: expected ids (whole numbers)"})


def _one_id(post, name: str) -> int:
    ids = _ids(post, name)
    if len(ids) != 1:
        raise ValidationError({name: f"{name}: give exactly one id"})
    return ids[0]


def parameters_from_post(*, user, kind: str, post) -> dict:
    """The report's parameters from a page's form; reports checks them again, tenancy included."""
    period = {k: post.get(k, "").strip() for k in ("start", "end") if post.get(k, "").strip()}
    if kind == "compliance":
        return {"sites": _ids(post, "sites"), **period}
    if kind == "unit_history":
        return {"unit": _one_id(post, "unit"), **period}
    if kind == "inspection":
        return {"work_order": post.get("work_order", "").strip()}
    if kind == "labels":
        units = _ids(post, "units")
        if post.get("site"):
            site = _one_id(post, "site")
            if not sites_visible_to(user=user).filter(pk=site).exists():
                raise Http404(f"site: no site {site} among those you may see")  # as reports answers for any id
            units += list(ahus_visible_to(user=user).filter(building__site_id=site).values_list("pk", flat=True))
            if not units:
                raise ValidationError({"site": "Site: the site has no units to label"})
        return {"units": sorted(set(units)), "layout": post.get("layout", "")}
    raise ValidationError({"kind": f"Report {kind!r} is not offered here; choose one from the list"})


def _back(request) -> str:
    target = request.POST.get("next", "")
    if target and url_has_allowed_host_and_scheme(target, allowed_hosts={request.get_host()}):
        return target
    return reverse("frontend:records")


@login_required
@require_POST
def record_request(request):
    kind = request.POST.get("kind", "")
    pdfa = kind in PDFA_KINDS and request.POST.get("pdfa") == "1"
    try:
        params = parameters_from_post(user=request.user, kind=kind, post=request.POST)
        report = backends.report_request(user=request.user, kind=kind, parameters=params, pdfa=pdfa)
    except ValidationError as exc:
        text = "; ".join(f"{m}" for m in exc.messages)
        messages.error(request, f"The report was not requested: {text}")
        return redirect(_back(request))
    report.refresh_from_db(fields=["status", "error"])  # rendered already when Celery runs in-process
    if report.status == "done":
        messages.success(request, f"{report.get_kind_display()} is ready to download.")
    elif report.status == "failed":
        messages.error(request, f"{report.get_kind_display()} could not be made: {report.error[:200]}")
    else:
        messages.success(request, f"{report.get_kind_display()} requested; it is listed below while it is made.")
    return redirect(reverse("frontend:records") + f"#report-{report.public_id}")


@login_required
@require_GET
def records(request):
    rows = backends.reports_visible_to(user=request.user, limit=50)
    # What each covers (the API's words, names resolved in bulk) and the file's pages and size.
    covers = report_selectors.reports_covers(reports=rows)
    for r in rows:
        r.covers = covers[r.pk]
        r.file_text = report_selectors.report_file_text(report=r)
    waiting = any(r.status in ("queued", "running") for r in rows)
    # A report may span sites: its times read on the clock most of the person's sites keep, zone named.
    zone = person_time_zone(user=request.user) or "UTC"
    return render(request, "frontend/records.html", {"reports": rows, "waiting": waiting, "zone": zone})
