"""Each fix on its own: what it changes, what it marks, and that its input stays as it was."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from engine.cleaning.cleaned import CleanedSeries
from engine.cleaning.fixes import (
    FIXES,
    LEVEL_LIMITS,
    cap,
    exclude,
    interpolate,
    profile_fill,
    remove,
    rescale,
    spread,
)
from engine.cleaning.steps import STEP_KINDS
from engine.errors import InputError

HOUR = pd.Timedelta(hours=1)
ZONE = "Europe/Berlin"


def weekly_truth(weeks: int = 12, start: str = "2024-01-01") -> pd.Series:
    """Hourly kWh that repeat exactly every local week (invented ground truth)."""
    first = pd.Timestamp(start, tz=ZONE).tz_convert("UTC")
    index = pd.date_range(first, periods=weeks * 168, freq="h")
    local = index.tz_convert(ZONE)
    slot = local.day_of_week.to_numpy() * 24 + local.hour.to_numpy()
    return pd.Series(20.0 + 10.0 * np.sin(slot / 7.0) + (slot % 24 >= 8) * 15.0, index=index)


def state_of(values: pd.Series) -> CleanedSeries:
    return CleanedSeries.start(values, HOUR)


def span(series: pd.Series | CleanedSeries, first: int, stop: int, **extra) -> dict:
    index = series.values.index if isinstance(series, CleanedSeries) else series.index
    end = index[stop] if stop < len(index) else index[-1] + HOUR
    return {"start": index[first].isoformat(), "end": end.isoformat(), **extra}


def frozen(state: CleanedSeries) -> tuple[np.ndarray, ...]:
    return tuple(array.copy() for array in state.arrays())


def assert_untouched(state: CleanedSeries, before: tuple[np.ndarray, ...]) -> None:
    for now, then in zip(state.arrays(), before, strict=True):
        assert np.array_equal(now, then, equal_nan=True)


def test_every_step_kind_has_a_fix():
    assert set(FIXES) == set(STEP_KINDS)


def test_straight_line_matches_pandas_interpolation_and_replaces_stuck_values():
    generator = np.random.default_rng(5)
    readings = pd.Series(
        generator.uniform(5, 15, 48),
        index=pd.date_range("2024-05-01", periods=48, freq="h", tz="UTC"),
    )
    readings.iloc[20:30] = readings.iloc[20]  # stuck: the range is replaced, not kept
    state = state_of(readings)
    before = frozen(state)
    result = interpolate(state, span(state, 20, 30))
    reference = readings.copy()
    reference.iloc[20:30] = np.nan
    expected = reference.interpolate(method="linear")  # pandas, computed another way
    np.testing.assert_allclose(result.values.to_numpy(), expected.to_numpy(), rtol=1e-12)
    assert result.estimated.to_numpy().nonzero()[0].tolist() == list(range(20, 30))
    assert_untouched(state, before)


def test_a_straight_line_needs_a_reading_on_each_side():
    readings = weekly_truth(weeks=1)
    readings.iloc[:5] = np.nan
    with pytest.raises(InputError, match="reading on each side"):
        interpolate(state_of(readings), span(readings, 0, 5))


def test_profile_fill_recovers_an_exactly_weekly_meter_across_a_clock_change():
    truth = weekly_truth(weeks=16)
    local = truth.index.tz_convert(ZONE)
    # Three days straddling the 2024-03-31 clock change (EU Directive 2000/84/EC, from memory).
    gap = np.flatnonzero((local >= "2024-03-30") & (local < "2024-04-02"))
    readings = truth.copy()
    readings.iloc[gap] = np.nan
    filled = profile_fill(state_of(readings), span(readings, gap[0], gap[-1] + 1, timezone=ZONE))
    np.testing.assert_allclose(filled.values.to_numpy(), truth.to_numpy(), rtol=1e-12)
    assert filled.estimated.sum() == gap.size


def test_profile_fill_follows_the_level_around_the_gap():
    truth = weekly_truth(weeks=12)
    first, stop = 6 * 168 + 24, 6 * 168 + 72  # Tuesday and Wednesday of week 7
    busy = truth.copy()
    busy.iloc[first - 72 : stop + 72] *= 1.2  # a cold spell: three days either side and the gap
    readings = busy.copy()
    readings.iloc[first:stop] = np.nan
    filled = profile_fill(state_of(readings), span(readings, first, stop, timezone=ZONE))
    np.testing.assert_allclose(filled.values.iloc[first:stop], busy.iloc[first:stop], rtol=1e-12)


def test_profile_fill_with_the_calendar_fills_term_days_like_term_days():
    """A gap in the first week of term, after a four-week break at half the load: from nearby
    weeks alone the fill mixes break and term days; with the campus calendar it takes term
    days only and recovers the meter (invented ground truth, exactly weekly in each period)."""
    from datetime import date

    from engine.calendar import CampusCalendar, CampusPeriod

    truth = weekly_truth(weeks=10)  # 2024-01-01 (a Monday) to 2024-03-10
    local_days = truth.index.tz_convert(ZONE).tz_localize(None).normalize()
    in_break = (local_days >= "2024-01-22") & (local_days < "2024-02-19")
    readings = truth.where(~in_break, truth * 0.5)
    gap = np.flatnonzero((local_days >= "2024-02-19") & (local_days < "2024-02-22"))
    calendar = CampusCalendar(
        periods=(
            CampusPeriod("Autumn term", date(2023, 10, 1), date(2024, 1, 21), "term"),
            CampusPeriod("Winter break", date(2024, 1, 22), date(2024, 2, 18), "break"),
            CampusPeriod("Spring term", date(2024, 2, 19), date(2024, 6, 30), "term"),
        )
    )
    step = span(readings, gap[0], gap[-1] + 1, timezone=ZONE)
    like = profile_fill(CleanedSeries.start(readings, HOUR, calendar), step)
    blind = profile_fill(state_of(readings), step)
    expected = truth.iloc[gap].sum()
    assert like.values.iloc[gap].sum() == pytest.approx(expected, rel=0.02)  # level scaling
    assert blind.values.iloc[gap].sum() < 0.95 * expected  # the break pulls the fill down
    assert like.calendar is calendar and like.estimated.iloc[gap].all()


def test_profile_fill_scaling_is_limited():
    truth = weekly_truth(weeks=12)
    first, stop = 6 * 168 + 24, 6 * 168 + 72
    readings = truth.copy()
    readings.iloc[first - 72 : stop + 72] *= 5.0
    readings.iloc[first:stop] = np.nan
    filled = profile_fill(state_of(readings), span(readings, first, stop, timezone=ZONE))
    ratio = filled.values.iloc[first:stop] / truth.iloc[first:stop]
    np.testing.assert_allclose(ratio, LEVEL_LIMITS[1], rtol=1e-12)


def test_profile_fill_ignores_estimated_values_and_refuses_an_incomplete_week():
    truth = weekly_truth(weeks=2)
    readings = truth.copy()
    readings.iloc[168:] = np.nan  # only the first week is known
    state = state_of(readings)
    with pytest.raises(InputError, match="typical week is incomplete"):
        profile_fill(state, span(readings, 0, 24, timezone=ZONE))
    known_only_by_estimate = profile_fill(state, span(readings, 168, 336, timezone=ZONE))
    with pytest.raises(InputError, match="typical week is incomplete"):
        profile_fill(known_only_by_estimate, span(readings, 0, 24, timezone=ZONE))


def test_spread_keeps_the_total_and_follows_the_typical_week():
    truth = weekly_truth(weeks=10)
    first, stop = 4 * 168 + 30, 4 * 168 + 42
    readings = truth.copy()
    recorded = truth.iloc[first : stop + 1].sum()
    readings.iloc[first:stop] = np.nan
    readings.iloc[stop] = recorded
    result = spread(state_of(readings), span(readings, first, stop + 1, timezone=ZONE))
    assert result.values.sum() == pytest.approx(readings.sum(), rel=1e-12)
    np.testing.assert_allclose(
        result.values.iloc[first : stop + 1], truth.iloc[first : stop + 1], rtol=1e-12
    )
    assert result.estimated.sum() == stop + 1 - first


def test_spread_shares_equally_where_the_typical_week_is_unknown():
    readings = weekly_truth(weeks=1)
    readings.iloc[10:14] = np.nan
    readings.iloc[14] = 50.0
    result = spread(state_of(readings), span(readings, 10, 15, timezone=ZONE))
    # With one week of readings the hours of the week in the range have no other reading.
    np.testing.assert_allclose(result.values.iloc[10:15], 10.0)


def test_remove_cap_and_exclude():
    readings = weekly_truth(weeks=1)
    state = state_of(readings)
    before = frozen(state)

    removed = remove(interpolate(state, span(state, 3, 5)), span(state, 2, 6))
    assert removed.values.iloc[2:6].isna().all() and not removed.estimated.any()

    capped = cap(state, span(state, 0, 24, high=30.0, low=12.0))
    expected = readings.iloc[:24].clip(12.0, 30.0)
    np.testing.assert_array_equal(capped.values.iloc[:24], expected)
    assert capped.estimated.iloc[:24].tolist() == (expected != readings.iloc[:24]).tolist()
    assert not capped.estimated.iloc[24:].any()

    excluded = exclude(state, span(state, 100, 120))
    assert excluded.excluded.to_numpy().nonzero()[0].tolist() == list(range(100, 120))
    assert np.array_equal(excluded.values.to_numpy(), readings.to_numpy())
    assert not excluded.estimated.any()
    assert_untouched(state, before)


@pytest.mark.parametrize(
    ("params", "message"),
    [
        ({"start": "2024-01-01T05:00:00+00:00", "end": "2024-01-01T02:00:00+00:00"}, "before it"),
        ({"start": "2024-01-01T02:00:00", "end": "2024-01-01T05:00:00"}, "no time zone"),
        ({"start": "yesterday", "end": "2024-01-01T05:00:00+00:00"}, "unreadable"),
        ({"end": "2024-01-01T05:00:00+00:00"}, "unreadable"),
        ({"start": "2030-01-01T00:00:00+00:00", "end": "2030-01-02T00:00:00+00:00"}, "no interval"),
    ],
)
def test_bad_ranges_are_refused(params, message):
    with pytest.raises(InputError, match=message):
        exclude(state_of(weekly_truth(weeks=1)), params)


def test_bad_fix_settings_are_refused():
    state = state_of(weekly_truth(weeks=4))
    with pytest.raises(InputError, match="IANA"):
        profile_fill(state, span(state, 200, 210, timezone="Middle/Earth"))
    with pytest.raises(InputError, match="weeks"):
        profile_fill(state, span(state, 200, 210, timezone=ZONE, weeks=0))
    with pytest.raises(InputError, match=r"'low' or a 'high'"):
        cap(state, span(state, 0, 10))
    with pytest.raises(InputError, match="above its high"):
        cap(state, span(state, 0, 10, low=5.0, high=1.0))
    with pytest.raises(InputError, match="must be a number"):
        cap(state, span(state, 0, 10, high="lots"))
    holed = weekly_truth(weeks=4)
    holed.iloc[200:230] = np.nan
    with pytest.raises(InputError, match="no recorded energy"):
        spread(state_of(holed), span(holed, 205, 225, timezone=ZONE))


def test_rescale_multiplies_the_range_and_marks_nothing_estimated():
    readings = weekly_truth(weeks=2)
    state = state_of(readings)
    scaled = rescale(state, span(readings, 100, len(readings), factor=2.0))
    np.testing.assert_array_equal(scaled.values.iloc[100:], readings.iloc[100:] * 2.0)
    np.testing.assert_array_equal(scaled.values.iloc[:100], readings.iloc[:100])
    assert not scaled.estimated.any() and not scaled.excluded.any()


@pytest.mark.parametrize("factor", [0, -2.0, float("nan"), float("inf"), "2", True, None])
def test_rescale_refuses_a_factor_that_is_not_a_positive_number(factor):
    readings = weekly_truth(weeks=1)
    with pytest.raises(InputError, match="rescale factor"):
        rescale(state_of(readings), span(readings, 0, 10, factor=factor))
