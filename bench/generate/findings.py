"""The history's readings, the failed filter checks' evaluations, their findings (the latest open, with
corrective work proposed; older ones closed)."""

from __future__ import annotations

import datetime as dt
import uuid

from .common import GenerationRun, bulk
from .history import Fleet


def readings_create(
    *, fleet: Fleet, inspections: list, plan: list, items: dict, hours_at: dict, run: GenerationRun
) -> tuple[list, list]:
    """Each inspection's run-hour reading and its filter banks' readings; a bank at its change value fails.
    Returns (the failed banks' evaluations, (inspection, unit, bank, quarters ago) of each)."""
    from inspections.models import Evaluation, Reading

    rng, visits = run.rng, run.years * 4
    readings, evaluations, eval_meta = [], [], []
    latest_banks = 0
    dp_item, seated, media, run_item = (
        items[("filter_check", "dp")],
        items.get(("filter_check", "seated")),
        items.get(("filter_check", "media")),
        items.get(("visit", "run_hours")),
    )
    for insp, (ahu, _tech, q, _due, _done) in zip(inspections, plan, strict=True):
        if run_item is not None:
            readings.append(
                Reading(
                    inspection=insp,
                    item=run_item,
                    value_si=hours_at.get((ahu.pk, q * 3)),
                    entered=hours_at.get((ahu.pk, q * 3)),
                    verdict="ok",
                )
            )
        for comp in fleet.filters_by_ahu.get(ahu.pk, []):
            clean, final = comp.specs["clean_dp_pa"], comp.specs["final_dp_pa"]
            loading = ((visits - q) % 4 + rng.random()) / 4  # filters loaded over a year, then changed
            if q == 1:
                # Every fourth bank on the latest visit (the first always) is at its change value: open findings.
                if latest_banks % 4 == 0:
                    loading = 0.97
                latest_banks += 1
            dp = round(clean + loading * (final - clean), 0)
            verdict = "fail" if loading > 0.95 else ("watch" if loading > 0.75 else "ok")
            readings.append(
                Reading(inspection=insp, item=dp_item, component=comp, value_si=dp, entered=dp, verdict=verdict)
            )
            if seated is not None:
                readings.append(Reading(inspection=insp, item=seated, component=comp, value_text="ok", verdict="ok"))
            if media is not None:
                readings.append(
                    Reading(
                        inspection=insp,
                        item=media,
                        component=comp,
                        value_text="loaded" if loading > 0.5 else "clean",
                        verdict="ok",
                    )
                )
            if verdict == "fail":
                evaluations.append(
                    Evaluation(
                        inspection=insp,
                        check_name="filter_loading",
                        item_key="filter_check.dp",
                        component=comp,
                        verdict="fail",
                        reason=f"filter at {loading * 100:.0f} % of its clean-to-final span",
                        method="dp against the clean-to-final span",
                        derived={"loading_pct": round(loading * 100, 1)},
                        condition_code="filter_loaded",
                    )
                )
                eval_meta.append((insp, ahu, comp, q))
    bulk(Reading, readings)
    run.counted("readings", len(readings))
    return bulk(Evaluation, evaluations), eval_meta


def findings_create(*, fleet: Fleet, evaluations: list, eval_meta: list, run: GenerationRun) -> None:
    """A finding per failed bank: open on the latest visit, with its corrective work proposed and awaiting a
    supervisor's approval; closed two weeks after the visit before it."""
    from inspections.models import Finding
    from scheduling.models import WorkOrder

    rng, today = run.rng, run.today
    proposals = [
        WorkOrder(
            public_id=uuid.UUID(int=rng.getrandbits(128), version=4),
            organisation=fleet.org,
            ahu=ahu,
            component=comp,
            kind=WorkOrder.Kind.CORRECTIVE,
            approval=WorkOrder.Approval.PENDING,
            title=f"Replace {comp.name.lower()}",
            reason=ev.reason,
            condition_code="filter_loaded",
            source_ref=f"inspection {insp.pk}",
            due_date=today + dt.timedelta(days=7),
            overdue_on=today + dt.timedelta(days=15),  # first day after a 14-day grace
        )
        for ev, (insp, ahu, comp, q) in zip(evaluations, eval_meta, strict=True)
        if q == 1
    ]
    proposal_of = dict(
        zip(
            [ev.pk for ev, m in zip(evaluations, eval_meta, strict=True) if m[3] == 1],
            bulk(WorkOrder, proposals),
            strict=True,
        )
    )
    run.counted("corrective_proposed", len(proposals))
    findings = []
    for ev, (insp, ahu, comp, q) in zip(evaluations, eval_meta, strict=True):
        closed = q > 1
        findings.append(
            Finding(
                organisation=fleet.org,
                inspection=insp,
                evaluation=ev,
                ahu=ahu,
                component=comp,
                severity=Finding.Severity.MEDIUM,
                title=f"{comp.name} loaded",
                reason=ev.reason,
                condition_code="filter_loaded",
                state=Finding.State.CLOSED if closed else Finding.State.OPEN,
                opened_at=insp.finished_at,
                closed_at=insp.finished_at + dt.timedelta(days=14) if closed else None,
                corrective_work_order=proposal_of.get(ev.pk),
            )
        )
    bulk(Finding, findings)
    run.counted("findings", len(findings))
