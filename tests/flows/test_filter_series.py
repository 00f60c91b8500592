"""One filter series: the manager's chart, the unit history and the evaluation read the same numbers.

Scenario: a unit's final filters are read monthly with the supply airflow
measured below design, changed at the fourth visit, and read twice more. The
manager's chart, the unit history's chart and the change forecast's points all
show the pressure drop corrected to design airflow, restarting at the change.
"""

import datetime as dt

import pytest
import time_machine

from engineering.filters import corrected_pressure_drop
from inspections.models import Evaluation
from inspections.selectors import filter_series
from inspections.services.form_evaluation import filter_points_for
from reports.documents.history_charts import filter_charts
from tests.factories.accounts import make_person
from tests.factories.inspections import make_visit, sync_filter_visit

pytestmark = pytest.mark.django_db
DAY0 = dt.datetime(2025, 1, 6, 9, 30, tzinfo=dt.UTC)
# (days after DAY0, run-hours, measured supply airflow m³/s, final filters Δp Pa, Δp after a change or None)
VISITS = [
    (0, 1_000, 2.7, 120, None),
    (30, 1_300, 2.7, 140, None),
    (60, 1_600, 3.0, 170, None),
    (90, 1_900, 2.7, 190, 95),  # filters changed: 190 Pa is the old set, 95 Pa the new one
    (120, 2_200, 2.7, 110, None),
    (150, 2_500, 3.0, 125, None),
]
# Design airflow 3.0 m³/s, exponent 1.5 (engineering.filters, common practice): at 2.7 m³/s each reading is
# multiplied by (3.0 / 2.7)^1.5 = 1.171213; worked by hand: 120 Pa → 140.55, 140 → 163.97, 190 → 222.53,
# 95 → 111.27, 110 → 128.83; at design airflow a reading stands as read.
BEFORE = [140.55, 163.97, 170.0, 222.53]
AFTER = [111.27, 128.83, 125.0]


def _visit(api_client, ahu, tech, days, hours, q, dp, after):
    finished = DAY0 + dt.timedelta(days=days)
    with time_machine.travel(finished + dt.timedelta(hours=1), tick=False):
        return sync_filter_visit(
            api_client,
            ahu=ahu,
            technician=tech,
            finished_at=finished,
            hours=hours,
            airflow_ls=q * 1000,
            final_dp=dp,
            after=after,
        )


def test_chart_unit_history_and_evaluation_read_one_series_across_a_filter_change(api_client, client):
    """The same corrected numbers, restarting at the change, on every view of one filter bank."""
    first, tech = make_visit(tasks=["filter_check"])
    ahu = first.ahu
    org = ahu.building.site.organisation
    for visit in VISITS:
        _visit(api_client, ahu, tech, *visit)
    final = ahu.components.get(name="Final filters")
    changed = DAY0 + dt.timedelta(days=90)

    series = filter_series(component=final)
    lives = [[round(p.corrected_dp_pa, 2) for p in life.points] for life in series.lives]
    assert lives == [BEFORE, AFTER]
    assert series.lives[1].changed_at == changed

    # The evaluation stored each visit's filter judgement from the same corrected value.
    stored = [
        e.derived["corrected_dp_pa"]
        for e in Evaluation.objects.filter(component=final, check_name="filter_loading").order_by(
            "inspection__finished_at"
        )
    ]
    # (stored to 0.1 Pa; the reading after the change is judged against the clean value, not here)
    assert stored == [round(p.corrected_dp_pa, 1) for p in series.points if not p.after_change]
    assert stored == pytest.approx(BEFORE + AFTER[1:], abs=0.06)

    # The evaluation's forecast points for a next visit: the new set only, the same corrected numbers.
    nxt = DAY0 + dt.timedelta(days=180)
    points = filter_points_for(ahu, nxt)(final)
    assert [
        round(corrected_pressure_drop(dp_pa=p.dp_pa, airflow_m3s=p.airflow_m3s, design_airflow_m3s=3.0), 2)
        for p in points
    ] == AFTER
    assert [p.run_hours for p in points] == [1_900, 2_200, 2_500]

    # The unit history's chart: one line per set of filters, the same numbers.
    lo, hi = DAY0 - dt.timedelta(days=1), nxt
    [chart] = [c for c in filter_charts(ahu=ahu, lo=lo, hi=hi, system="si") if c["bank"] == final]
    assert [[round(v, 2) for _, v in pts] for _, pts in chart["lines"]] == [BEFORE, AFTER]
    assert chart["lines"][1][0] == "Filters fitted 2025-04-06"

    # The manager's chart on the site page: the same lines, labelled at design airflow.
    manager = make_person(organisation=org, role="supervisor")
    client.force_login(manager)
    with time_machine.travel(nxt, tick=False):
        page = client.get(f"/dashboard/site/{ahu.building.site_id}/")
    assert page.status_code == 200
    [c] = [c for c in page.context["charts"] if "Final filters" in c["title"]]
    assert [[round(v, 2) for _, v in life] for life in c["lives"]] == [BEFORE, AFTER]
    html = page.content.decode()
    assert "Final filters pressure drop at design airflow (Pa)" in html


def test_a_filter_past_its_final_value_is_due_now_on_the_phone_and_the_record_never_a_past_date(api_client):
    """Final filters at 200, 240 and 280 Pa (final 250 Pa) a month apart: the trend crossed 250 Pa before the
    last visit, so the phone's answer and the inspection record say it is due now, with no date before that visit.

    Worked by hand (linear trend, common practice): 40 Pa per 300 run-hours; 250 Pa is reached at about
    1,675 h, before the last reading at 1,900 h, i.e. about 22 days before the last visit.
    """
    from inspections.display import derived_rows

    first, tech = make_visit(tasks=["filter_check"])
    ahu = first.ahu
    results = [
        _visit(api_client, ahu, tech, days, hours, 3.0, dp, None)
        for days, hours, dp in ((0, 1_300, 200), (30, 1_600, 240), (60, 1_900, 280))
    ]
    last = results[-1]
    [judged] = [e for e in last["evaluation"] if e["check"] == "filter_loading" and "Final filters" in e["reason"]]
    assert "at or over its final pressure drop: change now" in judged["reason"]
    assert "change forecast" not in judged["reason"]
    assert judged["derived"]["forecast_at_final_now"] is True
    last_visit = (DAY0 + dt.timedelta(days=60)).date()
    assert dt.date.fromisoformat(judged["derived"]["forecast_change_date"]) >= last_visit
    rows = dict(derived_rows(judged["derived"], "si"))
    assert rows["change forecast"] == "now: at or over its final pressure drop"


def test_a_sync_request_s_filter_history_gives_each_form_the_series_its_own_reads_give(api_client):
    """The sync reads its forms' filter history once per request (``filter_history_read``) and cuts it at each
    form's finish: for any finish time (before, at and after visits and trend days, at a trend day's very end)
    every bank's series is the one ``filter_series_for`` reads for that time, without a query of its own."""
    import zoneinfo

    from django.db import connection
    from django.test.utils import CaptureQueriesContext

    from automation.fault_models import FilterDay
    from inspections.selectors import filter_history_read, filter_series_for

    first, tech = make_visit(tasks=["filter_check"])
    ahu = first.ahu
    for visit in VISITS:
        _visit(api_client, ahu, tech, *visit)
    final = ahu.components.get(name="Final filters")
    tz = zoneinfo.ZoneInfo(ahu.building.site.time_zone)
    trend_days = [(DAY0 + dt.timedelta(days=d)).astimezone(tz).date() for d in (10, 100, 101, 140)]
    for n, day in enumerate(trend_days):
        FilterDay.objects.create(
            component=final, day=day, corrected_dp_pa=130.0 + n, design_airflow_m3s=3.0, airflow_source="design",
            samples=40, run_hours=1_100.0 + 100 * n,
        )  # fmt: skip
    day_ends = [
        dt.datetime.combine(d + dt.timedelta(days=1), dt.time(), tzinfo=tz).astimezone(dt.UTC) for d in trend_days
    ]
    finishes = [DAY0 + dt.timedelta(days=v[0]) for v in VISITS]
    cuts = [None, DAY0 - dt.timedelta(days=1), *finishes, *(t + dt.timedelta(seconds=1) for t in finishes), *day_ends]
    cuts += [t - dt.timedelta(seconds=1) for t in day_ends] + [DAY0 + dt.timedelta(days=400)]
    components = list(ahu.components.all())
    history = filter_history_read(components=components)
    for before in cuts:
        read = filter_series_for(components=components, before=before)
        with CaptureQueriesContext(connection) as seen:
            held = filter_series_for(components=components, before=before, history=history)
        assert held == read, before
        assert len(seen) == 0, [q["sql"] for q in seen.captured_queries]
    # The cases differ: the series grows with the cut, trend days included at their day's end, not a second before.
    at_end = filter_series_for(components=components, before=day_ends[0], history=history)[final.pk]
    just_before = filter_series_for(
        components=components, before=day_ends[0] - dt.timedelta(seconds=1), history=history
    )
    assert len(at_end.points) == len(just_before[final.pk].points) + 1


def _two_forms(api_client, *, together: bool) -> list[str]:
    """A unit read once before, then two visits' forms (30 and 60 days on) sent in one request or one after the
    other; the second form's filter judgements, as the server answered them."""
    from tests.factories.inspections import SYNC_URL, r, sync_form

    first, tech = make_visit(tasks=["filter_check"])
    ahu = first.ahu
    _visit(api_client, ahu, tech, 0, 1_000, 2.7, 120, None)
    forms = []
    for days, hours, dp in ((30, 1_300, 140), (60, 1_600, 170)):
        wo, _ = make_visit(
            tasks=["filter_check"], ahu=ahu, organisation=ahu.building.site.organisation, technician=tech
        )
        readings = [r("visit.run_hours", hours), r("visit.supply_airflow", 2700)]
        for bank in ahu.components.filter(kind="filter_bank").order_by("pk"):
            readings += [
                r("filter_check.dp", dp if bank.name == "Final filters" else 60, bank),
                r("filter_check.seated", "ok", bank),
                r("filter_check.media", "loaded", bank),
            ]
        forms.append(sync_form(wo, readings, finished_at=DAY0 + dt.timedelta(days=days)))
    api_client.force_authenticate(tech)
    with time_machine.travel(DAY0 + dt.timedelta(days=61), tick=False):
        batches = [forms] if together else [[f] for f in forms]
        results = [
            res
            for batch in batches
            for res in api_client.post(SYNC_URL, {"forms": batch}, format="json").json()["results"]
        ]
    assert [res["status"] for res in results] == ["stored", "stored"], [res["flags"] for res in results]
    return [e["reason"] for e in results[1]["evaluation"] if e["check"] == "filter_loading"]


def test_a_form_sees_the_filter_readings_of_an_earlier_form_of_the_same_request(api_client):
    """Two visits of one unit in one request: the second form's forecast counts the first form's readings, as it
    does when the two are sent apart (the request's shared filter history leaves such a unit to each form)."""
    together = _two_forms(api_client, together=True)
    apart = _two_forms(api_client, together=False)
    assert together == apart and together, (together, apart)
    # Three readings of the final filters (the earlier visit, the first form, its own): a forecast. Without the
    # first form's reading there would be two, and "no change forecast yet".
    [final] = [reason for reason in together if reason.startswith("Final filters")]
    assert "change forecast 28 April 2025" in final and "no change forecast" not in final, final


def test_a_pressure_drop_outside_its_plausible_range_stays_out_of_the_filter_history_and_forecast(api_client):
    """Final filters read 120 Pa, then 1400 Pa (a slip: plausible 5–1000 Pa, kept and flagged, judged by no check),
    then 170 Pa, at design airflow: the series, and so the change forecast of the next visit, read 120 and 170 Pa
    only, as the evaluation sets such a reading aside for the visit itself (``Form.set_aside``)."""
    first, tech = make_visit(tasks=["filter_check"])
    ahu = first.ahu
    flagged = _visit(api_client, ahu, tech, 30, 1_300, 3.0, 1_400, None)
    assert flagged["status"] == "flagged"
    for days, hours, dp in ((0, 1_000, 120), (60, 1_600, 170)):
        _visit(api_client, ahu, tech, days, hours, 3.0, dp, None)
    final = ahu.components.get(name="Final filters")
    assert [round(p.dp_pa) for p in filter_series(component=final).points] == [120, 170]
    points = filter_points_for(ahu, DAY0 + dt.timedelta(days=90))(final)
    assert [(round(p.dp_pa), p.run_hours) for p in points] == [(120, 1_000), (170, 1_600)]
