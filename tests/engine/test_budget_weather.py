"""Past years' weather for budgets: typical weather plus past days' departures, drawn in blocks.

The weather is the synthetic campus's (``test_budget_campus``): an annual cycle, a daily
AR(1) anomaly with standard deviation 2 °C and lag-one correlation 0.75, and a daily cycle,
so the truth about month means is known.

How the spread of month means is checked. For an AR(1) with lag-one correlation ``φ`` and
standard deviation ``σ``, the mean of ``n`` consecutive days has variance
``σ²/n² · (n + 2 Σ_{k<n} (n − k) φ^k)`` (the variance of a sum of autocorrelated values;
e.g. Box, Jenkins & Reinsel, *Time Series Analysis*, from memory). A stationary bootstrap with
mean block ``m`` keeps two days ``k`` apart in one block with probability ``(1 − 1/m)^k``
(Politis & Romano 1994), and days of different blocks are independent, so the drawn month
means have that variance with ``φ (1 − 1/m)`` in place of ``φ``: for φ = 0.75, m = 10 and
31 days about 0.87 of the true standard deviation. The drawn spread is checked against that
on a long series (the bootstrap itself), and against the spread of the past years' own month
means, within the sampling error of a standard deviation from few years (relative standard
error ``1/√(2(n − 1))`` for ``n`` normal values, from memory).
"""

from __future__ import annotations

import re
from dataclasses import replace
from datetime import date
from typing import ClassVar

import numpy as np
import pandas as pd
import pytest
from scipy.signal import lfilter

from engine.budget import MeterPlan, WeatherAssumption, simulate_paths
from engine.budget.periods import BudgetWindow, as_of_cut
from engine.budget.weather_paths import (
    season_of,
    seasonal_block_days,
    seasonal_mean_departure,
    weather_scenarios,
)
from engine.errors import InputError
from engine.models.base import ModelInputs
from engine.weather import typical_year
from tests.engine.test_budget_campus import (
    BALANCE_C,
    ZONE,
    WeekSlotDegreeModel,
    day_means,
    hourly_weather,
    make_campus,
)

PHI, SD = 0.75, 2.0  # the campus weather's daily anomaly (see test_budget_campus)
BLOCK = 10.0  # the default mean block of the weather draw


def month_mean_sd(phi: float, days: int, sd: float = SD) -> float:
    """Standard deviation of the mean of ``days`` consecutive values of an AR(1)."""
    lags = np.arange(1, days)
    return float(np.sqrt(sd**2 / days**2 * (days + 2 * ((days - lags) * phi**lags).sum())))


@pytest.fixture(scope="module")
def station() -> pd.Series:
    """24 years of hourly campus weather, 2000–2023."""
    return hourly_weather(date(2000, 1, 1), date(2023, 12, 31), np.random.default_rng(41))


def test_blocks_walk_on_consecutive_days_and_start_near_the_same_day_of_the_year() -> None:
    """On a long AR(1), the drawn month means have the stationary bootstrap's spread."""
    rng = np.random.default_rng(4)
    days = pd.date_range("1700-01-01", "1999-12-31")
    anomaly = SD * lfilter([1.0], [1.0, -PHI], rng.standard_normal(len(days)) * np.sqrt(1 - PHI**2))
    keep = np.ones(len(days), dtype=bool)
    keep[1000:1040] = False  # a long gap in the record
    pool = days[keep].to_numpy().astype("datetime64[D]")
    target = pd.date_range("2000-01-01", "2000-01-31")
    drawn = seasonal_block_days(pool, target, BLOCK, 15, 4000, rng)
    on = pool[drawn]
    step = np.diff(on.astype(np.int64), axis=1)
    starts = np.c_[np.ones((len(on), 1), dtype=bool), step != 1]
    # A new block starts about once in BLOCK days, and starts within 15 days of the day of
    # the year (circularly: late December is near early January).
    assert (~starts[:, 1:]).mean() == pytest.approx(1 - 1 / BLOCK, abs=0.01)
    offset = (
        season_of(pd.DatetimeIndex(on[starts]))
        - np.broadcast_to(season_of(target), on.shape)[starts]
    )
    distance = np.abs((offset + 365.25 / 2) % 365.25 - 365.25 / 2)
    assert distance.max() <= 15.5 and (distance > 10).any()
    assert not np.isin(days[~keep].to_numpy().astype("datetime64[D]"), on).any()
    means = anomaly[keep][drawn].mean(axis=1)
    expected = month_mean_sd(PHI * (1 - 1 / BLOCK), 31)
    assert means.std() == pytest.approx(expected, rel=0.06)
    assert abs(means.mean()) < 3 * expected / np.sqrt(4000 / 4)


def test_drawn_departures_average_zero_and_spread_like_past_years(station: pd.Series) -> None:
    """400 draws of 2024 against the 24 past years' month means, month by month.

    The mean departure of each month is within 4 standard errors of zero; the ratio of the
    drawn to the past years' standard deviation of month means, averaged in logs over the
    twelve months, is the bootstrap's expected 0.87 within 3 standard errors (each month's
    log-ratio has standard error ≈ 1/√(2 · 23) from the 24 years, the twelve nearly
    independent), and the past years' spread is itself the AR(1)'s within sampling error.
    """
    months = [f"2024-{month:02d}" for month in range(1, 13)]
    window = BudgetWindow.of(months, ZONE)
    cut = as_of_cut(date(2023, 12, 31), ZONE)
    draws = 400
    # without the memory of the anomaly at the cut (its own tests: test_budget_weather_memory)
    assumption = WeatherAssumption.past_years(station, draws=draws, memory=False)
    scenarios = weather_scenarios(assumption, window, cut, rng=np.random.default_rng(5))
    assert scenarios.hourly.shape == (draws, len(window.hours))
    typical = typical_year(station, ZONE).hourly(window.first_day, window.last_day).to_numpy()
    local_month = window.hours.tz_convert(ZONE).month.to_numpy()
    past = station.groupby(
        [station.index.tz_convert(ZONE).year, station.index.tz_convert(ZONE).month]
    ).mean()
    log_ratios = []
    for month in range(1, 13):
        inside = local_month == month
        drawn = scenarios.hourly[:, inside].mean(axis=1)
        departure = drawn - typical[inside].mean()
        assert abs(departure.mean()) < 4 * departure.std() / np.sqrt(draws)
        past_sd = past.xs(month, level=1).std(ddof=1)
        log_ratios.append(np.log(drawn.std(ddof=1) / past_sd))
        days = int(inside.sum() // 24)
        assert past_sd == pytest.approx(month_mean_sd(PHI, days), rel=3 / np.sqrt(2 * 23))
    expected = month_mean_sd(PHI * (1 - 1 / BLOCK), 30) / month_mean_sd(PHI, 30)
    standard_error = 1 / np.sqrt(2 * 23) / np.sqrt(12)
    assert np.mean(log_ratios) == pytest.approx(np.log(expected), abs=3 * standard_error)


def test_few_years_give_a_continuous_spread(station: pd.Series) -> None:
    """Three past years: fifty draws give fifty different Julys, not three."""
    window = BudgetWindow.of(["2024-07"], ZONE)
    cut = as_of_cut(date(2024, 6, 30), ZONE)
    three = station[station.index >= "2021-01-01"]
    scenarios = weather_scenarios(
        WeatherAssumption.past_years(three), window, cut, rng=np.random.default_rng(2)
    )
    july = scenarios.hourly.mean(axis=1)
    assert len(np.unique(np.round(july, 6))) == 50
    years = np.unique(scenarios.drawn_days.astype("datetime64[Y]"))
    assert years.astype(int).tolist() == [51, 52, 53]  # 2021, 2022, 2023 (years since 1970)
    assert "3 past" not in scenarios.description
    # the block length comes from the departures' persistence (Politis & White 2004)
    assert re.search(r"mean block \d+\.\d days", scenarios.description)


def test_no_weather_after_the_cut_is_drawn(station: pd.Series) -> None:
    as_of = date(2022, 3, 15)
    cut = as_of_cut(as_of, ZONE)
    window = BudgetWindow.of(["2022-03", "2022-04"], ZONE)
    hotter = station.where(station.index < cut, station + 15)
    first, second = (
        weather_scenarios(
            WeatherAssumption.past_years(series), window, cut, rng=np.random.default_rng(9)
        )
        for series in (station[station.index < cut], hotter)
    )
    np.testing.assert_array_equal(first.hourly, second.hourly)
    assert first.drawn_days.max() <= np.datetime64(as_of)
    # Blocks starting near the cut cannot walk past it: they start anew there.
    assert (first.drawn_days == np.datetime64(as_of)).any()
    with pytest.raises(InputError, match="typical year"):
        weather_scenarios(
            WeatherAssumption.past_years(station[station.index >= "2021-09-01"]),
            window,
            cut,
        )


class DegreeDayModel(WeekSlotDegreeModel):
    """Daily heating energy only, ``slope`` kWh per °C-day below 18 °C; counts its predictions."""

    predictions: ClassVar[int] = 0

    @classmethod
    def heating(cls, slope: float) -> DegreeDayModel:
        return cls.from_dict(
            {"balance_c": BALANCE_C, "slot_means": [0.0] * 7, "slopes": [slope, 0.0]}
        )

    def predict(self, inputs: ModelInputs) -> pd.Series:
        type(self).predictions += 1
        return super().predict(inputs)


def _heating_plan(name: str, slope: float, history: ModelInputs, cut: pd.Timestamp) -> MeterPlan:
    """A meter whose model has no error: its budget spread is the weather's alone."""
    before = history.index[history.index < cut]
    return MeterPlan(
        name,
        "natural_gas",
        DegreeDayModel.heating(slope),
        replace(history, energy=pd.Series(0.0, index=history.index)),
        residuals=pd.Series(0.0, index=before),
    )


def test_every_meter_of_a_path_has_the_same_weather() -> None:
    campus = make_campus(seed=5, first_day=date(2021, 1, 1), last_day=date(2024, 2, 29))
    history = campus.inputs["Boiler House"]
    as_of = date(2023, 12, 31)
    cut = as_of_cut(as_of, ZONE)
    plans = [_heating_plan(name, slope, history, cut) for name, slope in (("A", 100), ("B", 200))]
    weather = WeatherAssumption.past_years(campus.weather, years=3, draws=20)
    totals = simulate_paths(plans, ["2024-01", "2024-02"], as_of, weather, paths=60, rng=3)
    a, b = (totals.meter(name).months for name in ("A", "B"))
    np.testing.assert_allclose(b, 2 * a, rtol=1e-12)  # the same weather, path by path
    # Each path's January is the degree-days of the scenario it drew, times the slope.
    window = totals.window
    for path in (0, 17, 59):
        hourly = totals.weather.hourly[totals.scenario_of_path[path]]
        daily = day_means(pd.Series(hourly, index=window.hours)).to_numpy()
        degree_days = np.maximum(BALANCE_C - daily, 0)
        assert a[path, 0] == pytest.approx(100 * degree_days[:31].sum(), rel=1e-9)
    assert np.bincount(totals.scenario_of_path).tolist() == [3] * 20
    assert len(np.unique(np.round(a[:, 0], 3))) == 20  # twenty different Januaries


def test_a_model_that_ignores_temperature_is_predicted_once() -> None:
    campus = make_campus(seed=6, first_day=date(2022, 1, 1), last_day=date(2023, 12, 31))
    history = campus.inputs["Quarry Library"]
    cut = as_of_cut(date(2023, 6, 30), ZONE)
    weather = WeatherAssumption.past_years(campus.weather, years=2, draws=30)
    calendar_only = DegreeDayModel().fit(replace(history, temperature=None).window(end=cut))
    heating = _heating_plan("heating", 100, history, cut)
    for model, expected in ((calendar_only, 2), (heating.model, 31)):
        DegreeDayModel.predictions = 0
        plan = replace(heating, model=model)
        simulate_paths([plan], ["2023-07"], "2023-06-30", weather, paths=90, rng=1)
        # The first scenario and unknown temperatures, then (if they differ) the other 29.
        assert DegreeDayModel.predictions == expected


def test_a_season_mean_departure_is_the_mean_over_the_days_around_it_in_every_year() -> None:
    """Against a loop over every pair of days (circular distance in the year)."""
    rng = np.random.default_rng(8)
    days = pd.date_range("2021-01-01", "2023-12-31", freq="D")
    days = days[rng.random(len(days)) > 0.2]  # gaps, as a pool has
    pool = days.to_numpy().astype("datetime64[D]")
    values = rng.normal(0, 2, len(pool))
    found = seasonal_mean_departure(pool, values, 15.0)
    seasons = season_of(days)
    for i in rng.choice(len(pool), 60, replace=False):
        apart = np.abs(seasons - seasons[i])
        near = np.minimum(apart, 365.25 - apart) <= 15.0
        assert found[i] == pytest.approx(values[near].mean(), rel=1e-12)


def test_drawn_months_centre_on_the_typical_year_not_on_the_few_past_years(
    station: pd.Series,
) -> None:
    """Three past years: the drawn Julys average the typical July (within 4 standard errors),
    although those three Julys' own mean departure from it lies well outside that."""
    window = BudgetWindow.of(["2024-07"], ZONE)
    cut = as_of_cut(date(2023, 12, 31), ZONE)
    three = station[station.index >= "2021-01-01"]
    assumption = WeatherAssumption.past_years(three, draws=400, memory=False)
    scenarios = weather_scenarios(assumption, window, cut, rng=np.random.default_rng(3))
    typical = typical_year(three.dropna(), ZONE).hourly(window.first_day, window.last_day)
    drawn = scenarios.hourly.mean(axis=1) - typical.to_numpy().mean()
    bound = 4 * drawn.std(ddof=1) / np.sqrt(len(drawn))
    assert abs(drawn.mean()) < bound
    local = three.index.tz_convert(ZONE)
    julys = three[local.month == 7]
    expected = typical_year(three.dropna(), ZONE).hourly(date(2021, 1, 1), date(2023, 12, 31))
    own = float((julys - expected.reindex(julys.index)).mean())
    assert abs(own) > bound
