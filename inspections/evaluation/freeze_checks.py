"""The freeze-protection (low-limit) thermostat's trip setting: a setting too low leaves the coil unprotected, one too
high only trips on cool mornings (``engineering.freeze.freeze_trip_setting_check``). The band is the checklist item's
own (``inspections.checklists.FREEZE_TRIP_OK``, ``FREEZE_TRIP_WATCH``), as the phone receives it with the item.

A band whose limits are out of order (the floor above the band, or the band's ends reversed) is a configuration error
that the engineering check refuses. The reading is still recorded as every reading against such a band is
(``readings.inconsistent_band``): never ok, a fail when the setting is below every one of the limits (whichever was
meant as the floor, the setting is under it), otherwise a watch (not proven); a setting too high never fails. It keeps
the freeze-protection condition, so freeze readiness does not count the step as passed."""

from __future__ import annotations

from engineering.controls import Verdict, band_in_order
from engineering.freeze import freeze_trip_setting_check
from inspections.reasons import q as qty
from inspections.reasons import span

from .form import Form, set_aside_parts
from .readings import inconsistent_band
from .results import FREEZE_TRIP_SET_HIGH, ITEM_CONDITIONS, Result

TRIP_ITEM = "preheater_freeze.freeze_trip_temp"


def freeze_trip_checks(form: Form, consumed: set) -> list[Result]:
    """The trip setting against its band: FAIL below the band's floor, WATCH just below it (too little margin) or
    above it (nuisance trips: still protecting, so ``FREEZE_TRIP_SET_HIGH``, not the freeze-protection condition)."""
    out = []
    for slot in (s for s in form.slots if s.item.api_key == TRIP_ITEM):
        t = form.own(TRIP_ITEM, slot.component)  # the reading judged on its own: never set aside (Form.own)
        lim = slot.limits
        lo, hi = lim.get("ok_min"), lim.get("ok_max")
        if t is None or lo is None or hi is None:
            continue
        floor = lim.get("watch_min") if lim.get("watch_min") is not None else lo
        consumed.add((TRIP_ITEM, slot.component.pk if slot.component else None))
        if not band_in_order(watch_low=floor, ok_low=lo, ok_high=hi):
            res = Result(
                check="limits", item=TRIP_ITEM, component=slot.component, condition_code=ITEM_CONDITIONS[TRIP_ITEM]
            )
            out.append(
                inconsistent_band(
                    res,
                    head=["freeze-protection trip temperature ", qty(t, "temperature", slot.item.decimals)],
                    x=t,
                    lim={"ok_min": lo, "ok_max": hi, "watch_min": floor},
                    item=slot.item,
                    derived={"value": t, "ok_min": lo, "ok_max": hi, "watch_min": floor, "watch_open_high": True},
                    open_high=True,
                    harm=": the coil can freeze before it trips",
                )
            )
            continue
        chk = freeze_trip_setting_check(trip_c=t, ok_low=lo, ok_high=hi, fail_below=floor)
        if chk.verdict != Verdict.FAIL and (TRIP_ITEM, slot.component.pk if slot.component else None) in form.set_aside:
            out.append(_implausible(slot, t, lo, hi, floor))
            continue
        high = chk.verdict == Verdict.WATCH and chk.limits["above_band_k"] > 0
        res = Result(
            check="limits",  # a number against its band, as every single reading: pages, PDFs and findings read it so
            item=TRIP_ITEM,
            component=slot.component,
            verdict=chk.verdict.value,
            condition_code=FREEZE_TRIP_SET_HIGH if high else ITEM_CONDITIONS[TRIP_ITEM],
            method="reading against its band, too high a watch (nuisance trips), never a failure; "
            + (slot.item.limits_source or "common practice"),
            derived={"value": t, "ok_min": lo, "ok_max": hi, "watch_min": floor, "watch_open_high": True},
        )
        d = slot.item.decimals
        head = ["freeze-protection trip temperature ", qty(t, "temperature", d)]
        band = span(lo, hi, "temperature", d)
        if chk.verdict == Verdict.FAIL:
            res.say(*head, " is below ", qty(floor, "temperature", d), ": the coil can freeze before it trips")
        elif chk.verdict == Verdict.OK:
            res.say(*head, " is within the recommended ", band)
        elif high:
            res.say(
                *head,
                " is above the recommended ",
                band,
                ": set higher than needed, nuisance trips likely (the unit stops on cool mornings); "
                "adjust to the recommended setting. The coil is still protected.",
            )
        else:
            res.say(*head, " is below the recommended ", band, ": too little margin; adjust up and retest")
        out.append(res)
    return out


def _implausible(slot, t: float, lo: float, hi: float, floor: float) -> Result:
    """A trip setting outside its plausible range that is not below the floor: a watch of the freeze-protection
    condition (not proven; freeze readiness never counts it as passed), with words saying so. The phone's twin:
    evaluate.js freezeTripChecks."""
    res = Result(
        check="limits",
        item=TRIP_ITEM,
        component=slot.component,
        verdict=Verdict.WATCH.value,
        condition_code=ITEM_CONDITIONS[TRIP_ITEM],
        method="reading against its plausible range: a setting outside it is not proven; "
        + (slot.item.limits_source or "common practice"),
        derived={
            "value": t,
            "ok_min": lo,
            "ok_max": hi,
            "watch_min": floor,
            "watch_open_high": True,
            "implausible": True,
        },
    )
    parts = set_aside_parts(slot.item, t, slot.limits)
    res.say(
        "freeze-protection trip temperature ",
        *parts[:-1],
        ": not proven that the coil is protected; re-check the reading",
    )
    return res
