"""Freeze-protection readiness rules (inspections.freeze.freeze_verdict), worked by hand on small cases.

Season from 20 October 2025; its window opened 15 April 2025 (the last cold day of the season before).
"""

from datetime import date

from inspections.freeze import DONE_LATE, DUE, NOT_READY, READY, UNKNOWN, FreezeTest, OpenFinding, freeze_verdict

D = date.fromisoformat
START, OPENS = D("2025-10-20"), D("2025-04-15")
PASSED = FreezeTest(on=D("2025-10-01"))
FAILED = FreezeTest(
    on=D("2025-10-03"),
    not_passed=("Entering-air temperature at which stage 1 switched on", "Every stage energises in sequence"),
    failed=True,
    corrective="awaiting approval",
)


def verdict(tests, today, findings=(), start=START, opens=OPENS):
    return freeze_verdict(tests=tests, open_findings=findings, season_start=start, window_opens=opens, today=today)


def test_a_test_that_passed_every_step_before_the_season_is_ready():
    v = verdict([PASSED], D("2025-10-05"))
    assert (v.status, v.reason) == (READY, "ready — every step passed on 1 Oct 2025")


def test_a_failed_test_is_not_ready_and_says_which_steps_and_the_corrective_work():
    """A failed test after a passing one: the latest decides, even before the season starts."""
    v = verdict([PASSED, FAILED], D("2025-10-05"))
    assert v.status == NOT_READY
    assert v.reason == (
        "not ready — test failed on 3 Oct 2025: Entering-air temperature at which stage 1 switched on; "
        "Every stage energises in sequence; corrective work awaiting approval"
    )


def test_a_passing_retest_makes_it_ready_again():
    retest = FreezeTest(on=D("2025-10-08"))
    assert verdict([FAILED, retest], D("2025-10-10")).status == READY
    late_retest = FreezeTest(on=D("2025-10-25"))
    v = verdict([FAILED, late_retest], D("2025-10-30"))
    assert v.status == DONE_LATE and "after the season began on 20 Oct 2025" in v.reason


def test_a_watch_on_a_step_is_not_a_pass():
    """A step only near its limit proves nothing on a safety device: not ready, retest needed (no finding)."""
    near = FreezeTest(on=D("2025-10-01"), not_passed=("Freeze-protection trip temperature (near its limit)",))
    v = verdict([near], D("2025-10-05"))
    assert v.status == NOT_READY
    assert v.reason.startswith("not ready — test on 1 Oct 2025 not passed: Freeze-protection trip temperature")
    assert v.reason.endswith("retest needed")


def test_an_open_serious_freeze_finding_keeps_it_not_ready_after_a_passing_test():
    finding = OpenFinding(opened_on=D("2025-09-01"), title="Freeze protection failed", corrective="in progress")
    v = verdict([PASSED], D("2025-10-05"), findings=[finding])
    assert v.status == NOT_READY
    assert v.reason == (
        "not ready — freeze-protection fault open since 1 Sep 2025: Freeze protection failed "
        "(last test passed on 1 Oct 2025); corrective work in progress"
    )


def test_untested_in_the_window_is_due_before_the_season_and_not_ready_after():
    """A test during last season does not count for the coming one."""
    old = [FreezeTest(on=D("2025-02-01"))]
    due = verdict(old, D("2025-10-05"))
    assert (due.status, due.reason) == (DUE, "due — not tested since 1 Feb 2025; test before 20 Oct 2025")
    late = verdict(old, D("2025-10-21"))
    assert late.status == NOT_READY and late.reason.startswith("not ready — not tested since 1 Feb 2025")
    assert verdict([], D("2025-10-21")).reason == "not ready — never tested; the season began on 20 Oct 2025"


def test_unknown_season_stays_unknown_unless_a_fault_is_known():
    assert verdict([PASSED], D("2025-10-05"), start=None, opens=None).status == UNKNOWN
    assert verdict([FAILED], D("2025-10-05"), start=None, opens=None).status == NOT_READY
