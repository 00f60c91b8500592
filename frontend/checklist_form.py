"""The checklist as an HTML form, and a posted form as a sync payload (inspections/SYNC.md).

The page works before any script: the same field names are read by the
server on a plain POST and by checklist.js when it builds the outbox entry.
"""

from __future__ import annotations

import base64
import io
import json
import uuid

from django.utils import timezone

from accounts.inputs import parse_number
from inspections.cautions import cautions_once
from inspections.display import place_heading


def field_name(prefix: str, key: str, component: str | None) -> str:
    return f"{prefix}:{key}:{component or '-'}"


def _dom_id(prefix: str, key: str, component: str | None) -> str:
    return f"{prefix}-{key}-{component or 'unit'}".replace(".", "-").replace(":", "-")


def form_sections(checklist: dict) -> list[dict]:
    """Templates with their items, each with the names and ids the form uses."""
    sections = []
    for template in checklist.get("templates", []):
        items = []
        for item in template.get("items", []):
            comp = (item.get("component") or {}).get("label_code")
            display = (item.get("limits") or {}).get("display") or {}
            physical = display.get("physical") or {}
            items.append(
                {
                    **item,
                    "component_code": comp or "",
                    "name": field_name("r", item["key"], comp),
                    "note_name": field_name("n", item["key"], comp),
                    "photo_name": field_name("p", item["key"], comp),
                    "na_name": field_name("na", item["key"], comp),
                    "id": _dom_id("r", item["key"], comp),
                    "limits_json": json.dumps(display),
                    "min": physical.get("min"),
                    "max": physical.get("max"),
                    "step": "any",
                }
            )
        sections.append({**template, "items": _with_part_headings(items)})
    return sections


def _with_part_headings(items: list[dict]) -> list[dict]:
    """A section that asks items of a part heads each place's run with its sub-heading (``part_heading``:
    ``inspections.display.place_heading``, "Heating coil — Coil · label C8EM9HA", the whole unit's items
    "Whole unit"), so two coils' leak-by items never read as the same list twice; the record page and the
    inspection report head each part alike. A section of the unit's items alone has none."""
    if not any(i.get("component") for i in items):
        return items
    out, last = [], object()
    for i in items:
        code = i["component_code"] or None
        out.append({**i, "part_heading": place_heading(i.get("component"))} if code != last else i)
        last = code
    return out


def cautions_for(checklist: dict) -> list[str]:
    """Every caution once, the local-codes-first line always last (inspections.cautions.cautions_once)."""
    return cautions_once(
        lists=[checklist.get("cautions", []), *(t.get("cautions", []) for t in checklist.get("templates", []))]
    )


def caution_blocks(cautions: list[str]) -> list[dict]:
    """Safety lines first, the codes-first line last, each with its heading."""
    codes = [c for c in cautions if "local code" in c.lower()]
    return [{"heading": "Safety", "text": c} for c in cautions if c not in codes] + [
        {"heading": "Codes first", "text": c} for c in codes
    ]


def typed_number(raw: str):
    """A typed number as a float (a decimal comma read as a point: ``accounts.inputs.parse_number``, the phone's
    twin is numbers.js ``parseNumber``); text that is no number is kept as typed for the server, which names the
    field, the value and what is allowed ("1e5" too: a person never types an exponent)."""
    value = parse_number(raw, exponent=False)
    return raw if value is None else value


def _data_url(upload) -> str:
    content = upload.read()
    kind = upload.content_type or "application/octet-stream"
    return f"data:{kind};base64,{base64.b64encode(content).decode()}"


def typed_signature_png(name: str) -> str:
    """A PNG of the typed name, the signature when the page runs without scripts."""
    from PIL import Image, ImageDraw

    image = Image.new("RGB", (600, 150), "white")
    draw = ImageDraw.Draw(image)
    draw.line([(20, 120), (580, 120)], fill=(120, 120, 120), width=1)
    draw.text((24, 70), f"{name} (typed)", fill=(0, 0, 0))
    buffer = io.BytesIO()
    image.save(buffer, format="PNG")
    return "data:image/png;base64," + base64.b64encode(buffer.getvalue()).decode()


def payload_from_post(*, checklist: dict, post, files) -> dict:
    """One sync form from a plain HTML post of the checklist page."""
    now = timezone.now().isoformat()
    readings, photos = [], []
    for section in form_sections(checklist):
        for item in section["items"]:
            comp = item["component_code"] or None
            note = post.get(item["note_name"], "").strip()
            for upload in files.getlist(item["photo_name"]):
                photos.append(
                    {
                        "client_uuid": str(uuid.uuid4()),
                        "item": item["key"],
                        "component": comp,
                        "data": _data_url(upload),
                    }
                )
            if item["kind"] == "photo":
                continue
            if post.get(item["na_name"]):
                value = "na"
            else:
                raw = post.get(item["name"], "").strip()
                if raw == "":
                    continue
                value = typed_number(raw) if item["kind"] == "number" else raw
            readings.append({"item": item["key"], "component": comp, "value": value, "note": note})
    name = post.get("signature_name", "").strip()
    image = post.get("signature_image", "").strip() or (typed_signature_png(name) if name else "")
    return {
        "client_uuid": post.get("client_uuid") or str(uuid.uuid4()),
        "work_order": checklist["work_order"]["public_id"],
        "work_order_version": checklist["work_order"]["version"],
        "unit_system": checklist.get("unit_system", "si"),
        "started_at": post.get("started_at") or now,
        "finished_at": now,
        "readings": readings,
        "photos": photos,
        "signature": {"name": name, "image": image, "signed_at": now} if name or image else None,
    }
