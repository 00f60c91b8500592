"""3. Sync: 1,000 forms, then the same 1,000 replayed, vs posting the same bodies to the bare endpoint."""

from __future__ import annotations

import base64
import datetime as dt
import json
import time
import uuid

from django.db import transaction

from ..generate import OrgSummary, Portfolio
from .common import NotRun, WrongOutcome, url

# A 1×1 white PNG, the smallest signature image the server accepts as a PNG.
SIGNATURE_PNG = base64.b64decode(
    "iVBORw0KGgoAAAANSUhEUgAAAAEAAAABCAQAAAC1HAwCAAAAC0lEQVR42mP8/x8AAwMCAO+ip1sAAAAASUVORK5CYII="
)


def value_for(item: dict):
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

    from ..load import get_json

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
                value = value_for(item)
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

    from ..load import request

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
