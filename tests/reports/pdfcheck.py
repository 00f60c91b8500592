"""Structural checks of a written PDF: what an archival (PDF/A-3b) and a tagged (PDF/UA-1) record must hold.

Read with pypdf, object by object, so a check sees every page, form, font and image, not only the first
page's. The rules, each from the standard that sets it:

- ISO 19005-3 (PDF/A-3) 6.6.2.3 / ISO 19005-2 6.6.2.3: every document-information entry present has its
  equivalent XMP property with the same value (Title ↔ dc:title, Author ↔ dc:creator, Subject ↔
  dc:description, Keywords ↔ pdf:Keywords, Creator ↔ xmp:CreatorTool, Producer ↔ pdf:Producer,
  CreationDate ↔ xmp:CreateDate, ModDate ↔ xmp:ModifyDate); 6.1.3: no encryption; 6.2.3: an output intent
  (GTS_PDFA1) with an ICC profile, here sRGB (3 components); 6.2.8: an image's Interpolate, if present, is
  false; 6.2.11.4: every font's program embedded; 6.6.1: no JavaScript actions; 6.6.4: the pdfaid
  identification.
- ISO 14289-1 (PDF/UA-1) 5, 7.1, 7.3, 7.18 (from memory of its clause list): the pdfuaid identification,
  a structure tree, MarkInfo /Marked true, the document's language, the title shown in the window
  (ViewerPreferences /DisplayDocTitle), alternative text on every figure.
"""

from __future__ import annotations

import io
import re
import xml.etree.ElementTree as ET
from datetime import UTC, datetime, timedelta, timezone

from pypdf import PdfReader
from pypdf.generic import ArrayObject, DictionaryObject, IndirectObject, NameObject, StreamObject

NS = {
    "rdf": "http://www.w3.org/1999/02/22-rdf-syntax-ns#",
    "dc": "http://purl.org/dc/elements/1.1/",
    "xmp": "http://ns.adobe.com/xap/1.0/",
    "pdf": "http://ns.adobe.com/pdf/1.3/",
    "pdfaid": "http://www.aiim.org/pdfa/ns/id/",
    "pdfuaid": "http://www.aiim.org/pdfua/ns/id/",
}
FONT_FILES = ("/FontFile", "/FontFile2", "/FontFile3")


def _xmp_values(packet: str) -> dict[str, str]:
    """Every simple XMP property of the packet, by its prefixed name ("dc:title", "pdfaid:part", ...)."""
    body = packet[packet.index("<x:xmpmeta") : packet.rindex("</x:xmpmeta>") + len("</x:xmpmeta>")]
    root = ET.fromstring(body)  # noqa: S314 — a file this test suite just wrote, not outside input
    prefix = {uri: name for name, uri in NS.items()}
    values: dict[str, str] = {}

    def name_of(tag: str) -> str:
        uri, _, local = tag[1:].partition("}")
        return f"{prefix.get(uri, uri)}:{local}"

    for description in root.iter(f"{{{NS['rdf']}}}Description"):
        for attribute, value in description.attrib.items():
            if attribute.startswith("{") and not attribute.startswith(f"{{{NS['rdf']}}}"):
                values[name_of(attribute)] = value
        for child in description:
            items = [li.text or "" for li in child.iter(f"{{{NS['rdf']}}}li")]
            values[name_of(child.tag)] = ", ".join(items) if items else (child.text or "")
    return values


def _pdf_date(text: str) -> datetime:
    """A PDF date ("D:20250311100000Z", "D:20250311110000+01'00'") as an aware datetime."""
    m = re.fullmatch(r"D:(\d{14})(Z|([+-])(\d\d)'?(\d\d)'?)?", text.strip())
    if not m:
        raise ValueError(text)
    at = datetime.strptime(m.group(1), "%Y%m%d%H%M%S")
    if not m.group(3):
        return at.replace(tzinfo=UTC)
    offset = timedelta(hours=int(m.group(4)), minutes=int(m.group(5)))
    return at.replace(tzinfo=timezone(offset if m.group(3) == "+" else -offset))


def _w3c_date(text: str) -> datetime:
    return datetime.fromisoformat(text.replace("Z", "+00:00"))


INFO_TO_XMP = {
    "/Title": "dc:title",
    "/Author": "dc:creator",
    "/Subject": "dc:description",
    "/Keywords": "pdf:Keywords",
    "/Creator": "xmp:CreatorTool",
    "/Producer": "pdf:Producer",
    "/CreationDate": "xmp:CreateDate",
    "/ModDate": "xmp:ModifyDate",
}


def _objects(reader: PdfReader):
    """Every indirect object of the file (the free ones skipped)."""
    size = int(reader.trailer["/Size"])
    for number in range(1, size):
        try:
            obj = reader.get_object(IndirectObject(number, 0, reader))
        except Exception:  # noqa: S112 — a free or compressed-away slot: nothing to check there
            continue
        if obj is not None:
            yield number, obj


def _resolve(value):
    return value.get_object() if isinstance(value, IndirectObject) else value


def problems(pdf: bytes, *, archival: bool) -> list[str]:
    """What keeps ``pdf`` from being a tagged PDF/UA-1 record (and a PDF/A-3b file when ``archival``)."""
    found: list[str] = []
    reader = PdfReader(io.BytesIO(pdf))
    if reader.is_encrypted or "/Encrypt" in reader.trailer:
        return ["the file is encrypted"]
    root = reader.trailer["/Root"].get_object()
    info = {key: str(value) for key, value in (reader.metadata or {}).items()}

    # Metadata: an XMP packet whose properties repeat every document-information entry.
    if "/Metadata" not in root:
        found.append("no XMP metadata stream")
        xmp: dict[str, str] = {}
    else:
        xmp = _xmp_values(root["/Metadata"].get_object().get_data().decode("utf-8"))
    for key, prop in INFO_TO_XMP.items():
        if key not in info:
            continue
        if prop not in xmp:
            found.append(f"document information {key} has no {prop} in the XMP metadata")
        elif key.endswith("Date"):
            if _pdf_date(info[key]) != _w3c_date(xmp[prop]):
                found.append(f"{key} {info[key]!r} differs from {prop} {xmp[prop]!r}")
        elif info[key] != xmp[prop]:
            found.append(f"{key} {info[key]!r} differs from {prop} {xmp[prop]!r}")

    if archival:
        if xmp.get("pdfaid:part") != "3" or xmp.get("pdfaid:conformance") != "B":
            found.append(f"no PDF/A-3b identification (pdfaid part {xmp.get('pdfaid:part')!r})")
        intents = [_resolve(i) for i in _resolve(root.get("/OutputIntents", ArrayObject()))]
        srgb = [
            i
            for i in intents
            if i.get("/S") == "/GTS_PDFA1"
            and "/DestOutputProfile" in i
            and int(i["/DestOutputProfile"].get_object().get("/N", 0)) == 3
            and "srgb" in str(i.get("/OutputConditionIdentifier", "")).lower()
        ]
        if not srgb:
            found.append("no sRGB output intent (GTS_PDFA1 with a 3-component ICC profile)")

    # Tagged, for a screen reader.
    if xmp.get("pdfuaid:part") != "1":
        found.append("no PDF/UA-1 identification (pdfuaid:part) in the XMP metadata")
    if "/StructTreeRoot" not in root:
        found.append("no structure tree (untagged)")
    mark = _resolve(root.get("/MarkInfo", DictionaryObject()))
    if mark.get("/Marked") != True:  # noqa: E712 — a PDF boolean object is truthy even when false
        found.append("MarkInfo /Marked is not true")
    if not str(root.get("/Lang", "")).strip():
        found.append("no document language (/Lang)")
    if _resolve(root.get("/ViewerPreferences", DictionaryObject())).get("/DisplayDocTitle") != True:  # noqa: E712
        found.append("the viewer is not told to show the title (DisplayDocTitle)")
    if not info.get("/Title", "").strip():
        found.append("no title")

    # Object by object: fonts embedded, images not interpolated, no script, figures described.
    for number, obj in _objects(reader):
        if not isinstance(obj, DictionaryObject):
            continue
        kind = obj.get("/Type")
        if kind == "/FontDescriptor" and not any(f in obj for f in FONT_FILES):
            found.append(f"font {obj.get('/FontName')} is not embedded (object {number})")
        if isinstance(obj, StreamObject) and obj.get("/Subtype") == "/Image" and obj.get("/Interpolate") == True:  # noqa: E712 — a PDF boolean
            found.append(f"image object {number} has /Interpolate true")
        if obj.get("/S") == NameObject("/JavaScript") or "/JS" in obj:
            found.append(f"JavaScript action in object {number}")
        if kind == "/StructElem" and obj.get("/S") == "/Figure" and not str(obj.get("/Alt", "")).strip():
            found.append(f"figure without alternative text (object {number})")
    names = _resolve(root.get("/Names", DictionaryObject()))
    if "/JavaScript" in names:
        found.append("document-level JavaScript (/Names /JavaScript)")
    for key in ("/OpenAction", "/AA"):
        action = _resolve(root.get(key))
        if isinstance(action, DictionaryObject) and action.get("/S") == "/JavaScript":
            found.append(f"JavaScript in the catalog's {key}")
    return found


def fonts_used(pdf: bytes) -> set[str]:
    """The base names of the fonts the file carries (for reading a failure)."""
    reader = PdfReader(io.BytesIO(pdf))
    return {
        str(obj.get("/FontName"))
        for _, obj in _objects(reader)
        if isinstance(obj, DictionaryObject) and obj.get("/Type") == "/FontDescriptor"
    }


# What a reader must never meet in a record: a dotted module path or item key ("engineering.filters.x",
# "filter_check.photo"), a field key with an underscore, Python's None, a not-a-number. A web address
# (the QR's link, "https://…/l/AB12CD/") and a number ("2.5") are not paths.
_DOTTED = re.compile(r"(?<![/\w.:@-])[a-z][a-z0-9_]*(?:\.[a-z][a-z0-9_]*)+\b(?![/:@.]\w)")
_UNDERSCORED = re.compile(r"\b\w+_\w+\b")
_NONE_NAN = re.compile(r"\bNone\b|\bnan\b|\bNaN\b|\binf\b")
_NOT_PATHS = {"e.g", "i.e"}


def unreadable(text: str) -> list[str]:
    """The internal names and empty values ``text`` shows (empty when a person can read all of it)."""
    found = [m for m in _DOTTED.findall(text) if m not in _NOT_PATHS]
    found += _UNDERSCORED.findall(text)
    found += _NONE_NAN.findall(text)
    return found
