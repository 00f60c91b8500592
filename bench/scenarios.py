"""The benchmark scenarios. Each returns a dict of figures or raises ``NotRun`` naming what is missing.

Every scenario measures its baseline in the same process, on the same
database, right beside the measured operation, so noise on a shared machine
affects both. Figures are medians over ``runs``.
"""

from __future__ import annotations

import base64
import datetime as dt
import gzip
import json
import re
import statistics
import time
import uuid
from collections.abc import Callable

from django.db import connection, transaction
from django.urls import NoReverseMatch, reverse

from .generate import OrgSummary, Portfolio


class NotRun(Exception):
    """A scenario whose feature has not landed (or cannot run here)."""


class WrongOutcome(RuntimeError):
    """A scenario's operations did not have the outcome it names (a form flagged instead of stored, a write
    refused, a read not answered): its figures would measure another path, so it fails instead."""


def median(values: list[float | None]) -> float | None:
    """The median of the figures there are; None (null in results.json) when there are none."""
    values = [v for v in values if v is not None]
    return round(statistics.median(values), 4) if values else None


def timed(fn: Callable[[], object]) -> tuple[float, object]:
    t0 = time.perf_counter()
    out = fn()
    return time.perf_counter() - t0, out


def url(name: str, **kwargs) -> str:
    try:
        return reverse(name, kwargs=kwargs or None)
    except NoReverseMatch as exc:
        raise NotRun(f"URL {name!r} does not exist yet") from exc


def _max_id(model) -> int:
    return model.objects.order_by("-pk").values_list("pk", flat=True).first() or 0


# ---------------------------------------------------------------------------
# 1. Work-order generation, first and idempotent second run, vs one bulk insert of the same rows.
# ---------------------------------------------------------------------------
def work_order_generation(*, portfolio: Portfolio, runs: int) -> dict:
    from accounts.models import AuditEvent, Organisation
    from scheduling.models import TaskDefinition, WorkOrder, WorkOrderTask

    try:
        from scheduling.engine import work_orders_generate
    except ImportError as exc:
        raise NotRun(f"scheduling.engine.work_orders_generate is missing ({exc})") from exc

    org = Organisation.objects.get(pk=portfolio.main.organisation_id)
    task = TaskDefinition.objects.filter(organisation__isnull=True).order_by("pk").first()
    ahu_id = portfolio.main.ahu_ids[0]
    firsts, seconds, baselines, rows = [], [], [], {}
    second_created = []
    for run in range(runs):
        marks = (_max_id(WorkOrder), _max_id(WorkOrderTask), _max_id(AuditEvent))
        _engine_caches_clear()  # every repetition's first run starts cold, as a fresh worker process does
        t_first, _ = timed(lambda: work_orders_generate(organisation=org, today=portfolio.today))
        n_wo = WorkOrder.objects.filter(pk__gt=marks[0]).count()
        n_task = WorkOrderTask.objects.filter(pk__gt=marks[1]).count()
        before_second = (WorkOrder.objects.count(), WorkOrderTask.objects.count())
        t_second, _ = timed(lambda: work_orders_generate(organisation=org, today=portfolio.today))
        after_second = (WorkOrder.objects.count(), WorkOrderTask.objects.count())
        second_created.append(sum(after_second) - sum(before_second))
        rows = {"work_orders": n_wo, "work_order_tasks": n_task}
        if not n_wo:
            raise NotRun("the first generation run created no work orders, so there is nothing to compare")

        def baseline(n_wo=n_wo, n_task=n_task, run=run) -> None:
            with transaction.atomic():
                wos = WorkOrder.objects.bulk_create(
                    [
                        WorkOrder(organisation=org, ahu_id=ahu_id, title="baseline row", due_date=portfolio.today)
                        for _ in range(n_wo)
                    ],
                    batch_size=2000,
                )
                WorkOrderTask.objects.bulk_create(
                    [
                        WorkOrderTask(
                            work_order=wos[i % len(wos)],
                            task=task,
                            task_code=task.code,
                            ahu_id=ahu_id,
                            due_date=portfolio.today,
                            occurrence_key=f"base-{run}-{i}",
                        )
                        for i in range(n_task)
                    ],
                    batch_size=2000,
                )

        t_base, _ = timed(baseline)
        firsts.append(t_first)
        seconds.append(t_second)
        baselines.append(t_base)
        # Back to the state before this run (the last run's work orders stay, for the load scenarios).
        with transaction.atomic():
            base_qs = WorkOrder.objects.filter(pk__gt=marks[0], title="baseline row")
            WorkOrderTask.objects.filter(work_order__in=base_qs).delete()
            base_qs.delete()
            if run < runs - 1:
                WorkOrderTask.objects.filter(pk__gt=marks[1]).delete()
                WorkOrder.objects.filter(pk__gt=marks[0]).delete()
                AuditEvent.objects.filter(pk__gt=marks[2]).delete()
    first, second, base = median(firsts), median(seconds), median(baselines)
    return {
        "rows": rows,
        "first_s": first,
        "second_s": second,
        "baseline_s": base,
        "first_over_baseline": round(first / base, 2) if base else None,
        "second_over_first": round(second / first, 3) if first else None,
        "second_run_created": max(second_created) if second_created else None,
        "targets": {
            "first_over_baseline <= 3": bool(base and first / base <= 3),
            "second_over_first < 0.2": bool(first and second / first < 0.2),
            "second run creates nothing": max(second_created or [1]) == 0,
        },
    }


def today_work_assign(*, portfolio: Portfolio, per_technician: int = 8, org: OrgSummary | None = None) -> int:
    """Give each technician of ``org`` (default: the main organisation) ``per_technician`` open work orders
    scheduled for today (bench setup, not timed)."""
    from accounts.models import User
    from scheduling.models import WorkOrder

    org = org or portfolio.main
    techs = list(User.objects.filter(username__in=org.technicians).order_by("username"))
    planned = list(
        WorkOrder.objects.filter(
            organisation_id=org.organisation_id,
            kind=WorkOrder.Kind.PREVENTIVE,
            state=WorkOrder.State.PLANNED,
            assignee__isnull=True,
        )
        .order_by("due_date", "pk")
        .values_list("pk", flat=True)
    )
    # Every third planned visit from the earliest goes to a technician for today, so the board still shows
    # unassigned work due this week beside the assigned.
    open_ids = planned[::3][: per_technician * len(techs)]
    for i, tech in enumerate(techs):
        chunk = open_ids[i * per_technician : (i + 1) * per_technician]
        WorkOrder.objects.filter(pk__in=chunk).update(
            assignee=tech, state=WorkOrder.State.ASSIGNED, scheduled_for=portfolio.today
        )
    # A further tenth of the rest assigned but not for today, as a board would show.
    taken = set(open_ids)
    rest = [pk for pk in planned if pk not in taken][1::10]
    for i, tech in enumerate(techs):
        WorkOrder.objects.filter(pk__in=rest[i :: len(techs)]).update(assignee=tech, state=WorkOrder.State.ASSIGNED)
    return len(open_ids)


# ---------------------------------------------------------------------------
# 2. Today and board under 20 concurrent clients, vs the bare JSON endpoint in the same server.
# ---------------------------------------------------------------------------
def endpoints_under_load(
    *, portfolio: Portfolio, port: int, runs: int, clients: int, per_client: int, max_seconds: float
) -> dict:
    """Each run: the baseline, then today and board twice — first right after a change (every worker
    builds each person's answer once; ``accounts.answers``), then again with the answers kept. The
    targets are judged on the kept pass, the state between changes; the first pass shows what a change
    costs."""
    from accounts.changes import organisation_changed

    from .load import get_json, load_loop

    today_path = url("scheduling_api:today") + f"?day={portfolio.today.isoformat()}"
    board_path = url("scheduling_api:board") + f"?week={portfolio.today.isoformat()}"
    tech_tokens = [portfolio.main.tokens[t] for t in portfolio.main.technicians]
    sup_token = portfolio.main.tokens[portfolio.main.supervisor]
    # One look at the answers, so the figures are for real content, not errors.
    sample_today = get_json(port, today_path, token=tech_tokens[0])
    sample_board = get_json(port, board_path, token=sup_token)
    targets = {
        "today": (today_path, tech_tokens),
        "board": (board_path, [sup_token]),
        "baseline": ("/bench/baseline/", [None]),
    }
    for path, tokens in targets.values():  # warm every worker (imports, connections, kept answers)
        load_loop(port=port, path=path, tokens=tokens, clients=clients, per_client=5, max_seconds=10)
    passes = {"baseline": "baseline", "today_after_change": "today", "today": "today"}
    passes |= {"board_after_change": "board", "board": "board"}
    results: dict[str, list] = {k: [] for k in passes}
    for _ in range(runs):
        for name, target in passes.items():
            if name.endswith("_after_change"):
                # as a service's write does: every kept answer of the organisation is stale
                organisation_changed(organisation_id=portfolio.main.organisation_id)
            path, tokens = targets[target]
            results[name].append(
                load_loop(
                    port=port, path=path, tokens=tokens, clients=clients, per_client=per_client, max_seconds=max_seconds
                )
            )
    out: dict = {
        "clients": clients,
        "requests_per_client": per_client,
        "today_visits_sample": _count_items(sample_today),
        "board_sample": _count_items(sample_board),
    }
    base_rps = median([r.throughput_rps for r in results["baseline"]])
    for name, rs in results.items():
        out[name] = {
            "throughput_rps": median([r.throughput_rps for r in rs]),
            "p50_ms": median([r.p50_ms for r in rs]),
            "p95_ms": median([r.p95_ms for r in rs]),
            "requests": sum(r.requests for r in rs),
            "errors": sum(r.errors for r in rs),
            "first_error": next((r.first_error for r in rs if r.first_error), ""),
        }
        if name != "baseline":
            rps = out[name]["throughput_rps"]
            out[name]["throughput_over_baseline"] = round(rps / base_rps, 3) if rps is not None and base_rps else None
    return out


def _engine_caches_clear() -> None:
    """Forget the per-process caches (run-hour rates, seasons from normals, ...) as the tests do."""
    from config.caches import clear_module_caches

    clear_module_caches()


def _count_items(payload) -> object:
    if isinstance(payload, list):
        return len(payload)
    if isinstance(payload, dict):
        if isinstance(payload.get("counts"), dict):  # the paged board: whole-week totals per section
            return payload["counts"]
        return {k: len(v) for k, v in payload.items() if isinstance(v, list)} or sorted(payload)[:8]
    return None


# ---------------------------------------------------------------------------
# 3. Sync: 1,000 forms, then the same 1,000 replayed, vs posting the same bodies to the bare endpoint.
# ---------------------------------------------------------------------------
# A 1×1 white PNG, the smallest signature image the server accepts as a PNG.
SIGNATURE_PNG = base64.b64decode(
    "iVBORw0KGgoAAAANSUhEUgAAAAEAAAABCAQAAAC1HAwCAAAAC0lEQVR42mP8/x8AAwMCAO+ip1sAAAAASUVORK5CYII="
)


def _value_for(item: dict):
    kind = item["kind"]
    if kind == "check":
        return "ok"
    if kind == "choice":
        good = [c for c in item.get("choices", []) if c.get("ok", True)]
        return (good or item["choices"])[0]["value"]
    if kind == "number":
        limits = (item.get("limits") or {}).get("display") or {}
        for band in ("ok", "plausible", "physical"):
            lo, hi = (limits.get(band) or {}).get("min"), (limits.get(band) or {}).get("max")
            if lo is not None and hi is not None:
                return round((lo + hi) / 2, 2)
            if hi is not None:
                return round(hi * 0.5, 2)
            if lo is not None:
                return round(lo + 1, 2)
        return 1
    return None  # text and photo items are left out


def sync_forms_prepare(
    *,
    portfolio: Portfolio,
    port: int,
    count: int,
    tag: str,
    org: OrgSummary | None = None,
    due_date: dt.date | None = None,
) -> list[tuple[str, dict]]:
    """``count`` open work orders assigned to the technicians, and one complete form for each, built as the
    phone builds it from the checklist endpoint. Returns (technician token, form) pairs.

    The work orders are copies (same unit, same tasks, occurrence keys ``sync-<tag>-…``) of the generated
    open ones of ``org`` (default: the portfolio's main organisation), so even a small portfolio gives 1,000
    distinct forms with real checklists. ``due_date`` moves the copies off today's lists and the board's
    week (the mixed day reads those while the forms arrive); by default they keep their source's dates.
    """
    from accounts.models import User
    from scheduling.models import MeterReading, WorkOrder, WorkOrderTask

    from .load import get_json

    org = org or portfolio.main
    url("inspections_api:sync")
    techs = list(User.objects.filter(username__in=org.technicians).order_by("username"))
    sources = list(
        WorkOrder.objects.filter(organisation_id=org.organisation_id, state__in=WorkOrder.OPEN_STATES)
        .prefetch_related("tasks")
        .order_by("pk")[:200]
    )
    if not sources:
        raise NotRun("no open work orders to copy (work-order generation did not run)")
    copies, copy_tasks, source_of = [], [], []
    for n in range(count):
        src = sources[n % len(sources)]
        copies.append(
            WorkOrder(
                organisation_id=src.organisation_id,
                ahu_id=src.ahu_id,
                kind=src.kind,
                state=WorkOrder.State.ASSIGNED,
                priority=src.priority,
                title=src.title,
                assignee=techs[n % len(techs)],
                due_date=due_date or src.due_date,
                overdue_on=None if due_date else src.overdue_on,
            )
        )
        source_of.append(src)
    with transaction.atomic():
        copies = WorkOrder.objects.bulk_create(copies, batch_size=1000)
        for n, (wo, src) in enumerate(zip(copies, source_of, strict=True)):
            for t in src.tasks.all():
                copy_tasks.append(
                    WorkOrderTask(
                        work_order=wo,
                        task_id=t.task_id,
                        task_code=t.task_code,
                        ahu_id=t.ahu_id,
                        component_id=t.component_id,
                        component_key=t.component_key,
                        due_date=due_date or t.due_date,
                        occurrence_key=f"sync-{tag}-{n}-{t.occurrence_key}"[:80],
                    )
                )
        WorkOrderTask.objects.bulk_create(copy_tasks, batch_size=2000)
    tokens = org.tokens
    # The run-hour meter as the technician reads it: the unit's latest reading (never a jump the
    # plausibility rule refuses, whatever the time of day the bench runs).
    meter_hours: dict[int, float] = {}
    for ahu_id, hours in (
        MeterReading.objects.filter(ahu_id__in={wo.ahu_id for wo in copies})
        .order_by("ahu_id", "taken_at")
        .values_list("ahu_id", "hours")
    ):
        meter_hours[ahu_id] = hours
    sheets: dict[tuple[int, int], dict] = {}
    pairs = []
    for wo, src in zip(copies, source_of, strict=True):
        key = (src.pk, wo.assignee_id)
        token = tokens[wo.assignee.username]
        if key not in sheets:
            sheets[key] = get_json(port, url("inspections_api:checklist", public_id=wo.public_id), token=token)
        sheet = sheets[key]
        readings = []
        for template in sheet["templates"]:
            for item in template["items"]:
                value = _value_for(item)
                if item["key"] == "visit.run_hours":
                    value = meter_hours.get(wo.ahu_id)
                if value is None:
                    continue
                readings.append(
                    {
                        "item": item["key"],
                        "component": (item.get("component") or {}).get("label_code"),
                        "value": value,
                        "note": "",
                    }
                )
        now = dt.datetime.now(dt.UTC).replace(microsecond=0)
        pairs.append(
            (
                token,
                {
                    "client_uuid": str(uuid.uuid4()),
                    "work_order": str(wo.public_id),
                    "work_order_version": wo.version,
                    "unit_system": sheet.get("unit_system", "si"),
                    "started_at": (now - dt.timedelta(minutes=40)).isoformat(),
                    "finished_at": now.isoformat(),
                    "readings": readings,
                    "photos": [],
                    "signature": {
                        "name": str(wo.assignee),
                        "signed_at": now.isoformat(),
                        "image": "data:image/png;base64," + base64.b64encode(SIGNATURE_PNG).decode(),
                    },
                },
            )
        )
    return pairs


def forms_outcome_check(answers: list[dict], *, expected: int, status: str, what: str) -> None:
    """Every one of ``expected`` sync results has ``status`` ("stored" on first arrival, "duplicate" on a
    replay); else ``WrongOutcome`` naming how many came back otherwise and the first one's flags or errors."""
    wrong = [r for r in answers if r.get("status") != status]
    if len(answers) == expected and not wrong:
        return
    counts: dict[str, int] = {}
    for r in answers:
        counts[r.get("status", "?")] = counts.get(r.get("status", "?"), 0) + 1
    detail = ""
    if wrong:
        first = wrong[0]
        said = "; ".join(f.get("reason", f.get("code", "")) for f in first.get("flags") or [])
        detail = f"; the first ({first.get('client_uuid')}) came back {first.get('status')!r}: " + (
            said or str(first.get("errors") or "")[:300]
        )
    raise WrongOutcome(f"{what}: {expected} forms sent, answers {counts}, all should be {status!r}{detail}"[:900])


def sync_forms(*, port: int, pairs: list[tuple[str, dict]], batch: int = 50) -> dict:
    """Post the forms (``batch`` a request, one technician a request), then replay them; baseline: the same
    bodies to the bare endpoint."""
    from inspections.models import Inspection

    from .load import request

    sync_path = url("inspections_api:sync")
    by_token: dict[str, list[dict]] = {}
    for token, form in pairs:
        by_token.setdefault(token, []).append(form)
    bodies = []
    for token, forms in by_token.items():
        for i in range(0, len(forms), batch):
            bodies.append((token, json.dumps({"forms": forms[i : i + batch]}).encode()))

    def post_all(path: str, auth: bool) -> tuple[float, list[dict]]:
        answers = []
        t0 = time.perf_counter()
        for token, body in bodies:
            status, data, _ = request("POST", port, path, token=token if auth else None, body=body, timeout=300)
            if status != 200:
                raise RuntimeError(f"POST {path} answered {status}: {data[:300]!r}")
            answers.extend(json.loads(data).get("results", []))
        return time.perf_counter() - t0, answers

    before = Inspection.objects.count()
    t_base, _ = post_all("/bench/baseline/", auth=False)
    t_first, first = post_all(sync_path, auth=True)
    mid = Inspection.objects.count()
    t_replay, replay = post_all(sync_path, auth=True)
    after = Inspection.objects.count()
    statuses: dict[str, int] = {}
    for r in first:
        statuses[r.get("status", "?")] = statuses.get(r.get("status", "?"), 0) + 1
    replay_statuses: dict[str, int] = {}
    for r in replay:
        replay_statuses[r.get("status", "?")] = replay_statuses.get(r.get("status", "?"), 0) + 1
    first_refusal = next((r.get("errors") for r in first if r.get("status") == "refused"), None)
    # The figure is the cost of storing forms: flagged or refused ones take another path, so it fails instead.
    forms_outcome_check(first, expected=len(pairs), status="stored", what="sync, first post")
    forms_outcome_check(replay, expected=len(pairs), status="duplicate", what="sync, replay")
    if mid - before != len(pairs) or after != mid:
        raise WrongOutcome(f"sync: {mid - before} inspections stored for {len(pairs)} forms, {after - mid} on replay")
    return {
        "forms": len(pairs),
        "requests": len(bodies),
        "first_s": round(t_first, 3),
        "replay_s": round(t_replay, 3),
        "baseline_s": round(t_base, 3),
        "stored_first": mid - before,
        "stored_replay": after - mid,
        "statuses_first": statuses,
        "statuses_replay": replay_statuses,
        "first_refusal": first_refusal,
    }


# ---------------------------------------------------------------------------
# 4. PDFs: an inspection report and a compliance report of up to 500 units, vs a one-page minimal HTML.
# ---------------------------------------------------------------------------
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


# ---------------------------------------------------------------------------
# 5. The PWA shell: compressed bytes of a first load (page, service worker, its precache list).
# ---------------------------------------------------------------------------
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


# ---------------------------------------------------------------------------
# Registry CSV import of many units, vs one bulk insert of the same units and buildings.
# ---------------------------------------------------------------------------
def _baseline_code(n: int) -> str:
    """The ``n``-th label code of the import baseline: "B" and ``n`` in six letters of the label alphabet."""
    from inventory.models import LABEL_ALPHABET

    digits = []
    for _ in range(6):
        n, d = divmod(n, len(LABEL_ALPHABET))
        digits.append(LABEL_ALPHABET[d])
    return "B" + "".join(reversed(digits))


def registry_import(*, portfolio: Portfolio, runs: int, rows: int) -> dict:
    """A units file of ``rows`` rows (100 per building) into a new site of the main organisation.

    Measured: ``inventory.csv_io.registry_import`` (every row checked in memory, written in bulk, in
    one transaction). Baseline: ``bulk_create`` of the same buildings and units, nothing checked.
    The import is what a background job does; ``fits_request`` says whether it would also end within
    gunicorn's default 30 s worker timeout (the reason files of ``BACKGROUND_ROWS`` rows or more go
    to a job).
    """
    import io

    from accounts.models import Organisation
    from inventory import csv_io
    from inventory.import_jobs import BACKGROUND_ROWS
    from inventory.models import AHU, Building, Site

    org = Organisation.objects.get(pk=portfolio.main.organisation_id)
    site = Site.objects.create(organisation=org, code="bench-import", name="Bench import", latitude=52, longitude=5)
    lines = ["site_code,building_code,building_name,tag,design_supply_airflow_m3s,design_min_oa_fraction,notes"]
    lines += [f"bench-import,b{n // 100},Block {n // 100},AHU-{n:06d},2.5,0.3,imported" for n in range(rows)]
    text = "\n".join(lines) + "\n"

    def clear() -> None:
        with transaction.atomic():
            AHU.objects.filter(building__site=site).delete()
            Building.objects.filter(site=site).delete()

    def baseline() -> None:
        with transaction.atomic():
            buildings = Building.objects.bulk_create(
                [Building(site=site, code=f"b{n}", name=f"Block {n}") for n in range((rows + 99) // 100)],
                batch_size=500,
            )
            AHU.objects.bulk_create(
                [
                    AHU(
                        building=buildings[n // 100],
                        # Codes of their own ("B…", never a drawn "U…" code): 100,000 random six-character codes
                        # repeat a few times (birthday problem), which the import redraws and bulk_create cannot.
                        label_code=_baseline_code(n),
                        tag=f"AHU-{n:06d}",
                        design_supply_airflow_m3s=2.5,
                        design_min_oa_fraction=0.3,
                        notes="imported",
                    )
                    for n in range(rows)
                ],
                batch_size=500,
            )

    imports, baselines, created = [], [], []
    try:
        for _ in range(runs):
            t_import, result = timed(
                lambda: csv_io.registry_import(kind="ahus", source=io.StringIO(text, newline=""), organisation=org)
            )
            created.append(result.created)
            clear()
            t_base, _ = timed(baseline)
            clear()
            imports.append(t_import)
            baselines.append(t_base)
    finally:
        clear()
        site.delete()
    took, base = median(imports), median(baselines)
    return {
        "rows": rows,
        "import_s": took,
        "baseline_s": base,
        "import_over_baseline": round(took / base, 2) if base else None,
        "rows_per_s": round(rows / took) if took else None,
        "created": min(created) if created else 0,
        "background_rows": BACKGROUND_ROWS,
        "fits_request": bool(took is not None and took < 30),
    }


def connection_vendor() -> str:
    return connection.vendor
