"""The typical week: local hour-of-week places and robust statistics, checked another way."""

from __future__ import annotations

from datetime import UTC, datetime
from zoneinfo import ZoneInfo

import numpy as np
import pandas as pd
from scipy.stats import median_abs_deviation, norm

from engine.cleaning.pattern import MAD_TO_SD, day_places, week_places, weekly_pattern

QUARTER_HOUR = pd.Timedelta(minutes=15)


def test_hour_of_week_follows_the_site_clock_across_both_clock_changes():
    # EU Directive 2000/84/EC, Arts. 2–3 (from memory): summer time starts and ends at 01:00 UTC
    # on the last Sunday of March and of October: in 2024, 31 March and 27 October.
    index = pd.DatetimeIndex(
        [
            *pd.date_range("2024-03-30 22:00", "2024-03-31 03:00", freq="15min", tz="UTC"),
            *pd.date_range("2024-10-26 22:00", "2024-10-27 03:00", freq="15min", tz="UTC"),
        ]
    )
    places = week_places(index, "Europe/Berlin", QUARTER_HOUR)
    berlin = ZoneInfo("Europe/Berlin")
    expected = []
    for stamp in index:
        local = datetime.fromtimestamp(stamp.timestamp(), tz=UTC).astimezone(berlin)
        expected.append(local.weekday() * 24 + local.hour)
    assert places.slot.tolist() == expected
    sunday_two = 6 * 24 + 2
    assert not (places.slot[:21] == sunday_two).any()  # 02:00–03:00 skipped in March
    october = places.slot[21:] == sunday_two
    assert october.sum() == 8  # and lived twice in October: eight quarter hours
    assert sorted(places.rank[21:][october]) == list(range(8))
    assert places.per_slot == 4


def test_weeks_start_on_monday_on_the_site_clock():
    # 2024-01-01 was a Monday (ISO 8601 calendar).
    index = pd.date_range("2023-12-31 22:00", periods=6, freq="h", tz="UTC")
    places = week_places(index, "Europe/Berlin", pd.Timedelta(hours=1))
    # 23:00 Sunday local, then Monday 00:00 local opens week 1 at slot 0.
    assert places.week.tolist() == [0, 1, 1, 1, 1, 1]
    assert places.slot.tolist() == [167, 0, 1, 2, 3, 4]


def _hourly_readings(weeks: int, missing_share: float) -> pd.Series:
    generator = np.random.default_rng(11)
    index = pd.date_range("2024-01-01", periods=weeks * 168, freq="h", tz="UTC")
    values = generator.gamma(2.0, 3.0, size=index.size)
    values[generator.random(index.size) < missing_share] = np.nan
    return pd.Series(values, index=index)


def test_median_and_mad_match_scipy_over_one_window():
    readings = _hourly_readings(weeks=6, missing_share=0.1)
    places = week_places(readings.index, "UTC", pd.Timedelta(hours=1))
    pattern = weekly_pattern(readings.to_numpy(), places, weeks=6, min_samples=1)

    slot = readings.index.day_of_week * 24 + readings.index.hour
    grouped = readings.groupby(slot)
    median = grouped.median().reindex(slot).to_numpy()
    spread = (
        grouped.agg(lambda x: median_abs_deviation(x, scale="normal", nan_policy="omit"))
        .reindex(slot)
        .to_numpy()
    )
    np.testing.assert_allclose(pattern.typical, median, rtol=1e-12)
    np.testing.assert_allclose(pattern.spread, spread, rtol=1e-12)


def test_the_mad_scale_is_one_over_the_normal_quartile():
    # A MAD is turned into a standard deviation by 1/Φ⁻¹(3/4) (scipy's scale="normal").
    assert abs(MAD_TO_SD - 1 / norm.ppf(0.75)) < 1e-12


def test_rolling_window_uses_the_nearest_weeks_and_slides_in_at_the_ends():
    readings = _hourly_readings(weeks=10, missing_share=0.0)
    values = readings.to_numpy()
    places = week_places(readings.index, "UTC", pd.Timedelta(hours=1))
    pattern = weekly_pattern(values, places, weeks=3, min_samples=1)
    by_week = values.reshape(10, 168)
    for week, window in ((0, range(0, 3)), (5, range(4, 7)), (9, range(7, 10))):
        expected = np.median(by_week[list(window)], axis=0)
        np.testing.assert_allclose(pattern.typical[week * 168 : (week + 1) * 168], expected)


def test_thin_slots_give_no_typical_value():
    readings = _hourly_readings(weeks=4, missing_share=0.0)
    values = readings.to_numpy().copy()
    values[: 3 * 168] = np.nan  # only one week left: one reading per slot
    places = week_places(readings.index, "UTC", pd.Timedelta(hours=1))
    pattern = weekly_pattern(values, places, weeks=4)
    assert np.isnan(pattern.typical).all()
    assert np.isfinite(weekly_pattern(values, places, weeks=4, min_samples=1).typical).all()


def test_hour_of_day_places_pool_every_day_of_the_week_on_the_site_clock():
    # The week of the October 2024 clock change in Berlin (EU Directive 2000/84/EC, from
    # memory: 27 October 2024, 03:00 summer time back to 02:00).
    readings = _hourly_readings(weeks=3, missing_share=0.05)
    index = readings.index + pd.Timedelta(weeks=42)
    berlin = ZoneInfo("Europe/Berlin")
    places = day_places(index, "Europe/Berlin", pd.Timedelta(hours=1))
    hours = [datetime.fromtimestamp(t.timestamp(), tz=UTC).astimezone(berlin).hour for t in index]
    assert places.slot.tolist() == hours
    assert (places.n_slots, places.per_slot) == (24, 7)
    pattern = weekly_pattern(readings.to_numpy(), places, weeks=10, min_samples=1)
    # With a window wider than the record each local hour of the day is one group; the
    # repeated 02:00 hour has one reading more than a slot holds and is left out, as in the
    # hour-of-week table.
    kept = places.rank < places.per_slot
    frame = pd.DataFrame({"hour": hours, "value": readings.to_numpy()})[kept]
    grouped = frame.groupby("hour")["value"]
    median = grouped.median().reindex(hours).to_numpy()
    spread = (
        grouped.agg(lambda x: median_abs_deviation(x, scale="normal", nan_policy="omit"))
        .reindex(hours)
        .to_numpy()
    )
    np.testing.assert_allclose(pattern.typical, median, rtol=1e-12)
    np.testing.assert_allclose(pattern.spread, spread, rtol=1e-12)
