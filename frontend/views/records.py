"""PDF records from the pages: ask for one (a POST form), then the list of reports with their state.

The inputs are checked, tenancy included, by reports.services.report_request. A refused
request (a bad day, a period beginning after today, a site, unit or work order the person
may not see — a 404 in the API) stores nothing: the page is shown again with what was
typed kept and the message at its field (``frontend.templatetags.report_forms``).
The PDF itself is served by reports' own download view.
"""

from urllib.parse import urlsplit

from django.contrib import messages
from django.contrib.auth.decorators import login_required
from django.core.exceptions import ValidationError
from django.http import Http404, QueryDict
from django.shortcuts import redirect, render
from django.urls import Resolver404, resolve, reverse
from django.utils.http import url_has_allowed_host_and_scheme
from django.views.decorators.http import require_GET, require_POST

from accounts.models import Role
from accounts.selectors import MANAGING_ROLES, primary_role
from inventory.selectors import ahus_visible_to, sites_visible_to
from inventory.today import time_zone_for, today_for
from reports import selectors as report_selectors
from reports.documents import NotVisible, label_of, shown
from reports.services import PDFA_KINDS, report_request

from ..selectors import default_period

KINDS = ("compliance", "unit_history", "inspection", "labels")
CHECKBOX_ON = ("1", "on")  # what a ticked checkbox sends; an unticked one sends nothing
FORM_STATE = "report_form"  # the session key of a refused request's typed values and messages
LAYOUTS = (("a4-3x8", "A4 (3 × 8 labels)"), ("letter-3x10", "US Letter (3 × 10 labels)"))


def _ids(post, name: str) -> list[int]:
    raw = [v for v in post.getlist(name) if v != ""]
    try:
        return [int(v) for v in raw]
    except ValueError:
        what = label_of(name).lower().rstrip("s")
        raise ValidationError({name: f"{label_of(name)}: {shown(raw)} is not a {what} id; allowed: whole numbers"})


def _one_id(post, name: str) -> int:
    ids = _ids(post, name)
    if len(ids) != 1:
        raise ValidationError({name: f"{label_of(name)}: give exactly one, not {len(ids)}"})
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
                raise NotVisible("site", f"Site: no such site among those you may see (id {site})")
            units += list(ahus_visible_to(user=user).filter(building__site_id=site).values_list("pk", flat=True))
            if not units:
                raise ValidationError({"site": "Site: the site has no units to label"})
        layout = post.get("layout", "")
        if layout and layout not in dict(LAYOUTS):
            offered = ", ".join(text for _, text in LAYOUTS)
            raise ValidationError({"layout": f"Paper: {shown(layout)} is not offered; allowed: {offered}"})
        return {"units": sorted(set(units)), "layout": layout}
    raise ValidationError({"kind": f"Report {kind!r} is not offered here; choose one from the list"})


def _back(request) -> str:
    target = request.POST.get("next", "")
    if target and url_has_allowed_host_and_scheme(target, allowed_hosts={request.get_host()}):
        return target
    return reverse("frontend:records")


def _pdfa(post, kind: str) -> bool:
    """The archival PDF/A checkbox: absent is off, "1" or "on" is on; anything else is refused, not ignored."""
    raw = post.get("pdfa")
    if raw is None or raw == "":
        return False
    if raw not in CHECKBOX_ON:
        raise ValidationError({"pdfa": f"Archival PDF/A: {shown(raw)} is not on or off; tick the box or leave it"})
    if kind not in PDFA_KINDS:
        raise ValidationError({"pdfa": "Archival PDF/A: not offered for this report"})
    return True


def _field_of(text: str) -> str:
    """The field a 404's message starts with ("unit: …", "Unit: …"), so the page can say it there."""
    head = text.split(":", 1)[0].strip().lower().replace(" ", "_")
    return head if head in ("unit", "units", "site", "sites", "work_order", "components") else "form"


def _refused(request, kind: str, errors: dict[str, str], *, status: int):
    """Nothing is stored: the page the form was on is shown again (with ``status``: 400 for a bad input, 404 for
    a record the person may not see), its form showing what was typed and each message at its field."""
    post = request.POST
    request.session[FORM_STATE] = {
        "kind": kind,
        # Typed back as typed, less control characters (NUL, escape), which a page must not carry.
        "values": {
            k: "".join(c for c in post.get(k, "")[:40] if c.isprintable()) for k in ("start", "end", "pdfa", "layout")
        },
        "errors": errors,
    }
    messages.error(request, "The report was not requested: " + "; ".join(errors.values()))
    target = _back(request)
    try:
        match = resolve(urlsplit(target).path)
    except Resolver404:
        return redirect(target)
    # The page's own view answers as for a GET of that address; the form takes the kept state once.
    request.method = "GET"
    request.GET = QueryDict(urlsplit(target).query)
    request.POST = QueryDict()
    response = match.func(request, *match.args, **match.kwargs)
    if response.status_code != 200:  # the page would not show (moved, say): back to it, the state kept
        return redirect(target)
    if hasattr(response, "render"):
        response.render()
    response.status_code = status
    return response


@login_required
@require_POST
def record_request(request):
    kind = request.POST.get("kind", "")
    try:
        pdfa = _pdfa(request.POST, kind)
        params = parameters_from_post(user=request.user, kind=kind, post=request.POST)
        report = report_request(user=request.user, kind=kind, parameters=params, pdfa=pdfa)
    except ValidationError as exc:
        if hasattr(exc, "error_dict"):
            errors = {k: "; ".join(v) for k, v in exc.message_dict.items()}
        else:
            errors = {"form": "; ".join(exc.messages)}
        return _refused(request, kind, errors, status=400)
    except Http404 as exc:  # a site, unit or work order this person may not see: said at its field, not a page
        field_name = getattr(exc, "field", None) or _field_of(str(exc))
        text = getattr(exc, "message", None) or str(exc) or "no such record among those you may see"
        if not text.split(":", 1)[0].istitle():
            text = f"{label_of(field_name)}:{text.split(':', 1)[1]}" if ":" in text else text
        return _refused(request, kind, {field_name: text}, status=404)
    report.refresh_from_db(fields=["status", "error"])  # rendered already when Celery runs in-process
    if getattr(report, "repeated", False):
        messages.info(
            request,
            f"{report.get_kind_display()}: the same as the one you asked for just before; it is listed below,"
            " not made twice.",
        )
    elif report.status == "done":
        messages.success(request, f"{report.get_kind_display()} is ready to download.")
    elif report.status == "failed":
        messages.error(request, f"{report.get_kind_display()} could not be made: {report.error[:200]}")
    else:
        messages.success(request, f"{report.get_kind_display()} requested; it is listed below while it is made.")
    return redirect(reverse("frontend:records") + f"#report-{report.public_id}")


@login_required
@require_GET
def records(request):
    rows = report_selectors.reports_visible_to(user=request.user, limit=50)
    # What each covers (the API's words, names resolved in bulk) and the file's pages and size.
    covers = report_selectors.reports_covers(reports=rows)
    for r in rows:
        r.covers = covers[r.pk]
        r.file_text = report_selectors.report_file_text(report=r)
    waiting = any(r.status in ("queued", "running") for r in rows)
    # A report may span sites: its times read on the clock most of the person's sites keep, zone named.
    zone = time_zone_for(request.user) or "UTC"
    context = {"reports": rows, "waiting": waiting, "zone": zone}
    # Supervisors, administrators and property managers ask here for the compliance report of every site they see
    # (no site named: all of them), for the period the dashboard's figures show.
    if primary_role(user=request.user) in (*MANAGING_ROLES, Role.PROPERTY_MANAGER):
        start, end = default_period(today=today_for(request.user))
        context |= {"form_id": "records", "site_ids": [], "period_start": start, "period_end": end}
    return render(request, "frontend/records.html", context)
