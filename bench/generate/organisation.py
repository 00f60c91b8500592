"""One organisation of the portfolio, built step by step: people, registry, temperatures and meters, then
the filter-check history with its findings (skipped when the shipped libraries lack the filter check)."""

from __future__ import annotations

from .common import GenerationRun, OrgSummary
from .findings import findings_create, readings_create
from .history import Fleet, inspections_create, meters_create, temperatures_create, visits_create
from .people import people_create, tokens_create
from .registry import ahus_create, components_create, sites_create


def organisation_build(*, org, slug: str, n_sites: int, n_ahus: int, run: GenerationRun) -> OrgSummary:
    """``n_sites`` sites and ``n_ahus`` units of ``org`` with their people and history; usernames start
    with ``slug``."""
    n_techs = max(2, min(40, n_ahus // 250))
    people = people_create(org=org, slug=slug, n_techs=n_techs, rng=run.rng, password=run.password)
    techs = [u for name, u in people.items() if "-tech" in name]
    supervisor = people[f"{slug}-supervisor"]
    manager = people[f"{slug}-manager"]
    sites, buildings = sites_create(org=org, slug=slug, n_sites=n_sites, manager=manager, run=run)
    ahus, kinds = ahus_create(buildings=buildings, n_ahus=n_ahus, run=run)
    fleet = Fleet(
        org=org,
        ahus=ahus,
        techs=techs,
        supervisor=supervisor,
        filters_by_ahu=components_create(ahus=ahus, kinds=kinds, run=run),
    )
    temperatures_create(sites=sites, run=run)
    hours_at = meters_create(ahus=ahus, run=run)
    history_create(fleet=fleet, hours_at=hours_at, run=run)
    return OrgSummary(
        org.pk,
        slug,
        [s.pk for s in sites],
        [a.pk for a in ahus],
        supervisor.username,
        [t.username for t in techs],
        manager.username,
        tokens_create(people.values(), run.rng),
    )


def history_create(*, fleet: Fleet, hours_at: dict, run: GenerationRun) -> None:
    """The quarterly filter-check visits, their inspections, readings and findings; counted as
    ``history_skipped`` when the shipped libraries have no filter check to write them for."""
    from inspections.models import ChecklistItem
    from scheduling.models import TaskDefinition

    filter_task = TaskDefinition.objects.filter(organisation__isnull=True, code="filter_check").first()
    items = {
        (i.template.code, i.key): i
        for i in ChecklistItem.objects.select_related("template").filter(
            template__code__in=["visit", "filter_check"], template__version=1
        )
    }
    if filter_task is None or ("filter_check", "dp") not in items:
        run.counts["history_skipped"] = 1
        return
    wos, plan = visits_create(fleet=fleet, filter_task=filter_task, run=run)
    inspections = inspections_create(fleet=fleet, wos=wos, plan=plan, run=run)
    evaluations, eval_meta = readings_create(
        fleet=fleet, inspections=inspections, plan=plan, items=items, hours_at=hours_at, run=run
    )
    findings_create(fleet=fleet, evaluations=evaluations, eval_meta=eval_meta, run=run)
