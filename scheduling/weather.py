"""Outdoor-temperature providers: an HTTP JSON forecast, a CSV file, and the site's climate normals.

Each provider returns ``DailyTemperature`` rows. The HTTP client reads its URL
from ``settings.PLENUM_FORECAST_URL`` (``{lat}`` and ``{lon}`` placeholders are
filled in; without them ``latitude``/``longitude`` query parameters are added)
and takes a ``transport`` callable so tests can hand it recorded responses:
tests never touch the network.

Accepted JSON shapes:

* Plenum's own, simple shape::

      {"days": [{"date": "2025-10-01", "min_c": 3.5, "max_c": 12.0, "mean_c": 7.1}, ...]}

  (``mean_c`` optional);

* the widely used open "daily arrays" shape::

      {"daily": {"time": ["2025-10-01", ...],
                 "temperature_2m_min": [3.5, ...], "temperature_2m_max": [12.0, ...]}}
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import json
import math
import urllib.parse
import urllib.request
from collections.abc import Callable
from dataclasses import dataclass

from django.conf import settings

from engineering.freeze import daily_values_from_normals

Transport = Callable[[str, float], bytes]


class ForecastError(Exception):
    """The forecast could not be fetched or read; the message says why."""


@dataclass(frozen=True)
class DailyTemperature:
    date: dt.date
    min_c: float
    max_c: float
    mean_c: float | None = None


def urllib_transport(url: str, timeout: float) -> bytes:
    """GET ``url`` (http or https only) and return the body."""
    if urllib.parse.urlsplit(url).scheme not in {"http", "https"}:
        raise ForecastError(f"forecast URL {url!r} must start with http:// or https://")
    request = urllib.request.Request(  # noqa: S310 - scheme checked above
        url, headers={"Accept": "application/json", "User-Agent": "Plenum"}
    )
    try:
        with urllib.request.urlopen(request, timeout=timeout) as response:  # noqa: S310 - scheme checked above
            return response.read(2_000_000)
    except OSError as exc:
        raise ForecastError(f"forecast request to {url} failed: {exc}") from exc


def _number(value, where: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise ForecastError(f"{where}={value!r} is not a finite temperature in °C")
    if not -90 <= value <= 60:
        raise ForecastError(f"{where}={value!r} °C is outside −90 to 60 °C")
    return float(value)


def _day(value, where: str) -> dt.date:
    try:
        return dt.date.fromisoformat(str(value)[:10])
    except ValueError:
        raise ForecastError(f"{where}={value!r} is not a date as YYYY-MM-DD") from None


def parse_forecast(payload: bytes | str | dict) -> list[DailyTemperature]:
    """Daily min/max from either accepted JSON shape; days with a missing value are skipped."""
    if isinstance(payload, (bytes, str)):
        try:
            payload = json.loads(payload)
        except ValueError as exc:
            raise ForecastError(f"forecast is not JSON: {exc}") from exc
    if not isinstance(payload, dict):
        raise ForecastError("forecast JSON must be an object with 'days' or 'daily'")
    out: list[DailyTemperature] = []
    if isinstance(payload.get("days"), list):
        for i, item in enumerate(payload["days"]):
            if not isinstance(item, dict) or item.get("min_c") is None or item.get("max_c") is None:
                continue
            mean = item.get("mean_c")
            out.append(
                DailyTemperature(
                    date=_day(item.get("date"), f"days[{i}].date"),
                    min_c=_number(item["min_c"], f"days[{i}].min_c"),
                    max_c=_number(item["max_c"], f"days[{i}].max_c"),
                    mean_c=None if mean is None else _number(mean, f"days[{i}].mean_c"),
                )
            )
    elif isinstance(payload.get("daily"), dict):
        daily = payload["daily"]
        times = daily.get("time") or []
        mins = daily.get("temperature_2m_min") or []
        maxs = daily.get("temperature_2m_max") or []
        means = daily.get("temperature_2m_mean") or [None] * len(times)
        if not (len(times) == len(mins) == len(maxs)):
            raise ForecastError(
                f"daily.time ({len(times)}), temperature_2m_min ({len(mins)}) and temperature_2m_max ({len(maxs)})"
                " must have the same length"
            )
        for i, (t, lo, hi) in enumerate(zip(times, mins, maxs, strict=True)):
            if lo is None or hi is None:
                continue
            mean = means[i] if i < len(means) else None
            out.append(
                DailyTemperature(
                    date=_day(t, f"daily.time[{i}]"),
                    min_c=_number(lo, f"daily.temperature_2m_min[{i}]"),
                    max_c=_number(hi, f"daily.temperature_2m_max[{i}]"),
                    mean_c=None if mean is None else _number(mean, f"daily.temperature_2m_mean[{i}]"),
                )
            )
    else:
        raise ForecastError("forecast JSON has neither 'days' (a list) nor 'daily' (an object of arrays)")
    for row in out:
        if row.min_c > row.max_c:
            raise ForecastError(f"{row.date}: min_c={row.min_c} is above max_c={row.max_c}")
    return out


class HttpForecastProvider:
    """Daily forecast from an HTTP JSON endpoint."""

    source = "forecast"

    def __init__(self, *, url: str | None = None, transport: Transport | None = None, timeout: float = 10.0):
        self.url = url if url is not None else settings.PLENUM_FORECAST_URL
        self.transport = transport or urllib_transport
        self.timeout = timeout

    def url_for(self, site) -> str:
        if "{lat}" in self.url or "{lon}" in self.url:
            return self.url.format(lat=f"{site.latitude:.4f}", lon=f"{site.longitude:.4f}")
        sep = "&" if "?" in self.url else "?"
        query = urllib.parse.urlencode({"latitude": f"{site.latitude:.4f}", "longitude": f"{site.longitude:.4f}"})
        return f"{self.url}{sep}{query}"

    def daily(self, site) -> list[DailyTemperature]:
        if not self.url:
            raise ForecastError("no forecast URL configured (settings.PLENUM_FORECAST_URL is empty)")
        return parse_forecast(self.transport(self.url_for(site), self.timeout))


def parse_temperature_csv(text: str) -> dict[str, list[DailyTemperature]]:
    """Outdoor temperatures per site code from CSV.

    Daily rows: ``site_code,date,min_c,max_c[,mean_c]``. Hourly rows:
    ``site_code,timestamp,temperature_c`` (folded into daily min/max/mean).
    Raises ``ValueError`` listing every bad row.
    """
    reader = csv.DictReader(io.StringIO(text.lstrip("\ufeff")))
    header = {h.strip() for h in reader.fieldnames or []}
    daily = {"site_code", "date", "min_c", "max_c"} <= header
    hourly = {"site_code", "timestamp", "temperature_c"} <= header
    if not (daily or hourly):
        raise ValueError(
            "columns must be site_code,date,min_c,max_c[,mean_c] (daily) or site_code,timestamp,temperature_c (hourly)"
        )
    errors: list[str] = []
    hours: dict[tuple[str, dt.date], list[float]] = {}
    out: dict[str, list[DailyTemperature]] = {}
    for n, raw in enumerate(reader, start=2):
        row = {(k or "").strip(): (v or "").strip() for k, v in raw.items()}
        try:
            if daily:
                mean = row.get("mean_c") or None
                item = DailyTemperature(
                    date=_day(row["date"], "date"),
                    min_c=_number(_float(row["min_c"], "min_c"), "min_c"),
                    max_c=_number(_float(row["max_c"], "max_c"), "max_c"),
                    mean_c=None if mean is None else _number(_float(mean, "mean_c"), "mean_c"),
                )
                if item.min_c > item.max_c:
                    raise ForecastError(f"min_c={item.min_c} is above max_c={item.max_c}")
                out.setdefault(row["site_code"], []).append(item)
            else:
                day = _day(row["timestamp"], "timestamp")
                hours.setdefault((row["site_code"], day), []).append(
                    _number(_float(row["temperature_c"], "temperature_c"), "temperature_c")
                )
        except ForecastError as exc:
            errors.append(f"row {n}: {exc}")
    if errors:
        raise ValueError("; ".join(errors))
    for (code, day), values in sorted(hours.items()):
        out.setdefault(code, []).append(
            DailyTemperature(date=day, min_c=min(values), max_c=max(values), mean_c=sum(values) / len(values))
        )
    return out


def _float(raw: str, where: str) -> float:
    try:
        return float(raw)
    except ValueError:
        raise ForecastError(f"{where}={raw!r} is not a number in °C") from None


def normals_daily(site, *, start: dt.date, days: int) -> list[DailyTemperature]:
    """Daily min/max from the site's monthly normals (engineering.freeze, mid-month interpolation)."""
    lows = daily_values_from_normals(monthly_c=site.normals_min_c, start=start, days=days)
    highs = daily_values_from_normals(monthly_c=site.normals_max_c, start=start, days=days)
    return [DailyTemperature(date=d, min_c=lo, max_c=hi) for (d, lo), (_, hi) in zip(lows, highs, strict=True)]
