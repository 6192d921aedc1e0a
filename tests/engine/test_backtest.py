"""Rolling-origin backtests with small models defined here, on data with known structure.

The invented meter is Kestrel Hall of the invented Bramhope Technical College, in an invented
climate: hourly energy = 120 kWh + 60 kWh on weekdays 08–18 h + 4 kWh per °C below 14 °C,
with temperatures from a smooth annual and daily cycle plus an AR(1) anomaly. Expected values
follow from that structure (worked out in the comments), not from running the code.
"""

from __future__ import annotations

import json
from typing import Any, ClassVar

import numpy as np
import pandas as pd
import pytest
from scipy.signal import lfilter

from engine.backtest import (
    ACTUAL_WEATHER,
    NO_WEATHER,
    TYPICAL_WEATHER,
    BacktestResult,
    backtest_origins,
    run_backtest,
    typical_on,
)
from engine.errors import InputError
from engine.models._family import ModelFamily
from engine.models.base import ModelInputs
from engine.progress import Cancelled, Progress
from engine.weather import typical_year

ZONE = "America/Chicago"
BASE_KWH, OCCUPIED_KWH, HEATING_KWH_PER_C, BALANCE_C = 120.0, 60.0, 4.0, 14.0


def local_hours(first: str, last: str, zone: str = ZONE) -> pd.DatetimeIndex:
    """UTC hour starts covering local days ``first`` to ``last`` inclusive."""
    start = pd.Timestamp(first).tz_localize(zone).tz_convert("UTC")
    stop = (pd.Timestamp(last) + pd.Timedelta(days=1)).tz_localize(zone).tz_convert("UTC")
    return pd.date_range(start, stop, freq="h", inclusive="left")


def invented_temperature(index: pd.DatetimeIndex, anomaly_sd: float = 3.0) -> pd.Series:
    local = index.tz_convert(ZONE)
    day, hour = local.day_of_year.to_numpy(), local.hour.to_numpy()
    phi = 0.98
    shocks = np.random.default_rng(6150).normal(0.0, anomaly_sd * np.sqrt(1 - phi**2), len(index))
    anomaly = lfilter([1.0], [1.0, -phi], shocks)
    cycle = 9.0 - 11.0 * np.cos(2 * np.pi * (day - 20) / 365.25)
    return pd.Series(cycle + 4.0 * np.cos(2 * np.pi * (hour - 15) / 24) + anomaly, index=index)


def true_load(index: pd.DatetimeIndex, temperature: pd.Series | None) -> np.ndarray:
    local = index.tz_convert(ZONE)
    hour = local.hour.to_numpy()
    occupied = (local.day_of_week.to_numpy() < 5) & (hour >= 8) & (hour < 18)
    heating = 0.0 if temperature is None else np.maximum(BALANCE_C - temperature.to_numpy(), 0)
    return BASE_KWH + OCCUPIED_KWH * occupied + HEATING_KWH_PER_C * heating


def invented_inputs(
    first: str = "2031-01-01", last: str = "2033-12-31", *, weather: bool = True
) -> ModelInputs:
    index = local_hours(first, last)
    temperature = invented_temperature(index) if weather else None
    energy = pd.Series(true_load(index, temperature), index=index)
    return ModelInputs(index=index, timezone=ZONE, energy=energy, temperature=temperature)


def hour_of_week(index: pd.DatetimeIndex, zone: str) -> np.ndarray:
    local = index.tz_convert(zone)
    return local.day_of_week.to_numpy() * 24 + local.hour.to_numpy()


class ToyModel(ModelFamily):
    """Shared plumbing of the small models below (not part of the engine)."""

    family: ClassVar[str] = "toy"
    label: ClassVar[str] = "Toy"
    explainable: ClassVar[bool] = True

    def to_dict(self) -> dict[str, Any]:
        return {}

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> ToyModel:
        return cls()


class ScaledTruth(ToyModel):
    """Knows the true load and predicts ``factor`` times it from the temperatures it is given."""

    family = "scaled_truth"
    label = "Scaled truth"

    def __init__(self, factor: float = 1.0) -> None:
        self.factor = factor

    def fit(self, inputs: ModelInputs) -> ScaledTruth:
        self.n_parameters_ = 1
        return self

    def predict(self, inputs: ModelInputs) -> pd.Series:
        return pd.Series(self.factor * true_load(inputs.index, inputs.temperature), inputs.index)


class HourOfWeekMean(ToyModel):
    """Mean energy by local hour of the week: calendar only."""

    family = "hour_of_week_mean"
    label = "Hour-of-week mean"

    def fit(self, inputs: ModelInputs) -> HourOfWeekMean:
        slot = hour_of_week(inputs.index, inputs.timezone)
        energy = inputs.energy.to_numpy()
        known = ~np.isnan(energy)
        sums = np.bincount(slot[known], weights=energy[known], minlength=168)
        self.means_ = sums / np.maximum(np.bincount(slot[known], minlength=168), 1)
        self.n_parameters_ = 168
        return self

    def predict(self, inputs: ModelInputs) -> pd.Series:
        return pd.Series(self.means_[hour_of_week(inputs.index, inputs.timezone)], inputs.index)


class SameHourLastWeek(ToyModel):
    """The last week of the training data, repeated by local hour of the week."""

    family = "same_hour_last_week"
    label = "Same hour last week"
    explainable = False

    def fit(self, inputs: ModelInputs) -> SameHourLastWeek:
        last_week = inputs.index[-168:]
        self.week_ = np.empty(168)
        self.week_[hour_of_week(last_week, inputs.timezone)] = inputs.energy.to_numpy()[-168:]
        self.n_parameters_ = 0
        return self

    def predict(self, inputs: ModelInputs) -> pd.Series:
        return pd.Series(self.week_[hour_of_week(inputs.index, inputs.timezone)], inputs.index)


class FailsEarly(ToyModel):
    """Refuses to fit on less than two years of data, as a real model might on short history."""

    family = "fails_early"
    label = "Fails early"

    def fit(self, inputs: ModelInputs) -> FailsEarly:
        if len(inputs.index) < 2 * 8760:
            raise ValueError("needs two years of history")
        self.n_parameters_ = 1
        return self

    def predict(self, inputs: ModelInputs) -> pd.Series:
        return pd.Series(BASE_KWH, index=inputs.index)


class Spy(ToyModel):
    """Records what it was given, to prove nothing after the origin leaks into a fit."""

    family = "spy"
    label = "Spy"
    seen: ClassVar[list[tuple[pd.Timestamp, pd.Timestamp, pd.Series | None]]] = []

    def fit(self, inputs: ModelInputs) -> Spy:
        self.last_trained_ = inputs.index[-1]
        self.n_parameters_ = 0
        return self

    def predict(self, inputs: ModelInputs) -> pd.Series:
        assert inputs.energy is None
        Spy.seen.append((self.last_trained_, inputs.index[0], inputs.temperature))
        return pd.Series(BASE_KWH, index=inputs.index)


@pytest.fixture(scope="module")
def three_years() -> ModelInputs:
    return invented_inputs()


@pytest.fixture(scope="module")
def three_model_run(three_years: ModelInputs) -> BacktestResult:
    models = {
        "truth": ScaledTruth(1.0),
        "low by 5 %": ScaledTruth(0.95),
        "hour of week": HourOfWeekMean(),
    }
    return run_backtest(models, three_years)


def test_origins_are_the_last_whole_local_months() -> None:
    index = local_hours("2031-03-15", "2033-02-10")
    origins = backtest_origins(index, ZONE)
    # The data end on 10 February 2033, so January 2033 is the last whole month: twelve
    # origins from February 2032 to January 2033, each at local midnight on the 1st.
    local = origins.tz_convert(ZONE)
    assert list(local.strftime("%Y-%m")) == [f"2032-{m:02d}" for m in range(2, 13)] + ["2033-01"]
    assert (local.day == 1).all() and (local.hour == 0).all()
    assert str(origins.tz) == "UTC"
    # Asking for more than there is: every whole month after the first (partial) one.
    everything = backtest_origins(index, ZONE, count=40).tz_convert(ZONE)
    assert everything[0].strftime("%Y-%m") == "2031-04" and len(everything) == 22
    # Data ending exactly at a month's end: that month is whole.
    assert (
        backtest_origins(local_hours("2031-01-01", "2031-12-31"), ZONE, 1)
        .tz_convert(ZONE)[0]
        .strftime("%Y-%m")
        == "2031-12"
    )


def test_known_bias_is_scored_as_worked_out(three_model_run: BacktestResult) -> None:
    result = three_model_run
    assert result.conditions == (ACTUAL_WEATHER, TYPICAL_WEATHER)
    assert len(result.origins) == 12
    exact = result.scorecard("truth", ACTUAL_WEATHER)
    low = result.scorecard("low by 5 %", ACTUAL_WEATHER)
    # Noise-free data: the true model is exact under actual weather.
    assert exact.cv_rmse == pytest.approx(0.0, abs=1e-9)
    assert exact.mase == pytest.approx(0.0, abs=1e-12)
    # 95 % of the truth: every error is 5 % of the actual, so NMBE = +5 % (Guideline 14
    # sign: predicts too little), every month total is 5 % low, monthly NMBE +5 %.
    assert low.nmbe == pytest.approx(5.0)
    assert low.monthly_nmbe == pytest.approx(5.0)
    assert low.month_total_mape == pytest.approx(5.0)
    months = result.months[
        (result.months["model"] == "low by 5 %") & (result.months["weather"] == ACTUAL_WEATHER)
    ]
    np.testing.assert_allclose(months["forecast vs actual %"], -5.0)
    # The pooled one-month-ahead forecasts cover the last 12 months exactly once.
    assert exact.months == 12
    last_year = (result.forecasts["start"] >= result.origins[0]).sum()
    hours_in_2033 = len(local_hours("2033-01-01", "2033-12-31"))
    assert exact.intervals == hours_in_2033 == 8760
    assert last_year > 0


def test_typical_weather_adds_the_weather_error(three_model_run: BacktestResult) -> None:
    actual = three_model_run.scorecard("truth", ACTUAL_WEATHER)
    typical = three_model_run.scorecard("truth", TYPICAL_WEATHER)
    calendar_only = three_model_run.scorecard("hour of week", TYPICAL_WEATHER)
    # Knowing the true model but not the weather leaves only the weather's anomaly.
    assert typical.cv_rmse > 1.0 > actual.cv_rmse
    # A calendar-only model does not depend on the weather condition.
    assert (
        calendar_only.cv_rmse == three_model_run.scorecard("hour of week", ACTUAL_WEATHER).cv_rmse
    )


def test_only_the_actual_weather_scores_as_the_full_run_does(
    three_years: ModelInputs, three_model_run: BacktestResult
) -> None:
    """The fit wizard ranks orders on the actual weather alone: asked for only that, the run
    learns no typical weather and its scores are the full run's under the actual weather."""
    models = {"truth": ScaledTruth(1.0), "low by 5 %": ScaledTruth(0.95)}
    alone = run_backtest(models, three_years, only_actual=True)
    assert alone.conditions == (ACTUAL_WEATHER,)
    assert {card.condition for card in alone.scorecards} == {ACTUAL_WEATHER}
    for name in models:
        assert alone.scorecard(name, ACTUAL_WEATHER) == three_model_run.scorecard(
            name, ACTUAL_WEATHER
        )
    no_weather = invented_inputs("2031-01-01", "2032-06-30", weather=False)
    assert run_backtest([HourOfWeekMean()], no_weather, origins=3, only_actual=True).conditions == (
        NO_WEATHER,
    )


def test_horizons_are_scored_only_on_whole_months(three_model_run: BacktestResult) -> None:
    scores = three_model_run.scores
    mine = scores[(scores["model"] == "low by 5 %") & (scores["weather"] == ACTUAL_WEATHER)]
    # 12 origins ending in December 2033: three whole months follow only the first ten.
    assert (mine["horizon months"] == 1).sum() == 12
    assert (mine["horizon months"] == 3).sum() == 10
    assert mine.loc[mine["horizon months"] == 3, "origin"].max() == "2033-10"
    months = three_model_run.months
    last = months[(months["origin"] == "2033-12") & (months["model"] == "truth")]
    assert last["lead"].tolist() == [1, 1]  # one per weather condition
    first = months[(months["origin"] == "2033-01") & (months["weather"] == ACTUAL_WEATHER)]
    assert sorted(first["month"].unique()) == ["2033-01", "2033-02", "2033-03"]
    # The 3-month total error is the sum of the three months, computed here with pandas.
    truth_first = first[first["model"] == "hour of week"]
    expected = 100 * (truth_first["predicted kWh"].sum() / truth_first["actual kWh"].sum() - 1)
    got = scores[
        (scores["origin"] == "2033-01")
        & (scores["model"] == "hour of week")
        & (scores["weather"] == ACTUAL_WEATHER)
        & (scores["horizon months"] == 3)
    ]["total forecast vs actual %"]
    assert got.item() == pytest.approx(expected)
    summary = three_model_run.summary()
    assert {"3-month total MAPE %", "origins scored", "mean fit seconds"} <= set(summary)
    assert summary["origins scored"].eq(12).all()


def test_nothing_after_the_origin_is_seen() -> None:
    inputs = invented_inputs("2031-01-01", "2032-12-31")
    Spy.seen.clear()
    result = run_backtest([Spy()], inputs, origins=3)
    origins = result.origins
    assert len(Spy.seen) == 3 * 2  # three origins, two weather conditions
    for last_trained, first_forecast, _ in Spy.seen:
        assert last_trained < first_forecast and first_forecast in origins
    # Typical weather at each origin is learned from the temperatures before it only.
    typical_seen = [temps for _, _, temps in Spy.seen[1::2]]
    for origin, temps in zip(origins, typical_seen, strict=True):
        before = inputs.temperature[inputs.temperature.index < origin]
        expected = typical_on(typical_year(before, ZONE), temps.index, pd.Timedelta(hours=1))
        pd.testing.assert_series_equal(temps, expected, check_names=False)

    # Changing the weather after the first origin must not change its typical forecast.
    hotter = inputs.temperature.where(inputs.temperature.index < origins[0], 35.0)
    changed = ModelInputs(inputs.index, ZONE, inputs.energy, hotter)
    first = run_backtest([ScaledTruth()], inputs, origins=3).forecasts
    second = run_backtest([ScaledTruth()], changed, origins=3).forecasts
    pick = (first["origin"] == first["origin"].min()) & (first["weather"] == TYPICAL_WEATHER)
    np.testing.assert_array_equal(first[pick]["predicted kWh"], second[pick]["predicted kWh"])
    actual = first["weather"] == ACTUAL_WEATHER
    assert not np.array_equal(first[actual]["predicted kWh"], second[actual]["predicted kWh"])


def test_a_failing_model_is_recorded_and_the_run_goes_on(three_years: ModelInputs) -> None:
    # 18 origins: July 2032 … December 2033. The model needs 17,520 hours; 2031 and the
    # leap year 2032 give 17,544 hours before January 2033, so only the six origins of
    # July–December 2032 fail, under both weather conditions, at the fit stage.
    early = run_backtest([FailsEarly(), HourOfWeekMean()], three_years, origins=18)
    failed = early.failures
    assert sorted(failed["origin"].unique()) == [f"2032-{m:02d}" for m in range(7, 13)]
    assert len(failed) == 12 and failed["stage"].eq("fit").all()
    assert failed["message"].str.contains("needs two years of history").all()
    assert early.failed_origins("fails_early", ACTUAL_WEATHER) == 6
    assert early.failed_origins("hour_of_week_mean", ACTUAL_WEATHER) == 0
    assert not early.fits.loc[early.fits["model"] == "fails_early", "fitted"].all()
    assert early.scorecard("hour_of_week_mean", TYPICAL_WEATHER).months == 18


def test_progress_steps_per_origin_and_model_and_cancel() -> None:
    inputs = invented_inputs("2031-01-01", "2032-06-30", weather=False)
    seen: list[tuple[float, str]] = []
    run_backtest(
        [HourOfWeekMean(), SameHourLastWeek()],
        inputs,
        origins=4,
        progress=Progress(lambda f, m: seen.append((f, m))),
    )
    fractions = [f for f, _ in seen]
    assert fractions == sorted(fractions) and fractions[-1] == 1.0
    for month in ("2032-03", "2032-06"):
        assert any(month in m and "Same hour last week" in m for _, m in seen)

    progress = Progress()
    calls = []

    def listener(fraction: float, message: str) -> None:
        calls.append(message)
        if len(calls) == 3:
            progress.cancel()

    progress = Progress(listener)
    with pytest.raises(Cancelled):
        run_backtest([HourOfWeekMean()], inputs, origins=4, progress=progress)
    assert len(calls) == 3


def test_without_temperatures_there_is_one_condition() -> None:
    inputs = invented_inputs("2031-01-01", "2032-06-30", weather=False)
    result = run_backtest([HourOfWeekMean(), SameHourLastWeek()], inputs, origins=6)
    assert result.conditions == (NO_WEATHER,)
    assert {card.condition for card in result.scorecards} == {NO_WEATHER}
    # Without weather the load is weekly-periodic: both toy models are exact.
    for card in result.scorecards:
        assert card.cv_rmse == pytest.approx(0.0, abs=1e-9)


def test_typical_weather_needs_a_year_before_the_origin() -> None:
    inputs = invented_inputs("2031-01-01", "2032-06-30")
    result = run_backtest([HourOfWeekMean()], inputs, origins=12)
    skipped = result.failures[result.failures["stage"] == TYPICAL_WEATHER]
    # Origins July 2031 … December 2031 have under a year of weather before them; from
    # January 2032 on every calendar month has been seen once.
    assert sorted(skipped["origin"]) == [f"2031-{m:02d}" for m in range(7, 13)]
    assert skipped["message"].str.contains("typical year").all()
    # The data's limit, shared by every model: not counted as the model failing.
    assert result.failed_origins("hour_of_week_mean", TYPICAL_WEATHER) == 0
    assert result.scorecard("hour_of_week_mean", TYPICAL_WEATHER).months == 6
    assert result.scorecard("hour_of_week_mean", ACTUAL_WEATHER).months == 12


def test_daily_inputs_take_typical_daily_means() -> None:
    hourly = invented_inputs("2031-01-01", "2032-12-31")
    days = pd.date_range("2031-01-01", "2032-12-31", freq="D").tz_localize(ZONE)
    daily_index = pd.DatetimeIndex(days.tz_convert("UTC"))
    local_day = hourly.index.tz_convert(ZONE).tz_localize(None).normalize()
    daily_energy = hourly.energy.groupby(local_day).sum()
    daily_temp = hourly.temperature.groupby(local_day).mean()
    inputs = ModelInputs(
        daily_index,
        ZONE,
        pd.Series(daily_energy.to_numpy(), daily_index),
        pd.Series(daily_temp.to_numpy(), daily_index),
    )
    with pytest.raises(InputError, match="hourly temperatures"):
        run_backtest([HourOfWeekMean()], inputs, origins=2)
    result = run_backtest([HourOfWeekMean()], inputs, origins=2, weather_history=hourly.temperature)
    assert result.interval == pd.Timedelta(days=1)
    assert result.scorecard("hour_of_week_mean", TYPICAL_WEATHER).months == 2
    # typical_on for days: the mean of the typical hours of each local day, computed here
    # with a pandas group-by on the local date instead.
    typical = typical_year(hourly.temperature, ZONE)
    november = daily_index[(days.month == 11) & (days.year == 2032)]
    on_days = typical_on(typical, november, pd.Timedelta(days=1))
    hours = typical.hourly(pd.Timestamp("2032-11-01").date(), pd.Timestamp("2032-11-30").date())
    by_date = hours.groupby(hours.index.tz_convert(ZONE).date).mean()
    np.testing.assert_allclose(on_days.to_numpy(), by_date.to_numpy())
    assert len(on_days) == 30  # the autumn clock change makes one 25-hour day; still 30 days


def test_short_data_and_bad_arguments_are_refused() -> None:
    inputs = invented_inputs("2031-01-10", "2031-02-20")
    with pytest.raises(InputError, match="whole calendar month"):
        run_backtest([HourOfWeekMean()], inputs)
    with pytest.raises(InputError, match="energy history"):
        run_backtest([HourOfWeekMean()], inputs.without_energy())
    full = invented_inputs("2031-01-01", "2031-06-30")
    with pytest.raises(ValueError, match="include 1"):
        run_backtest([HourOfWeekMean()], full, horizons=(3,))
    with pytest.raises(ValueError, match="share the name"):
        run_backtest([HourOfWeekMean(), HourOfWeekMean()], full)


def test_json_round_trip(three_model_run: BacktestResult) -> None:
    compact = json.loads(json.dumps(three_model_run.to_dict(), allow_nan=False))
    back = BacktestResult.from_dict(compact)
    assert back.forecasts is None
    assert back.scorecards == three_model_run.scorecards
    assert back.origins.equals(three_model_run.origins)
    assert back.models == three_model_run.models
    for name in ("fits", "scores", "months", "failures"):
        pd.testing.assert_frame_equal(
            getattr(back, name), getattr(three_model_run, name), check_dtype=False
        )
    full = BacktestResult.from_dict(
        json.loads(json.dumps(three_model_run.to_dict(include_forecasts=True), allow_nan=False))
    )
    pd.testing.assert_frame_equal(full.forecasts, three_model_run.forecasts, check_dtype=False)
