"""Multi-seasonal decomposition: known cycles recovered, gaps filled or refused.

Synthetic meters belong to the invented Larchfield campus's Osier Library (a fixed UTC+2 zone,
so the daily cycle sits still on the clock); each is built from a known trend, daily, weekly and
annual cycles and noise.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from statsmodels.tsa.seasonal import MSTL

from engine.decomposition import (
    daily_energy,
    decompose_daily,
    decompose_hourly,
    fill_short_gaps,
    hourly_energy,
)
from engine.errors import InputError
from engine.meters import MeterSeries
from engine.progress import Cancelled, Progress

ZONE = "Etc/GMT-2"  # UTC+2 all year
DAILY_AMPLITUDE, WEEKLY_AMPLITUDE = 20.0, 12.0


def _truth(hours: np.ndarray) -> dict[str, np.ndarray]:
    """Known parts of the hourly energy (kWh), by hours since the start (a local midnight)."""
    day = 2 * np.pi * hours / 24
    week = 2 * np.pi * hours / 168
    return {
        "trend": 120.0 + 0.01 * hours,
        "daily cycle": DAILY_AMPLITUDE * (np.sin(day) + 0.3 * np.cos(2 * day)),
        "weekly cycle": WEEKLY_AMPLITUDE * (np.sin(week) + 0.4 * np.cos(2 * week)),
    }


def _library_meter(weeks=12, noise=2.0, seed=0, gaps=()):
    """Quarter-hour meter whose hourly sums follow :func:`_truth`; ``gaps`` are (hour, length)."""
    hours = np.arange(weeks * 168)
    truth = _truth(hours)
    rng = np.random.default_rng(seed)
    hourly = sum(truth.values()) + rng.normal(0.0, noise, len(hours))
    start = pd.Timestamp("2024-01-01", tz=ZONE).tz_convert("UTC")
    index = pd.date_range(start, periods=4 * len(hours), freq="15min")
    values = pd.Series(np.repeat(hourly / 4.0, 4), index=index)
    for hour, length in gaps:
        values.iloc[4 * hour : 4 * (hour + length)] = np.nan
    meter = MeterSeries("Osier Library", "electricity", values, pd.Timedelta("15min"), ZONE)
    return meter, truth


def _rmse(a, b):
    return float(np.sqrt(np.mean((np.asarray(a) - np.asarray(b)) ** 2)))


def test_recovers_daily_and_weekly_cycles():
    meter, truth = _library_meter()
    result = decompose_hourly(meter)
    parts = result.components
    # Tolerance: each recovered cycle within 10 % of its amplitude (RMSE), trend within 2 kWh.
    assert _rmse(parts["daily cycle kWh"], truth["daily cycle"]) < 0.1 * DAILY_AMPLITUDE
    assert _rmse(parts["weekly cycle kWh"], truth["weekly cycle"]) < 0.1 * WEEKLY_AMPLITUDE
    assert _rmse(parts["trend kWh"], truth["trend"]) < 2.0
    rebuilt = parts[["trend kWh", "daily cycle kWh", "weekly cycle kWh", "remainder kWh"]].sum(
        axis=1
    )
    np.testing.assert_allclose(rebuilt, parts["observed kWh"], rtol=1e-10)
    assert str(parts.index.tz) == ZONE and parts.index[0].hour == 0
    assert result.filled == 0 and result.resolution == "hour"


def test_fast_settings_agree_with_statsmodels_defaults():
    # Reference: statsmodels MSTL with its default STL settings on the same hourly energy.
    meter, _ = _library_meter()
    ours = decompose_hourly(meter).components
    reference = MSTL(hourly_energy(meter).to_numpy(), periods=[24, 168]).fit()
    assert _rmse(ours["daily cycle kWh"], reference.seasonal[:, 0]) < 0.01 * DAILY_AMPLITUDE
    assert _rmse(ours["weekly cycle kWh"], reference.seasonal[:, 1]) < 0.01 * WEEKLY_AMPLITUDE
    assert _rmse(ours["trend kWh"], reference.trend) < 0.1


def test_variance_shares_rank_the_cycles():
    meter, _ = _library_meter()
    shares = decompose_hourly(meter).shares
    assert list(shares.index) == ["trend", "daily cycle", "weekly cycle", "remainder"]
    daily, weekly = shares.loc["daily cycle"], shares.loc["weekly cycle"]
    assert daily["variance share %"] > weekly["variance share %"] > shares.loc["remainder"].iloc[0]
    assert daily["strength"] > 0.9 and weekly["strength"] > 0.8
    # The daily cycle carries about (20² · (1 + 0.3²) / 2) of the variance, by construction.
    hours = np.arange(12 * 168)
    truth = _truth(hours)
    expected = 100 * np.var(truth["daily cycle"]) / np.var(sum(truth.values()))
    assert daily["variance share %"] == pytest.approx(expected, rel=0.1)


def test_hourly_energy_matches_pandas_resampling():
    meter, _ = _library_meter(weeks=3, gaps=[(30, 1)])
    ours = hourly_energy(meter)
    reference = meter.values.resample("h").sum()  # UTC+2 hours coincide with UTC hours
    assert np.isnan(ours.iloc[30])
    mask = ~np.isnan(ours.to_numpy())
    np.testing.assert_allclose(ours.to_numpy()[mask], reference.to_numpy()[mask], rtol=1e-12)


def test_short_gaps_are_interpolated_and_counted():
    meter, truth = _library_meter(gaps=[(500, 3), (900, 1)])
    result = decompose_hourly(meter)
    assert result.filled == 4
    assert not result.components.isna().any().any()
    assert _rmse(result.components["daily cycle kWh"], truth["daily cycle"]) < 0.1 * DAILY_AMPLITUDE


def test_long_gaps_are_refused_with_their_place():
    meter, _ = _library_meter(gaps=[(500, 10)])
    with pytest.raises(InputError, match=r"gap of 10 hours starting 2024-01-21 20:00"):
        decompose_hourly(meter)


def test_fill_short_gaps_trims_missing_ends():
    series = pd.Series([np.nan, 1.0, np.nan, 3.0, np.nan, np.nan])
    filled, count = fill_short_gaps(series, 2, "hour")
    assert list(filled) == [1.0, 2.0, 3.0] and count == 1


def test_too_short_a_span_is_refused():
    meter, _ = _library_meter(weeks=1)
    with pytest.raises(InputError, match="at least 336"):
        decompose_hourly(meter)


def test_progress_is_reported_and_cancel_is_honoured():
    meter, _ = _library_meter(weeks=3)
    seen = []
    decompose_hourly(meter, progress=Progress(lambda fraction, message: seen.append(fraction)))
    assert seen[0] == 0.0 and seen[-1] == 1.0
    progress = Progress()
    progress.cancel()
    with pytest.raises(Cancelled):
        decompose_hourly(meter, progress=progress)


def _daily_meter(years=2.5, seed=1):
    """Hourly meter whose days follow a known annual cycle (kWh per day, spread evenly)."""
    days = int(years * 365)
    rng = np.random.default_rng(seed)
    day = np.arange(days)
    annual = 600.0 * np.sin(2 * np.pi * day / 365)
    weekly = 150.0 * np.where(day % 7 >= 5, -1.0, 0.4)  # 2024-01-01 is a Monday
    daily = 3000.0 + 0.2 * day + annual + weekly + rng.normal(0.0, 30.0, days)
    start = pd.Timestamp("2024-01-01", tz=ZONE).tz_convert("UTC")
    index = pd.date_range(start, periods=24 * days, freq="h")
    values = pd.Series(np.repeat(daily / 24.0, 24), index=index)
    meter = MeterSeries("Osier Library", "electricity", values, pd.Timedelta("1h"), ZONE)
    return meter, annual, daily


def test_recovers_the_annual_cycle_from_daily_totals():
    meter, annual, daily = _daily_meter()
    np.testing.assert_allclose(daily_energy(meter).to_numpy(), daily, rtol=1e-12)
    result = decompose_daily(meter)
    parts = result.components
    assert list(parts.columns) == [
        "observed kWh",
        "trend kWh",
        "weekly cycle kWh",
        "annual cycle kWh",
        "remainder kWh",
    ]
    # Tolerance: annual cycle within 10 % of its 600 kWh/day amplitude (RMSE).
    assert _rmse(parts["annual cycle kWh"], annual) < 60.0
    assert parts.index[0] == pd.Timestamp("2024-01-01") and result.resolution == "day"


def test_annual_cycle_needs_two_years():
    meter, _, _ = _daily_meter(years=1.5)
    with pytest.raises(InputError, match="at least 730"):
        decompose_daily(meter)
