"""Compliance figures: the rules of reports.compliance worked by hand on small cases."""

from datetime import date

import pytest

from reports.compliance import (
    CANCELLED,
    LATE,
    MISSED,
    NOT_YET_DUE,
    ON_TIME,
    Occurrence,
    age_bucket,
    preventive_figures,
)

D = date.fromisoformat


def occ(category, due, grace, done=None, cancelled=False):
    return Occurrence(category, D(due), grace, D(done) if done else None, cancelled)


# Period 1 January – 31 March 2025, figures taken on 10 April 2025. Worked by hand:
HAND_CASE = [
    # filters, grace 7 days
    occ("filters", "2025-01-10", 7, "2025-01-15"),  # deadline 17 Jan: on time
    occ("filters", "2025-02-10", 7, "2025-02-17"),  # done on the deadline day itself: on time
    occ("filters", "2025-03-01", 7, "2025-03-09"),  # deadline 8 Mar, done 9 Mar: late
    occ("filters", "2025-03-28", 7),  # deadline 4 Apr is after the period's end (31 Mar): not yet due
    occ("filters", "2025-03-20", 7),  # deadline 27 Mar passed inside the period, never done: missed
    occ("filters", "2025-04-02", 7),  # due after the period: not counted
    occ("filters", "2024-12-30", 7, "2025-01-02"),  # due before the period: not counted
    # coils and drain pans, grace 30 days
    occ("coils_drain_pans", "2025-01-05", 30, cancelled=True),  # cancelled, never done
    occ("coils_drain_pans", "2025-02-01", 30, "2025-04-01"),  # deadline 3 Mar: late (done after the period)
    occ("coils_drain_pans", "2025-01-20", 30, "2025-01-20"),  # on time
    occ("coils_drain_pans", "2025-03-01", 30, "2025-03-15"),  # deadline 31 Mar: on time
]


def test_hand_worked_period_by_category():
    """Filters: 2 on time, 1 late, 1 missed, 1 not yet due → 2/4 = 50 %. Coils: 2 on time, 1 late, 1 cancelled → 2/3."""
    rows, total = preventive_figures(HAND_CASE, start=D("2025-01-01"), end=D("2025-03-31"), as_of=D("2025-04-10"))
    by = {r.category: r for r in rows}
    assert [r.category for r in rows] == ["filters", "coils_drain_pans"]  # the library's category order
    assert by["filters"].counts == {ON_TIME: 2, LATE: 1, MISSED: 1, NOT_YET_DUE: 1, CANCELLED: 0}
    assert by["filters"].due == 5
    assert by["filters"].on_time_share == pytest.approx(0.5)
    assert by["coils_drain_pans"].counts == {ON_TIME: 2, LATE: 1, MISSED: 0, NOT_YET_DUE: 0, CANCELLED: 1}
    assert by["coils_drain_pans"].on_time_share == pytest.approx(2 / 3)
    assert total.counts == {ON_TIME: 4, LATE: 2, MISSED: 1, NOT_YET_DUE: 1, CANCELLED: 1}
    assert total.due == 9
    assert total.on_time_share == pytest.approx(4 / 7)  # 57.1 %


def test_period_still_running_judges_at_as_of():
    """Mid-period, an occurrence still inside its grace is not yet due, not missed."""
    cases = [occ("filters", "2025-03-01", 7), occ("filters", "2025-03-10", 7)]
    _rows, total = preventive_figures(cases, start=D("2025-03-01"), end=D("2025-03-31"), as_of=D("2025-03-12"))
    assert total.counts[MISSED] == 1  # deadline 8 March < 12 March
    assert total.counts[NOT_YET_DUE] == 1  # deadline 17 March


def test_no_judged_work_gives_no_share_rather_than_zero():
    """With nothing judged the on-time share is None (shown as a dash), never 0 % or NaN."""
    rows, total = preventive_figures(
        [occ("filters", "2025-03-28", 7)], start=D("2025-03-01"), end=D("2025-03-31"), as_of=D("2025-03-31")
    )
    assert total.on_time_share is None
    rows, total = preventive_figures([], start=D("2025-03-01"), end=D("2025-03-31"), as_of=D("2025-03-31"))
    assert rows == [] and total.due == 0 and total.on_time_share is None


@pytest.mark.parametrize(
    ("days", "bucket"),
    [
        (0, "0–30 days"),
        (30, "0–30 days"),
        (31, "31–90 days"),
        (90, "31–90 days"),
        (91, "91–180 days"),
        (180, "91–180 days"),
        (181, "over 180 days"),
    ],
)
def test_finding_age_buckets(days, bucket):
    assert age_bucket(days) == bucket


def test_last_season_end_from_normals():
    """Default normals (April mean minimum 4.5 °C on 15 April, May 8.5 °C on 16 May; +0.129 K a day):
    the minimum passes 5 °C between 18 April (4.89 °C) and 19 April (5.02 °C), so last season ended 18 April."""
    from inspections.freeze import last_season_end
    from inventory.models import Site

    assert last_season_end(site=Site(preheat_threshold_c=5.0), season_start=D("2025-10-25")) == D("2025-04-18")
    mild = Site(preheat_threshold_c=5.0, normals_min_c=[10.0] * 12)
    assert last_season_end(site=mild, season_start=D("2025-10-25")) == D("2024-10-25")  # no cold day: a year back


def test_last_season_end_when_the_measured_start_comes_after_the_normals():
    """A measured start of 20 Nov, later than the normals' own autumn crossing (the default normals are below
    5 °C from late October): the season before still ended on 18 April, not on the day before the start."""
    from inspections.freeze import last_season_end
    from inventory.models import Site

    assert last_season_end(site=Site(preheat_threshold_c=5.0), season_start=D("2025-11-20")) == D("2025-04-18")
