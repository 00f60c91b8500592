"""The inspection report of a typical monthly visit reads as one compact record an auditor accepts.

The visit is the demo's usual one, sent through the sync service as the phone sends it (so the judgements,
the finding and its corrective work are the server's own): a filter pressure-drop check of both banks (the
pre-filters past their final pressure drop, which opens a finding and a corrective work order), an
outdoor-air check, a preheater and freeze-protection test with every step, two photos and a signature.

On A4 (an SI reader) and on US Letter (a US reader) the record fits on at most three pages with nothing in
the side margins or at the foot; it names the site's time zone beside each time and never shows UTC; it
carries the unit's QR code (drawn as vectors) with the label's address beside it; each reading appears once;
no stored key, dotted path, "None" or "nan" reaches the reader.
"""

from __future__ import annotations

import datetime as dt
import io
import re

import pytest
import time_machine
from pypdf import PdfReader

from accounts.models import Role
from inspections.services import inspection_sync
from inventory.models import Site
from inventory.services import label_absolute_url
from scheduling.models import WorkOrder
from tests.factories.accounts import make_person
from tests.factories.inspections import component, data_url, image_bytes, make_visit, r, sync_form
from tests.factories.inventory import BuildingFactory, ComponentFactory, SiteFactory, make_full_unit
from tests.inspections.test_display import leaks

from . import builders as b
from .conftest import page_margin_ink, pdf_bytes, pdf_pages, pdf_text, pdf_words

pytestmark = pytest.mark.django_db

# 4 November 2025, 09:30 UTC = 10:30 in Berlin (CET, UTC+1 after the end of summer time; IANA tz database).
FINISHED = dt.datetime(2025, 11, 4, 9, 30, tzinfo=dt.UTC)
TITLE = "Monthly service November 2025 with freeze protection test before winter"


@pytest.fixture
def monthly_visit(org):
    """The demo's monthly visit to AHU-05 in Berlin, synced by its technician and signed at 10:30 CET."""
    site = SiteFactory(
        organisation=org, name="Spreeufer Offices", code="spreeufer", time_zone="Europe/Berlin", address="Kaiweg 4"
    )
    # The freeze season starts on 20 November (set as the forecast would); the test two weeks before proves it.
    Site.objects.filter(pk=site.pk).update(freeze_season_start=dt.date(2025, 11, 20))
    ahu = make_full_unit(building=BuildingFactory(site=site, name="East House"), tag="AHU-05")
    ComponentFactory(
        ahu=ahu,
        kind="electric_preheater",
        name="Electric preheater",
        position=1,
        specs={"power_w": 24_000, "stages": 3, "switch_on_c": -3.0},
    )
    tech = make_person(organisation=org, role=Role.TECHNICIAN, first_name="Ana", last_name="Field")
    b.library()
    wo, _ = make_visit(
        tasks=["filter_check", "ventilation_check", "preheater_freeze"], organisation=org, ahu=ahu, technician=tech
    )
    WorkOrder.objects.filter(pk=wo.pk).update(title=TITLE, due_date=FINISHED.date())
    wo.tasks.update(due_date=FINISHED.date())
    wo.refresh_from_db()
    pre, final = component(ahu, "Pre-filters"), component(ahu, "Final filters")
    heater = component(ahu, "Electric preheater")
    readings = [
        r("visit.run_hours", 12_480),
        r("visit.supply_airflow", 2_900),  # L/s, the form's unit; design 3.0 m³/s
        # Pre-filters past their final 150 Pa (fails: change now); final filters inside their span.
        r("filter_check.dp", 162, pre, note="bank dusty, change booked"),
        r("filter_check.seated", "ok", pre),
        r("filter_check.media", "loaded", pre),
        r("filter_check.dp", 180, final, note="gauge zeroed before reading"),
        r("filter_check.seated", "ok", final),
        r("filter_check.media", "loaded", final),
        # Outdoor-air fraction by temperatures (21.5 − 17.6) / (21.5 − 6.0) ≈ 25 %, the unit's design minimum.
        r("ventilation_check.outdoor_air", 6.0),
        r("ventilation_check.return_air", 21.5),
        r("ventilation_check.mixed_air", 17.6),
        r("ventilation_check.oa_damper_position", 30),
        # Preheater: stage 1 at its set −3 °C; frost thermostat trips at 3.5 °C (usual about 3.3 °C, common
        # practice); every step proven.
        r("preheater_freeze.stage_on_temp", -3.0, heater),
        r("preheater_freeze.stages", "ok", heater),
        r("preheater_freeze.airflow_interlock", "ok", heater),
        r("preheater_freeze.primary_limit", "ok", heater),
        r("preheater_freeze.high_limit", "ok", heater),
        r("preheater_freeze.set_points_restored", "ok", heater),
        r("preheater_freeze.freeze_trip_temp", 3.5),
        r("preheater_freeze.freeze_trip_test", "ok"),
    ]
    photos = [
        {
            "client_uuid": f"00000000-0000-4000-8000-00000000000{i}",
            "item": "filter_check.photo",
            "component": bank.label_code,
            "data": data_url(image_bytes("JPEG", (640, 480))),
        }
        for i, bank in enumerate((pre, final), start=1)
    ]
    with time_machine.travel(FINISHED + dt.timedelta(minutes=20), tick=False):
        [result] = inspection_sync(user=tech, forms=[sync_form(wo, readings, photos=photos, finished_at=FINISHED)])
    assert result["status"] in ("stored", "flagged"), result
    wo.refresh_from_db()
    return wo


def _report(make_report, org, wo, system):
    """The report as a supervisor reading in ``system`` asks for it the morning after the visit."""
    reader = make_person(organisation=org, role=Role.SUPERVISOR, unit_system=system)
    with time_machine.travel("2025-11-05 08:00:00+00:00", tick=False):
        return make_report(user=reader, kind="inspection", parameters={"work_order": str(wo.public_id)})


def _qr_drawn_as_vectors(pdf: bytes) -> bool:
    """The first page draws a QR code's many squares as vector paths, not as a pasted picture."""
    reader = PdfReader(io.BytesIO(pdf))
    page = reader.pages[0]
    streams = [page.get_contents().get_data()]

    def forms(resources):
        xobjects = (resources or {}).get("/XObject") or {}
        for ref in xobjects.values():
            x = ref.get_object()
            if x.get("/Subtype") == "/Form":
                streams.append(x.get_data())
                forms(x.get("/Resources"))

    forms(page.get("/Resources"))
    # A QR code of an address is 25 × 25 modules or more: hundreds of path segments in one stream.
    return any(len(re.findall(rb"\s(?:l|re|h)\s", s)) > 200 for s in streams)


@pytest.mark.parametrize(("system", "paper_width_pt"), [("si", 595), ("us", 612)])
def test_a_typical_visit_is_a_compact_legible_record(monthly_visit, org, make_report, system, paper_width_pt):
    """Two to three pages on the reader's paper, nothing in the margins, zone named, QR present, no keys."""
    report = _report(make_report, org, monthly_visit, system)
    pdf = pdf_bytes(report)
    words = pdf_words(pdf)
    assert round(words[0].page_width) == paper_width_pt  # A4 for SI, Letter for US (reports.rendering.paper_for)
    assert page_margin_ink(pdf, f"inspection-layout-{system}") == []
    assert pdf_pages(report) <= 3, pdf_pages(report)

    text = pdf_text(report)
    flat = " ".join(text.split())
    # Arrival and signature on the site's clock with its zone named (inventory.display.site_time_text).
    assert "4 Nov 2025 09:45 CET" in flat  # arrival: the form's start, 45 minutes before the finish
    assert "4 Nov 2025 10:30 CET" in flat  # signed
    assert "UTC" not in flat
    # Header block: site, building, unit with label code, work order title whole, technician.
    ahu = monthly_visit.ahu
    for piece in ("Spreeufer Offices", "East House", "AHU-05", ahu.label_code, "Ana Field"):
        assert piece in flat, piece
    whole = {w.text for w in words}
    for word in TITLE.split():
        assert word in whole, f"work-order title word {word!r} cut"
    # The QR code to the unit, with the address it holds printed beside it.
    assert label_absolute_url(code=ahu.label_code) in flat
    assert _qr_drawn_as_vectors(pdf)
    # One-line result: counts, findings opened, freeze readiness (inspections.freeze).
    assert re.search(r"\d+ ok · \d+ watch · 1 fail", flat), flat[:1500]
    assert "1 finding opened" in flat
    assert "Freeze protection at signing: Ready" in flat
    # Each pressure drop once (a single readings table), in the reader's units.
    shown = ["162 Pa", "180 Pa"] if system == "si" else ["0.65 in. w.c.", "0.72 in. w.c."]
    for value in shown:
        assert flat.count(value) == 1, (value, flat.count(value))
    assert "Components inspected" not in flat and "Evaluation and derived values" not in flat
    # The pre-filters' finding with its corrective work, the photos captioned, the signature, safety once.
    assert "Replace filters" in flat or "Filter" in flat
    assert flat.count("take precedence") == 1 and flat.count("Lock out and tag out") == 1
    # Safety is what the technician acknowledged: after the result, before the readings and the sign-off, so a
    # page never holds the safety box alone.
    assert flat.index("Result") < flat.index("Safety") < flat.index("Readings") < flat.index("Sign-off")
    assert "Photo 1" in flat and "Photo 2" in flat
    # The sign-off is never alone on a last page: it shares its page with the section before it (the photos).
    pages = [" ".join(page.extract_text().split()) for page in PdfReader(io.BytesIO(pdf)).pages]
    [signoff_page] = [t for t in pages if "Sign-off" in t]
    assert "Photo 2" in signoff_page.split("Sign-off")[0], signoff_page[:400]
    # No internal names: stored keys, dotted paths, Python's None or NaN.
    url_free = flat.replace(label_absolute_url(code=ahu.label_code), "")
    assert not leaks(url_free), sorted(set(leaks(url_free)))
    assert not re.search(r"\b[a-z]+\.[a-z]+\.[a-z_]+\b", url_free), re.findall(r"\b[a-z]+\.[a-z]+\.[a-z_]+\b", url_free)
    assert not re.search(r"\bNone\b|\bnan\b|\bNaN\b", url_free)


def test_a_forecast_date_before_the_visit_is_not_called_a_forecast(site, supervisor, make_report):
    """A filter trend whose line reached the final pressure drop before the visit reads as past, not as a forecast."""
    lib = b.library()
    ahu = make_full_unit(building=BuildingFactory(site=site, name="North Wing"), tag="AHU-09")
    final = ahu.components.get(name="Final filters")
    tech = make_person(organisation=site.organisation, role=Role.TECHNICIAN, first_name="Ana", last_name="Field")
    wo = b.preventive(ahu, lib["filter_check"], "2025-03-10", done="2025-03-11", title="Monthly service", assignee=tech)
    insp = b.inspection(wo, tech, finished="2025-03-11")
    b.reading(insp, "filter_check.dp", component=final, value_si=240.0, verdict="watch", reason="filter at 94 %")
    b.evaluation(
        insp,
        "filter_loading",
        "filter_check.dp",
        component=final,
        verdict="watch",
        reason="filter at 94 % of its span",
        derived={
            "dp_pa": 240.0,
            "corrected_dp_pa": 240.0,
            "loading_pct": 93.8,
            "clean_dp_pa": 90,
            "final_dp_pa": 250,
            "forecast_change_date": "2025-03-02",  # nine days before the visit
            "forecast_earliest_date": "2025-02-20",
            "forecast_latest_date": "2025-03-09",
        },
        method="Δp × (Q_design/Q)^1.5",
    )
    report = make_report(user=supervisor, kind="inspection", parameters={"work_order": str(wo.public_id)})
    flat = " ".join(pdf_text(report).split())
    assert "change forecast: 2 March 2025" not in flat and "change forecast 2 March 2025" not in flat
    assert "2 March 2025" in flat and "before this visit" in flat


def _heading_pages(words) -> tuple[int, int]:
    """The page of the "Readings" heading (the word before the table's "Check Value Limit Verdict") and the page
    of the table's first reading ("Run-hour meter")."""
    texts = [w.text for w in words]
    at = next(i for i in range(len(words) - 2) if texts[i : i + 3] == ["Readings", "Check", "Value"])
    first = next(i for i in range(at, len(words) - 1) if texts[i : i + 2] == ["Run-hour", "meter"])
    return words[at].page, words[first].page


def test_the_readings_heading_stays_with_the_first_reading(monthly_visit, org, make_report):
    """Tryout: page 1 ended with the "Readings" heading, the table's head and its empty first group title ("Unit
    at the time of the visit"), the readings on page 2. Flags in the result box (two or three lines each) move the
    heading down page 1 line by line until it passes onto page 2; on each, the heading's page holds the first
    reading."""
    from inspections.models import Inspection

    insp = Inspection.objects.get(work_order=monthly_visit)
    short, long = "a value to review.", "a value to review, " + "with a longer explanation of why " * 3 + "it was kept."
    seen = set()
    for lines in range(12, 60):
        flags = [{"code": "review", "reason": short}] * (lines // 2 - lines % 2) + [
            {"code": "review", "reason": long}
        ] * (lines % 2)
        Inspection.objects.filter(pk=insp.pk).update(flags=flags)
        heading, first = _heading_pages(pdf_words(pdf_bytes(_report(make_report, org, monthly_visit, "si"))))
        assert heading == first, (lines, heading, first)
        seen.add(heading)
        if heading > 1:
            break
    assert seen == {1, 2}, seen
