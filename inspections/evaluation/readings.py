"""Single readings judged on their own: a yes/no answer, a choice, a number against its band.

A band whose limits are out of order (``engineering.controls.BAND_ORDER``; a fail-below above the ok band's low end,
or the band's ends reversed) is a configuration error. The reading is still recorded, with a result saying the limits
are inconsistent (``inconsistent_band``), and that result is never ok: a fail when the value is beyond every limit on
a side that fails (below them all, or above them all where the band fails high), otherwise a watch (not proven). The
frost thermostat's trip setting is judged so too (``freeze_checks``), and the phone alike (evaluate.js)."""

from __future__ import annotations

from engineering import controls
from engineering import formatting as fmt
from engineering.controls import Verdict
from inspections.reasons import q as qty
from inspections.reasons import span

from .form import Value
from .results import ITEM_CONDITIONS, Result


def reading_result(slot, value: Value) -> Result | None:
    """One answer or number of a checklist slot judged on its own: a yes/no, a choice, or a number against its band;
    None when there is nothing to judge (not applicable, an unknown choice, a number with no band)."""
    it = slot.item
    key = it.api_key
    res = Result(check=it.kind, item=key, component=slot.component, condition_code=ITEM_CONDITIONS.get(key, ""))
    if value.na:
        return None
    if it.kind == "check":
        res.verdict = Verdict.OK if value.text == "ok" else Verdict.FAIL
        # The verdict shows beside the reason: the reason says what was confirmed, not "ok" again.
        res.reason = f"{'confirmed' if res.verdict == Verdict.OK else 'not confirmed'}: {it.label}"
        return res
    if it.kind == "choice":
        choice = next((c for c in it.choices if c["value"] == value.text), None)
        if choice is None:
            return None
        res.verdict = Verdict.OK if choice.get("ok", True) else Verdict.FAIL
        res.reason = f"{it.label}: {choice['label']}"
        return res
    if it.kind == "number" and value.number is not None:
        lim = slot.limits
        if all(lim.get(k) is None for k in ("ok_min", "ok_max")):
            return None
        derived = {"value": value.number, **{k: v for k, v in lim.items() if v is not None and "_m" in k}}
        if not controls.band_in_order(
            ok_low=lim.get("ok_min"),
            ok_high=lim.get("ok_max"),
            watch_low=lim.get("watch_min"),
            watch_high=lim.get("watch_max"),
        ):
            head = [f"{it.label.lower()} ", qty(value.number, it.quantity, it.decimals)]
            return inconsistent_band(res, head=head, x=value.number, lim=lim, item=it, derived=derived)
        check = controls.band_check(
            value=value.number,
            ok_low=lim.get("ok_min"),
            ok_high=lim.get("ok_max"),
            watch_low=lim.get("watch_min"),
            watch_high=lim.get("watch_max"),
            label=it.label.lower(),
            unit=fmt.storage_text(quantity=it.quantity),
        )
        res.check = "limits"
        res.verdict = check.verdict.value
        res.say(_band_parts(it, value.number, lim, check.verdict.value))
        res.method = "reading against its band; " + (it.limits_source or "common practice")
        res.derived = derived
        return res
    return None


def _band_parts(it, x: float, lim: dict, verdict: str) -> list:
    """The words of engineering.controls.band_check, with the numbers as quantities."""
    d = it.decimals
    ok_lo, ok_hi = lim.get("ok_min"), lim.get("ok_max")
    w_lo = lim.get("watch_min") if lim.get("watch_min") is not None else ok_lo
    w_hi = lim.get("watch_max") if lim.get("watch_max") is not None else ok_hi
    head = [f"{it.label.lower()} ", qty(x, it.quantity, d)]

    def inside(lo, hi) -> list:  # "within 2.0–6.0 °C"; a one-sided band: "at most 6.7 A"
        return [" within " if lo is not None and hi is not None else " ", span(lo, hi, it.quantity, d)]

    def outside(lo, hi) -> list:  # "outside 2.0–6.0 °C"; a one-sided band: "above 6.7 A" / "below 2.0 °C"
        if lo is not None and hi is not None:
            return [" outside ", span(lo, hi, it.quantity, d)]
        return [" above ", qty(hi, it.quantity, d)] if hi is not None else [" below ", qty(lo, it.quantity, d)]

    if verdict == Verdict.OK:
        return [*head, " is", *inside(ok_lo, ok_hi)]
    if verdict == Verdict.WATCH:
        return [*head, " is", *outside(ok_lo, ok_hi), " but", *inside(w_lo, w_hi)]
    return [*head, " is", *outside(w_lo, w_hi)]


def inconsistent_band(
    res: Result, *, head: list, x: float, lim: dict, item, derived: dict, open_high: bool = False, harm: str = ""
) -> Result:
    """``res`` as a reading against a band whose limits are out of order: never ok (see the module's docstring).

    ``head``: the reading's words and value; ``lim``: its ok_min, ok_max, watch_min (the fail-below), watch_max (any
    None); ``open_high``: the band never fails above (the frost thermostat's); ``harm``: what a value below every
    limit means (": the coil can freeze before it trips"). The phone's twin: evaluate.js inconsistentBand."""
    w_lo, ok_lo, ok_hi, w_hi = (lim.get(k) for k in ("watch_min", "ok_min", "ok_max", "watch_max"))
    fail_lo = w_lo if w_lo is not None else ok_lo
    fail_hi = None if open_high else (w_hi if w_hi is not None else ok_hi)
    limits = [v for v in (w_lo, ok_lo, ok_hi, w_hi) if v is not None]
    v = round(x, 9)
    below = fail_lo is not None and v < min(limits)
    above = fail_hi is not None and v > max(limits)
    res.check = "limits"
    res.verdict = (Verdict.FAIL if below or above else Verdict.WATCH).value
    res.method = "reading against its band, not judged: the band's limits are out of order; " + (
        item.limits_source or "common practice"
    )
    res.derived = {**derived, "limits_inconsistent": True}

    def at(y: float) -> object:
        return qty(y, item.quantity, item.decimals)

    said: list = []
    if fail_lo is not None:
        said += ["fail below ", at(fail_lo)]
    if ok_lo is not None or ok_hi is not None:
        said += [", " if said else "", "ok "]
        said += ["from ", at(ok_lo)] if ok_lo is not None else []
        said += [" to " if ok_lo is not None else "up to ", at(ok_hi)] if ok_hi is not None else []
    if fail_hi is not None:
        said += [", fail above ", at(fail_hi)]
    if below:
        verdict_words = f" is below every limit set for it{harm}; "
    elif above:
        verdict_words = " is above every limit set for it; "
    else:
        verdict_words = " is not proven: "
    res.say(
        *head,
        verdict_words,
        "the limits for this check are inconsistent: ",
        *said,
        "; each must be at most the next. Correct the checklist's limits",
    )
    return res
