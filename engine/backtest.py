"""Rolling-origin backtests: refit before each month, forecast the months after it, score.

The origins are the starts of the last N whole local calendar months of the data (default 12).
At each origin every model is refitted on the data before it (``inputs.window(end=origin)``)
and forecasts the following months up to the longest horizon (default 3). A shorter horizon is
scored on the first months of that same forecast: the model contract makes a forecast of each
interval independent of how far the forecast window reaches, so one prediction serves all
horizons. A horizon is scored only where all its months lie within the data.

Each fitted model forecasts under two weather conditions, reported separately:

* ``"actual weather"`` — the measured temperatures of the forecast months, which shows the
  model's own error;
* ``"typical weather"`` — a typical year (:func:`engine.weather.typical_year`) learned from
  the temperatures before the origin only, as a budget made at the origin would have had;
  this adds the error of not knowing the weather.

Without temperatures there is one condition, ``"no weather"``.

A model that fails at one origin (in fitting or forecasting) is recorded with its message and
the run goes on; cancelling (:class:`engine.progress.Cancelled`) stops the whole run.

Speed: each model is fitted once per origin and serves both weather conditions; the typical
year is learned once per origin; month keys are computed once for the whole index and sliced;
forecasts are scored on plain arrays and month totals summed in one pass at the end. On three
years of hourly data with 12 origins this bookkeeping takes about 1–2 s for eight models; the
rest is the models' own fitting.
"""

from __future__ import annotations

import copy
import math
import time
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
import pandas as pd

from engine.errors import InputError
from engine.models.base import EnergyModel, ModelInputs
from engine.progress import Cancelled, Progress, step
from engine.project.columns import frame_from_columns, frame_to_columns
from engine.scoring import (
    Scorecard,
    cv_rmse,
    forecast_vs_actual_percent,
    local_months,
    mae,
    mean_scaled_error,
    month_total_mape,
    nmbe,
    score_forecast,
    seasonal_naive_mae,
    total_by,
)
from engine.weather import TypicalWeather, TypicalYears
from engine.words import counted

ACTUAL_WEATHER = "actual weather"
TYPICAL_WEATHER = "typical weather"
NO_WEATHER = "no weather"
#: A model already fitted at an origin, with the seconds its fit took.
Fitted = tuple[EnergyModel, float]
#: The stage recorded for origins a raced model skipped (:class:`Race`): not a failure.
STOPPED = "stopped"
#: What each condition gives the models for the forecast months, in plain words.
CONDITIONS: dict[str, str] = {
    ACTUAL_WEATHER: "the measured temperatures of the forecast months",
    TYPICAL_WEATHER: "a typical year learned from the temperatures before each origin",
    NO_WEATHER: "no temperatures (calendar only)",
}
_HOUR = pd.Timedelta(hours=1)
_WEEK = pd.Timedelta(weeks=1)


def _month_start(month: pd.Period, timezone: str) -> pd.Timestamp:
    """Local midnight starting ``month``, in UTC."""
    local = month.start_time.tz_localize(timezone, nonexistent="shift_forward", ambiguous=True)
    return local.tz_convert("UTC")


def _local_month(moment: pd.Timestamp, timezone: str) -> pd.Period:
    return moment.tz_convert(timezone).tz_localize(None).to_period("M")


def _data_end(index: pd.DatetimeIndex, interval: pd.Timedelta) -> pd.Timestamp:
    return index[-1] + interval


def _last_whole_month(index: pd.DatetimeIndex, interval: pd.Timedelta, timezone: str) -> pd.Period:
    """The last local month whose every interval start lies within the data's span."""
    return _local_month(_data_end(index, interval), timezone) - 1


def backtest_origins(
    index: pd.DatetimeIndex, timezone: str, count: int = 12, interval: pd.Timedelta | None = None
) -> pd.DatetimeIndex:
    """Starts (UTC) of the last ``count`` whole local calendar months with history before them.

    A month is whole when the data's span reaches its end; the first month of the data is
    never an origin (nothing lies before it). Fewer origins come back when the data are short.
    """
    if count < 1:
        raise ValueError("a backtest needs at least one origin")
    if len(index) < 2:
        return pd.DatetimeIndex([], tz="UTC")
    interval = interval if interval is not None else index[1] - index[0]
    first = _local_month(index[0], timezone) + 1
    last = _last_whole_month(index, interval, timezone)
    if last < first:
        return pd.DatetimeIndex([], tz="UTC")
    months = pd.period_range(max(first, last - (count - 1)), last, freq="M")
    return pd.DatetimeIndex([_month_start(month, timezone) for month in months])


def typical_on(
    typical: TypicalWeather, index: pd.DatetimeIndex, interval: pd.Timedelta
) -> pd.Series:
    """Typical temperatures on an index of interval starts (interval means for long intervals).

    Intervals up to an hour take the typical value of the hour they start in; longer ones
    (days) the mean of the typical hours they contain.
    """
    local = index.tz_convert(typical.timezone)
    last = (index[-1] + interval - pd.Timedelta(1, "ns")).tz_convert(typical.timezone)
    hourly = typical.hourly(local[0].date(), last.date())
    if interval <= _HOUR:
        values = hourly.reindex(index, method="ffill").to_numpy()
    else:
        position = index.searchsorted(hourly.index, side="right") - 1
        inside = (position >= 0) & (hourly.index < index[-1] + interval)
        means = pd.Series(hourly.to_numpy()[inside]).groupby(position[inside]).mean()
        values = means.reindex(range(len(index))).to_numpy()
    return pd.Series(values, index=index, name="temperature")


def _failure_message(error: Exception) -> str:
    if isinstance(error, InputError):
        return error.message
    return f"{type(error).__name__}: {error}"


def _named(models: Mapping[str, EnergyModel] | Sequence[EnergyModel]) -> dict[str, EnergyModel]:
    if isinstance(models, Mapping):
        named = dict(models)
    else:
        named = {}
        for model in models:
            if model.family in named:
                raise ValueError(
                    f"two models share the name {model.family!r}; pass a mapping of names"
                )
            named[model.family] = model
    if not named:
        raise ValueError("a backtest needs at least one model")
    return named


@dataclass(frozen=True)
class ModelInfo:
    """What a backtest records about each model it ran."""

    family: str
    label: str
    explainable: bool
    #: The model's constructor settings (tuned orders included); empty in results stored
    #: before they were recorded.
    settings: dict[str, Any] = field(default_factory=dict)


@dataclass(frozen=True)
class BacktestResult:
    """Everything one backtest produced, as plain tables.

    Attributes
    ----------
    timezone, interval : the site's zone and the data's interval.
    origins : UTC month starts the models were refitted before.
    origins_requested : how many origins were asked for (more than ``origins`` on short data).
    horizons : forecast lengths scored, in months.
    conditions : weather conditions run (see :data:`CONDITIONS`).
    history_start : the first interval with a meter reading.
    models : name → :class:`ModelInfo`.
    fits : one row per origin × model: ``origin`` (``"YYYY-MM"``), ``model``,
        ``fit seconds``, ``parameters``, ``fitted``.
    scores : one row per origin × model × weather × horizon: ``intervals``, ``CV(RMSE) %``,
        ``NMBE %``, ``MAE kWh``, ``MASE``, ``month-total MAPE %``, ``total forecast vs actual %``
        (the whole horizon's total).
    months : one row per origin × model × weather × forecast month: ``lead`` (1 = the month
        starting at the origin), totals and ``forecast vs actual %``.
    failures : ``origin``, ``model``, ``weather``, ``stage``, ``message``.
    scorecards : per model and weather, the one-month-ahead forecasts of all origins pooled
        (together they cover the last months once each). Out-of-sample, so p = 0.
    forecasts : per interval: ``origin``, ``model``, ``weather``, ``start`` (UTC), ``month``
        (local), ``lead``, ``actual kWh``, ``predicted kWh``; None when loaded without them.
    fitted : model name → origin (``"YYYY-MM"``) → the model fitted before it, when the run
        was asked to keep them (never stored: a budget's refits reuse them in the same run).
    """

    timezone: str
    interval: pd.Timedelta
    origins: pd.DatetimeIndex
    origins_requested: int
    horizons: tuple[int, ...]
    conditions: tuple[str, ...]
    history_start: pd.Timestamp
    models: dict[str, ModelInfo]
    fits: pd.DataFrame
    scores: pd.DataFrame
    months: pd.DataFrame
    failures: pd.DataFrame
    scorecards: tuple[Scorecard, ...]
    forecasts: pd.DataFrame | None = None
    fitted: dict[str, dict[str, EnergyModel]] = field(default_factory=dict, repr=False)

    def scorecard(self, model: str, condition: str) -> Scorecard | None:
        """The pooled scorecard of one model under one weather condition, if it has one."""
        for card in self.scorecards:
            if card.model == model and card.condition == condition:
                return card
        return None

    def summary(self) -> pd.DataFrame:
        """One row per model and weather: scorecard, longer-horizon total error, failures, speed."""
        rows = []
        for card in self.scorecards:
            row = card.as_row()
            mine = self.scores[
                (self.scores["model"] == card.model) & (self.scores["weather"] == card.condition)
            ]
            for horizon in self.horizons[1:]:
                totals = mine.loc[mine["horizon months"] == horizon, "total forecast vs actual %"]
                row[f"{horizon}-month total MAPE %"] = month_total_mape(totals)
            row["origins scored"] = int(mine.loc[mine["horizon months"] == 1, "origin"].nunique())
            row["origins failed"] = self.failed_origins(card.model, card.condition)
            fits = self.fits[(self.fits["model"] == card.model) & self.fits["fitted"]]
            row["mean fit seconds"] = float(fits["fit seconds"].mean()) if len(fits) else math.nan
            rows.append(row)
        return pd.DataFrame(rows)

    def model_failures(self, model: str, condition: str) -> pd.DataFrame:
        """The model's own failures under a condition: in fitting or forecasting.

        An origin without typical weather is left out: that is the data's limit, shared by
        every model, not the model's failure; so are the origins a raced model skipped.
        """
        failures = self.failures
        return failures[
            (failures["model"] == model)
            & (failures["weather"] == condition)
            & ~failures["stage"].isin((TYPICAL_WEATHER, STOPPED))
        ]

    def stopped(self, model: str) -> str:
        """Why a raced model stopped before the last origin ("" when it ran every one)."""
        rows = self.failures[
            (self.failures["model"] == model) & (self.failures["stage"] == STOPPED)
        ]
        return str(rows["message"].iloc[0]) if len(rows) else ""

    def failed_origins(self, model: str, condition: str) -> int:
        """How many origins a model failed at under a condition (see :meth:`model_failures`)."""
        return int(self.model_failures(model, condition)["origin"].nunique())

    def to_dict(self, include_forecasts: bool = False) -> dict[str, Any]:
        """JSON-safe form for the project file (a ``"backtest"`` document, versioned there:
        :mod:`engine.project.documents`); per-interval forecasts only when asked."""
        return {
            "timezone": self.timezone,
            "interval_seconds": self.interval.total_seconds(),
            "origins": [origin.isoformat() for origin in self.origins],
            "origins_requested": self.origins_requested,
            "horizons": list(self.horizons),
            "conditions": list(self.conditions),
            "history_start": self.history_start.isoformat(),
            "models": {
                name: {
                    "family": i.family,
                    "label": i.label,
                    "explainable": i.explainable,
                    "settings": i.settings,
                }
                for name, i in self.models.items()
            },
            "fits": frame_to_columns(self.fits),
            "scores": frame_to_columns(self.scores),
            "months": frame_to_columns(self.months),
            "failures": frame_to_columns(self.failures),
            "scorecards": [card.to_dict() for card in self.scorecards],
            "forecasts": (
                frame_to_columns(self.forecasts)
                if include_forecasts and self.forecasts is not None
                else None
            ),
        }

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> BacktestResult:
        """The backtest from :meth:`to_dict` (the project brings older documents up to date)."""
        forecasts = data.get("forecasts")
        fits = frame_from_columns(data["fits"])
        fits["fitted"] = fits["fitted"].astype(bool)
        return cls(
            timezone=data["timezone"],
            interval=pd.Timedelta(seconds=data["interval_seconds"]),
            origins=pd.DatetimeIndex(pd.to_datetime(data["origins"], utc=True)),
            origins_requested=int(data["origins_requested"]),
            horizons=tuple(int(h) for h in data["horizons"]),
            conditions=tuple(data["conditions"]),
            history_start=pd.Timestamp(data["history_start"]),
            models={name: ModelInfo(**info) for name, info in data["models"].items()},
            fits=fits,
            scores=frame_from_columns(data["scores"]),
            months=frame_from_columns(data["months"]),
            failures=frame_from_columns(data["failures"]),
            scorecards=tuple(Scorecard.from_dict(card) for card in data["scorecards"]),
            forecasts=None if forecasts is None else frame_from_columns(forecasts, ("start",)),
        )


@dataclass(frozen=True)
class _Plan:
    """What every origin shares: the inputs, settings and per-interval month keys."""

    inputs: ModelInputs
    typical: TypicalYears | None
    conditions: tuple[str, ...]
    horizons: tuple[int, ...]
    season: int
    month_names: np.ndarray
    month_numbers: np.ndarray
    last_month: pd.Period


@dataclass(frozen=True)
class _Window:
    """One origin's slices of the data, computed once and shared by every model."""

    name: str
    training: ModelInputs
    ahead: ModelInputs
    actual: np.ndarray
    months: np.ndarray
    lead: np.ndarray
    horizons: tuple[int, ...]
    naive_scale: float
    temperatures: dict[str, pd.Series | None]
    weather_problem: str | None


def _prepare_window(plan: _Plan, origin: pd.Timestamp) -> _Window:
    """Slice the data for one origin and learn its typical weather (from before it only)."""
    inputs = plan.inputs
    month = _local_month(origin, inputs.timezone)
    reach = min(plan.horizons[-1], (plan.last_month - month).n + 1)
    end = _month_start(month + reach, inputs.timezone)
    training = inputs.window(end=origin)
    ahead = inputs.window(start=origin, end=end)
    positions = slice(*inputs.index.searchsorted([origin, end]))
    temperatures: dict[str, pd.Series | None] = {}
    problem = None
    for condition in plan.conditions:
        temperatures[condition] = ahead.temperature if condition == ACTUAL_WEATHER else None
        if condition == TYPICAL_WEATHER:
            try:
                typical = plan.typical.before(origin)
                temperatures[condition] = typical_on(typical, ahead.index, inputs.interval)
            except InputError as error:
                problem = f"no typical weather before {month}: {error.message}"
    return _Window(
        name=str(month),
        training=training,
        ahead=ahead,
        actual=ahead.energy.to_numpy(dtype=np.float64),
        months=plan.month_names[positions],
        lead=plan.month_numbers[positions] - (month.year * 12 + month.month) + 1,
        horizons=tuple(h for h in plan.horizons if h <= reach),
        naive_scale=seasonal_naive_mae(training.energy.to_numpy(), plan.season),
        temperatures=temperatures,
        weather_problem=problem,
    )


class _Collector:
    """Rows gathered during a run, turned into the result's tables at the end."""

    def __init__(self, keep_fitted: bool = False) -> None:
        self.keep_fitted = keep_fitted
        self.misses: dict[tuple[str, str], list[float]] = {}
        self.fitted: dict[str, dict[str, EnergyModel]] = {}
        self.fits: list[dict[str, Any]] = []
        self.scores: list[dict[str, Any]] = []
        self.failures: list[dict[str, Any]] = []
        self.pieces: list[dict[str, Any]] = []

    def fit(self, window: _Window, model: str, seconds: float, fitted: EnergyModel | None) -> None:
        parameters = math.nan if fitted is None else getattr(fitted, "n_parameters_", math.nan)
        if fitted is not None and self.keep_fitted:
            self.fitted.setdefault(model, {})[window.name] = fitted
        self.fits.append(
            {
                "origin": window.name,
                "model": model,
                "fit seconds": seconds,
                "parameters": parameters,
                "fitted": not math.isnan(seconds),
            }
        )

    def fail(self, window: _Window, model: str, condition: str, stage: str, message: str) -> None:
        self.failures.append(
            {
                "origin": window.name,
                "model": model,
                "weather": condition,
                "stage": stage,
                "message": message,
            }
        )

    def forecast(self, window: _Window, model: str, condition: str, predicted: np.ndarray) -> None:
        """Score one forecast per interval for every horizon; keep it for the tables."""
        first = (window.lead == 1) & ~np.isnan(window.actual) & ~np.isnan(predicted)
        miss = forecast_vs_actual_percent(window.actual[first].sum(), predicted[first].sum())
        self.misses.setdefault((model, condition), []).append(float(np.abs(miss)))
        for horizon in window.horizons:
            within = window.lead <= horizon
            y, y_hat = window.actual[within], predicted[within]
            self.scores.append(
                {
                    "origin": window.name,
                    "model": model,
                    "weather": condition,
                    "horizon months": horizon,
                    "intervals": int(np.sum(~np.isnan(y) & ~np.isnan(y_hat))),
                    "CV(RMSE) %": cv_rmse(y, y_hat),
                    "NMBE %": nmbe(y, y_hat),
                    "MAE kWh": mae(y, y_hat),
                    "MASE": mean_scaled_error(y, y_hat, window.naive_scale),
                }
            )
        self.pieces.append(
            {
                "origin": window.name,
                "model": model,
                "weather": condition,
                "start": window.ahead.index,
                "month": window.months,
                "lead": window.lead,
                "actual kWh": window.actual,
                "predicted kWh": predicted,
                "naive scale": window.naive_scale,
            }
        )

    def lead_one_misses(self, model: str, condition: str) -> list[float]:
        """Per origin so far, the absolute month-total error % of the first forecast month."""
        return self.misses.get((model, condition), [])

    def forecast_table(self) -> pd.DataFrame:
        """Every kept forecast, one row per interval, built in one go."""
        sizes = [len(piece["start"]) for piece in self.pieces]
        columns: dict[str, Any] = {}
        for name in ("origin", "model", "weather", "naive scale"):
            columns[name] = np.repeat([piece[name] for piece in self.pieces], sizes)
        for name in ("month", "lead", "actual kWh", "predicted kWh"):
            columns[name] = np.concatenate([piece[name] for piece in self.pieces])
        starts = [piece["start"] for piece in self.pieces]
        columns["start"] = starts[0].append(starts[1:])
        order = ["origin", "model", "weather", "start", "month", "lead", "actual kWh"]
        return pd.DataFrame(columns)[[*order, "predicted kWh", "naive scale"]]


def _run_one(
    window: _Window,
    name: str,
    prototype: EnergyModel,
    out: _Collector,
    fitted: Fitted | Exception | None = None,
) -> None:
    """Fit one model at one origin (or take its ``fitted`` model and fit seconds, or the
    error its fit raised) and forecast under every condition, recording failures."""
    if isinstance(fitted, Exception):
        out.fit(window, name, math.nan, None)
        for condition in window.temperatures:
            out.fail(window, name, condition, "fit", _failure_message(fitted))
        return
    if fitted is not None:
        model, seconds = fitted
    else:
        model = copy.deepcopy(prototype)
        started = time.perf_counter()
        try:
            model.fit(window.training)
        except Cancelled:
            raise
        except Exception as error:  # any model failure is recorded, not raised
            _run_one(window, name, prototype, out, error)
            return
        seconds = time.perf_counter() - started
    out.fit(window, name, seconds, model)
    for condition, temperature in window.temperatures.items():
        if condition == TYPICAL_WEATHER and window.weather_problem is not None:
            out.fail(window, name, condition, TYPICAL_WEATHER, window.weather_problem)
            continue
        ahead = replace(window.ahead, energy=None, temperature=temperature)
        try:
            predicted = model.predict(ahead)
        except Cancelled:
            raise
        except Exception as error:  # any model failure is recorded, not raised
            out.fail(window, name, condition, "forecast", _failure_message(error))
            continue
        if isinstance(predicted, pd.Series):
            predicted = predicted.reindex(ahead.index)
        values = np.asarray(predicted, dtype=np.float64)
        if values.shape != window.actual.shape or not np.isfinite(values).any():
            out.fail(window, name, condition, "forecast", "the forecast has no usable values")
            continue
        out.forecast(window, name, condition, values)


def _fits_at(
    prototype: EnergyModel,
    inputs: ModelInputs,
    starts: pd.DatetimeIndex,
    given: Mapping[str, Fitted],
) -> dict[str, Fitted | Exception]:
    """Per origin month, the model fitted on the data before it (or its fit's error): the
    ``given`` fits as they are, the others by one :meth:`fit_before_each` of the family,
    which shares work between the windows where the family can."""
    months = {str(_local_month(start, inputs.timezone)): start for start in starts}
    missing = {month: start for month, start in months.items() if month not in given}
    started = time.perf_counter()
    made = prototype.fit_before_each(inputs, list(missing.values())) if missing else []
    seconds = (time.perf_counter() - started) / max(len(missing), 1)
    fits: dict[str, Fitted | Exception] = dict(given)
    for month, model in zip(missing, made, strict=True):
        fits[month] = model if isinstance(model, Exception) else (model, seconds)
    return fits


def _hourly_history(inputs: ModelInputs, weather_history: pd.Series | None) -> pd.Series | None:
    if weather_history is not None:
        return weather_history
    if inputs.temperature is None:
        return None
    if inputs.interval > _HOUR:
        raise InputError(
            "typical weather for the backtest needs hourly temperatures, but the model inputs "
            f"are {inputs.interval} apart.",
            hint="Pass the hourly weather history as weather_history.",
        )
    return inputs.temperature


def _plan(
    inputs: ModelInputs,
    horizons: Sequence[int],
    weather_history: pd.Series | TypicalYears | None,
    season_length: int | None,
    only_actual: bool = False,
) -> _Plan:
    if inputs.energy is None:
        raise InputError(
            "the backtest needs the meter's energy history.", hint="Choose a meter with readings."
        )
    if not inputs.energy.notna().any():
        raise InputError("the meter has no readings to backtest.", hint="Import readings first.")
    steps = tuple(sorted({int(h) for h in horizons}))
    if not steps or steps[0] != 1:
        raise ValueError("the horizons must be whole months and include 1")
    if only_actual:
        typical = None
    elif isinstance(weather_history, TypicalYears):
        typical = weather_history
    else:
        weather = _hourly_history(inputs, weather_history)
        typical = None if weather is None else TypicalYears(weather, inputs.timezone)
    local = inputs.index.tz_convert(inputs.timezone)
    return _Plan(
        inputs=inputs,
        typical=typical,
        conditions=_conditions(inputs, typical, only_actual),
        horizons=steps,
        season=season_length or max(round(_WEEK / inputs.interval), 1),
        month_names=local_months(inputs.index, inputs.timezone),
        month_numbers=local.year.to_numpy(dtype=np.int64) * 12
        + local.month.to_numpy(dtype=np.int64),
        last_month=_last_whole_month(inputs.index, inputs.interval, inputs.timezone),
    )


def _conditions(
    inputs: ModelInputs, typical: TypicalYears | None, only_actual: bool
) -> tuple[str, ...]:
    if only_actual and inputs.temperature is not None:
        return (ACTUAL_WEATHER,)
    return (ACTUAL_WEATHER, TYPICAL_WEATHER) if typical is not None else (NO_WEATHER,)


@dataclass(frozen=True)
class Race:
    """Stop models that can no longer be recommended, instead of running every origin.

    The wizard recommends a model by its month-total MAPE under the ranking condition
    (``condition`` when the run has it, else :func:`ranking_condition`) and prefers an
    explainable one unless another beats it by more than ``margin`` points. A model named in
    ``families`` therefore runs after the others, origin by origin, and stops as soon as the
    sum of its absolute month-total errors so far, divided by the number of origins, is at
    least the best explainable model's MAPE (over every origin, none failed) less ``margin``:
    its final MAPE can only be higher, so it could not be recommended. The origins it skips are
    recorded with the stage :data:`STOPPED`, which is not a failure.
    """

    families: frozenset[str]
    margin: float
    condition: str | None = None

    def takes(self, model: EnergyModel) -> bool:
        return model.family in self.families

    def bar(self, out: _Collector, plan: _Plan, others: list[str], origins: int) -> float:
        """The month-total MAPE a racer must stay below: the best complete explainable
        model's, less the margin (minus infinity, so nothing stops, when none completed)."""
        condition = ranking_condition(plan, self.condition)
        best = math.inf
        for name in others:
            misses = out.lead_one_misses(name, condition)
            failed = any(f["model"] == name for f in out.failures)
            if len(misses) == origins and not failed:
                best = min(best, float(np.nanmean(misses)))
        return best - self.margin


def ranking_condition(plan: _Plan, preferred: str | None = None) -> str:
    """The condition month totals are ranked on: ``preferred`` when the run has it, else
    typical weather, else none."""
    if preferred in plan.conditions:
        return preferred
    return TYPICAL_WEATHER if TYPICAL_WEATHER in plan.conditions else NO_WEATHER


def _run_racer(
    windows: list[_Window],
    name: str,
    prototype: EnergyModel,
    out: _Collector,
    bar: float,
    condition: str,
    progress: Progress | None,
) -> None:
    """Run one racing model origin by origin until it can no longer be recommended."""
    for number, window in enumerate(windows):
        step(progress, number / len(windows), f"Backtest from {window.name}: {prototype.label}")
        _run_one(window, name, prototype, out)
        misses = out.lead_one_misses(name, condition)
        if np.nansum(misses) / len(windows) >= bar and number + 1 < len(windows):
            for later in windows[number + 1 :]:
                for stopped in window.temperatures:
                    out.fail(later, name, stopped, STOPPED, _stopped_text(misses, bar))
            return


def _stopped_text(misses: list[float], bar: float) -> str:
    scored = [miss for miss in misses if not math.isnan(miss)]
    so_far = (
        f"its month totals were already off by {sum(scored) / len(scored):.1f} % on average"
        if scored
        else "no month of it could be scored yet"
    )
    return (
        f"stopped after {counted(len(misses), 'origin')}: {so_far}, and it could not come below "
        f"{max(bar, 0.0):.1f} % (the best explainable model's month-total MAPE less the margin)"
    )


def run_backtest(
    models: Mapping[str, EnergyModel] | Sequence[EnergyModel],
    inputs: ModelInputs,
    *,
    origins: int = 12,
    horizons: Sequence[int] = (1, 3),
    weather_history: pd.Series | TypicalYears | None = None,
    season_length: int | None = None,
    keep_fitted: bool = False,
    race: Race | None = None,
    fitted: Mapping[str, Mapping[str, Fitted]] | None = None,
    only_actual: bool = False,
    progress: Progress | None = None,
) -> BacktestResult:
    """Rolling-origin backtest of unfitted models on one meter's inputs.

    Parameters
    ----------
    models : mapping of name to model, or sequence of models
        Unfitted models; each origin fits a fresh copy. A sequence is named by ``family``.
    inputs : ModelInputs
        The whole history with energy, temperature (optional) and labels on one index.
        Compute labels once for the whole range: every window slices them.
    origins : int, default 12
        Number of monthly origins (the last whole local months of the data).
    horizons : sequence of int, default (1, 3)
        Forecast lengths in months; must include 1, which the scorecards use.
    weather_history : pandas.Series or TypicalYears, optional
        Hourly °C for typical weather; defaults to ``inputs.temperature`` (hourly or finer).
        :class:`~engine.weather.TypicalYears` of that history shares the typical years
        learned before each origin with other backtests on the same weather.
    season_length : int, optional
        MASE's seasonal naive lag in intervals; default one week.
    keep_fitted : bool, default False
        Keep every model fitted at each origin in :attr:`BacktestResult.fitted`.
    race : Race, optional
        Models it names run after the others and stop at the origin from which they can no
        longer be recommended (see :class:`Race`).
    fitted : mapping, optional
        Model name → origin (``"YYYY-MM"``) → a model of the same settings already fitted on
        the data before that origin, with its fit seconds (e.g. by a shorter backtest): it is
        used instead of fitting again.
    only_actual : bool, default False
        Forecast under the weather that happened only (or none, without temperatures), not
        under typical weather too: for a comparison that ranks on the actual weather alone,
        such as the wizard's choice of orders, which then learns no typical years.
    progress : Progress, optional
        Stepped once per origin × model; cancelling stops the run with ``Cancelled``.

    Returns
    -------
    BacktestResult
    """
    plan = _plan(inputs, horizons, weather_history, season_length, only_actual)
    named = _named(models)
    starts = backtest_origins(inputs.index, inputs.timezone, origins, inputs.interval)
    if len(starts) == 0:
        raise InputError(
            "the data do not span a whole calendar month after their first month, so there is "
            "nothing to backtest.",
            hint="Import at least two calendar months of readings (a year or more for a "
            "useful backtest).",
        )
    out = _Collector(keep_fitted)
    racers = [name for name in named if race is not None and race.takes(named[name])]
    others = [name for name in named if name not in racers]
    share = len(others) / len(named)
    fits: dict[str, dict[str, Fitted | Exception]] = {}
    for number, name in enumerate(others):
        step(progress, share * number / (2 * len(others)), f"Backtest: fitting {named[name].label}")
        given = (fitted or {}).get(name, {})
        fits[name] = _fits_at(named[name], inputs, starts, given)
    windows = []
    for number, origin in enumerate(starts):
        step(progress, share * (0.5 + number / (2 * len(starts))), "Backtest: typical weather")
        window = _prepare_window(plan, origin)
        windows.append(window)
        for offset, name in enumerate(others):
            done = share * (0.5 + (number + offset / len(others)) / (2 * len(starts)))
            step(progress, done, f"Backtest from {window.name}: {named[name].label}")
            _run_one(window, name, named[name], out, fits[name][window.name])
    if racers:
        explainable = [name for name in others if named[name].explainable]
        bar = race.bar(out, plan, explainable, len(windows))
        for number, name in enumerate(racers):
            done = (len(named) - len(racers) + number) / len(named)
            part = progress.part(done, done + 1 / len(named)) if progress is not None else None
            condition = ranking_condition(plan, race.condition)
            _run_racer(windows, name, named[name], out, bar, condition, part)
    step(progress, 1.0, "Backtest finished")
    return _assemble(plan, named, starts, origins, out)


def _month_scores(months: pd.DataFrame, horizons: tuple[int, ...]) -> pd.DataFrame:
    """Per origin, model, weather and horizon: month-total MAPE and the whole horizon's error."""
    keys = ["origin", "model", "weather"]
    parts = []
    for horizon in horizons:
        grouped = months[months["lead"] <= horizon].groupby(keys, sort=False)
        sums = grouped[["actual kWh", "predicted kWh"]].sum()
        part = pd.DataFrame(
            {
                "month-total MAPE %": grouped["forecast vs actual %"].agg(month_total_mape),
                "total forecast vs actual %": forecast_vs_actual_percent(
                    sums["actual kWh"], sums["predicted kWh"]
                ),
            },
            index=sums.index,
        )
        parts.append(part.assign(**{"horizon months": horizon}).reset_index())
    return pd.concat(parts, ignore_index=True)


def _assemble(
    plan: _Plan,
    named: dict[str, EnergyModel],
    starts: pd.DatetimeIndex,
    requested: int,
    out: _Collector,
) -> BacktestResult:
    inputs = plan.inputs
    infos = {
        name: ModelInfo(model.family, model.label, bool(model.explainable), model.settings())
        for name, model in named.items()
    }
    forecasts = out.forecast_table() if out.pieces else _empty_forecasts()
    keys = ["origin", "model", "weather", "month", "lead"]
    months = total_by(
        forecasts["actual kWh"], forecasts["predicted kWh"], {key: forecasts[key] for key in keys}
    )
    scores = pd.DataFrame(out.scores, columns=_SCORE_COLUMNS[:9])
    if len(scores):
        scores = scores.merge(
            _month_scores(months, plan.horizons),
            on=["origin", "model", "weather", "horizon months"],
            how="left",
        )
    scores = scores.reindex(columns=_SCORE_COLUMNS)
    scorecards = []
    first = forecasts[forecasts["lead"] == 1]
    for (name, condition), pooled in first.groupby(["model", "weather"], sort=False):
        index = pd.DatetimeIndex(pooled["start"])
        scorecards.append(
            score_forecast(
                pd.Series(pooled["actual kWh"].to_numpy(), index=index),
                pd.Series(pooled["predicted kWh"].to_numpy(), index=index),
                inputs.timezone,
                model=name,
                label=infos[name].label,
                explainable=infos[name].explainable,
                condition=condition,
                naive_scale=pooled["naive scale"].to_numpy(),
            )
        )
    first_reading = inputs.index[int(np.argmax(inputs.energy.notna().to_numpy()))]
    return BacktestResult(
        timezone=inputs.timezone,
        interval=inputs.interval,
        origins=starts,
        origins_requested=requested,
        horizons=plan.horizons,
        conditions=plan.conditions,
        history_start=first_reading,
        models=infos,
        fits=pd.DataFrame(
            out.fits, columns=["origin", "model", "fit seconds", "parameters", "fitted"]
        ),
        scores=scores,
        months=months,
        failures=pd.DataFrame(
            out.failures, columns=["origin", "model", "weather", "stage", "message"]
        ),
        scorecards=tuple(scorecards),
        forecasts=forecasts.drop(columns="naive scale"),
        fitted=out.fitted,
    )


_SCORE_COLUMNS = [
    "origin",
    "model",
    "weather",
    "horizon months",
    "intervals",
    "CV(RMSE) %",
    "NMBE %",
    "MAE kWh",
    "MASE",
    "month-total MAPE %",
    "total forecast vs actual %",
]


def _empty_forecasts() -> pd.DataFrame:
    text = pd.Series(dtype=object)
    numbers = pd.Series(dtype="float64")
    return pd.DataFrame(
        {
            "origin": text,
            "model": text,
            "weather": text,
            "start": pd.Series(dtype="datetime64[ns, UTC]"),
            "month": text,
            "lead": pd.Series(dtype="int64"),
            "actual kWh": numbers,
            "predicted kWh": numbers,
            "naive scale": numbers,
        }
    )
