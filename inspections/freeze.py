"""Freeze-protection readiness, judged from what the tests found: the one place it is decided.

The manager's pages, the dashboard, the compliance figures and PDF, and the API all read
``freeze_readiness``; none of them restates these rules.

Which units count
    A unit with an electric preheater or a preheat coil (``duty=preheat``) in its component tree.

A freeze-protection test
    An inspection of the unit, finished on or before ``as_of``, with judgements of the
    ``preheater_freeze`` checklist (a preventive visit or the corrective work that retests it).
    Its date is the site's local date of its finish. Its steps are the required items of the
    current ``preheater_freeze`` template that apply to the unit: per electric preheater the stage
    switch-on temperature, the stages, the airflow interlock, the automatic-reset primary limit and
    the manual-reset high limit; for every protected unit the frost-thermostat trip temperature and
    the trip sequence. The verdict of a step is the form's, or the latest amendment's when one
    corrected it.

    The test **passed** only when every step was judged ok. A failed step fails it; a step judged
    "watch" does not pass either (on a safety device, "near its limit" is not proven); a step left
    unanswered or answered "not applicable" is not proven, so a test filled against an older
    template without the airflow-interlock and primary-limit steps does not prove the unit.

The window
    The season to judge and the day its window opens (``season_window``): the running season while
    it runs, else the coming one; the window opens on the last cold day of the season before, by
    the site's normals (rules in reports.compliance).

A unit is
    - **not ready** when its latest test in the window did not pass ("test failed on <date>: <steps>;
      corrective work <state>"), when a critical or high freeze-protection finding is open at
      ``as_of`` (whatever the tests say: the fault is not put right), or when it has no passing test
      in the window and the season has started ("not tested since <date>" / "never tested");
    - **ready** when its latest test in the window passed, a passing test in the window came on or
      before the season start with no failed test after it, and no such finding is open ("every step
      passed on <latest>", naming the first on-time pass too when a later test passed again);
    - **done late** when its latest test passed but every passing test since the last failure came
      after the season start;
    - **due** when it has no test in the window and the season has not started;
    - **season unknown** when the site has no computed season start (unless a failed test or an
      open finding makes it not ready: a known fault is never hidden behind an unknown season).

A freeze event found between visits (``FREEZE_EVENT_SOURCES``: the supply air below the freeze-protection
stages in the building-automation trends) counts as an open freeze-protection finding until a test passes
after it.

A passing retest (usually the corrective work order, whose completion closes the findings it
answers) makes the unit ready again.

The last test (``tested_on``, the "last test" of pages, PDF and API) is the unit's latest test up to
``as_of``, whatever protects it (a preheat coil or an electric preheater) and whatever it found: a
later passing test is never hidden behind the earlier one that proved the unit on time.

The corrective work state is read as it is now, also for an earlier ``as_of``.
"""

from __future__ import annotations

import datetime as dt
import zoneinfo
from collections import defaultdict
from collections.abc import Iterable
from dataclasses import dataclass, field

from django.db.models import Exists, OuterRef, Q

from engineering import controls
from engineering.freeze import daily_minimums_from_normals
from inventory.models import AHU, Component, ComponentKind, Site
from inventory.today import today_for
from scheduling.models import work_order_state_words

from . import checklists
from .models import Amendment, Evaluation, Finding

TEMPLATE = "preheater_freeze"
CONDITION = "freeze_protection_failed"
READY, DONE_LATE, DUE, NOT_READY, UNKNOWN = "ready", "done_late", "due", "not_ready", "season_unknown"
LABELS = {
    READY: "Ready",
    DONE_LATE: "Ready, tested late",
    DUE: "Due",
    NOT_READY: "Not ready",
    UNKNOWN: "Season unknown",
}
BLOCKING_SEVERITIES = frozenset({Finding.Severity.CRITICAL, Finding.Severity.HIGH})
# Sources of freeze events found between visits (the building-automation trends register one from an app above,
# so this module imports nothing of it): called with (unit_ids=, as_of=), each returns
# {unit id: [(event time, title, corrective work state in words)]}. An event makes the unit not ready, as an open
# freeze-protection finding does, until a freeze-protection test passes after it.
FREEZE_EVENT_SOURCES: list = []


def freeze_event_source_register(source) -> None:
    if source not in FREEZE_EVENT_SOURCES:
        FREEZE_EVENT_SOURCES.append(source)


# ---------------------------------------------------------------------------
# The season window (site normals)
# ---------------------------------------------------------------------------


def last_season_end(*, site: Site, season_start: dt.date) -> dt.date:
    """The last cold day of the season before ``season_start``, by the site's normals.

    Walking back from the start: first past the days the normals already call cold (a
    measured or forecast start can come later than the normals' own), then past the warm
    season; the cold day reached is the last one of the season before. Without one the
    window opens 365 days before the start.
    """
    window_start = season_start - dt.timedelta(days=365)
    series = daily_minimums_from_normals(monthly_min_c=site.normals_min_c, start=window_start, days=365)
    cold = [t <= site.preheat_threshold_c for _, t in series]
    i = len(series) - 1
    while i >= 0 and cold[i]:
        i -= 1
    while i >= 0 and not cold[i]:
        i -= 1
    return series[i][0] if i >= 0 else window_start


def season_window(*, site: Site, today: dt.date) -> tuple[dt.date | None, dt.date | None]:
    """The season to judge (the running one while it runs, else the coming one) and the day its window opens."""
    coming = site.freeze_season_start
    if coming is None:
        return None, None
    coming_opens = last_season_end(site=site, season_start=coming)
    try:
        running = coming.replace(year=coming.year - 1)
    except ValueError:  # 29 February
        running = coming.replace(year=coming.year - 1, day=28)
    if running <= today <= coming_opens:
        return running, last_season_end(site=site, season_start=running)
    return coming, coming_opens


# ---------------------------------------------------------------------------
# The rules, without the database
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class FreezeTest:
    """One freeze-protection test of a unit, reduced to what the rules need."""

    on: dt.date
    not_passed: tuple[str, ...] = ()  # plain words per step that did not pass; empty = passed every step
    failed: bool = False  # at least one step judged fail (not only watch or unanswered)
    corrective: str = ""  # the state of the corrective work its findings raised, in plain words
    at: dt.datetime | None = None  # when the form was finished (a freeze event before it is answered by a pass)

    @property
    def passed(self) -> bool:
        return not self.not_passed


@dataclass(frozen=True)
class OpenFinding:
    """A critical or high freeze-protection finding open at ``as_of``."""

    opened_on: dt.date
    title: str
    corrective: str = ""


@dataclass(frozen=True)
class Verdict:
    status: str
    reason: str
    decided_by: FreezeTest | None = None  # the test whose outcome the status reads (its steps not passed)
    latest: FreezeTest | None = None  # the unit's latest test, whatever it found: the "last test"


def _day(d: dt.date) -> str:
    return f"{d.day} {d:%b %Y}"


def _corrective_words(state: str) -> str:
    return f"corrective work {state}" if state else "no corrective work raised yet"


def _not_passed_words(test: FreezeTest) -> str:
    head = f"test failed on {_day(test.on)}" if test.failed else f"test on {_day(test.on)} not passed"
    tail = _corrective_words(test.corrective) if test.failed else "retest needed"
    return f"{head}: {'; '.join(test.not_passed)}; {tail}"


def freeze_verdict(
    *,
    tests: Iterable[FreezeTest],
    open_findings: Iterable[OpenFinding] = (),
    season_start: dt.date | None,
    window_opens: dt.date | None,
    today: dt.date,
) -> Verdict:
    """Readiness of one unit and why, in plain words (rules in the module docstring)."""
    tests = sorted(tests, key=lambda t: t.on)
    findings = sorted(open_findings, key=lambda f: f.opened_on)
    latest = tests[-1] if tests else None
    in_window = tests if season_start is None or window_opens is None else [t for t in tests if t.on > window_opens]
    last = in_window[-1] if in_window else None
    if last is not None and not last.passed:
        return Verdict(NOT_READY, "not ready — " + _not_passed_words(last), last, latest)
    if findings:
        f = findings[0]
        proven = f" (last test passed on {_day(last.on)})" if last is not None else ""
        return Verdict(
            NOT_READY,
            f"not ready — freeze-protection fault open since {_day(f.opened_on)}: {f.title}{proven}; "
            f"{_corrective_words(f.corrective)}",
            last,
            latest,
        )
    if season_start is None or window_opens is None:
        since = f"; last passed test on {_day(latest.on)}" if latest is not None else "; never tested"
        return Verdict(UNKNOWN, "freeze season not known for this site" + since, latest, latest)
    if last is not None:
        # The passing run since the last failure (latest first); ready when it began on or before the
        # season start. The status reads the latest test; the words name the first pass when it differs.
        run: list[FreezeTest] = []
        for t in reversed(in_window):
            if not t.passed:
                break
            run.append(t)
        before = [t for t in run if t.on <= season_start]
        first = before[-1] if before else run[-1]
        passed = f"every step passed on {_day(last.on)}"
        began = f"the season began on {_day(season_start)}"
        if before:
            again = "" if first is last else f"; first proven on {_day(first.on)}, before {began}"
            return Verdict(READY, f"ready — {passed}{again}", last, latest)
        again = f", after {began}" if first is last else f"; first proven on {_day(first.on)}, after {began}"
        return Verdict(DONE_LATE, f"proven late — {passed}{again}", last, latest)
    started = today >= season_start
    why = f"not tested since {_day(latest.on)}" if latest is not None else "never tested"
    if started:
        return Verdict(NOT_READY, f"not ready — {why}; the season began on {_day(season_start)}", None, latest)
    return Verdict(DUE, f"due — {why}; test before {_day(season_start)}", None, latest)


# ---------------------------------------------------------------------------
# From the database
# ---------------------------------------------------------------------------


@dataclass
class FreezeReadiness:
    """Readiness of one unit with freeze protection, for pages, PDFs and the API alike."""

    unit: AHU
    status: str
    reason: str
    season_start: dt.date | None
    window_opens: dt.date | None
    tested_on: dt.date | None = None  # the latest test, whatever it found (the "last test")
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
        }


@dataclass(frozen=True)
class _Step:
    key: str  # api key, e.g. preheater_freeze.airflow_interlock
    component_id: int | None
    words: str  # plain: the item's label, with the part's name when there are several


def _steps_of(unit_components: list[tuple[int, str, str, str]]) -> list[_Step]:
    """The required steps of the current template on a unit, from ``(id, kind, name, label code)`` of its parts."""
    template = next(t for t in checklists.TEMPLATES if t["code"] == TEMPLATE)
    steps = []
    for it in template["items"]:
        if not it["required"]:
            continue
        key = f"{TEMPLATE}.{it['key']}"
        if not it["component_kind"]:
            steps.append(_Step(key, None, it["label"]))
            continue
        parts = [(pk, name) for pk, kind, name, _ in unit_components if kind == it["component_kind"]]
        for pk, name in parts:
            steps.append(_Step(key, pk, f"{it['label']} ({name})" if len(parts) > 1 else it["label"]))
    return steps


_VERDICT_WORDS: dict[str | None, str] = {
    controls.Verdict.WATCH: " (near its limit, not proven)",
    None: " (not checked)",
}


def _corrective_state(wo_state: str | None, approval: str | None) -> str:
    if wo_state is None:
        return ""
    return work_order_state_words(wo_state, approval)


def protected_units(*, units: Iterable[AHU]) -> dict[int, list[tuple[int, str, str, str]]]:
    """{unit id: [(component id, kind, name, label code)]} of the units with an electric preheater or a preheat coil."""
    out: dict[int, list[tuple[int, str, str, str]]] = {}
    for ahu_id, pk, kind, name, code in (
        Component.objects.filter(ahu__in=[u.pk for u in units])
        .filter(Q(kind=ComponentKind.ELECTRIC_PREHEATER) | Q(kind=ComponentKind.COIL, specs__duty="preheat"))
        .order_by("position", "pk")
        .values_list("ahu_id", "pk", "kind", "name", "label_code")
    ):
        out.setdefault(ahu_id, []).append((pk, kind, name, code))
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
    # Step verdicts of every test: the form's judgements, then amendments in order.
    verdicts: dict[int, dict[tuple[str, int | None], str | None]] = defaultdict(dict)
    test_of: dict[int, tuple[int, dt.datetime]] = {}  # inspection id: (unit id, finished at)
    amended: set[int] = set()
    corrected = Amendment.objects.filter(inspection_id=OuterRef("inspection_id"), created_at__lte=as_of)
    for insp_id, ahu_id, finished_at, key, comp_id, verdict, has_amendment in (
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
            "has_amendment",
        )
    ):
        test_of[insp_id] = (ahu_id, finished_at)
        verdicts[insp_id][(key, comp_id)] = verdict
        if has_amendment:
            amended.add(insp_id)
    if amended:  # read only when a test was corrected: most portfolios pay no query for it
        labels = {code: pk for parts in protected.values() for pk, _, _, code in parts}
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
                after = (change.get("after") or {}).get("verdict") or None
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
    for insp_id, (ahu_id, finished_at) in sorted(test_of.items(), key=lambda kv: (kv[1][1], kv[0])):
        got = verdicts[insp_id]
        not_passed, failed = [], False
        for step in steps_of_unit[ahu_id]:
            v = got.get((step.key, step.component_id))
            if v == controls.Verdict.OK:
                continue
            failed = failed or v == controls.Verdict.FAIL
            not_passed.append(step.words + _VERDICT_WORDS.get(v, ""))
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
