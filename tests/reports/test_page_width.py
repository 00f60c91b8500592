"""Every table of the compliance report fits the paper's width: nothing is cut off at the right edge.

A portfolio of many units with long site, building, unit and filter-bank names is printed in SI and in
US units, on A4 (the document's paper) and on Letter (the same HTML on Letter paper); every page image
stays blank in its side margins and the verdict of every filter row can be read in the text.
"""

import datetime as dt
import re

import pytest

from accounts.models import Role
from inventory.models import Site
from reports.documents import compliance_report
from reports.rendering import pdf_render
from tests.factories.accounts import make_person
from tests.factories.inventory import AHUFactory, BuildingFactory, ComponentFactory, SiteFactory

from . import builders as b
from .conftest import page_margin_ink, pdf_bytes, pdf_words, text_of

pytestmark = pytest.mark.django_db
AS_OF = b.at("2025-05-10", 9)

SITE_NAMES = (
    "Harbour View Offices and Conference Centre, North Quay Campus",
    "St Bartholomew's Teaching Hospital — Outpatients and Diagnostic Imaging",
    "Riverside Municipal Swimming Pool and Leisure Complex",
)
# A long compound word (no space to wrap at) and long names with spaces.
BUILDING_NAMES = (
    "Kristallverwaltungsgebäudeostflügelerweiterung",
    "Eastern Laboratory Wing, Level 4 Mechanical Penthouse",
)
VERDICTS = ("ok", "watch", "fail")


@pytest.fixture
def portfolio(org, supervisor):
    """3 sites × 2 buildings × 3 units, one filter bank each judged ok / watch / fail in turn, some
    units with a preheater never tested, and an overdue visit with a long title on each unit."""
    lib = b.library()
    tech = make_person(organisation=org, role=Role.TECHNICIAN, first_name="Anastasia", last_name="Featherstonehaugh")
    rows = []
    n = 0
    for site_name in SITE_NAMES:
        site = SiteFactory(organisation=org, name=site_name)
        Site.objects.filter(pk=site.pk).update(freeze_season_start=dt.date(2025, 10, 25))
        for building_name in BUILDING_NAMES:
            building = BuildingFactory(site=site, name=building_name)
            for i in range(3):
                unit = AHUFactory(building=building, tag=f"AHU-SUPPLY-EXTRACT-{n:03d}-ROOFTOP")
                bank = ComponentFactory(
                    ahu=unit, name="Final bag filters ISO ePM1 70 % (supply side, upstream of cooling coil)"
                )
                if i == 0:
                    ComponentFactory(
                        ahu=unit,
                        kind="electric_preheater",
                        name="Preheater",
                        position=2,
                        specs={"power_w": 12000, "stages": 2, "switch_on_c": 3},
                    )
                verdict = VERDICTS[n % 3]
                b.preventive(
                    unit,
                    lib["coil_clean"],
                    "2025-03-01",
                    title="Clean the cooling coil, drain pan and condensate trap; check the pan slopes to drain",
                    assignee=tech,
                )
                visit = b.preventive(unit, lib["filter_check"], "2025-03-25", done="2025-03-25")
                insp = b.inspection(visit, tech, finished="2025-03-25")
                dp = {"ok": 150.0, "watch": 228.0, "fail": 262.0}[verdict]
                b.reading(insp, "filter_check.dp", component=bank, value_si=dp, verdict=verdict)
                derived = {"corrected_dp_pa": dp, "loading_pct": (dp - 90) / 160 * 100}
                if verdict == "fail":
                    derived["forecast_at_final_now"] = True
                else:
                    derived["forecast_change_date"] = "2025-05-02" if verdict == "watch" else "2026-01-20"
                b.evaluation(
                    insp,
                    "filter_loading",
                    "filter_check.dp",
                    component=bank,
                    verdict=verdict,
                    reason=f"{bank.name}: {verdict}",
                    derived=derived,
                )
                rows.append((unit.tag, verdict))
                n += 1
    return rows


def _report(make_report, supervisor, system):
    return make_report(
        user=supervisor,
        kind="compliance",
        parameters={"start": "2025-01-01", "end": "2025-03-31", "unit_system": system},
    )


def _other_paper(report, system: str) -> tuple[str, bytes]:
    """The same document on the other paper: A4 for a US reader (printed on Letter), Letter for the rest."""
    other = "A4" if system == "us" else "letter"
    html = compliance_report.build(report=report).html.replace("</style>", f"@page {{ size: {other}; }}\n</style>", 1)
    return other.lower(), pdf_render(html=html, identifier=other).content


# Page sizes in points: Letter 8.5 × 11 in = 612 × 792 pt; A4 210 × 297 mm = 595.3 × 841.9 pt (ISO 216).
PAPER_PT = {"us": (612.0, 792.0), "si": (595.3, 841.9)}


def test_a_us_reader_gets_letter_and_everyone_else_a4(portfolio, supervisor, make_report, time_machine):
    import io

    from pypdf import PdfReader

    time_machine.move_to(AS_OF, tick=False)
    for system, (width, height) in PAPER_PT.items():
        box = PdfReader(io.BytesIO(pdf_bytes(_report(make_report, supervisor, system)))).pages[0].mediabox
        assert (float(box.width), float(box.height)) == pytest.approx((width, height), abs=0.5), system


@pytest.mark.parametrize("system", ["si", "us"])
def test_every_table_fits_the_page(portfolio, supervisor, make_report, time_machine, system):
    """18 units with long names, on A4 and on Letter: no page has ink in its side margins, no word lies past
    the paper's edge, and every filter row's verdict and unit can be read."""
    time_machine.move_to(AS_OF, tick=False)
    report = _report(make_report, supervisor, system)
    own = "letter" if system == "us" else "a4"
    for paper, pdf in ((own, pdf_bytes(report)), _other_paper(report, system)):
        name = f"compliance-wide-{system}-{paper}"
        problems = page_margin_ink(pdf, name)
        assert not problems, f"content past the margins (see test-output/pdf-pages/{name}-*.png): {problems}"
        words = pdf_words(pdf)
        outside = [w for w in words if w.x_min < 0 or w.x_max > w.page_width]
        assert not outside, outside[:5]
        # The verdict column in particular ends inside the right margin (14 mm = 39.7 pt, _base.css).
        verdicts = [w for w in words if w.text in {"OK", "WATCH", "FAIL"}]
        assert len(verdicts) >= len(portfolio)
        assert all(w.x_max <= w.page_width - 39.7 + 0.5 for w in verdicts), verdicts
        text = text_of(pdf)
        section = text.split("Filter status of every unit")[1].split("Freeze-protection readiness")[0]
        assert sorted(re.findall(r"\b(OK|WATCH|FAIL)\b", section)) == sorted(v.upper() for _, v in portfolio)
        # Each unit's tag is there in full, however its cell wrapped it.
        joined = "".join(section.split())
        missing = [tag for tag, _ in portfolio if tag not in joined]
        assert not missing, missing
