"""What the phone form adds to save a technician time: the last value beside each reading, the sections with
their counts (progress and jump-to-section), which sections take "all pass", and where the site is.

All of it is in the page the service worker keeps, so it reads the same in a basement with no signal.
"""

from __future__ import annotations

from urllib.parse import quote

from inspections.last_values import last_readings, last_value_words

# Items a person answers (a photo is attached to an answer; a text is an optional remark).
ANSWERED_KINDS = ("number", "check", "choice")
# "All pass" is offered where a section has at least this many OK / Not OK items.
ALL_PASS_FROM = 2


def with_last_values(sections: list[dict], *, work_order, system: str, before) -> list[dict]:
    """``sections`` (checklist_form.form_sections) with ``last`` on each item read on an earlier visit,
    and ``code``-keyed counts: ``askable`` (items to answer) and ``checks`` (OK / Not OK items)."""
    ahu = work_order.ahu
    last = last_readings(ahu=ahu, before=before, exclude_work_order_id=work_order.pk)
    zone = ahu.building.site.time_zone
    out = []
    for section in sections:
        items = []
        for item in section["items"]:
            found = last.get((item["key"], item["component_code"] or None))
            words = ""
            if found is not None:
                words = last_value_words(
                    last=found,
                    kind=item["kind"],
                    quantity=item.get("quantity") or "",
                    choices=item.get("choices"),
                    system=system,
                    zone=zone,
                )
            items.append({**item, "last": words})
        out.append(
            {
                **section,
                "items": items,
                "askable": sum(1 for i in items if i["kind"] in ANSWERED_KINDS),
                "checks": sum(1 for i in items if i["kind"] == "check"),
                "all_pass": sum(1 for i in items if i["kind"] == "check") >= ALL_PASS_FROM,
            }
        )
    return out


def site_where(site) -> dict:
    """The site's address, its access notes (when the registry keeps them) and map links built from its
    coordinates: ``geo:`` opens the phone's own map app, the OpenStreetMap link any browser. No fetch."""
    lat, lon = site.latitude, site.longitude
    label = quote(site.name, safe="")
    return {
        "name": site.name,
        "address": (site.address or "").strip(),
        "access_notes": (getattr(site, "access_notes", "") or "").strip(),
        "geo_url": f"geo:{lat:.6f},{lon:.6f}?q={lat:.6f},{lon:.6f}({label})",
        "osm_url": f"https://www.openstreetmap.org/?mlat={lat:.6f}&mlon={lon:.6f}#map=18/{lat:.6f}/{lon:.6f}",
    }
