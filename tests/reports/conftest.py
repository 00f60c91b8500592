"""Helpers for report tests: ask for a report through the service, read its PDF, rasterise its first pages."""

import io
import shutil
import subprocess
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
    reader = PdfReader(io.BytesIO(pdf_bytes(report)))
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
