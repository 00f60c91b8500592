"""Helpers for report tests: ask for a report through the service, read its PDF, rasterise its first pages."""

import html
import io
import re
import shutil
import subprocess
import uuid
from dataclasses import dataclass
from pathlib import Path

import pytest
from pypdf import PdfReader

from accounts.models import Role
from reports.models import Report
from reports.services import report_request
from tests.factories.accounts import OrganisationFactory, make_person
from tests.factories.inventory import SiteFactory

PAGES_DIR = Path(__file__).resolve().parents[2] / "test-output" / "pdf-pages"


@pytest.fixture
def org():
    return OrganisationFactory(name="Northwind Air Care")


@pytest.fixture
def site(org):
    return SiteFactory(organisation=org, name="Harbour View Offices", code="harbour-view")


@pytest.fixture
def supervisor(org):
    return make_person(organisation=org, role=Role.SUPERVISOR, first_name="Mira", last_name="Okafor")


@pytest.fixture
def us_supervisor(org):
    return make_person(organisation=org, role=Role.SUPERVISOR, first_name="Dale", last_name="Brennan", unit_system="us")


@pytest.fixture
def make_report(django_capture_on_commit_callbacks):
    """Ask for a report and run its render task (in-process, as without a broker)."""

    def _make(*, user, kind, parameters, pdfa=False) -> Report:
        with django_capture_on_commit_callbacks(execute=True):
            report = report_request(user=user, kind=kind, parameters=parameters, pdfa=pdfa)
        report.refresh_from_db()
        assert report.status == Report.Status.DONE, report.error
        return report

    return _make


def pdf_bytes(report: Report) -> bytes:
    with report.file.open("rb") as fh:
        return fh.read()


def pdf_text(report: Report) -> str:
    return text_of(pdf_bytes(report))


def text_of(pdf: bytes) -> str:
    """The text of a PDF in the order it was drawn (cell by cell for tables)."""
    reader = PdfReader(io.BytesIO(pdf))
    return "\n".join(page.extract_text() for page in reader.pages)


def pdf_xmp(report: Report) -> str:
    """The XMP metadata packet of the PDF as text ("" when it has none)."""
    root = PdfReader(io.BytesIO(pdf_bytes(report))).trailer["/Root"]
    if "/Metadata" not in root:
        return ""
    return root["/Metadata"].get_object().get_data().decode("utf-8")


def pdf_pages(report: Report) -> int:
    return len(PdfReader(io.BytesIO(pdf_bytes(report))).pages)


def rasterise(report: Report, name: str, *, last_page: int = 2) -> list[Path]:
    """PNGs of the first pages in test-output/pdf-pages/ (for people to look at); fails if pdftoppm cannot read it."""
    exe = shutil.which("pdftoppm") or "/usr/bin/pdftoppm"
    PAGES_DIR.mkdir(parents=True, exist_ok=True)
    for old in PAGES_DIR.glob(f"{name}-*.png"):
        old.unlink()
    source = PAGES_DIR / f"{name}.pdf"
    source.write_bytes(pdf_bytes(report))
    result = subprocess.run(
        [exe, "-png", "-r", "60", "-f", "1", "-l", str(last_page), str(source), str(PAGES_DIR / name)],
        capture_output=True,
        text=True,
        timeout=60,
        check=False,
    )
    source.unlink()
    assert result.returncode == 0, result.stderr
    pngs = sorted(PAGES_DIR.glob(f"{name}-*.png"))
    assert pngs, "pdftoppm wrote no page"
    return pngs


def _pdf_file(pdf: bytes, name: str) -> Path:
    PAGES_DIR.mkdir(parents=True, exist_ok=True)
    source = PAGES_DIR / f"{name}.pdf"
    source.write_bytes(pdf)
    return source


def page_margin_ink(
    pdf: bytes, name: str, *, margin_mm: float = 14.0, bottom_mm: float = 6.0, dpi: int = 72
) -> list[str]:
    """Every page of ``pdf`` as a PNG in test-output/pdf-pages/ (for people to look at), and the pages with
    ink in a side margin or at the foot of the page: a table or line running past the page's content width
    or below its last line, as far as the paper's edge.

    The documents' side margins are 14 mm and the bottom margin 18 mm with the footer line in its middle
    (reports/templates/reports/_base.css); the outer ``margin_mm`` − 2 mm of each side and the outer
    ``bottom_mm`` of the foot (below the footer) must stay blank.
    """
    from PIL import Image

    exe = shutil.which("pdftoppm") or "/usr/bin/pdftoppm"
    for old in PAGES_DIR.glob(f"{name}-*.png"):
        old.unlink()
    source = _pdf_file(pdf, name)
    result = subprocess.run(
        [exe, "-png", "-r", str(dpi), str(source), str(PAGES_DIR / name)],
        capture_output=True,
        text=True,
        timeout=120,
        check=False,
    )
    source.unlink()
    assert result.returncode == 0, result.stderr
    pngs = sorted(PAGES_DIR.glob(f"{name}-*.png"))
    assert pngs, "pdftoppm wrote no page"
    strip = round((margin_mm - 2) / 25.4 * dpi)
    foot = round(bottom_mm / 25.4 * dpi)
    problems = []
    for png in pngs:
        with Image.open(png) as img:
            grey = img.convert("L")
            width, height = grey.size
            margins = (
                ("left", (0, 0, strip, height)),
                ("right", (width - strip, 0, width, height)),
                ("bottom", (0, height - foot, width, height)),
            )
            for side, box in margins:
                darkest, _ = grey.crop(box).getextrema()
                if darkest < 200:
                    problems.append(f"{png.name}: ink in the {side} margin")
    return problems


@dataclass(frozen=True)
class Word:
    text: str
    page: int
    x_min: float
    x_max: float
    page_width: float


_PAGE = re.compile(r'<page width="([\d.]+)"')
_WORD = re.compile(r'<word xMin="([-\d.]+)" yMin="[-\d.]+" xMax="([-\d.]+)" yMax="[-\d.]+">([^<]*)</word>')


def pdf_words(pdf: bytes) -> list[Word]:
    """The words of ``pdf`` in reading order with where they lie across the page (pdftotext -bbox, in points)."""
    exe = shutil.which("pdftotext") or "/usr/bin/pdftotext"
    source = _pdf_file(pdf, f"words-{uuid.uuid4().hex}")  # its own file: parallel workers read words at once
    try:
        result = subprocess.run(
            [exe, "-bbox", str(source), "-"], capture_output=True, text=True, timeout=60, check=False
        )
    finally:
        source.unlink()
    assert result.returncode == 0, result.stderr
    words, page, width = [], 0, 0.0
    for line in result.stdout.splitlines():
        if m := _PAGE.search(line):
            page, width = page + 1, float(m.group(1))
        elif m := _WORD.search(line):
            words.append(Word(html.unescape(m.group(3)), page, float(m.group(1)), float(m.group(2)), width))
    return words
