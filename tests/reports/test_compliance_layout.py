"""The compliance report stays on its paper however big the portfolio: every page of a 200-unit portfolio
and of the demo's report is blank in its side margins and at its foot, and its text reads in plain words.

The 200-unit portfolio is made with bulk inserts (a few seconds); the demo with its own loader on its day.
"""

import datetime as dt
import io
import re
import shutil
import subprocess

import pytest
import time_machine
from django.conf import settings
from django.core.management import call_command

from accounts.models import Role, User
from inspections.models import Evaluation, Finding, Reading
from inspections.services.library import templates_current
from inventory.models import AHU, Component, Site
from reports.documents import registry
from scheduling.models import WorkOrder
from tests.factories.accounts import make_person
from tests.factories.inventory import AHUFactory, BuildingFactory, ComponentFactory, SiteFactory
from tests.inspections.test_display import leaks

from . import builders as b
from .conftest import page_margin_ink, pdf_bytes, pdf_pages
from .layout import cells_overflowing

pytestmark = pytest.mark.django_db
AS_OF = b.at("2025-05-10", 9)
DEMO_DAY = dt.datetime(2026, 12, 2, 10, tzinfo=dt.UTC)  # the demo's day (tests/flows/test_freeze_readiness.py)

SITE_NAMES = (
    "Harbour View Offices and Conference Centre, North Quay Campus",
    "St Bartholomew's Teaching Hospital",
    "Riverside Pool",
    "Kristallverwaltungsgebäudeostflügelerweiterungszentrum",  # one word, nowhere to break
    "Elm Court",
)
BUILDING_NAMES = ("Eastern Laboratory Wing, Level 4 Mechanical Penthouse", "Nordflügelhauptgebäudetechnikzentrale")
UNITS_PER_BUILDING = 20  # 5 sites × 2 buildings × 20 = 200 units
LONG_BANK = "Final bag filters ISO ePM1 70 % (supply side, upstream of cooling coil)"


def bank_name(n: int) -> str:
    """Every seventh bank with the longest name a registry holds; the others as most are called."""
    return LONG_BANK if n % 7 == 0 else "Final filters"


def unit_tag(n: int) -> str:
    return f"AHU-SUPPLY-EXTRACT-{n:03d}-ROOFTOP" if n % 5 == 0 else f"AHU-{n:03d}"


SEVERITIES = ("critical", "high", "medium", "low")
APPROVALS = ("pending", "approved", "not_needed", None)  # None: a design review, or nothing proposed yet
# An internal token the listing must never show: a dotted item key, Python's None, a float's nan.
DOTTED = re.compile(r"\b[a-z][a-z0-9]*\.[a-z][a-z0-9_]*\b")
RAW = re.compile(r"\bNone\b|\bnan\b|\bNaN\b")


def plain_word_problems(text: str) -> list[str]:
    """Keys, codes, dotted paths, None and nan a reader would see in ``text``."""
    return leaks(text) + DOTTED.findall(text) + RAW.findall(text)


@pytest.fixture
def big_portfolio(org, supervisor):
    """200 units on 5 sites, most with long names: each a filter bank judged at one visit, every fourth an untested
    preheater, every unit an open finding (severities, ages and corrective work in turn) and every fifth an
    overdue visit with a long title."""
    lib = b.library()
    tech = make_person(organisation=org, role=Role.TECHNICIAN, first_name="Anastasia", last_name="Featherstonehaugh")
    dp_item = templates_current(codes=["filter_check"])["filter_check"].items.get(key="dp")
    n = 0
    for site_name in SITE_NAMES:
        site = SiteFactory(organisation=org, name=site_name)
        Site.objects.filter(pk=site.pk).update(freeze_season_start=dt.date(2025, 10, 25))
        units = []
        for building_name in BUILDING_NAMES:
            building = BuildingFactory(site=site, name=building_name)
            for _ in range(UNITS_PER_BUILDING):
                units.append(AHUFactory.build(building=building, tag=unit_tag(n)))
                n += 1
        units = AHU.objects.bulk_create(units)
        banks = Component.objects.bulk_create(
            [ComponentFactory.build(ahu=u, name=bank_name(i), position=1) for i, u in enumerate(units)]
        )
        Component.objects.bulk_create(
            [
                ComponentFactory.build(
                    ahu=u,
                    kind="electric_preheater",
                    name="Electric preheater, two stages",
                    position=0,
                    specs={"power_w": 12000, "stages": 2, "switch_on_c": 3},
                )
                for u in units[::4]
            ]
        )
        visit = b.preventive(units[0], lib["filter_check"], "2025-03-25", done="2025-03-25")
        insp = b.inspection(visit, tech, finished="2025-03-25")
        dps = [150.0 + (i % 3) * 56 for i in range(len(units))]  # 150 ok, 206 watch, 262 fail (clean 90, final 250)
        Reading.objects.bulk_create(
            [Reading(inspection=insp, item=dp_item, component=k, value_si=dp) for k, dp in zip(banks, dps, strict=True)]
        )
        filter_evs = Evaluation.objects.bulk_create(
            [
                Evaluation(
                    inspection=insp,
                    check_name="filter_loading",
                    item_key="filter_check.dp",
                    component=k,
                    verdict=("ok", "watch", "fail")[i % 3],
                    reason=f"{k.name}: filter at {(dp - 90) / 1.6:.0f} % of its span",
                    derived={
                        "corrected_dp_pa": dp,
                        "loading_pct": (dp - 90) / 1.6,
                        **({"forecast_at_final_now": True} if i % 3 == 2 else {"forecast_change_date": "2025-08-02"}),
                    },
                )
                for i, (k, dp) in enumerate(zip(banks, dps, strict=True))
            ]
        )
        finding_evs = Evaluation.objects.bulk_create(
            [
                Evaluation(
                    inspection=insp,
                    check_name="damper_position",
                    item_key="damper_actuator.position",
                    component=k,
                    verdict="fail",
                    reason="damper at 26 %, 14.0 points more closed than commanded 40 % (fail above 10 points)",
                )
                for k in banks
            ]
        )
        del filter_evs
        corrective = WorkOrder.objects.bulk_create(
            [
                WorkOrder(
                    organisation=org,
                    ahu=u,
                    kind=WorkOrder.Kind.CORRECTIVE,
                    approval=APPROVALS[i % 4] or "not_needed",
                    title="Free the outdoor-air damper linkage and recalibrate its actuator stroke",
                    due_date=dt.date(2025, 5, 20),
                )
                for i, u in enumerate(units)
            ]
        )
        Finding.objects.bulk_create(
            [
                Finding(
                    organisation=org,
                    inspection=insp,
                    evaluation=ev,
                    ahu=u,
                    component=k,
                    problem="damper_position",
                    kind=Finding.Kind.DESIGN_REVIEW if i % 8 == 3 else Finding.Kind.CORRECTIVE,
                    severity=SEVERITIES[i % 4],
                    title=f"Damper not at commanded position — {k.name}",
                    reason=ev.reason,
                    opened_at=b.at("2025-03-25") - dt.timedelta(days=(i * 37) % 400),
                    last_seen_at=b.at("2025-03-25"),
                    latest_evaluation=ev,
                    latest_inspection=insp,
                    corrective_work_order=wo if APPROVALS[i % 4] else None,
                )
                for i, (u, k, ev, wo) in enumerate(zip(units, banks, finding_evs, corrective, strict=True))
            ]
        )
        WorkOrder.objects.bulk_create(
            [
                WorkOrder(
                    organisation=org,
                    ahu=u,
                    kind=WorkOrder.Kind.PREVENTIVE,
                    title="Clean the cooling coil, drain pan and condensate trap; check the pan slopes to drain",
                    due_date=dt.date(2025, 3, 1),
                    state=WorkOrder.State.ASSIGNED,
                    assignee=tech,
                )
                for u in units[::5]
            ]
        )
    assert AHU.objects.count() == 200
    return org


def pdftotext(pdf: bytes) -> str:
    """The text of ``pdf`` by poppler's pdftotext (seconds faster than pypdf on fifty pages)."""
    exe = shutil.which("pdftotext") or "/usr/bin/pdftotext"
    result = subprocess.run([exe, "-", "-"], input=pdf, capture_output=True, timeout=120, check=False)
    assert result.returncode == 0, result.stderr
    return result.stdout.decode("utf-8")


def check_every_page(pdf: bytes, name: str) -> str:
    """Fails on ink in a side margin or at the foot of any page, or an internal token in the text; the text."""
    problems = page_margin_ink(pdf, name)
    assert not problems, f"content past the margins (see test-output/pdf-pages/{name}-*.png): {problems}"
    text = pdftotext(pdf)
    assert not plain_word_problems(text), plain_word_problems(text)
    return text


def test_a_200_unit_portfolio_stays_on_its_paper(big_portfolio, supervisor, make_report, time_machine):
    """200 units with long names on A4 (the narrower paper; tests/reports/test_page_width.py prints both): no
    page has ink in a side margin or at its foot, every open finding is listed once, in the order of the rules,
    and no key, dotted path, None or nan shows."""
    time_machine.move_to(AS_OF, tick=False)
    report = make_report(
        user=supervisor,
        kind="compliance",
        parameters={"start": "2025-01-01", "end": "2025-03-31", "unit_system": "si"},
    )
    text = check_every_page(pdf_bytes(report), "compliance-200")
    joined = " ".join(text.split())
    assert "Open findings, most severe and oldest first (200)" in joined
    listing = "".join(joined.split("Open findings, most severe and oldest first (200)")[1].split("Filter status")[0])
    assert listing.count("Damper not at commanded position") == 200
    assert listing.count("none: a design review") == Finding.objects.filter(kind=Finding.Kind.DESIGN_REVIEW).count()
    assert pdf_pages(report) > 10


def test_every_page_of_the_demo_report_stays_on_its_paper(make_report):
    """The demo's portfolio report on its day (the supervisor's, every site): every page blank in its margins
    and at its foot, its text free of keys, dotted paths, None and nan, and its open findings listed."""
    with time_machine.travel(DEMO_DAY, tick=False):
        call_command("load_demo", stdout=io.StringIO())
    boss = User.objects.get(username="ruth.supervisor")
    with time_machine.travel(DEMO_DAY + dt.timedelta(hours=1), tick=False):
        report = make_report(user=boss, kind="compliance", parameters={})
    text = check_every_page(pdf_bytes(report), "compliance-demo")
    # No cell's text runs into the next column (a source under a date, a long word in a narrow column).
    html = registry()["compliance"].build(report=report).html
    assert cells_overflowing(html, base_url=str(settings.BASE_DIR)) == []
    joined = " ".join(text.split())
    open_now = Finding.objects.filter(state=Finding.State.OPEN, ahu__building__site_id__in=report.site_ids).count()
    assert open_now > 0
    assert f"Open findings, most severe and oldest first ({open_now})" in joined
    assert "none: a design review" in joined
