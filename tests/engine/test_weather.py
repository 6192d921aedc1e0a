"""Hourly filling, daily statistics, typical weather and past-year samples."""

from __future__ import annotations

import json
from datetime import date
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from vega_datasets import data as vega_data

from engine.errors import InputError
from engine.weather import (
    TypicalWeather,
    celsius_to_fahrenheit,
    combined_hours,
    daily_stats,
    fahrenheit_to_celsius,
    fill_hourly,
    hourly_stations,
    local_hours,
    past_year_samples,
    typical_year,
)


def test_fahrenheit_celsius_fixed_points() -> None:
    # NIST SP 811 (2008), 4.2.1.1: t/°C = (t/°F − 32)/1.8 (from memory); the ice point is
    # 32 °F = 0 °C and the steam point 212 °F = 100 °C; −40 is the same on both scales.
    assert fahrenheit_to_celsius(np.array([32.0, 212.0, -40.0])).tolist() == [0.0, 100.0, -40.0]
    assert celsius_to_fahrenheit(37.0) == pytest.approx(98.6)
    temps = pd.Series([-12.5, 0.0, 18.3, 41.0])
    pd.testing.assert_series_equal(fahrenheit_to_celsius(celsius_to_fahrenheit(temps)), temps)


# --- fill_hourly ------------------------------------------------------------------------------


def _diurnal(index: pd.DatetimeIndex) -> np.ndarray:
    """A purely daily-periodic temperature: every day the same, so neighbours are exact."""
    hours = index.hour.to_numpy() + index.minute.to_numpy() / 60
    return 9.0 + 5.0 * np.sin(2 * np.pi * (hours - 9) / 24)


def test_fill_hourly_averages_interpolates_and_reports() -> None:
    index = pd.date_range("2032-04-01", "2032-04-20 23:45", freq="15min", tz="UTC")
    ramp = pd.Series(np.arange(len(index)) * 0.01, index=index)  # linear in time
    short_gap = ramp.drop(ramp.loc["2032-04-03 10:00":"2032-04-03 14:59"].index)  # 5 h
    long_gap = short_gap.drop(short_gap.loc["2032-04-10 00:00":"2032-04-11 05:59"].index)  # 30 h

    filled = fill_hourly(long_gap)
    truth = ramp.resample("h").mean()  # hourly mean of the four quarter-hours
    assert filled.hourly.index.equals(truth.index) and str(filled.hourly.index.tz) == "UTC"
    # A straight line is interpolated exactly across the short gap.
    np.testing.assert_allclose(filled.hourly.loc["2032-04-03"], truth.loc["2032-04-03"])
    assert filled.source.loc["2032-04-03 10:00":"2032-04-03 14:00"].eq("interpolated").all()
    assert filled.source.loc["2032-04-03 09:00"] == "measured"

    [gap] = filled.long_gaps
    assert gap.start == pd.Timestamp("2032-04-10 00:00", tz="UTC")
    assert gap.end == pd.Timestamp("2032-04-11 06:00", tz="UTC")
    assert gap.hours == 30 and not gap.filled
    assert filled.hourly.loc["2032-04-10"].isna().all()
    assert filled.source.loc["2032-04-10"].eq("missing").all()


def test_fill_hourly_borrows_same_hours_of_neighbour_days() -> None:
    index = pd.date_range("2032-01-01", "2032-01-31 23:00", freq="h", tz="UTC")
    truth = pd.Series(_diurnal(index), index=index)
    holed = truth.drop(truth.loc["2032-01-12 03:00":"2032-01-15 20:00"].index)  # 90 h
    filled = fill_hourly(holed, max_gap_hours=4, fill_long_gaps=True)
    np.testing.assert_allclose(filled.hourly.to_numpy(), truth.to_numpy())
    assert filled.source.loc["2032-01-13"].eq("neighbour_days").all()
    assert filled.long_gaps[0].filled and filled.long_gaps[0].hours == 90
    # Too far from any day with readings: stays missing and says so.
    far = fill_hourly(holed, fill_long_gaps=True, neighbour_days=1)
    assert far.source.loc["2032-01-13 12:00"] == "missing"
    assert not far.long_gaps[0].filled


def test_neighbour_fill_averages_the_nearest_day_each_side() -> None:
    index = pd.date_range("2032-02-01", "2032-02-06 23:00", freq="h", tz="UTC")
    temps = pd.Series(np.where(index < pd.Timestamp("2032-02-04", tz="UTC"), 10.0, 20.0), index)
    holed = temps.drop(temps.loc["2032-02-03 00:00":"2032-02-04 05:00"].index)  # 30 h
    filled = fill_hourly(holed, fill_long_gaps=True)
    # Every missing hour's nearest same-hour reading is 10 before the gap and 20 after it.
    assert filled.hourly.loc["2032-02-03 00:00":"2032-02-04 05:00"].eq(15.0).all()


def test_fill_hourly_needs_readings_and_a_time_zone() -> None:
    with pytest.raises(InputError, match="no temperature readings"):
        fill_hourly(pd.Series([np.nan], index=pd.DatetimeIndex(["2032-01-01"], tz="UTC")))
    with pytest.raises(ValueError, match="tz-aware"):
        fill_hourly(pd.Series([1.0], index=pd.DatetimeIndex(["2032-01-01"])))


# --- daily_stats ------------------------------------------------------------------------------


def _seattle_hourly_2010() -> pd.DataFrame:
    path = Path(vega_data.seattle_temps.filepath)
    assert path.is_file()  # the copy shipped inside vega_datasets, no download
    table = pd.read_csv(path)
    table["date"] = pd.to_datetime(table["date"], format="%Y/%m/%d %H:%M")
    return table


@pytest.mark.slow
def test_daily_stats_on_seattle_hourly_matches_plain_pandas() -> None:
    table = _seattle_hourly_2010()  # temperatures in °F
    # Taking the stamps as fixed UTC−8 makes the site's local days the file's own dates.
    stamps = pd.DatetimeIndex(table["date"]).tz_localize("Etc/GMT+8").tz_convert("UTC")
    temps = pd.Series(table["temp"].to_numpy(), index=stamps)
    ours = daily_stats(temps, "Etc/GMT+8")
    by_date = table.groupby(table["date"].dt.normalize())["temp"]
    np.testing.assert_allclose(ours["tmean"], by_date.mean())
    np.testing.assert_allclose(ours["tmax"], by_date.max())
    np.testing.assert_allclose(ours["tmin"], by_date.min())
    assert ours["hours"].tolist() == by_date.count().tolist()
    assert len(ours) == 365 and ours.index[0] == pd.Timestamp("2010-01-01")


def test_daily_stats_uses_local_days_and_hourly_means() -> None:
    # Quarter-hourly readings for one hour and a single reading in another: the day's mean
    # weights hours, not readings. Local days in Sydney (UTC+11 in January).
    stamps = pd.DatetimeIndex(
        [
            *("2032-01-04 13:00", "2032-01-04 13:15", "2032-01-04 13:30", "2032-01-04 13:45"),
            *("2032-01-04 14:00", "2032-01-04 12:30"),
        ],
        tz="UTC",
    )
    temps = pd.Series([20.0, 20.0, 20.0, 24.0, 30.0, 10.0], index=stamps)
    daily = daily_stats(temps, "Australia/Sydney")
    assert daily.index.tolist() == [pd.Timestamp("2032-01-04"), pd.Timestamp("2032-01-05")]
    assert daily.loc["2032-01-04", "tmean"] == 10.0  # 12:30 UTC is 23:30 local
    assert daily.loc["2032-01-05", "tmean"] == pytest.approx((21.0 + 30.0) / 2)
    assert daily.loc["2032-01-05", "tmax"] == 30.0 and daily.loc["2032-01-05", "hours"] == 2


# --- typical weather --------------------------------------------------------------------------


def _invented_station(years: range, timezone: str = "America/Regina") -> pd.Series:
    """Hourly temperatures of an invented prairie campus with a known annual and daily cycle."""
    index = local_hours(date(years.start, 1, 1), date(years.stop - 1, 12, 31), timezone)
    local = index.tz_convert(timezone).tz_localize(None)
    days = local.normalize()
    fraction = (days.day_of_year.to_numpy() - 0.5) / np.where(days.is_leap_year, 366, 365)
    daily_mean = 8.0 - 14.0 * np.cos(2 * np.pi * fraction) + 2.0 * np.sin(4 * np.pi * fraction)
    hour = local.hour.to_numpy()
    return pd.Series(daily_mean + 5.0 * np.sin(2 * np.pi * (hour - 9) / 24), index=index)


def test_typical_year_recovers_a_known_climate() -> None:
    # A zone without daylight saving keeps every day at 24 hours, so the truth is exact.
    history = _invented_station(range(2026, 2029))
    typical = typical_year(history, "America/Regina")
    assert typical.years == (2026, 2027, 2028)

    future = _invented_station(range(2033, 2034))
    predicted = typical.hourly(date(2033, 1, 1), date(2033, 12, 31))
    assert predicted.index.equals(future.index)
    # The daily cycle is a pure 24-h sinusoid, so each day's mean is the annual curve, which
    # lies in the span of three annual harmonics; the diurnal table is the sinusoid itself.
    np.testing.assert_allclose(predicted.to_numpy(), future.to_numpy(), atol=1e-9)


def test_typical_year_in_a_daylight_saving_zone_keeps_local_clock_shape() -> None:
    zone = "America/Chicago"
    typical = typical_year(_invented_station(range(2026, 2028), zone), zone)
    predicted = typical.hourly(date(2033, 7, 1), date(2033, 7, 1))
    local_hour = predicted.index.tz_convert(zone).hour
    # Coolest at 03:00 and warmest at 15:00 local clock time, as the invented station is.
    assert local_hour[predicted.argmin()] == 3 and local_hour[predicted.argmax()] == 15


def test_typical_year_survives_json_and_needs_a_year() -> None:
    history = _invented_station(range(2026, 2027))
    typical = typical_year(history, "America/Regina", harmonics=2)
    again = TypicalWeather.from_dict(json.loads(json.dumps(typical.to_dict())))
    assert again == typical
    with pytest.raises(InputError, match="July, August"):
        typical_year(history.loc[:"2026-06-30"], "America/Regina")


@pytest.mark.slow
def test_typical_year_on_seattle_is_close_to_its_monthly_means() -> None:
    table = _seattle_hourly_2010()
    stamps = pd.DatetimeIndex(table["date"]).tz_localize("Etc/GMT+8").tz_convert("UTC")
    temps_c = pd.Series(fahrenheit_to_celsius(table["temp"].to_numpy()), index=stamps)
    typical = typical_year(temps_c, "Etc/GMT+8")
    predicted = typical.hourly(date(2031, 1, 1), date(2031, 12, 31))
    by_month_typical = predicted.groupby(predicted.index.month).mean()
    by_month_actual = temps_c.groupby(temps_c.index.month).mean()
    # One year smoothed to three harmonics: monthly means within 1.5 K (plausibility), and the
    # mean diurnal range per month (afternoon warmer than dawn) has the right sign.
    assert np.abs(by_month_typical.to_numpy() - by_month_actual.to_numpy()).max() < 1.5
    diurnal = np.asarray(typical.diurnal)
    assert (diurnal[:, 15] > diurnal[:, 5]).all()


# --- past-year samples ------------------------------------------------------------------------


def _stamped_history(timezone: str) -> pd.Series:
    """Each hour's value encodes its own local year, month, day and hour: YYYYMMDD.HH."""
    index = local_hours(date(2019, 1, 1), date(2023, 12, 31), timezone)
    local = index.tz_convert(timezone).tz_localize(None)
    code = local.year * 10_000 + local.month * 100 + local.day + local.hour / 100
    return pd.Series(np.asarray(code, dtype=float), index=index)


def test_past_year_samples_align_by_month_day_and_hour() -> None:
    zone = "Europe/Dublin"
    history = _stamped_history(zone)
    samples = past_year_samples(history, date(2024, 2, 27), date(2024, 3, 2), zone)
    assert samples.columns.tolist() == [2023, 2022, 2021, 2020, 2019]
    assert samples.index.equals(local_hours(date(2024, 2, 27), date(2024, 3, 2), zone))
    at = pd.Timestamp("2024-03-01 13:00", tz=zone).tz_convert("UTC")
    assert samples.loc[at, 2021] == pytest.approx(20210301.13)
    # 29 February 2024 takes the 28th where the past year has none, and the 29th in 2020.
    leap = pd.Timestamp("2024-02-29 06:00", tz=zone).tz_convert("UTC")
    assert samples.loc[leap, 2023] == pytest.approx(20230228.06)
    assert samples.loc[leap, 2020] == pytest.approx(20200229.06)


def test_past_year_samples_across_new_year_and_daylight_saving() -> None:
    zone = "America/New_York"
    history = _stamped_history(zone)
    winter = past_year_samples(history, date(2023, 12, 30), date(2024, 1, 2), zone)
    assert winter.columns.tolist() == [2022, 2021, 2020, 2019]
    jan = pd.Timestamp("2024-01-02 08:00", tz=zone).tz_convert("UTC")
    assert winter.loc[jan, 2022] == pytest.approx(20230102.08)
    # New York skipped 02:00 on 14 March 2021 (daylight saving began), but 14 March 2025 has
    # it: the past year's missing hour is interpolated from its neighbours.
    spring = past_year_samples(history, date(2025, 3, 14), date(2025, 3, 14), zone)
    skipped = pd.Timestamp("2025-03-14 02:00", tz=zone).tz_convert("UTC")
    assert spring.loc[skipped, 2021] == pytest.approx((20210314.01 + 20210314.03) / 2)


def test_past_year_samples_leave_out_years_with_long_gaps() -> None:
    zone = "UTC"
    history = _stamped_history(zone)
    holed = history.drop(history.loc["2021-07-10 00:00":"2021-07-11 12:00"].index)
    samples = past_year_samples(holed, date(2024, 7, 1), date(2024, 7, 31), zone)
    assert 2021 not in samples.columns and 2022 in samples.columns
    with pytest.raises(InputError, match="no past year"):
        past_year_samples(holed.loc[:"2019-06-01"], date(2024, 7, 1), date(2024, 7, 31), zone)


def test_a_weather_file_on_local_clock_time_across_both_clock_changes_is_stored(tmp_path):
    # Local stamps written hour by hour straight through the calendar, as many loggers do: the
    # hour clocks skip in spring lands on the next one, which is then read twice (IANA zone
    # Europe/Dublin: 2021-03-28 01:00 does not exist; 2021-10-31 01:00 happens twice).
    from engine.project import Project
    from engine.reading import ReadOptions
    from engine.steps.importing import create_project, read_project_files

    hours = pd.date_range("2021-03-27", "2021-11-01", freq="h")
    weather = tmp_path / "station.csv"
    weather.write_text(
        "Time,Dry bulb (°C)\n"
        + "\n".join(f"{t:%Y-%m-%d %H:%M},{10 + i % 7}" for i, t in enumerate(hours))
    )
    meters = tmp_path / "meter.csv"
    meters.write_text("Time,Hall (kWh)\n" + "\n".join(f"{t:%Y-%m-%d %H:%M},5" for t in hours[:48]))
    files = read_project_files([meters], (), [weather], ReadOptions(timezone="Europe/Dublin"))
    path = tmp_path / "site.loadledger"
    create_project(path, files, timezone="Europe/Dublin").close()
    with Project.open(path) as project:
        stored = project.load_weather()
    assert stored.index.is_unique and stored.index.is_monotonic_increasing
    assert len(stored) == len(files.weather[0].temps_c)


def test_typical_years_are_learned_once_and_equal_typical_year() -> None:
    from engine.weather import TypicalYears

    history = _invented_station(range(2026, 2029))
    shared = TypicalYears(history, "America/Regina")
    cut = pd.Timestamp("2028-06-01", tz="UTC")
    first = shared.before(cut)
    assert shared.before(cut) is first  # learned once
    assert first == typical_year(history[history.index < cut], "America/Regina")
    too_early = pd.Timestamp("2026-03-01", tz="UTC")  # two months of history: no typical year
    for _ in range(2):
        with pytest.raises(InputError, match="typical"):
            shared.before(too_early)


def combined_stations(stations: list[pd.Series]) -> pd.Series:
    """The site series from raw station readings, as the site's weather step makes it."""
    return combined_hours(hourly_stations(dict(enumerate(stations))).values())


def test_combined_stations_keep_the_main_station_and_fill_only_its_missing_hours() -> None:
    hours = pd.date_range("2026-01-01", periods=6, freq="h", tz="UTC")
    main = pd.Series([1.0, 2.0, np.nan, 4.0, 5.0, 6.0], index=hours)  # 5 hours
    # A backup reading every 30 minutes (averaged per hour), on another zone's clock, warmer.
    halves = pd.date_range("2026-01-01", periods=12, freq="30min", tz="UTC")
    backup = pd.Series(np.arange(12.0) + 100, index=halves.tz_convert("Europe/Berlin"))
    short = pd.Series([-5.0], index=hours[:1])
    site = combined_stations([short, backup.iloc[:6], main])
    assert site.index.equals(hours) and site.name == "site"
    # the main station's hours as they are, never averaged with the backup's
    assert site.drop(hours[2]).tolist() == [1.0, 2.0, 4.0, 5.0, 6.0]
    assert site[hours[2]] == pytest.approx((104 + 105) / 2)  # the hour it lacked, hour-averaged
    with pytest.raises(ValueError):
        combined_stations([])
