"""Evaluation reasons a reader can see in their own units.

A reason is kept twice: as SI text (``reason``, the record as judged) and as
``reason_parts``, a JSON list whose items are either plain text or a quantity
in SI, rendered at read time in the reader's unit system through
``engineering.units``:

- ``{"value": 223.6, "quantity": "pressure"}`` — one value with its unit;
- ``{"low": 2.0, "high": 6.0, "quantity": "temperature"}`` — a band
  ("2.0–6.0 °C", "at least 2.0 °C", "at most 6.0 °C").

Temperature differences use the quantity ``temperature_difference`` so that
1.5 K reads 2.7 Δ°F, never 34.7 °F. ``decimals`` on a part sets the SI
precision; the US precision comes from ``US_DECIMALS`` (a value in in. w.c.
needs two decimals where Pa needs none).
"""

from __future__ import annotations

from typing import Any

from inspections import checklists

# Display precision per quantity: (SI, US). Common practice for field readings.
DECIMALS: dict[str, tuple[int, int]] = {
    "pressure": (0, 2),
    "temperature": (1, 1),
    "temperature_difference": (1, 1),
    "airflow": (0, 0),
    "water_flow": (2, 1),
    "heat_rate": (1, 0),
    "co2": (0, 0),
    "relative_humidity": (0, 0),
    "percent": (0, 0),
    "current": (1, 1),
    "time": (0, 0),
    "rotational_speed": (0, 0),
    "frequency": (1, 1),
    "run_hours": (0, 0),
    "length": (2, 1),
}


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
    si, us = DECIMALS.get(part["quantity"], (1, 1))
    if system == "us":
        return us
    return part.get("decimals", si)


def format_number(x: float, decimals: int) -> str:
    """A number as reasons show it: ``decimals`` places, thousands grouped from 10 000 (e.g. 154,000 Btu/h),
    a true minus sign, no "−0" (the phone's twin: units.js formatNumber)."""
    text = f"{x:,.{decimals}f}" if abs(x) >= 10_000 else f"{x:.{decimals}f}"
    if float(text.replace(",", "")) == 0:
        text = text.lstrip("-")
    return text.replace("-", "−")


def decimals_of(quantity: str, system: str) -> int:
    """The quantity's usual display precision in ``system`` (``DECIMALS``)."""
    return _decimals({"quantity": quantity}, system)


def _number(value_si: float, quantity: str, system: str, decimals: int) -> str:
    return format_number(checklists.to_display(value_si, quantity, system), decimals)


def display_number(value_si: float, quantity: str, system: str, *, decimals: int | None = None) -> str:
    """A stored SI value as a reader sees it: in ``system``'s unit, at the quantity's usual precision (or
    ``decimals`` in either system), thousands grouped from 10 000, true minus sign (the unit label is not added)."""
    d = _decimals({"quantity": quantity}, system) if decimals is None else decimals
    return _number(value_si, quantity, system, d)


def _with_unit(text: str, quantity: str, system: str) -> str:
    unit = checklists.display_unit_label(quantity, system)
    return f"{text} {unit}" if unit else text


def render_part(part: Any, system: str) -> str:
    if isinstance(part, str):
        return part
    quantity = part["quantity"]
    d = _decimals(part, system)
    if "value" in part:
        return _with_unit(_number(part["value"], quantity, system, d), quantity, system)
    low, high = part.get("low"), part.get("high")
    if low is not None and high is not None:
        lo, hi = _number(low, quantity, system, d), _number(high, quantity, system, d)
        # "−7.0 to −3.0 °C": a dash between negative numbers reads as more minus signs.
        dash = " to " if "−" in lo + hi else "–"
        return _with_unit(f"{lo}{dash}{hi}", quantity, system)
    if low is not None:
        return "at least " + _with_unit(_number(low, quantity, system, d), quantity, system)
    if high is not None:
        return "at most " + _with_unit(_number(high, quantity, system, d), quantity, system)
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
