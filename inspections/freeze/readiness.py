"""Freeze-protection readiness from the database: the protected units, their tests and open findings read for many
units at once, the freeze events of the registered sources (``freeze_event_source_register``), and the answer's
shape.
"""

from __future__ import annotations

import datetime as dt
import zoneinfo
from collections import defaultdict
from collections.abc import Iterable
from dataclasses import dataclass, field

from django.db.models import Exists, OuterRef, Q

from engineering import controls
from inventory.models import AHU, Component, ComponentKind
from inventory.today import today_for
from scheduling.models import work_order_state_words

from .. import checklists
from ..evaluation.results import FREEZE_TRIP_SET_HIGH
from ..models import Amendment, ChecklistItem, Evaluation, Finding
from .rules import (
    BLOCKING_SEVERITIES,
    CONDITION,
    DONE_LATE,
    LABELS,
    READY,
    TEMPLATE,
    FreezeTest,
    OpenFinding,
    freeze_verdict,
)
from .season import season_window, season_words

# Sources of freeze events found between visits (the building-automation trends register one from an app above,
# so this module imports nothing of it): called with (unit_ids=, as_of=), each returns
# {unit id: [(event time, title, corrective work state in words)]}. An event makes the unit not ready, as an open
# freeze-protection finding does, until a freeze-protection test passes after it.
FREEZE_EVENT_SOURCES: list = []


def freeze_event_source_register(source) -> None:
    if source not in FREEZE_EVENT_SOURCES:
        FREEZE_EVENT_SOURCES.append(source)


@dataclass
class FreezeReadiness:
    """Readiness of one unit with freeze protection, for pages, PDFs and the API alike."""

    unit: AHU
    status: str
    reason: str
    season_start: dt.date | None
    window_opens: dt.date | None
    tested_on: dt.date | None = None  # the latest test, whatever it found (the "last test")
    season_running: bool = False  # the judged season has begun on the site's today (``season_window``)
    not_passed: list[str] = field(default_factory=list)

    @property
    def label(self) -> str:
        return LABELS[self.status]

    @property
    def ready(self) -> bool:
        """Protected now: proven every step, even if the proof came after the season began
        (the lateness stays in the status and in the on-time figures)."""
        return self.status in (READY, DONE_LATE)

    @property
    def why(self) -> str:
        """The reason without its leading status words, for places that show ``label`` beside it."""
        # Every verdict's reason reads "<status words> — <why>" except the unknown season's.
        _head, sep, rest = self.reason.partition(" — ")
        return rest if sep else self.reason

    @property
    def season_words(self) -> str:
        """The judged season named: "the freeze season that began …" while it runs, else "… starting …"."""
        return season_words(season_start=self.season_start, running=self.season_running)

    @property
    def counts_from(self) -> dt.date | None:
        """The first day a test counts for this season (``freeze_verdict`` takes tests after ``window_opens``)."""
        return self.window_opens + dt.timedelta(days=1) if self.window_opens else None

    def as_row(self) -> dict:
        """The dict shape the compliance figures have always given (``done_on`` kept for templates)."""
        return {
            "unit": self.unit,
            "status": self.status,
            "label": self.label,
            "reason": self.reason,
            "why": self.why,
            "ready": self.ready,
            "done_on": self.tested_on,
            "tested_on": self.tested_on,
            "not_passed": self.not_passed,
            "season_start": self.season_start,
            "window_opens": self.window_opens,
            "counts_from": self.counts_from,
            "season_running": self.season_running,
            "season_words": self.season_words,
        }


@dataclass(frozen=True)
class _Step:
    key: str  # api key, e.g. preheater_freeze.airflow_interlock
    component_id: int | None
    words: str  # plain: the item's label, with the part's name when there are several


Part = tuple[int, str, str, str, dict]  # (component id, kind, name, label code, specs)


def _steps_of(unit_components: list[Part]) -> list[_Step]:
    """The required steps of the current template on a unit, from its protecting parts: an item per part is a step
    of each part of its kind its ``where`` (component specs) matches, as the checklist asks it."""
    template = next(t for t in checklists.TEMPLATES if t["code"] == TEMPLATE)
    steps = []
    for it in template["items"]:
        if not it["required"]:
            continue
        key = f"{TEMPLATE}.{it['key']}"
        if not it["component_kind"]:
            steps.append(_Step(key, None, it["label"]))
            continue
        wanted = it["component_filter"] or {}
        parts = [
            (pk, name)
            for pk, kind, name, _, specs in unit_components
            if kind == it["component_kind"] and all(_allowed((specs or {}).get(k), v) for k, v in wanted.items())
        ]
        for pk, name in parts:
            steps.append(_Step(key, pk, f"{it['label']} ({name})" if len(parts) > 1 else it["label"]))
    return steps


def _allowed(value: object, wanted: object) -> bool:
    """A spec filter's value: one allowed value, or a list of them (as the checklist reads ``where``)."""
    return value in wanted if isinstance(wanted, list) else value == wanted


def _keys_of_older(versions: set[int]) -> dict[int, set[str]]:
    """{version: its item api keys} of the template's installed versions older than the library's: a test filled
    against one is held to the steps it had (read only when such a test is among those judged)."""
    current = next(t["version"] for t in checklists.TEMPLATES if t["code"] == TEMPLATE)
    older = {v for v in versions if v < current}
    if not older:
        return {}
    out: dict[int, set[str]] = defaultdict(set)
    for version, key in ChecklistItem.objects.filter(template__code=TEMPLATE, template__version__in=older).values_list(
        "template__version", "key"
    ):
        out[version].add(f"{TEMPLATE}.{key}")
    return dict(out)


_VERDICT_WORDS: dict[str | None, str] = {
    controls.Verdict.WATCH: " (near its limit, not proven)",
    None: " (not checked)",
}


def _protecting(verdict: str | None, condition: str) -> str | None:
    """A step's verdict as readiness reads it: a watch that still protects the coil is an ok."""
    return controls.Verdict.OK if verdict == controls.Verdict.WATCH and condition == FREEZE_TRIP_SET_HIGH else verdict


def _corrective_state(wo_state: str | None, approval: str | None) -> str:
    if wo_state is None:
        return ""
    return work_order_state_words(wo_state, approval)


def protected_units(*, units: Iterable[AHU]) -> dict[int, list[Part]]:
    """{unit id: [(component id, kind, name, label code, specs)]} of the units with an electric preheater or a
    preheat coil."""
    out: dict[int, list[Part]] = {}
    for ahu_id, pk, kind, name, code, specs in (
        Component.objects.filter(ahu__in=[u.pk for u in units])
        .filter(Q(kind=ComponentKind.ELECTRIC_PREHEATER) | Q(kind=ComponentKind.COIL, specs__duty="preheat"))
        .order_by("position", "pk")
        .values_list("ahu_id", "pk", "kind", "name", "label_code", "specs")
    ):
        out.setdefault(ahu_id, []).append((pk, kind, name, code, specs or {}))
    return out


def freeze_readiness(
    *, units: list[AHU], as_of: dt.datetime, today_of: dict[int, dt.date] | None = None
) -> list[FreezeReadiness]:
    """Readiness of every unit with freeze protection among ``units`` (in their order), at ``as_of``.

    Tenancy is the caller's: pass only visible units, with ``building__site`` selected. A fixed
    number of queries whatever the number of units (three, and one per registered source of freeze
    events; one more when a test was amended). ``today_of`` gives each site's local date at ``as_of``
    ({site id: date}); computed from the sites' time zones when not given.
    """
    protected = protected_units(units=units)
    if not protected:
        return []
    ids = list(protected)
    # Step verdicts of every test: the form's judgements, then amendments in order. A watch that still protects the
    # coil (a frost thermostat set above its band: nuisance trips, ``FREEZE_TRIP_SET_HIGH``) counts as passed.
    verdicts: dict[int, dict[tuple[str, int | None], str | None]] = defaultdict(dict)
    test_of: dict[int, tuple[int, dt.datetime]] = {}  # inspection id: (unit id, finished at)
    amended: set[int] = set()
    corrected = Amendment.objects.filter(inspection_id=OuterRef("inspection_id"), created_at__lte=as_of)
    version_of: dict[int, int] = {}  # inspection id: the template version it was filled against, where known
    # A reading outside its plausible range is never proven: its step's words say why (its judgement's reason).
    outside: dict[int, dict[tuple[str, int | None], str]] = defaultdict(dict)
    for insp_id, ahu_id, finished_at, key, comp_id, verdict, condition, has_amendment, versions, derived, reason in (
        Evaluation.objects.filter(
            inspection__ahu_id__in=ids,
            inspection__finished_at__lte=as_of,
            item_key__startswith=f"{TEMPLATE}.",
            amendment__isnull=True,
        )
        .annotate(has_amendment=Exists(corrected))
        .order_by("pk")
        .values_list(
            "inspection_id",
            "inspection__ahu_id",
            "inspection__finished_at",
            "item_key",
            "component_id",
            "verdict",
            "condition_code",
            "has_amendment",
            "inspection__template_versions",
            "derived",
            "reason",
        )
    ):
        outside[insp_id].update({(key, comp_id): reason} if (derived or {}).get("implausible") else {})
        test_of[insp_id] = (ahu_id, finished_at)
        if isinstance((versions or {}).get(TEMPLATE), int):
            version_of[insp_id] = versions[TEMPLATE]
        verdicts[insp_id][(key, comp_id)] = _protecting(verdict, condition)
        if has_amendment:
            amended.add(insp_id)
    if amended:  # read only when a test was corrected: most portfolios pay no query for it
        labels = {code: pk for parts in protected.values() for pk, _, _, code, _ in parts}
        for insp_id, changes in (
            Amendment.objects.filter(inspection_id__in=list(amended), created_at__lte=as_of)
            .order_by("created_at", "pk")
            .values_list("inspection_id", "changes")
        ):
            for change in changes or []:
                key = change.get("item", "")
                if not key.startswith(f"{TEMPLATE}."):
                    continue
                comp = change.get("component")
                comp_id = labels.get(comp) if comp else None
                judged = change.get("after") or {}
                after = _protecting(judged.get("verdict") or None, judged.get("condition_code", ""))
                outside[insp_id].pop((key, comp_id), None)
                verdicts[insp_id][(key, comp_id)] = None if after == controls.Verdict.NOT_APPLICABLE else after
    corrective_of_test: dict[int, set[str]] = defaultdict(set)
    open_of_unit: dict[int, list[OpenFinding]] = defaultdict(list)
    tz_of: dict[int, zoneinfo.ZoneInfo] = {}
    for u in units:
        site = u.building.site
        tz_of.setdefault(site.pk, zoneinfo.ZoneInfo(site.time_zone))
    unit_site = {u.pk: u.building.site_id for u in units}
    # A freeze event of the trends is answered by a passing test after it (FREEZE_EVENT_SOURCES, below), not by its
    # finding's closing: the findings read here are the visits'.
    for ahu_id, insp_id, severity, state, closed_at, opened_at, title, wo_state, approval in Finding.objects.filter(
        ahu_id__in=ids, condition_code=CONDITION, opened_at__lte=as_of, source=Finding.Source.INSPECTION
    ).values_list(
        "ahu_id",
        "inspection_id",
        "severity",
        "state",
        "closed_at",
        "opened_at",
        "title",
        "corrective_work_order__state",
        "corrective_work_order__approval",
    ):
        words = _corrective_state(wo_state, approval)
        if words:
            corrective_of_test[insp_id].add(words)
        is_open = state == Finding.State.OPEN or (closed_at is not None and closed_at > as_of)
        if is_open and severity in BLOCKING_SEVERITIES:
            tz = tz_of[unit_site[ahu_id]]
            open_of_unit[ahu_id].append(OpenFinding(opened_at.astimezone(tz).date(), title, words))
    tests_of_unit: dict[int, list[FreezeTest]] = defaultdict(list)
    steps_of_unit = {ahu_id: _steps_of(parts) for ahu_id, parts in protected.items()}
    keys_of_older = _keys_of_older(set(version_of.values()))
    for insp_id, (ahu_id, finished_at) in sorted(test_of.items(), key=lambda kv: (kv[1][1], kv[0])):
        got = verdicts[insp_id]
        not_passed, failed = [], False
        had = keys_of_older.get(version_of.get(insp_id, 0))
        for step in steps_of_unit[ahu_id]:
            if had is not None and step.key not in had:
                continue  # a step the test's own (older) version did not ask
            v = got.get((step.key, step.component_id))
            if v == controls.Verdict.OK:
                continue
            failed = failed or v == controls.Verdict.FAIL
            why = outside[insp_id].get((step.key, step.component_id))
            not_passed.append(f"{step.words} {why}" if why else step.words + _VERDICT_WORDS.get(v, ""))
        # A judgement outside the expected steps (an optional item, an older template's) that failed counts too.
        expected = {(s.key, s.component_id) for s in steps_of_unit[ahu_id]}
        for (key, comp_id), v in got.items():
            if (key, comp_id) not in expected and v == controls.Verdict.FAIL:
                failed = True
                not_passed.append(key.split(".", 1)[1].replace("_", " "))
        tz = tz_of[unit_site[ahu_id]]
        tests_of_unit[ahu_id].append(
            FreezeTest(
                on=finished_at.astimezone(tz).date(),
                not_passed=tuple(not_passed),
                failed=failed,
                # A repeat failure may be recorded on the finding already open for it (one per fault):
                # then that finding's corrective work is the one answering this test.
                corrective=", ".join(
                    sorted(
                        corrective_of_test.get(insp_id)
                        or {f.corrective for f in open_of_unit.get(ahu_id, []) if f.corrective}
                    )
                ),
                at=finished_at,
            )
        )
    for source in FREEZE_EVENT_SOURCES:
        for ahu_id, events in source(unit_ids=ids, as_of=as_of).items():
            tz = tz_of[unit_site[ahu_id]]
            for at, title, words in events:
                if any(t.passed and t.at is not None and t.at > at for t in tests_of_unit.get(ahu_id, [])):
                    continue  # a freeze-protection test passed after the event: answered
                open_of_unit[ahu_id].append(OpenFinding(at.astimezone(tz).date(), title, words))
    windows: dict[int, tuple[dt.date | None, dt.date | None]] = {}
    out = []
    for unit in units:
        if unit.pk not in protected:
            continue
        site = unit.building.site
        today = (today_of or {}).get(site.pk) or today_for(site, now=as_of)
        if site.pk not in windows:
            windows[site.pk] = season_window(site=site, today=today)
        season_start, opens = windows[site.pk]
        verdict = freeze_verdict(
            tests=tests_of_unit.get(unit.pk, []),
            open_findings=open_of_unit.get(unit.pk, []),
            season_start=season_start,
            window_opens=opens,
            today=today,
        )
        out.append(
            FreezeReadiness(
                unit=unit,
                status=verdict.status,
                reason=verdict.reason,
                season_start=season_start,
                window_opens=opens,
                season_running=season_start is not None and season_start <= today,
                tested_on=verdict.latest.on if verdict.latest else None,
                not_passed=list(verdict.decided_by.not_passed) if verdict.decided_by else [],
            )
        )
    return out


def freeze_readiness_for(*, user, site_ids: list[int] | None = None, as_of: dt.datetime) -> list[FreezeReadiness]:
    """``freeze_readiness`` of every protected unit on the sites ``user`` may see (or those of ``site_ids``)."""
    from inventory.selectors import sites_visible_to

    sites = sites_visible_to(user=user)
    if site_ids is not None:
        sites = sites.filter(pk__in=site_ids)
    units = list(
        AHU.objects.filter(building__site__in=sites)
        .select_related("building__site")
        .order_by("building__site__name", "building__name", "tag", "pk")
    )
    return freeze_readiness(units=units, as_of=as_of)


def readiness_json(r: FreezeReadiness) -> dict:
    """The API shape of one unit's readiness (one builder for every reader of JSON)."""
    site = r.unit.building.site
    return {
        "unit": {"id": r.unit.pk, "tag": r.unit.tag, "label_code": r.unit.label_code},
        "site": {"id": site.pk, "code": site.code, "name": site.name},
        "status": r.status,
        "label": r.label,
        "ready": r.ready,
        "reason": r.reason,
        "tested_on": r.tested_on.isoformat() if r.tested_on else None,
        "not_passed": r.not_passed,
        "season_start": r.season_start.isoformat() if r.season_start else None,
        "window_opens": r.window_opens.isoformat() if r.window_opens else None,
    }
