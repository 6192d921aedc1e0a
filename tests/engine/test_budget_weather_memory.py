"""Weather that remembers: persistence estimated from the history, the anomaly at the cut, skill.

Synthetic daily departures with known persistence: a fast AR(1) (lag-one-day correlation 0.75,
as the synthetic campus's weather, ``test_budget_campus``) and, where said, a slow AR(1) with
lag-one-day correlation 0.97 (anomalies lasting weeks). The estimates are the least-squares
AR(1) fits through the origin; statsmodels' ``AutoReg`` (no trend, one lag) computes the same
on gap-free data, and the truth is recovered within a few standard errors of an AR(1)
coefficient, ``√((1 − φ²) / n)`` (Box, Jenkins & Reinsel, from memory).
"""

from __future__ import annotations

from datetime import date

import numpy as np
import pandas as pd
import pytest
from scipy.signal import lfilter
from statsmodels.tsa.ar_model import AutoReg

from engine.budget import WeatherAssumption, simulate_paths, summarise
from engine.budget.periods import BudgetWindow, as_of_cut
from engine.budget.weather_memory import RECENT_DAYS, WHOLE_DAYS, anomaly_memory, slow_decay
from engine.budget.weather_paths import weather_scenarios
from tests.engine.test_budget_campus import ZONE, campus_plans, hourly_weather, make_campus

FAST, SLOW = 0.75, 0.97


def ar1(size: int, phi: float, sd: float, rng: np.random.Generator) -> np.ndarray:
    """A stationary AR(1) path with lag-one correlation ``phi`` and standard deviation ``sd``."""
    shocks = rng.standard_normal(size)
    shocks[1:] *= np.sqrt(1 - phi**2)
    return sd * lfilter([1.0], [1.0, -phi], shocks)


def departures(years: int, slow_sd: float, seed: int) -> pd.Series:
    """Daily departures from 1900 on: fast AR(1) of 2 °C plus a slow one of ``slow_sd`` °C."""
    rng = np.random.default_rng(seed)
    days = pd.date_range("1900-01-01", periods=round(years * 365.25), freq="D")
    values = ar1(len(days), FAST, 2.0, rng) + ar1(len(days), SLOW, slow_sd, rng)
    return pd.Series(values, index=days)


def month_pairs(series: pd.Series) -> pd.DataFrame:
    """Per whole calendar month (20 days or more): its mean ``y``, the departure ``d`` of the
    day before it and the mean ``M`` of the 30 days before it, by pandas rolling windows."""
    by_month = series.groupby(series.index.to_period("M"))
    means = by_month.mean()[by_month.size() >= WHOLE_DAYS]
    starts = means.index.to_timestamp()
    before = series.rolling(f"{RECENT_DAYS}D").mean()  # the 30 days up to each day
    day_before = starts - pd.Timedelta(days=1)
    return pd.DataFrame(
        {"y": means.to_numpy(), "d": series.reindex(day_before).to_numpy(),
         "M": before.reindex(day_before).to_numpy()},
        index=means.index,
    ).dropna()  # fmt: skip


def test_the_persistence_of_a_known_ar1_is_recovered() -> None:
    series = departures(100, 0.0, seed=1)
    memory = anomaly_memory(series, series.index[-1] + pd.Timedelta(days=1))
    reference = AutoReg(series.to_numpy(), lags=1, trend="n").fit().params[0]
    assert memory.daily == pytest.approx(reference, abs=1e-10)
    assert memory.daily == pytest.approx(FAST, abs=3 * np.sqrt((1 - FAST**2) / len(series)))
    # the month's regressions, by numpy least squares on pandas rolling means
    pairs = month_pairs(series)
    (rho,), *_ = np.linalg.lstsq(pairs[["M"]].to_numpy(), pairs["y"].to_numpy(), rcond=None)
    fast_share = np.mean(memory.daily ** np.arange(1, RECENT_DAYS + 1))
    rest = pairs["y"] - fast_share * pairs["d"]
    (beta,), *_ = np.linalg.lstsq(pairs[["M"]].to_numpy(), rest.to_numpy(), rcond=None)
    assert memory.monthly == pytest.approx(max(rho, 0.0), abs=1e-10)
    assert memory.carried == pytest.approx(max(beta, 0.0), abs=1e-10)
    # no slow part: nothing carried beyond the days' own persistence (within sampling error)
    assert memory.carried < 0.05
    # the last day before the cut and the mean of the 30 days before it are the state
    assert memory.last_day == pytest.approx(series.iloc[-1])
    assert memory.recent == pytest.approx(series.iloc[-RECENT_DAYS:].mean())


def test_slow_anomalies_show_in_the_monthly_persistence_and_forecast_past_months() -> None:
    """Anomalies lasting weeks: month means persist, and past months are better forecast.

    The lag-one correlation of consecutive 30-day means of an AR(1) with daily correlation
    θ is Σᵢ Σⱼ θ^(30 + j − i) over the variance sum n + 2 Σₖ (n − k) θ^k (the covariance of
    sums of an AR(1), from memory); added fast noise only lowers it, by its share of the
    month means' variance, computed the same way.
    """
    series = departures(60, 1.5, seed=2)
    memory = anomaly_memory(series, series.index[-1] + pd.Timedelta(days=1))

    def month_sums(phi: float, sd: float, n: int = 30) -> tuple[float, float]:
        lags = np.arange(1, n)
        variance = sd**2 * (n + 2 * ((n - lags) * phi**lags).sum())
        i, j = np.meshgrid(np.arange(n), np.arange(n))
        return sd**2 * (phi ** (n + j - i)).sum(), variance

    slow_cov, slow_var = month_sums(SLOW, 1.5)
    fast_cov, fast_var = month_sums(FAST, 2.0)
    truth = (slow_cov + fast_cov) / (slow_var + fast_var)
    assert memory.monthly == pytest.approx(truth, abs=3 * np.sqrt((1 - truth**2) / 720))
    assert 0 < memory.carried < memory.monthly and 0 < memory.slow_daily < 1
    assert np.mean(slow_decay(memory.carried) ** np.arange(1, 31)) == pytest.approx(
        memory.carried, abs=1e-3
    )
    assert memory.tested > 600 and memory.used
    assert memory.error_with < 0.95 * memory.error_without
    assert "the paths start from the anomaly" in memory.sentence()


def test_white_noise_weather_has_no_memory_to_use() -> None:
    rng = np.random.default_rng(3)
    days = pd.date_range("1990-01-01", "2019-12-31", freq="D")
    series = pd.Series(2.0 * rng.standard_normal(len(days)), index=days)
    memory = anomaly_memory(series, pd.Timestamp("2020-01-01"))
    assert abs(memory.daily) < 0.05 and memory.monthly < 0.2
    assert memory.tested > 300
    assert not memory.used
    assert np.all(memory.shift(np.arange(-3, 40)) == 0.0)
    assert "no skill shown" in memory.sentence()


def test_a_short_history_is_not_tested_and_not_used() -> None:
    series = departures(1, 1.5, seed=4)
    memory = anomaly_memory(series, series.index[-1] + pd.Timedelta(days=1))
    assert memory.tested == 0 and not memory.used


def persistent_station(seed: int) -> pd.Series:
    """The campus weather (fast AR(1) anomaly) plus a slow daily anomaly of 2 °C, 1990–2023."""
    station = hourly_weather(date(1990, 1, 1), date(2023, 12, 31), np.random.default_rng(seed))
    local_day = station.index.tz_convert(ZONE).tz_localize(None).normalize()
    days = pd.DatetimeIndex(local_day.unique())
    slow = ar1(len(days), SLOW, 2.0, np.random.default_rng(seed + 1))
    return station + slow[days.get_indexer(local_day)]


def test_the_paths_start_from_the_anomaly_at_the_cut_and_the_budget_says_so() -> None:
    """Same draws with and without the memory: the paths differ by the expected departure.

    The shift is φ^k (d − M) + θ^k M on day k after the as-of date; its mean over January
    moves a heating meter's month total the other way, and the assumptions say so.
    """
    station = persistent_station(22)
    window = BudgetWindow.of(["2024-01", "2024-02"], ZONE)
    cut = as_of_cut(date(2023, 12, 31), ZONE)
    remembering = WeatherAssumption.past_years(station, draws=40)
    forgetting = WeatherAssumption.past_years(station, draws=40, memory=False)
    with_memory = weather_scenarios(remembering, window, cut, rng=np.random.default_rng(6))
    without = weather_scenarios(forgetting, window, cut, rng=np.random.default_rng(6))
    difference = with_memory.hourly - without.hourly
    np.testing.assert_allclose(
        difference, np.broadcast_to(difference[0], difference.shape), atol=1e-9
    )
    day = (window.hours.tz_convert(ZONE).tz_localize(None).normalize() - window.days[0]).days
    daily = pd.Series(difference[0]).groupby(day.to_numpy()).mean().to_numpy()
    assert "the paths start from the anomaly" in with_memory.memory
    assert without.memory is None

    # The same memory, estimated another way: departures from a climatology of the same
    # calendar day over the earlier years (not the engine's typical year).
    local = station.index.tz_convert(ZONE).tz_localize(None).normalize()
    days = station.groupby(local).mean()
    days = days[days.index < "2024-01-01"]
    same_day = days.index.strftime("%m-%d")
    climate = days.groupby(same_day).mean()
    elsewhere = anomaly_memory(days - climate.reindex(same_day).to_numpy(), window.days[0])
    assert elsewhere.used and elsewhere.recent > 1.0  # a warm December to remember
    np.testing.assert_allclose(daily, elsewhere.shift(np.arange(1, len(daily) + 1)), atol=0.4)
    assert abs(daily[-1]) < 0.25 * abs(daily[0])  # decayed by late February

    campus = make_campus(seed=11, first_day=date(2021, 1, 1))
    plans = campus_plans(campus, date(2023, 12, 31))
    boiler = [plan for plan in plans if plan.name == "Boiler House"]
    runs = [
        simulate_paths(boiler, ["2024-01"], "2023-12-31", assumption, paths=200, rng=3)
        for assumption in (remembering, forgetting)
    ]
    january = [run.meters[0].months[:, 0].mean() for run in runs]
    assert np.sign(january[0] - january[1]) == -np.sign(daily[:31].mean())
    # the budget's JSON states the memory under its assumptions (a key only past years add)
    stated = [summarise(run).to_json()["assumptions"] for run in runs]
    assert stated[0]["weather_memory"] == with_memory.memory
    assert "weather_memory" not in stated[1]
