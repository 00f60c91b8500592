"""Season checks over a simulated year, forecasts and temperature imports."""

import datetime as dt
import json
from pathlib import Path

import pytest
import time_machine

from engineering.freeze import cooling_season_start, daily_values_from_normals, freeze_season_start
from scheduling.engine import work_orders_generate
from scheduling.models import OutdoorTemperature, WorkOrder, WorkOrderTask
from scheduling.services import outdoor_temperatures_import_csv, outdoor_temperatures_store, site_seasons_refresh
from scheduling.services.seasons import season_key
from scheduling.weather import DailyTemperature, ForecastError, HttpForecastProvider, parse_forecast
from tests.factories.inventory import AHUFactory, ComponentFactory, SiteFactory

pytestmark = pytest.mark.django_db
FIXTURES = Path(__file__).resolve().parents[2] / "scheduling" / "fixtures"

# Invented monthly normals for an invented inland site (°C, January first).
NORMALS_MIN = [-3.0, -2.0, 1.0, 4.0, 8.0, 11.0, 13.0, 13.0, 10.0, 6.0, 2.0, -1.0]
NORMALS_MAX = [3.0, 5.0, 10.0, 15.0, 19.0, 23.0, 26.0, 25.0, 20.0, 14.0, 8.0, 4.0]


def seasonal_unit():
    site = SiteFactory(
        normals_min_c=NORMALS_MIN,
        normals_max_c=NORMALS_MAX,
        preheat_threshold_c=5.0,
        cooling_threshold_c=24.0,
        time_zone="Europe/Berlin",
    )
    ahu = AHUFactory(building__site=site, service_start=dt.date(2024, 6, 1))
    ComponentFactory(
        ahu=ahu, kind="electric_preheater", name="Preheater", specs={"power_w": 24000, "stages": 2, "switch_on_c": 3}
    )
    ComponentFactory(
        ahu=ahu,
        kind="coil",
        name="Cooling coil",
        specs={"duty": "cooling", "fluid": "water", "design_capacity_w": 50000},
    )
    return site, ahu


def expected_starts(year):
    start = dt.date(year, 1, 1)
    lows = daily_values_from_normals(monthly_c=NORMALS_MIN, start=start, days=365)
    highs = daily_values_from_normals(monthly_c=NORMALS_MAX, start=start, days=365)
    return (
        freeze_season_start(daily_minimums=lows, threshold_c=5.0),
        cooling_season_start(daily_maximums=highs, threshold_c=24.0),
    )


def test_simulated_year_preheater_and_cooling_checks_fall_due_once_before_their_seasons(library):
    """Over a simulated year the freeze check falls due once, 14 days before the first day at 5 °C,
    and the cooling-coil check once, 21 days before the first 24 °C day."""
    site, ahu = seasonal_unit()
    org = site.organisation
    freeze_start, cooling_start = expected_starts(2025)
    assert dt.date(2025, 10, 1) < freeze_start < dt.date(2025, 11, 30)
    assert dt.date(2025, 6, 1) < cooling_start < dt.date(2025, 7, 31)
    day = dt.date(2025, 1, 1)
    while day.year == 2025:
        with time_machine.travel(dt.datetime(day.year, day.month, day.day, 6, tzinfo=dt.UTC), tick=False):
            site_seasons_refresh(site=site, today=day)
            work_orders_generate(organisation=org)
        day += dt.timedelta(days=1)
    freeze = list(WorkOrderTask.objects.filter(ahu=ahu, task_code="preheater_freeze"))
    cooling = list(WorkOrderTask.objects.filter(ahu=ahu, task_code="cooling_season_check"))
    assert [t.due_date for t in freeze] == [freeze_start - dt.timedelta(days=14)]
    assert [t.due_date for t in cooling] == [cooling_start - dt.timedelta(days=21)]
    assert freeze[0].component.name == "Preheater"


def test_season_check_due_at_once_when_the_window_has_opened(library):
    """Generated inside the lead window, the freeze check is due today, not in the past."""
    site, _ = seasonal_unit()
    freeze_start, _ = expected_starts(2025)
    today = freeze_start - dt.timedelta(days=5)
    site_seasons_refresh(site=site, today=today)
    work_orders_generate(organisation=site.organisation, today=today)
    assert WorkOrderTask.objects.get(task_code="preheater_freeze").due_date == today


def test_forecast_moves_the_freeze_start_earlier():
    """A recorded forecast with a cold snap sets the freeze season start from the forecast."""
    site, _ = seasonal_unit()
    body = (FIXTURES / "forecast_daily_arrays.json").read_bytes()
    provider = HttpForecastProvider(url="https://forecast.invalid/v1?x=1", transport=lambda url, timeout: body)
    site_seasons_refresh(site=site, today=dt.date(2025, 9, 28), provider=provider)
    site.refresh_from_db()
    assert site.freeze_season_start == dt.date(2025, 10, 3)
    assert site.season_source == "forecast"
    assert OutdoorTemperature.objects.filter(site=site, source="forecast").count() == 7


def test_forecast_urls_and_both_json_shapes():
    """The client fills the site's coordinates into the URL and reads both accepted JSON shapes."""
    site = SiteFactory(latitude=52.1, longitude=5.25)
    seen = []
    provider = HttpForecastProvider(
        url="https://forecast.invalid/daily?lat={lat}&lon={lon}",
        transport=lambda url, timeout: seen.append((url, timeout)) or b'{"days": []}',
    )
    assert provider.daily(site) == []
    assert seen == [("https://forecast.invalid/daily?lat=52.1000&lon=5.2500", 10.0)]
    own = parse_forecast((FIXTURES / "forecast_plenum.json").read_bytes())
    assert own[0].date == dt.date(2025, 10, 1) and own[0].min_c == 6.5 and own[0].mean_c == 9.0
    with pytest.raises(ForecastError, match="temperature_2m_min"):
        parse_forecast(
            json.dumps({"daily": {"time": ["2025-10-01"], "temperature_2m_min": [], "temperature_2m_max": [9]}})
        )
    with pytest.raises(ForecastError, match="not a finite temperature"):
        parse_forecast({"days": [{"date": "2025-10-01", "min_c": "cold", "max_c": 3}]})


def test_failing_forecast_falls_back_to_normals():
    """A forecast that cannot be fetched leaves the normals to give the season start."""
    site, _ = seasonal_unit()

    def broken(url, timeout):
        raise ForecastError("connection refused")

    site_seasons_refresh(
        site=site, today=dt.date(2025, 9, 1), provider=HttpForecastProvider(url="https://x.invalid/", transport=broken)
    )
    site.refresh_from_db()
    assert site.season_source == "normals"
    assert site.freeze_season_start == expected_starts(2025)[0]


def test_hourly_csv_import_folds_into_daily_values_and_refuses_bad_rows():
    """An hourly CSV becomes daily min/max/mean; a bad row stops the whole file with its row number."""
    site = SiteFactory(code="north")
    text = "site_code,timestamp,temperature_c\nnorth,2025-10-01T00:00,4.0\nnorth,2025-10-01T12:00,10.0\n"
    assert outdoor_temperatures_import_csv(organisation=site.organisation, text=text) == {"north": 1}
    row = OutdoorTemperature.objects.get(site=site)
    assert (row.min_c, row.max_c, row.mean_c, row.source) == (4.0, 10.0, 7.0, "csv")
    from django.core.exceptions import ValidationError

    with pytest.raises(ValidationError, match="row 3"):
        outdoor_temperatures_import_csv(
            organisation=site.organisation, text=text.replace("10.0", "warm").replace("10-01", "10-02")
        )
    assert OutdoorTemperature.objects.filter(site=site).count() == 1


def mild_unit():
    """A unit on an invented mild site whose normals never reach 5 °C nor 24 °C: only forecasts bring frost."""
    site = SiteFactory(
        normals_min_c=[8.0] * 12,
        normals_max_c=[15.0] * 12,
        preheat_threshold_c=5.0,
        cooling_threshold_c=24.0,
        latitude=52.0,
        time_zone="Europe/Amsterdam",
    )
    ahu = AHUFactory(building__site=site, service_start=dt.date(2026, 6, 1))
    ComponentFactory(
        ahu=ahu, kind="electric_preheater", name="Preheater", specs={"power_w": 24000, "stages": 2, "switch_on_c": 3}
    )
    return site, ahu


def forecast_with_frost_on(site, frost_day: dt.date):
    days = [
        DailyTemperature(date=dt.date(2026, 11, 20) + dt.timedelta(days=k), min_c=8.0, max_c=12.0) for k in range(60)
    ]
    days = [DailyTemperature(date=d.date, min_c=2.0, max_c=6.0) if d.date == frost_day else d for d in days]
    outdoor_temperatures_store(site=site, days=days, source="forecast")


def test_stored_forecast_counts_without_a_refresh_and_a_start_moving_past_new_year_moves_the_check(library):
    """The engine reads the stored forecast itself (no season refresh ran); when the forecast frost moves
    from 28 December to 3 January the freeze check moves with it and is still due exactly once."""
    site, ahu = mild_unit()
    forecast_with_frost_on(site, dt.date(2026, 12, 28))
    work_orders_generate(organisation=site.organisation, today=dt.date(2026, 12, 1))
    row = WorkOrderTask.objects.get(ahu=ahu, task_code="preheater_freeze")
    assert (row.due_date, row.occurrence_key) == (dt.date(2026, 12, 14), "freeze:2026")  # 14 days' lead
    visits = WorkOrder.objects.filter(ahu=ahu).count()

    forecast_with_frost_on(site, dt.date(2027, 1, 3))
    result = work_orders_generate(organisation=site.organisation, today=dt.date(2026, 12, 2))
    assert (result.created, result.moved) == (0, 1)
    rows = list(WorkOrderTask.objects.filter(ahu=ahu, task_code="preheater_freeze"))
    assert [(r.pk, r.due_date) for r in rows] == [(row.pk, dt.date(2026, 12, 20))]
    assert rows[0].work_order_id == row.work_order_id and WorkOrder.objects.filter(ahu=ahu).count() == visits


def test_normals_alone_bring_no_freeze_check_on_a_mild_site(library):
    """Without a forecast the mild site's normals never reach 5 °C, so no freeze check falls due."""
    site, ahu = mild_unit()
    work_orders_generate(organisation=site.organisation, today=dt.date(2026, 12, 1))
    assert not WorkOrderTask.objects.filter(ahu=ahu, task_code="preheater_freeze").exists()


@pytest.mark.parametrize(
    ("season", "start", "latitude", "key"),
    [
        ("freeze", dt.date(2026, 12, 28), 52.0, "freeze:2026"),
        ("freeze", dt.date(2027, 1, 3), 52.0, "freeze:2026"),
        ("freeze", dt.date(2026, 10, 15), 52.0, "freeze:2026"),
        ("cooling", dt.date(2027, 6, 20), 52.0, "cooling:2027"),
        # Southern hemisphere: freeze season around June, cooling around January.
        ("freeze", dt.date(2026, 6, 28), -33.9, "freeze:2026"),
        ("freeze", dt.date(2026, 7, 3), -33.9, "freeze:2026"),
        ("cooling", dt.date(2026, 12, 28), -33.9, "cooling:2026"),
        ("cooling", dt.date(2027, 1, 3), -33.9, "cooling:2026"),
    ],
)
def test_one_season_keeps_one_key_wherever_its_start_falls(season, start, latitude, key):
    """A season is filed under one year even when its start moves across the turn of the year."""
    assert season_key(season=season, start=start, latitude=latitude) == key
