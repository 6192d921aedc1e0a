"""How well a model's forecasts match the meter: the trade's baseline metrics and the forecaster's.

Every metric compares ``actual`` with ``predicted`` (arrays or Series of equal length; Series
are aligned on the first one's index) and ignores pairs where either is NaN, so gaps in the
meter data neither count as errors nor get filled. Percentages are returned in percent; a
metric with nothing to compare, or whose denominator is zero, is NaN.

Definitions, with their sources (all from memory):

* ASHRAE Guideline 14-2014, *Measurement of Energy, Demand, and Water Savings*, with yᵢ
  measured, ŷᵢ predicted, ȳ the mean measured value, n the number of pairs and p the number
  of model parameters::

      CV(RMSE) = 100 · sqrt(Σ(yᵢ − ŷᵢ)² / (n − p)) / ȳ
      NMBE     = 100 · Σ(yᵢ − ŷᵢ) / ((n − p) · ȳ)

  so a positive NMBE means the model predicts too little. Its calibration criteria (for
  calibrated simulation) are CV(RMSE) ≤ 15 % and NMBE within ±5 % on monthly data, ≤ 30 %
  and ±10 % on hourly data (:data:`GUIDELINE14_LIMITS`).
* Hyndman & Koehler (2006), "Another look at measures of forecast accuracy", and Hyndman &
  Athanasopoulos, *Forecasting: Principles and Practice*, 3rd ed., §5.8: MAE, RMSE, MAPE,
  sMAPE and MASE (errors scaled by the in-sample MAE of the seasonal naive forecast).
* The same book, §5.9 "Evaluating distributional forecast accuracy": the pinball (quantile)
  loss and the Winkler score of a prediction interval.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import asdict, dataclass, fields
from typing import Any

import numpy as np
import pandas as pd

ArrayLike = np.ndarray | pd.Series | Sequence[float]

#: Guideline 14 calibration limits by data resolution: (CV(RMSE) %, |NMBE| %).
GUIDELINE14_LIMITS: dict[str, tuple[float, float]] = {
    "monthly": (15.0, 5.0),
    "hourly": (30.0, 10.0),
}


def _complete(*columns: ArrayLike) -> tuple[np.ndarray, ...]:
    """The columns as float arrays, aligned when all are Series, without rows holding a NaN."""
    if all(isinstance(column, pd.Series) for column in columns):
        index = columns[0].index
        columns = tuple(column.reindex(index) for column in columns)
    arrays = tuple(np.asarray(column, dtype=np.float64).ravel() for column in columns)
    if len({len(array) for array in arrays}) > 1:
        sizes = ", ".join(str(len(array)) for array in arrays)
        raise ValueError(f"the series to compare differ in length ({sizes})")
    keep = np.logical_and.reduce([~np.isnan(array) for array in arrays])
    return tuple(array[keep] for array in arrays)


def _degrees_of_freedom(n: int, n_parameters: int) -> int:
    if n_parameters < 0:
        raise ValueError("the number of parameters cannot be negative")
    if n and n <= n_parameters:
        raise ValueError(
            f"{n} compared values leave no degrees of freedom for {n_parameters} parameters"
        )
    return n - n_parameters


def cv_rmse(actual: ArrayLike, predicted: ArrayLike, n_parameters: int = 0) -> float:
    """Coefficient of variation of the RMSE in percent (Guideline 14, n − p degrees of freedom).

    Parameters
    ----------
    actual, predicted : array-like
        Measured and predicted energy per interval (or per month).
    n_parameters : int, default 0
        Parameters the model fitted on these same values; 0 for forecasts of unseen periods.
    """
    y, y_hat = _complete(actual, predicted)
    dof = _degrees_of_freedom(len(y), n_parameters)
    if dof == 0 or y.mean() == 0:
        return math.nan
    return float(100.0 * np.sqrt(np.sum((y - y_hat) ** 2) / dof) / y.mean())


def nmbe(actual: ArrayLike, predicted: ArrayLike, n_parameters: int = 0) -> float:
    """Normalised mean bias error in percent (Guideline 14 sign: positive = predicts too little)."""
    y, y_hat = _complete(actual, predicted)
    dof = _degrees_of_freedom(len(y), n_parameters)
    if dof == 0 or y.mean() == 0:
        return math.nan
    return float(100.0 * np.sum(y - y_hat) / (dof * y.mean()))


def mae(actual: ArrayLike, predicted: ArrayLike) -> float:
    """Mean absolute error, in the unit of the data."""
    y, y_hat = _complete(actual, predicted)
    return float(np.mean(np.abs(y - y_hat))) if len(y) else math.nan


def rmse(actual: ArrayLike, predicted: ArrayLike) -> float:
    """Root mean squared error (divided by n), in the unit of the data."""
    y, y_hat = _complete(actual, predicted)
    return float(np.sqrt(np.mean((y - y_hat) ** 2))) if len(y) else math.nan


def mape(actual: ArrayLike, predicted: ArrayLike) -> float:
    """Mean absolute percentage error; pairs whose actual is exactly zero are left out."""
    y, y_hat = _complete(actual, predicted)
    nonzero = y != 0
    if not nonzero.any():
        return math.nan
    return float(100.0 * np.mean(np.abs((y - y_hat)[nonzero] / y[nonzero])))


def smape(actual: ArrayLike, predicted: ArrayLike) -> float:
    """Symmetric MAPE, ``100 · mean(2|y − ŷ| / (|y| + |ŷ|))``; two zeros count as no error."""
    y, y_hat = _complete(actual, predicted)
    if not len(y):
        return math.nan
    scale = np.abs(y) + np.abs(y_hat)
    ratio = np.divide(2.0 * np.abs(y - y_hat), scale, out=np.zeros_like(scale), where=scale > 0)
    return float(100.0 * np.mean(ratio))


def r_squared(actual: ArrayLike, predicted: ArrayLike) -> float:
    """Coefficient of determination ``1 − SSE / SST`` (negative when worse than the mean)."""
    y, y_hat = _complete(actual, predicted)
    total = np.sum((y - y.mean()) ** 2) if len(y) else 0.0
    if total == 0:
        return math.nan
    return float(1.0 - np.sum((y - y_hat) ** 2) / total)


def seasonal_naive_mae(training: ArrayLike, season_length: int) -> float:
    """In-sample MAE of the seasonal naive forecast ``ŷₜ = yₜ₋ₘ`` over regularly spaced values.

    This is MASE's scale (Hyndman & Koehler 2006): pairs one season apart where either is NaN
    are skipped.
    """
    if season_length < 1:
        raise ValueError("the season length must be at least one interval")
    values = np.asarray(training, dtype=np.float64).ravel()
    if len(values) <= season_length:
        return math.nan
    return mae(values[season_length:], values[:-season_length])


def mean_scaled_error(actual: ArrayLike, predicted: ArrayLike, scale: float | ArrayLike) -> float:
    """Mean of ``|yᵢ − ŷᵢ| / scaleᵢ``; ``scale`` is one number or one per pair.

    With the seasonal naive MAE as the scale this is MASE; a scale per pair lets forecasts
    from several backtest origins, each with its own training data, be pooled.
    """
    scales = np.broadcast_to(np.asarray(scale, dtype=np.float64), np.shape(actual))
    y, y_hat, s = _complete(actual, predicted, scales)
    usable = s > 0
    if not usable.any():
        return math.nan
    return float(np.mean(np.abs(y - y_hat)[usable] / s[usable]))


def mase(actual: ArrayLike, predicted: ArrayLike, training: ArrayLike, season_length: int) -> float:
    """Mean absolute scaled error: MAE over the in-sample seasonal naive MAE of ``training``.

    Below 1 the forecast beats the seasonal naive method's in-sample one-season-ahead errors.
    """
    return mean_scaled_error(actual, predicted, seasonal_naive_mae(training, season_length))


def _check_probability(value: float, what: str) -> None:
    if not 0.0 < value < 1.0:
        raise ValueError(f"the {what} must lie strictly between 0 and 1, not {value}")


def pinball_loss(actual: ArrayLike, quantile_forecast: ArrayLike, quantile: float) -> float:
    """Mean pinball (quantile) loss of a forecast of the ``quantile`` (0..1) quantile.

    Each pair scores ``q · (y − f)`` when the actual lies above the forecast and
    ``(1 − q) · (f − y)`` when below, in the unit of the data.
    """
    _check_probability(quantile, "quantile")
    y, f = _complete(actual, quantile_forecast)
    if not len(y):
        return math.nan
    miss = y - f
    return float(np.mean(np.maximum(quantile * miss, (quantile - 1.0) * miss)))


def interval_coverage(actual: ArrayLike, lower: ArrayLike, upper: ArrayLike) -> float:
    """Share (0..1) of actuals inside ``[lower, upper]``, bounds included."""
    y, low, high = _complete(actual, lower, upper)
    if not len(y):
        return math.nan
    return float(np.mean((y >= low) & (y <= high)))


def winkler_score(actual: ArrayLike, lower: ArrayLike, upper: ArrayLike, level: float) -> float:
    """Mean Winkler score of a ``level`` (e.g. 0.8) prediction interval; lower is better.

    The interval's width, plus ``2 / α`` times the distance by which an actual falls outside
    it, with ``α = 1 − level``.
    """
    _check_probability(level, "interval level")
    y, low, high = _complete(actual, lower, upper)
    if not len(y):
        return math.nan
    penalty = 2.0 / (1.0 - level)
    below = np.maximum(low - y, 0.0)
    above = np.maximum(y - high, 0.0)
    return float(np.mean((high - low) + penalty * (below + above)))


# --- month totals ------------------------------------------------------------------------------


def local_months(index: pd.DatetimeIndex, timezone: str) -> np.ndarray:
    """The local calendar month of each tz-aware timestamp, as ``"YYYY-MM"`` strings."""
    if not isinstance(index, pd.DatetimeIndex) or index.tz is None:
        raise ValueError("month totals need a tz-aware DatetimeIndex")
    local = index.tz_convert(timezone)
    number = local.year.to_numpy(dtype=np.int64) * 12 + local.month.to_numpy(dtype=np.int64) - 1
    distinct, position = np.unique(number, return_inverse=True)
    names = np.array([f"{value // 12:04d}-{value % 12 + 1:02d}" for value in distinct], object)
    return names[position]


def forecast_vs_actual_percent(actual_total: Any, predicted_total: Any) -> Any:
    """``100 · (predicted / actual − 1)``: positive when the forecast total is too high."""
    actual_total = np.asarray(actual_total, dtype=np.float64)
    with np.errstate(divide="ignore", invalid="ignore"):
        percent = 100.0 * (np.asarray(predicted_total, dtype=np.float64) / actual_total - 1.0)
    return np.where(actual_total == 0, np.nan, percent)


def total_by(actual: pd.Series, predicted: pd.Series, keys: dict[str, ArrayLike]) -> pd.DataFrame:
    """Actual and predicted totals per combination of ``keys``, over pairs where both are known.

    Parameters
    ----------
    actual, predicted : pandas.Series
        Energy per interval; ``predicted`` is aligned to ``actual``'s index.
    keys : dict of str to array-like
        Grouping columns, each one value per interval of ``actual``.

    Returns
    -------
    pandas.DataFrame
        One row per key combination (sorted), with the keys as columns, then ``actual kWh``,
        ``predicted kWh``, ``forecast vs actual %`` and ``intervals`` (the pairs summed).
    """
    y = np.asarray(actual, dtype=np.float64)
    y_hat = np.asarray(predicted.reindex(actual.index), dtype=np.float64)
    both = ~np.isnan(y) & ~np.isnan(y_hat)
    frame = pd.DataFrame({name: np.asarray(values)[both] for name, values in keys.items()})
    frame["actual kWh"] = y[both]
    frame["predicted kWh"] = y_hat[both]
    frame["intervals"] = 1
    totals = frame.groupby(list(keys), sort=True, as_index=False).sum()
    totals.insert(
        len(keys) + 2,
        "forecast vs actual %",
        forecast_vs_actual_percent(totals["actual kWh"], totals["predicted kWh"]),
    )
    return totals


def month_totals(actual: pd.Series, predicted: pd.Series, timezone: str) -> pd.DataFrame:
    """Actual and predicted totals per local calendar month, indexed by ``"YYYY-MM"``.

    Only pairs where both values are known are summed, so a month with missing readings
    compares like with like; ``intervals`` says how many pairs each total holds.
    """
    months = local_months(actual.index, timezone)
    return total_by(actual, predicted, {"month": months}).set_index("month")


def month_total_mape(forecast_vs_actual: ArrayLike) -> float:
    """Mean absolute ``forecast vs actual %`` over months (NaN months left out)."""
    errors = np.asarray(forecast_vs_actual, dtype=np.float64)
    errors = errors[~np.isnan(errors)]
    return float(np.mean(np.abs(errors))) if len(errors) else math.nan


# --- adequacy and the scorecard ------------------------------------------------------------------


@dataclass(frozen=True)
class CalibrationCheck:
    """CV(RMSE) and NMBE held against Guideline 14's calibration limits for one resolution."""

    resolution: str
    cv_rmse: float
    nmbe: float

    @property
    def limits(self) -> tuple[float, float]:
        return GUIDELINE14_LIMITS[self.resolution]

    @property
    def meets_cv_rmse(self) -> bool:
        return bool(self.cv_rmse <= self.limits[0])  # NaN never meets a limit

    @property
    def meets_nmbe(self) -> bool:
        return bool(abs(self.nmbe) <= self.limits[1])

    @property
    def meets(self) -> bool:
        return self.meets_cv_rmse and self.meets_nmbe

    def describe(self) -> str:
        """One line, e.g. "hourly CV(RMSE) 18.2 % (limit 30 %), NMBE −1.4 % (limit ±10 %): met"."""
        cv_limit, nmbe_limit = self.limits
        verdict = "met" if self.meets else "not met"
        return (
            f"{self.resolution} CV(RMSE) {self.cv_rmse:.1f} % (limit {cv_limit:g} %), "
            f"NMBE {self.nmbe:+.1f} % (limit ±{nmbe_limit:g} %): {verdict}"
        )


def calibration_check(
    cv_rmse_percent: float, nmbe_percent: float, resolution: str
) -> CalibrationCheck:
    """Hold scores against the Guideline 14 limits for ``"monthly"`` or ``"hourly"`` data."""
    if resolution not in GUIDELINE14_LIMITS:
        raise ValueError(f"resolution must be one of {tuple(GUIDELINE14_LIMITS)}")
    return CalibrationCheck(resolution, float(cv_rmse_percent), float(nmbe_percent))


def _json_number(value: float | None) -> float | None:
    return None if value is None or math.isnan(value) else float(value)


@dataclass(frozen=True)
class Scorecard:
    """One model's accuracy on one set of forecasts.

    ``cv_rmse``, ``nmbe`` … ``r_squared`` are per interval; ``month_total_mape``,
    ``monthly_cv_rmse`` and ``monthly_nmbe`` on local calendar-month totals. ``coverage``,
    ``winkler`` and ``interval_level`` are None when no prediction interval was scored.
    Guideline 14 states no limits for daily data; daily intervals are held to the hourly
    limits, the nearest stated ones (and looser than daily errors need).
    """

    model: str
    label: str
    explainable: bool
    condition: str
    intervals: int
    months: int
    cv_rmse: float
    nmbe: float
    mae: float
    rmse: float
    mape: float
    smape: float
    mase: float
    r_squared: float
    month_total_mape: float
    monthly_cv_rmse: float
    monthly_nmbe: float
    coverage: float | None = None
    winkler: float | None = None
    interval_level: float | None = None

    @property
    def interval_check(self) -> CalibrationCheck:
        return calibration_check(self.cv_rmse, self.nmbe, "hourly")

    @property
    def monthly_check(self) -> CalibrationCheck:
        return calibration_check(self.monthly_cv_rmse, self.monthly_nmbe, "monthly")

    @property
    def meets_guideline14(self) -> bool:
        return self.interval_check.meets and self.monthly_check.meets

    def as_row(self) -> dict[str, Any]:
        """Readable column names and values, for tables on screen and in the workbook."""
        return {
            "model": self.model,
            "name": self.label,
            "explainable": self.explainable,
            "weather": self.condition,
            "intervals": self.intervals,
            "months": self.months,
            "CV(RMSE) %": self.cv_rmse,
            "NMBE %": self.nmbe,
            "MAE kWh": self.mae,
            "RMSE kWh": self.rmse,
            "MAPE %": self.mape,
            "sMAPE %": self.smape,
            "MASE": self.mase,
            "R²": self.r_squared,
            "month-total MAPE %": self.month_total_mape,
            "monthly CV(RMSE) %": self.monthly_cv_rmse,
            "monthly NMBE %": self.monthly_nmbe,
            "interval coverage": self.coverage,
            "Winkler score kWh": self.winkler,
            "meets Guideline 14": self.meets_guideline14,
        }

    def to_dict(self) -> dict[str, Any]:
        """JSON-safe: NaN becomes null."""
        data = asdict(self)
        return {
            key: _json_number(value) if isinstance(value, float) else value
            for key, value in data.items()
        }

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> Scorecard:
        optional = {"coverage", "winkler", "interval_level"}
        values: dict[str, Any] = {}
        for item in fields(cls):
            value = data.get(item.name)
            if item.name in optional:
                values[item.name] = None if value is None else float(value)
            elif item.type == "float":
                values[item.name] = math.nan if value is None else float(value)
            else:
                values[item.name] = value
        return cls(**values)


def score_forecast(
    actual: pd.Series,
    predicted: pd.Series,
    timezone: str,
    *,
    model: str = "",
    label: str = "",
    explainable: bool = True,
    condition: str = "",
    n_parameters: int = 0,
    naive_scale: float | ArrayLike = math.nan,
    lower: pd.Series | None = None,
    upper: pd.Series | None = None,
    level: float | None = None,
) -> Scorecard:
    """Every score of one model's forecasts against the meter.

    Parameters
    ----------
    actual, predicted : pandas.Series
        kWh per interval on a tz-aware index (``predicted`` is aligned to ``actual``).
    timezone : str
        The site's zone, for local calendar months.
    n_parameters : int, default 0
        Guideline 14's p for in-sample fits; leave 0 for forecasts of periods not fitted.
    naive_scale : float or array-like
        MASE's scale: the seasonal naive in-sample MAE, one number or one per interval.
    lower, upper, level : optional
        A prediction interval and its nominal level (e.g. 0.8), for coverage and Winkler score.
    """
    predicted = predicted.reindex(actual.index)
    totals = month_totals(actual, predicted, timezone)
    interval_scores: dict[str, float | None] = {"coverage": None, "winkler": None}
    if lower is not None and upper is not None and level is not None:
        low, high = lower.reindex(actual.index), upper.reindex(actual.index)
        interval_scores = {
            "coverage": interval_coverage(actual, low, high),
            "winkler": winkler_score(actual, low, high, level),
        }
    pairs = len(_complete(actual, predicted)[0])
    return Scorecard(
        model=model,
        label=label or model,
        explainable=explainable,
        condition=condition,
        intervals=pairs,
        months=len(totals),
        cv_rmse=cv_rmse(actual, predicted, n_parameters),
        nmbe=nmbe(actual, predicted, n_parameters),
        mae=mae(actual, predicted),
        rmse=rmse(actual, predicted),
        mape=mape(actual, predicted),
        smape=smape(actual, predicted),
        mase=mean_scaled_error(actual.to_numpy(), predicted.to_numpy(), naive_scale),
        r_squared=r_squared(actual, predicted),
        month_total_mape=month_total_mape(totals["forecast vs actual %"]),
        monthly_cv_rmse=cv_rmse(totals["actual kWh"], totals["predicted kWh"]),
        monthly_nmbe=nmbe(totals["actual kWh"], totals["predicted kWh"]),
        coverage=interval_scores["coverage"],
        winkler=interval_scores["winkler"],
        interval_level=level if interval_scores["coverage"] is not None else None,
    )
