"""Archival and tagged records: every archival file passes the PDF/A-3b rules, every record is tagged.

An auditor's archive keeps inspection and compliance records as PDF/A-3b: the checks of tests/reports/pdfcheck.py
(XMP metadata matching the document information, an sRGB output intent, every font embedded, no interpolated
image, no JavaScript or encryption) run on files with a photo, a drawn signature and charts in them. Every
record, archival or not, is tagged (PDF/UA-1: a structure tree, the language, the title shown, figures with
their alternative text) so a screen reader can read it aloud. The check is shown to fail on files that break
each rule, so a green run means something.
"""

import base64
import io

import pytest
from pypdf import PdfReader, PdfWriter
from pypdf.generic import DictionaryObject, NameObject, TextStringObject

from . import pdfcheck
from .conftest import pdf_bytes, text_of
from .test_compliance_report import estate  # noqa: F401 — the shared fixture
from .test_inspection_report import visit  # noqa: F401 — the shared fixture

pytestmark = pytest.mark.django_db


def _images(pdf: bytes) -> int:
    reader = PdfReader(io.BytesIO(pdf))
    return sum(
        1 for _, obj in pdfcheck._objects(reader) if getattr(obj, "get", None) and obj.get("/Subtype") == "/Image"
    )


@pytest.fixture
def records(visit, estate, supervisor, make_report):  # noqa: F811 — the imported fixtures
    """One record of each kind, from a visit with a photo, a drawn signature and a finding, and a site with
    a filter chart; archival ones (inspection, compliance, unit history) also as PDF/A."""
    unit = visit.ahu
    asks = {
        "inspection": {"work_order": str(visit.public_id)},
        "compliance": {"sites": [estate["site"].pk], "start": "2025-01-01", "end": "2025-03-31"},
        "unit_history": {"unit": unit.pk, "start": "2025-01-01", "end": "2025-06-30"},
        "labels": {"units": [unit.pk]},
    }
    out = {}
    for kind, parameters in asks.items():
        out[kind] = pdf_bytes(make_report(user=supervisor, kind=kind, parameters=parameters))
        if kind in ("inspection", "compliance", "unit_history"):
            out[f"{kind} (PDF/A)"] = pdf_bytes(
                make_report(user=supervisor, kind=kind, parameters=parameters, pdfa=True)
            )
    return out


def test_archival_files_pass_the_pdfa_rules_and_every_record_is_tagged_and_plain(records):
    # The inspection record carries raster images (the photo and the signature): the interpolation rule is met
    # on real images, not vacuously.
    assert _images(records["inspection (PDF/A)"]) >= 2
    for name, pdf in records.items():
        archival = "PDF/A" in name
        assert pdfcheck.problems(pdf, archival=archival) == [], (name, pdfcheck.fonts_used(pdf))
        # …and every word of it reads as a person's: no module path, field key, None or nan.
        assert pdfcheck.unreadable(text_of(pdf)) == [], name


def test_the_plain_words_check_catches_internal_names():
    text = (
        "Method: engineering.filters.filter_loading; photo filter_check.photo; forecast None; "
        "loading nan %; see https://plenum.example/l/AB12CD/ e.g. 2.5 K"
    )
    assert pdfcheck.unreadable(text) == [
        "engineering.filters.filter_loading",
        "filter_check.photo",
        "filter_loading",
        "filter_check",
        "None",
        "nan",
    ]


def test_the_check_fails_files_that_break_a_rule(records):
    good = records["inspection (PDF/A)"]
    assert pdfcheck.problems(good, archival=True) == []

    # An image drawn with smoothing, no variant, no tags: what WeasyPrint writes by default.
    from weasyprint import HTML

    from .builders import png_bytes

    src = "data:image/png;base64," + base64.b64encode(png_bytes()).decode()
    plain = HTML(string=f'<title>t</title><img src="{src}" style="image-rendering: auto">').write_pdf()
    found = " | ".join(pdfcheck.problems(plain, archival=True))
    for rule in ("Interpolate true", "PDF/A-3b", "sRGB output intent", "PDF/UA-1", "structure tree", "language"):
        assert rule in found, rule

    # A Subject whose XMP twin says something else; a script; encryption.
    def rewritten(change) -> bytes:
        writer = PdfWriter(clone_from=PdfReader(io.BytesIO(good)))
        change(writer)
        out = io.BytesIO()
        writer.write(out)
        return out.getvalue()

    changed_subject = rewritten(lambda w: w.add_metadata({"/Subject": "Something else"}))
    assert any("/Subject" in p and "dc:description" in p for p in pdfcheck.problems(changed_subject, archival=True))

    def open_with_script(writer):
        writer._root_object[NameObject("/OpenAction")] = DictionaryObject(
            {NameObject("/S"): NameObject("/JavaScript"), NameObject("/JS"): TextStringObject("app.alert(1);")}
        )

    scripted = rewritten(open_with_script)
    assert any("JavaScript" in p for p in pdfcheck.problems(scripted, archival=True))
    locked = rewritten(lambda w: w.encrypt(user_password="", owner_password="x", algorithm="RC4-128"))
    assert pdfcheck.problems(locked, archival=True) == ["the file is encrypted"]
