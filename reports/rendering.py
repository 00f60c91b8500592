"""HTML to PDF with WeasyPrint, written so that the same inputs give the same document.

Determinism: the generation time printed and written into the PDF metadata is
the report's *requested* time, never "now"; the PDF identifier is derived from
the report's inputs; charts are SVG with fixed ids and no date stamp.
"""

from __future__ import annotations

import base64
import functools
import hashlib
import io
from dataclasses import dataclass
from datetime import UTC, datetime

from django.conf import settings
from django.template.loader import render_to_string

from engineering.units import UnitSystem
from inventory.display import site_time_text

# PDF/A-3b: archival, and unlike 1b allows transparency (the charts use it).
PDFA_VARIANT = "pdf/a-3b"
# Every record is tagged (a structure tree of headings, tables, lists and figures with their alt texts, the
# language and the title shown) so a screen reader can read it aloud: PDF/UA-1 (ISO 14289-1), the variant
# WeasyPrint writes. An archival file is both: PDF/A-3b with the same tags and the PDF/UA identification.
PDFUA_VARIANT = "pdf/ua-1"
_PDFUA_ID = b'<rdf:Description xmlns:pdfuaid="http://www.aiim.org/pdfua/ns/id/" rdf:about="" pdfuaid:part="1" />'

PRECEDENCE_NOTE = (
    "Local codes and regulations, the manufacturer's instructions and licensed practice take precedence "
    "over anything in this document."
)


@dataclass(frozen=True)
class RenderedPdf:
    content: bytes
    page_count: int

    @property
    def sha256(self) -> str:
        return hashlib.sha256(self.content).hexdigest()


def css_string(text: str) -> str:
    """``text`` as a quoted CSS string, every non-alphanumeric character escaped (safe in a stylesheet)."""
    out = []
    for ch in text:
        if ch.isascii() and (ch.isalnum() or ch == " "):
            out.append(ch)
        else:
            # A hex escape eats one following space, so each gets its own terminating space.
            out.append(f"\\{ord(ch):06x} ")
    return '"' + "".join(out) + '"'


def generated_label(at: datetime, *, zone: str) -> str:
    """The moment a document was asked for, on the clock of ``zone`` with the zone named (inventory.display)."""
    return site_time_text(at, zone)


def w3c_datetime(at: datetime) -> str:
    return at.astimezone(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")


def svg_data_uri(svg: str) -> str:
    return "data:image/svg+xml;base64," + base64.b64encode(svg.encode("utf-8")).decode("ascii")


def image_thumbnail_data_uri(data: bytes, *, max_px: int = 480) -> str | None:
    """A JPEG thumbnail of an uploaded photo as a data URI; None when the bytes are not an image."""
    from PIL import Image, ImageOps, UnidentifiedImageError

    try:
        with Image.open(io.BytesIO(data)) as img:
            img = ImageOps.exif_transpose(img)
            if img.mode in ("RGBA", "LA", "P"):
                # Transparent areas (a signature pad's background) become paper white, not black.
                img = img.convert("RGBA")
                flat = Image.new("RGB", img.size, (255, 255, 255))
                flat.paste(img, mask=img.getchannel("A"))
                img = flat
            img = img.convert("RGB")
            img.thumbnail((max_px, max_px))
            out = io.BytesIO()
            img.save(out, format="JPEG", quality=80, optimize=False)
    except (UnidentifiedImageError, OSError, ValueError):
        return None
    return "data:image/jpeg;base64," + base64.b64encode(out.getvalue()).decode("ascii")


def stored_file_data_uri(field, *, max_px: int = 480) -> str | None:
    """A stored image file (photo, signature) as a thumbnail data URI; None when missing or unreadable."""
    if not field:
        return None
    try:
        with field.open("rb") as fh:
            data = fh.read()
    except (OSError, ValueError):
        return None
    return image_thumbnail_data_uri(data, max_px=max_px)


def paper_for(system: str) -> str:
    """The paper a reader prints on: US Letter for a reader in US units, A4 for everyone else (ISO 216)."""
    return "letter" if system == UnitSystem.US else "A4"


def html_render(
    *,
    template: str,
    context: dict,
    title: str,
    generated_at: datetime,
    zone: str,
    subject: str = "",
    paper: str = "A4",
) -> str:
    """The document's HTML: its template inside the shared page frame (fonts, footer, page counter).

    ``zone`` is the IANA zone whose clock the footer and "as of" lines read (the site's); ``paper`` the
    page size (``paper_for`` the reader's units).
    """
    full = {
        **context,
        "page_size": paper,
        "doc_title": title,
        "doc_subject": subject,
        "generated_label": generated_label(generated_at, zone=zone),
        "generated_w3c": w3c_datetime(generated_at),
        "footer_css": css_string(f"{title} — generated {generated_label(generated_at, zone=zone)}"),
        "precedence_note": PRECEDENCE_NOTE,
    }
    return render_to_string(template, full)


def _page_references_once(pdf) -> tuple:
    """pydyf's ``PDF.page_references``, built once per page count instead of on every read.

    WeasyPrint's PDF tagging reads ``pdf.page_references[page_number]`` for every tagged box; pydyf builds the
    tuple of all pages' references on each read, so tagging a document cost (boxes × pages), growing with the
    square of a report's length (a 5,000-unit compliance report: minutes). Same values, same bytes.
    """
    kids = pdf.pages["Kids"]
    cached = pdf.__dict__.get("_plenum_page_references")
    if cached is None or cached[0] != len(kids):
        cached = (len(kids), tuple(f"{number} 0 R".encode("ascii") for number in kids[::3]))
        pdf.__dict__["_plenum_page_references"] = cached
    return cached[1]


def _linear_page_references() -> None:
    import pydyf

    if getattr(pydyf.PDF.page_references, "fget", None) is not _page_references_once:
        pydyf.PDF.page_references = property(_page_references_once)


# WeasyPrint's user-agent stylesheet gives every element six pseudo-elements by universal rules (``::marker`` and
# the footnote and note calls, markers and callbacks), and WeasyPrint computes a style for each of them on every
# element: three quarters of the style work of a long table (issue 17). A record has no footnotes or notes, and
# markers only on list items: the same sheet with ``::marker`` kept for ``li`` and the footnote and note rules left
# out writes the same PDF bytes (tests/reports/test_compliance_scaling.py) in about a sixth less time.
_UA_UNUSED = ("::footnote-call ", "::footnote-marker ", "::note-call ", "::note-marker ", "::note-callback ")
_UA_MARKER = "::marker {"


def report_ua_text(ua: str) -> str | None:
    """WeasyPrint's user-agent stylesheet ``ua`` without the rules a record never uses; None when ``ua`` is not
    laid out as expected (another WeasyPrint): the caller then keeps WeasyPrint's own sheet."""
    lines = ua.split("\n")
    kept = [line for line in lines if not line.startswith(_UA_UNUSED)]
    markers = [i for i, line in enumerate(kept) if line.startswith(_UA_MARKER)]
    if len(lines) - len(kept) != len(_UA_UNUSED) or len(markers) != 1:
        return None
    kept[markers[0]] = "li" + kept[markers[0]]
    return "\n".join(kept)


@functools.cache
def _report_html_class():
    """``weasyprint.HTML`` with the user-agent stylesheet of ``report_ua_text`` (WeasyPrint's own when that is None)."""
    from weasyprint import CSS, HTML
    from weasyprint import html as weasy_html
    from weasyprint.css.counters import CounterStyle

    text = report_ua_text(weasy_html.UA)
    if text is None:
        return HTML
    # Its @counter-style rules are WeasyPrint's own, which every document already has (``_ua_counter_style``):
    # parsed into a throwaway set here, not added a second time to WeasyPrint's.
    sheet = CSS(string=text, counter_style=CounterStyle())

    class ReportHTML(HTML):
        def _ua_stylesheets(self, forms=False):
            return [sheet, weasy_html.UA_FORM_STYLESHEET] if forms else [sheet]

    return ReportHTML


def _declare_pdfua(document, pdf) -> None:
    """Add the PDF/UA-1 identification to an archival file's XMP packet, beside its PDF/A one (WeasyPrint
    writes one variant's identification; the tags, title and language PDF/UA asks for are already there)."""
    reference = pdf.catalog["Metadata"]  # "<number> 0 R"
    stream = pdf.objects[int(bytes(reference).split()[0] if isinstance(reference, bytes) else reference.split()[0])]
    packet = b"\n".join(part if isinstance(part, bytes) else str(part).encode() for part in stream.stream)
    stream.stream = [packet.replace(b"</rdf:RDF>", _PDFUA_ID + b"</rdf:RDF>", 1)]


def pdf_render(*, html: str, identifier: str, pdfa: bool = False) -> RenderedPdf:
    """Write ``html`` as a tagged PDF/UA-1 file (PDF/A-3b as well when ``pdfa``); ``identifier`` seeds its file id."""
    _linear_page_references()
    base_url = str(settings.BASE_DIR)
    document = _report_html_class()(string=html, base_url=base_url).render()
    options = {
        "pdf_identifier": hashlib.md5(identifier.encode("utf-8"), usedforsecurity=False).hexdigest().encode(),
        "pdf_variant": PDFA_VARIANT if pdfa else PDFUA_VARIANT,
        "pdf_tags": True,
        # Same bytes for the same inputs: uncompressed streams would be too, but big; compression is deterministic.
        "uncompressed_pdf": False,
    }
    content = document.write_pdf(finisher=_declare_pdfua if pdfa else None, **options)
    return RenderedPdf(content=content, page_count=len(document.pages))
