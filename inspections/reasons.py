"""Evaluation reasons a reader can see in their own units.

A reason is kept twice: as SI text (``reason``, the record as judged) and as
``reason_parts``, a JSON list whose items are either plain text or a quantity
in SI, rendered at read time in the reader's unit system through
``engineering.formatting``:

- ``{"value": 223.6, "quantity": "pressure"}`` — one value with its unit;
- ``{"low": 2.0, "high": 6.0, "quantity": "temperature"}`` — a band
  ("2.0–6.0 °C", "at least 2.0 °C", "at most 6.0 °C").
- ``{"consequence": "FC6", "values": {...}, "summary": "..."}`` — what a
  building-automation fault costs (``engineering.faults.consequences``), said
  from its SI values in the reader's units (the SI ``summary`` where the rule
  has no words for its values).

Temperature differences use the quantity ``temperature_difference`` so that
1.5 K reads 2.7 Δ°F, never 34.7 °F. Numbers, units and precision are
``engineering.formatting``'s: ``decimals`` on a part sets the SI precision; the
US precision comes from its ``DECIMALS`` (a value in in. w.c. needs two
decimals where Pa needs none).
"""

from __future__ import annotations

from typing import Any

from engineering import formatting as fmt
from engineering.faults.consequences import consequence_text


def q(value: float, quantity: str, decimals: int | None = None) -> dict[str, Any]:
    """A quantity part (SI value)."""
    part: dict[str, Any] = {"value": float(value), "quantity": quantity}
    if decimals is not None:
        part["decimals"] = decimals
    return part


def span(low: float | None, high: float | None, quantity: str, decimals: int | None = None) -> dict[str, Any]:
    """A band part (SI bounds; either may be None = open)."""
    part: dict[str, Any] = {"low": low, "high": high, "quantity": quantity}
    if decimals is not None:
        part["decimals"] = decimals
    return part


def _decimals(part: dict, system: str) -> int:
    return fmt.decimals_of(quantity=part["quantity"], system=system, si_decimals=part.get("decimals"))


def _text(value_si: float, part: dict, system: str, d: int) -> str:
    return fmt.number_text(value_si, quantity=part["quantity"], system=system, decimals=d)


def _with_unit(text: str, quantity: str, system: str) -> str:
    unit = fmt.unit_text(quantity=quantity, system=system)
    return f"{text} {unit}" if unit else text


def consequence(code: str, consequence: dict[str, Any]) -> dict[str, Any]:
    """A fault's consequence part (its ``values`` in SI and the SI ``summary``)."""
    return {"consequence": code, "values": dict(consequence.get("values") or {}), "summary": consequence.get("summary")}


def render_part(part: Any, system: str) -> str:
    if isinstance(part, str):
        return part
    if "consequence" in part:
        return consequence_text(part["consequence"], part, system)
    quantity = part["quantity"]
    d = _decimals(part, system)
    if "value" in part:
        return fmt.quantity_text(part["value"], quantity=quantity, system=system, decimals=d)
    low, high = part.get("low"), part.get("high")
    if low is not None and high is not None:
        lo, hi = _text(low, part, system, d), _text(high, part, system, d)
        # "−7.0 to −3.0 °C": a dash between negative numbers reads as more minus signs.
        dash = " to " if "−" in lo + hi else "–"
        return _with_unit(f"{lo}{dash}{hi}", quantity, system)
    if low is not None:
        return "at least " + fmt.quantity_text(low, quantity=quantity, system=system, decimals=d)
    if high is not None:
        return "at most " + fmt.quantity_text(high, quantity=quantity, system=system, decimals=d)
    return "any value"


def render(parts: list, system: str) -> str:
    """The reason in ``system`` ("si" or "us")."""
    return "".join(render_part(p, system) for p in parts)


def flatten(*pieces: Any) -> list:
    """Parts from strings, parts and lists of parts; adjacent strings are joined."""
    out: list = []
    for p in pieces:
        for x in p if isinstance(p, list) else [p]:
            if isinstance(x, str) and out and isinstance(out[-1], str):
                out[-1] += x
            elif x != "":
                out.append(x)
    return out


def text_without_subject(text: str, subject: str | None) -> str:
    """``text`` without a leading "<subject>: ", for a line whose label already names the part
    ("Pressure drop — Final filters: filter at 112 % …", not "…: Final filters: filter at …")."""
    lead = f"{subject}: " if subject else ""
    return text[len(lead) :] if lead and text.startswith(lead) and len(text) > len(lead) else text


def without_subject(parts: list, subject: str) -> list:
    """The parts without a leading "<subject>: ": a text whose heading already names its part (a finding's
    title "Filter loaded — Final filters") says the part once, not "Final filters: Final filters: …"."""
    lead = f"{subject}: "
    if not subject or not parts or not isinstance(parts[0], str) or not parts[0].startswith(lead):
        return list(parts)
    rest = parts[0][len(lead) :]
    return ([rest] if rest else []) + list(parts[1:])


def text_without_label_end(text: str, label: str) -> str:
    """``text`` without a leading "<words>: " that its label already ends with: under the heading "Outdoor-air
    fraction by temperatures" the reason "by temperatures: outdoor air 41 % …" reads "outdoor air 41 % …",
    never "by temperatures: by temperatures: …"."""
    head, sep, rest = text.partition(": ")
    if sep and head and rest and label.lower().endswith(head.lower()):
        return rest
    return text


def text_said_once(text: str, label: str) -> str:
    """A reason under a line labelled "<item> — <part>" without what the label already says: a leading
    "<part>: ", then a leading "<item>: " ("Fin condition — Heating coil" over "Fin condition: Clean" reads
    "Clean"), and "confirmed: <item>" reads "confirmed". The phone's twin: checklist.js withoutPart."""
    item, _, part = label.partition(" — ")
    text = text_without_subject(text, part or None)
    text = text_without_subject(text, item or None)
    for lead in ("not confirmed: ", "confirmed: "):
        if item and text.startswith(lead) and text[len(lead) :].startswith(item):
            rest = text[len(lead) + len(item) :].lstrip(" :;,.")
            return lead[:-2] + (f"; {rest}" if rest else "")
    return text
