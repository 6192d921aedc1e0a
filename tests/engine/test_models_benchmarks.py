"""Benchmarks: seasonal naive by hand, and the statsmodels-based ones against statsmodels itself.

The reference forecasts are computed here with statsmodels directly (ETSModel, SARIMAX, MSTL)
on totals aggregated here with pandas; the models must give the same numbers after their own
aggregation, storage and spreading. Data: the invented Larkspur Vale campus
(test_models_campus) and small hand-made series.
"""

from __future__ import annotations

import warnings

import numpy as np
import pandas as pd
import pytest
from statsmodels.tools.sm_exceptions import ConvergenceWarning, EstimationWarning
from statsmodels.tsa.exponential_smoothing.ets import ETSModel
from statsmodels.tsa.seasonal import MSTL
from statsmodels.tsa.statespace.sarimax import SARIMAX
from test_models_campus import (
    ZONE,
    one_thread,  # noqa: F401  (autouse: one BLAS/OpenMP thread)
    synthetic_campus,
)

from engine.errors import InputError
from engine.models import (
    DailyETSModel,
    ModelInputs,
    MonthlySARIMAModel,
    MSTLETSModel,
    SeasonalNaiveModel,
)
from engine.models._history import bridged_stretch
from engine.models._statsmodels import ETSRun, estimate, fit_ets
from engine.models.mstl_ets import MSTL_SETTINGS, repeated_seasons


def _hourly(values: np.ndarray, start: str, zone: str) -> ModelInputs:
    index = pd.date_range(pd.Timestamp(start, tz=zone), periods=len(values), freq="h")
    index = index.tz_convert("UTC")
    return ModelInputs(index, zone, energy=pd.Series(values, index=index))


def _local_days(inputs: ModelInputs, values: pd.Series) -> pd.Series:
    return values.groupby(
        inputs.index.tz_convert(inputs.timezone).tz_localize(None).normalize()
    ).sum()


# -- seasonal naive ------------------------------------------------------------------------


def test_seasonal_naive_repeats_the_last_week():
    values = np.random.default_rng(1).uniform(50, 150, 3 * 168)
    history = _hourly(values, "2023-03-20", "UTC")
    model = SeasonalNaiveModel().fit(history)
    future = _hourly(np.zeros(2 * 168), "2023-04-10", "UTC").without_energy()
    forecast = model.predict(future).to_numpy()
    np.testing.assert_array_equal(forecast, np.tile(values[-168:], 2))
    # In the history, each hour gets the reading one week before it.
    inside = model.predict(history.window(start=history.index[168]).without_energy())
    np.testing.assert_array_equal(inside.to_numpy(), values[:-168])


def test_seasonal_naive_follows_the_local_clock_across_daylight_saving():
    # Two weeks before and the week of the change to summer time (12 March 2023, US).
    values = np.arange(3 * 168, dtype=float)
    history = _hourly(values, "2023-02-20", ZONE)
    model = SeasonalNaiveModel().fit(history)
    future = _hourly(np.zeros(168), "2023-03-13", ZONE).without_energy()
    forecast = model.predict(future)
    by_clock = pd.Series(values, index=history.index.tz_convert(ZONE).tz_localize(None))
    for stamp in future.index[[0, 10, 100]]:
        local = stamp.tz_convert(ZONE).tz_localize(None)
        assert forecast[stamp] == by_clock[local - pd.Timedelta(weeks=1)]


def test_seasonal_naive_a_year_back_and_past_a_missing_reading():
    values = np.random.default_rng(2).uniform(50, 150, 60 * 7 * 24)
    values[-168 + 5] = np.nan  # one missing hour in the last week
    history = _hourly(values, "2022-01-03", "UTC")
    week = SeasonalNaiveModel().fit(history)
    after = (history.index[-1] + pd.Timedelta(hours=1)).strftime("%Y-%m-%d %H:%M")
    future = _hourly(np.zeros(168), after, "UTC")
    forecast = week.predict(future.without_energy()).to_numpy()
    assert forecast[5] == values[-2 * 168 + 5]  # one more week back
    year = SeasonalNaiveModel("year").fit(history)
    forecast = year.predict(future.without_energy()).to_numpy()
    # 52 weeks (364 days) before, then repeated: the hours one season before the targets.
    np.testing.assert_array_equal(forecast, values[-364 * 24 : -364 * 24 + 168])


# -- statsmodels-based ---------------------------------------------------------------------


@pytest.fixture(scope="module")
def campus_year():
    return synthetic_campus("2022-01-01", "2023-02-01").inputs


def test_daily_ets_forecasts_what_statsmodels_forecasts(campus_year):
    fit = campus_year.window(end=pd.Timestamp("2023-01-01", tz=ZONE))
    future = campus_year.window(start=pd.Timestamp("2023-01-01", tz=ZONE))
    model = DailyETSModel().fit(fit)
    forecast = model.predict(future.without_energy())
    daily = _local_days(fit, fit.energy)
    reference = (
        ETSModel(
            daily.to_numpy(),
            error="add",
            trend="add",
            damped_trend=True,
            seasonal="add",
            seasonal_periods=7,
        )
        .fit(disp=False)
        .forecast(31)
    )
    # The optimiser stops at a tolerance, so summing the days in another order moves its
    # optimum very slightly: 1e-4 still catches any error in aggregating or spreading.
    np.testing.assert_allclose(_local_days(future, forecast).to_numpy(), reference, rtol=1e-4)
    assert model.converged_


def test_monthly_sarima_forecasts_what_statsmodels_forecasts():
    inputs = synthetic_campus("2021-01-01", "2023-04-01").inputs
    fit = inputs.window(end=pd.Timestamp("2023-01-01", tz=ZONE))
    future = inputs.window(start=pd.Timestamp("2023-01-01", tz=ZONE)).without_energy()
    model = MonthlySARIMAModel().fit(fit)
    daily = _local_days(fit, fit.energy)
    per_day = daily.groupby(daily.index.to_period("M")).mean()
    np.testing.assert_allclose(model.monthly_energy_, per_day.to_numpy(), rtol=1e-12)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", EstimationWarning)
        reference = SARIMAX(per_day.to_numpy(), order=(1, 0, 0), seasonal_order=(0, 1, 1, 12))
        expected = reference.fit(disp=False).forecast(3)
    days = _local_days(future, model.predict(future))
    local = future.index.tz_convert(ZONE).tz_localize(None).normalize()
    working = (future.labels["day_type"] == "weekday").groupby(local).first()
    ratio = model.day_group_ratios_[np.where(working.to_numpy(), 0, 1)]
    month = days.index.month - 1
    np.testing.assert_allclose((days / ratio).to_numpy(), expected[month], rtol=1e-4)


def test_monthly_sarima_needs_two_years(campus_year):
    with pytest.raises(InputError, match="at least 24"):
        MonthlySARIMAModel().fit(campus_year)


def test_mstl_ets_is_mstl_carried_forward_plus_ets(campus_year):
    fit = campus_year.window(end=pd.Timestamp("2022-04-01", tz=ZONE))
    model = MSTLETSModel().fit(fit)
    future = campus_year.window(
        start=pd.Timestamp("2022-04-01", tz=ZONE), end=pd.Timestamp("2022-04-08", tz=ZONE)
    )
    forecast = model.predict(future.without_energy()).to_numpy()
    values = fit.energy.to_numpy()
    seasonal = np.asarray(
        MSTL(values, periods=(24, 168), stl_kwargs=dict(MSTL_SETTINGS)).fit().seasonal
    )
    ets = ETSModel(values - seasonal.sum(axis=1), error="add", trend="add", damped_trend=True)
    trend = ets.fit(disp=False).forecast(len(forecast))
    # statsmodels' STLForecast carries each cycle forward by repeating its last period.
    cycles = seasonal[-24:, 0][np.arange(len(forecast)) % 24]
    cycles += seasonal[-168:, 1][np.arange(len(forecast)) % 168]
    np.testing.assert_allclose(forecast, trend + cycles, rtol=1e-6)


def test_mstl_ets_by_day_has_finite_forecasts_of_the_right_length(campus_year):
    fit = campus_year.window(end=pd.Timestamp("2023-01-01", tz=ZONE))
    future = campus_year.window(start=pd.Timestamp("2023-01-01", tz=ZONE)).without_energy()
    forecast = MSTLETSModel(resolution="day").fit(fit).predict(future)
    assert forecast.index.equals(future.index)
    assert np.isfinite(forecast.to_numpy()).all()


def test_repeated_seasons_carry_each_cycle_forward():
    parts = np.column_stack([np.tile([1.0, 2.0], 6), np.tile([10.0, 20.0, 30.0], 4)])
    path = repeated_seasons(parts, (2, 3), horizon=4)
    np.testing.assert_array_equal(path[:12], parts.sum(axis=1))
    np.testing.assert_array_equal(path[12:], [11.0, 22.0, 31.0, 12.0])


def test_benchmarks_refuse_to_predict_before_their_history(campus_year):
    fit = campus_year.window(start=pd.Timestamp("2022-06-01", tz=ZONE))
    earlier = campus_year.window(end=pd.Timestamp("2022-05-01", tz=ZONE)).without_energy()
    with pytest.raises(InputError, match="cannot predict"):
        DailyETSModel().fit(fit).predict(earlier)


# -- history handling ----------------------------------------------------------------------


def test_bridging_restarts_after_a_long_gap_and_fills_short_ones_a_season_back():
    values = np.arange(40, dtype=float)
    values[5:15] = np.nan  # long gap: the history restarts after it
    values[30] = np.nan  # short gap: filled from one season (7 steps) earlier
    start, filled = bridged_stretch(values, longest_gap=3, season=7, minimum=10, what="test")
    assert start == 15
    assert filled[30 - 15] == 23.0
    with pytest.raises(InputError, match="at least 30 steps"):
        bridged_stretch(values, longest_gap=3, season=7, minimum=30, what="test")


def test_estimation_notices_are_recorded_and_others_pass_through():
    def noisy() -> int:
        warnings.warn("did not converge", ConvergenceWarning, stacklevel=1)
        warnings.warn("few observations", EstimationWarning, stacklevel=1)
        return 7

    assert estimate(noisy) == (7, False)

    def surprising() -> int:
        warnings.warn("unexpected", RuntimeWarning, stacklevel=1)
        return 1

    with pytest.warns(RuntimeWarning, match="unexpected"):
        assert estimate(surprising) == (1, True)


@pytest.mark.parametrize(
    ("trend", "damped", "seasonal"),
    [("add", True, "add"), ("add", False, "add"), (None, False, "add"), ("add", True, None)],
)
def test_ets_runs_forecast_what_statsmodels_results_forecast(trend, damped, seasonal):
    # Reference: statsmodels' own ETSResults (smoothed with the same parameters), whose
    # forecast simulates the state equations with zero errors.
    days = np.arange(300)
    rng = np.random.default_rng(3)
    values = 500 + 0.3 * days + 40 * np.sin(2 * np.pi * days / 7) + rng.normal(0, 5, len(days))
    model = ETSModel(
        values,
        error="add",
        trend=trend,
        damped_trend=damped,
        seasonal=seasonal,
        seasonal_periods=7 if seasonal else None,
    )
    params, _ = fit_ets(model)
    reference = model.smooth(params)
    path = ETSRun.smooth(model, params).path(45)
    np.testing.assert_allclose(path[:300], reference.fittedvalues, rtol=1e-12)
    np.testing.assert_allclose(path[300:], reference.forecast(45), rtol=1e-12)


def test_ets_runs_refuse_multiplicative_forms():
    model = ETSModel(np.linspace(10, 20, 60), error="mul", trend="add")
    with pytest.raises(ValueError, match="additive"):
        ETSRun.smooth(model, model.start_params)
