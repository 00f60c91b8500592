"""Filter banks: the loading against the clean-to-final span with its change forecast, and the reading just
after a change against the rated clean pressure drop."""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from typing import Any

from engineering import filters
from engineering.controls import Verdict
from engineering.errors import EngineeringInputError
from engineering.filters import FilterPoint
from inspections.display import refusal_parts
from inspections.reasons import q as qty
from inspections.selectors.filter_banks import filter_design_airflow_m3s

from .form import Form, supply_airflow
from .results import Result


def _fmt_date(d: dt.date | dt.datetime | None) -> str:
    if d is None:
        return "no date (run-hour rate unknown)"
    d = d.date() if isinstance(d, dt.datetime) else d
    return f"{d.day} {d:%B %Y}"


def kept_dp(pa: float) -> float:
    """A pressure drop at design airflow as the record keeps it (a tenth of a pascal); the words say this value,
    so the reason and the record's rows never show two roundings of one number (120.46 Pa: "120 Pa" in both,
    never "121 Pa" beside "120 Pa"). The phone's twin: evaluate.js keptDp."""
    return round(pa, 1)


def _filter_derived(*, dp: float, q: float, q_how: str, design_q: float, clean: float, judged: Any) -> dict[str, Any]:
    """The derived values both filter checks keep: the reading, its airflow, and its correction to design
    airflow against the clean pressure drop (``judged``: a FilterLoading or a FilterAfterChange)."""
    return {
        "dp_pa": dp,
        "airflow_m3s": q,
        "airflow_source": q_how,
        "design_airflow_m3s": design_q,
        "corrected_dp_pa": kept_dp(judged.corrected_dp_pa),
        "clean_dp_pa": clean,
        "fraction_of_clean_pct": round(judged.fraction_of_clean * 100, 1),
        "media_bypass_suspected": judged.media_bypass_suspected,
    }


# Why a judged filter has no forecast, kept in the evaluation's derived values (``forecast_note``) for the tables
# (reports.compliance.outlook.stored_filter_outlook says them in words).
BELOW_CLEAN_NOTE = "below its clean pressure drop: no loading to forecast from"
RECHECK_NOTE = "re-check: this reading and the earlier values of these filters disagree"


def _fallen_since_last(form: Form, res: Result, *, bank, design_q: float, loading: Any) -> Result | None:
    """``res`` judged WATCH and worded when this reading at design airflow is below
    ``filters.FALL_WATCH_FRACTION`` of the last value of the same filters (a technician's reading or a trend day):
    a filter's pressure drop does not fall in service without a change, so the gauge or sensor, its tubing or
    the media is at fault and neither value is trusted for a forecast. None when it has not fallen so far."""
    earlier = form.filter_points(bank)
    if not earlier or form.text("filter_replace.replaced", bank) == "ok":
        return None
    last = earlier[-1]
    try:
        last_dp = filters.corrected_pressure_drop(
            dp_pa=last.dp_pa, airflow_m3s=last.airflow_m3s, design_airflow_m3s=design_q
        )
    except EngineeringInputError:
        return None
    if last_dp <= 0 or round(loading.corrected_dp_pa / last_dp, 9) >= filters.FALL_WATCH_FRACTION:
        return None
    if res.verdict == Verdict.OK:
        res.verdict = Verdict.WATCH
    res.derived.update(last_corrected_dp_pa=kept_dp(last_dp), forecast_note=RECHECK_NOTE)
    res.say(
        f"{bank.name}: filter reads ",
        qty(kept_dp(loading.corrected_dp_pa), "pressure"),
        f" at design airflow, {loading.corrected_dp_pa / last_dp * 100:.0f} % of the last value of these filters (",
        qty(kept_dp(last_dp), "pressure"),
        f" on {_fmt_date(last.when)}): a filter's pressure drop does not fall without a change; re-check the "
        "gauge or sensor and its tubing, and look for torn, missing or bypassed media "
        f"(watch below {filters.FALL_WATCH_FRACTION * 100:.0f} % of the last value)",
    )
    return res


def _no_forecast_words(exc: EngineeringInputError) -> str:
    """Why a filter bank has no change date, in plain words (the refusal of ``filters.filter_forecast``)."""
    if exc.allowed == "a rising pressure drop":
        return "; the trend gives no change date (pressure drop not rising)"
    if exc.allowed == "at least 3 usable readings":
        n = exc.value
        return (
            f"; no change forecast yet: {n} reading{'' if n == 1 else 's'} of the filters now fitted, "
            "a forecast needs at least 3"
        )
    return "; no change forecast yet"


def filter_loading_checks(form: Form, consumed: set) -> list[Result]:
    """Each filter bank's pressure drop, corrected to design airflow, against its clean-to-final span, with the
    change forecast from the readings since the last change (``_loading_forecast``)."""
    out = []
    q, q_how = supply_airflow(form)
    for bank in (c for c in form.components if c.kind == "filter_bank"):
        dp = form.num("filter_check.dp", bank)
        if dp is None:
            continue
        consumed.add(("filter_check.dp", bank.pk))
        specs = bank.specs
        design_q = filter_design_airflow_m3s(component=bank, ahu=form.ahu)
        res = Result(check="filter_loading", item="filter_check.dp", component=bank, condition_code="filter_loaded")
        missing = next((w for k, w in (("clean_dp_pa", "clean"), ("final_dp_pa", "final")) if k not in specs), None)
        if missing is not None:
            # Said in plain words: a reader never sees a registry field name.
            res.verdict = Verdict.WATCH
            res.reason = (
                f"cannot judge the filter loading: the filter bank has no {missing} pressure drop in the registry"
            )
            out.append(res)
            continue
        try:
            loading = filters.filter_loading(
                dp_pa=dp,
                airflow_m3s=q,
                design_airflow_m3s=design_q,
                clean_dp_pa=specs["clean_dp_pa"],
                final_dp_pa=specs["final_dp_pa"],
            )
        except EngineeringInputError as exc:
            res.verdict = Verdict.WATCH
            res.say("cannot judge the filter loading: ", refusal_parts(exc))
            out.append(res)
            continue
        pct = filters.loading_percent(loading.fraction_of_span)  # kept and said the same (one decimal, said whole)
        res.verdict = loading.verdict.value
        res.derived = {
            **_filter_derived(dp=dp, q=q, q_how=q_how, design_q=design_q, clean=specs["clean_dp_pa"], judged=loading),
            "loading_pct": pct,
            "final_dp_pa": specs["final_dp_pa"],
        }
        res.method = (
            f"Δp × (Q_design/Q)^{filters.DEFAULT_EXPONENT:g} against the clean-to-final span; below "
            f"{filters.BYPASS_FAIL_FRACTION * 100:.0f} % of clean fails, below "
            f"{filters.BYPASS_WATCH_FRACTION * 100:.0f} % watch (missing, torn or bypassed media; common practice); "
            f"airflow: {q_how}"
        )
        if loading.media_bypass_suspected:
            # A reading below clean says nothing about loading: no forecast from it.
            res.say(
                f"{bank.name}: filter reads ",
                qty(kept_dp(loading.corrected_dp_pa), "pressure"),
                f" at design airflow, {loading.fraction_of_clean * 100:.0f} % of its clean pressure drop ",
                qty(specs["clean_dp_pa"], "pressure"),
                ": "
                + (
                    "missing, torn or bypassed media"
                    if res.verdict == Verdict.FAIL
                    else "lower than a filter in service should read, check for torn or bypassed media"
                )
                + f" (fail below {filters.BYPASS_FAIL_FRACTION * 100:.0f} %, watch below "
                f"{filters.BYPASS_WATCH_FRACTION * 100:.0f} % of clean)",
            )
            out.append(res)
            continue
        if (fallen := _fallen_since_last(form, res, bank=bank, design_q=design_q, loading=loading)) is not None:
            out.append(fallen)
            continue
        if not forecast_said(loading.fraction_of_span):
            # Below clean, not so far as to suspect bypassed media: no loading to say, nor to forecast from.
            res.say(
                f"{bank.name}: filter reads ",
                qty(kept_dp(loading.corrected_dp_pa), "pressure"),
                " at design airflow, below its clean pressure drop ",
                qty(specs["clean_dp_pa"], "pressure"),
                f" ({loading.fraction_of_clean * 100:.0f} % of clean; {filters.BELOW_CLEAN_RULE}): "
                "no loading to forecast from",
            )
            res.derived["forecast_note"] = BELOW_CLEAN_NOTE
            out.append(res)
            continue
        forecast_text = _loading_forecast(form, res, bank=bank, dp=dp, q=q, design_q=design_q, loading=loading)
        res.say(
            f"{bank.name}: filter at {pct:.0f} % of its span after correcting to design airflow (",
            qty(kept_dp(loading.corrected_dp_pa), "pressure"),
            " at design, clean ",
            qty(specs["clean_dp_pa"], "pressure"),
            ", final ",
            qty(specs["final_dp_pa"], "pressure"),
            f"){forecast_text}",
        )
        out.append(res)
    return out


@dataclass(frozen=True)
class ForecastSaid:
    verdict: str  # the reading's verdict beside its forecast: an "ok" the line says is due now reads "watch"
    words: str
    recheck: bool  # the line says change now, the reading does not: both to be re-checked


RECHECK_WORDS = (
    "the trend of the earlier values is at its final pressure drop but this reading is not: "
    "re-check the gauge or sensor and its tubing before changing the filters"
)


OVER_FINAL_WORDS = "at or over its final pressure drop: change now"


def forecast_said(fraction_of_span: float | None) -> bool:
    """Whether a filter reading's change forecast is said beside it: only beside a reading judged against its
    clean-to-final span (``fraction_of_span``, None when it could not be: no clean or final value in the registry)
    at or above its clean value. A reading below clean — torn or bypassed media, or filters that read low — says
    nothing of loading, so no forecast (nor "change now") stands beside it. Technicians' readings and
    building-automation trend days are said by this one rule."""
    return fraction_of_span is not None and round(fraction_of_span, 9) >= 0


def forecast_agreeing(fc: filters.FilterForecast, *, verdict: str, over_final: bool = False) -> ForecastSaid:
    """A filter reading's change forecast in words that agree with the reading's own ``verdict``: the line through
    the earlier values and this one (``FilterLife.forecast_points``) at its final pressure drop says "change now"
    beside a failed reading; beside one that has not failed, the row never says both "ok" (or "watch") and "change
    now": the reading is watched and both are to be re-checked (the newest reading is not outvoted). Technicians'
    readings and building-automation trend days are worded by this one rule (the phone's twin: evaluate.js); a
    reading not judged (``verdict`` "") has no verdict to disagree with. A reading at or over its final value
    (``over_final``) is to be changed now, never on a date ahead."""
    if over_final:
        return ForecastSaid(verdict, OVER_FINAL_WORDS, recheck=False)
    if not fc.at_final_now:
        return ForecastSaid(verdict, f"change forecast {_fmt_date(fc.date_at_final)}", recheck=False)
    if verdict in (Verdict.FAIL, ""):  # failed, or not judged (no clean value): no verdict says otherwise
        return ForecastSaid(verdict, "at its final pressure drop by the trend: change now", recheck=False)
    return ForecastSaid(Verdict.WATCH.value, RECHECK_WORDS, recheck=True)


def _loading_forecast(form: Form, res: Result, *, bank, dp: float, q: float, design_q: float, loading: Any) -> str:
    """The words of a loaded bank's change forecast (from the readings since its last change and this one); the
    forecast's numbers go into ``res.derived`` and its method onto ``res.method``."""
    specs = bank.specs
    forecast_text = ""
    hours = form.num("visit.run_hours")
    if form.text("filter_replace.replaced", bank) == "ok":
        # Read before the change: the removed filters' state, the evidence for the change. They are gone,
        # so no forecast for them; the new filters' forecast starts from the reading after the change.
        forecast_text = "; the reading before the change: these filters were replaced on this visit"
        res.derived["replaced_on_visit"] = True
    elif hours is not None:
        # This reading joins the earlier points on one meter (``FilterLife.forecast_points``): the newest evidence.
        points = form.filter_points(bank, FilterPoint(run_hours=hours, dp_pa=dp, airflow_m3s=q, when=form.finished_at))
        try:
            fc = filters.filter_forecast(points=points, design_airflow_m3s=design_q, final_dp_pa=specs["final_dp_pa"])
        except EngineeringInputError as exc:
            forecast_text = _no_forecast_words(exc)
            res.derived["forecast_note"] = str(exc)
        else:
            res.derived.update(
                {
                    "forecast_run_hours": round(fc.run_hours_at_final),
                    "forecast_change_date": fc.date_at_final.isoformat() if fc.date_at_final else None,
                    "forecast_earliest_date": fc.date_low.isoformat() if fc.date_low else None,
                    "forecast_latest_date": fc.date_high.isoformat() if fc.date_high else None,
                    "rate_pa_per_hour": round(fc.rate_pa_per_hour, 4),
                    "points_used": fc.points_used,
                    "forecast_at_final_now": fc.at_final_now,
                }
            )
            res.method += "; forecast: " + fc.method
            said = forecast_agreeing(fc, verdict=res.verdict)
            res.verdict = said.verdict
            forecast_text = f"; {said.words}"
            if said.recheck:
                res.derived.update(forecast_at_final_now=False, forecast_change_date=None, forecast_note=RECHECK_NOTE)
    if round(loading.fraction_of_span, 9) >= 1.0 and not res.derived.get("replaced_on_visit"):
        # At or over the final value: change now, never a date ahead or "no date".
        forecast_text = f"; {OVER_FINAL_WORDS}"
        res.derived["forecast_at_final_now"] = True
    return forecast_text


def filter_change_checks(form: Form, consumed: set) -> list[Result]:
    """The pressure drop read just after a filter change, against the bank's rated clean value."""
    out = []
    q, q_how = supply_airflow(form)
    for bank in (c for c in form.components if c.kind == "filter_bank"):
        dp = form.num("filter_replace.dp_after", bank)
        clean = bank.specs.get("clean_dp_pa")
        if dp is None or clean is None:
            continue
        consumed.add(("filter_replace.dp_after", bank.pk))
        design_q = filter_design_airflow_m3s(component=bank, ahu=form.ahu)
        res = Result(
            check="filter_after_change", item="filter_replace.dp_after", component=bank, condition_code="filter_loaded"
        )
        try:
            chk = filters.filter_after_change(dp_pa=dp, airflow_m3s=q, design_airflow_m3s=design_q, clean_dp_pa=clean)
        except EngineeringInputError as exc:
            res.verdict = Verdict.WATCH
            res.say(f"{bank.name}: cannot judge the pressure drop after the change: ", refusal_parts(exc))
            out.append(res)
            continue
        tol = filters.AFTER_CHANGE_TOLERANCE
        res.verdict = chk.verdict.value
        res.derived = _filter_derived(dp=dp, q=q, q_how=q_how, design_q=design_q, clean=clean, judged=chk)
        res.method = (
            f"Δp × (Q_design/Q)^{filters.DEFAULT_EXPONENT:g} against the rated clean pressure drop: ok within "
            f"±{tol * 100:.0f} %, fail below {filters.BYPASS_FAIL_FRACTION * 100:.0f} % or above "
            f"{filters.AFTER_CHANGE_HIGH_FAIL * 100:.0f} % (common practice); airflow: {q_how}"
        )
        r = round(chk.fraction_of_clean, 9)
        if chk.media_bypass_suspected:
            what = "missing, torn or bypassed media"
        elif r < 1.0 - tol:
            what = "lower than a new filter should read, check the media is seated and sealed"
        elif r > 1.0 + tol:
            what = "higher than a new filter should read, check the class and size fitted and the gauge lines"
        else:
            what = "as rated"
        res.say(
            f"{bank.name}: after the change the filter reads ",
            qty(kept_dp(chk.corrected_dp_pa), "pressure"),
            f" at design airflow, {chk.fraction_of_clean * 100:.0f} % of its rated clean pressure drop ",
            qty(clean, "pressure"),
            f": {what} (ok within ±{tol * 100:.0f} %, fail below {filters.BYPASS_FAIL_FRACTION * 100:.0f} % "
            f"or above {filters.AFTER_CHANGE_HIGH_FAIL * 100:.0f} %)",
            _after_change_forecast(form, res, bank=bank, dp=dp, q=q, design_q=design_q),
        )
        out.append(res)
    return out


def _after_change_forecast(form: Form, res: Result, *, bank, dp: float, q: float, design_q: float) -> str:
    """The new filters' forecast on the visit that fitted them: their only reading is the one after the
    change, so the words say how many readings there are (never a date from the removed filters')."""
    final = bank.specs.get("final_dp_pa")
    hours = form.num("visit.run_hours")
    if final is None or hours is None:
        return ""
    point = FilterPoint(run_hours=hours, dp_pa=dp, airflow_m3s=q, when=form.finished_at.date())
    try:
        filters.filter_forecast(points=[point], design_airflow_m3s=design_q, final_dp_pa=final)
    except EngineeringInputError as exc:
        res.derived["forecast_note"] = str(exc)
        return _no_forecast_words(exc)
    return ""
