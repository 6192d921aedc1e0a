"""Seasonal ARIMA of monthly energy: a benchmark in the form finance often sees.

statsmodels' ``SARIMAX`` with a 12-month season is fitted to the meter's mean energy per day of
each local calendar month (per day, so month lengths do not matter; a month counts when at
least ``min_month_coverage`` of its days are whole). Forecasts run on from the last month of
the history. A day's energy is its month's forecast energy per day times the day group's ratio
to the average day in the history (weekends and holidays use less on a campus), then spread
over its intervals by the typical day shape. Months without enough data stay missing, which
the state-space filter handles. No weather or calendar drivers: shown as less explainable.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd
from statsmodels.tsa.statespace.mlemodel import MLEResults
from statsmodels.tsa.statespace.sarimax import SARIMAX

from engine.errors import InputError
from engine.models._day_totals import DayTotalsModel
from engine.models._days import DAY_GROUPS, DailyView
from engine.models._family import float_array, float_list
from engine.models._statsmodels import estimate
from engine.models.base import ModelInputs

SEASON_MONTHS = 12
#: Months of history needed: two seasons, so the seasonal difference has a year to work on.
MIN_MONTHS = 2 * SEASON_MONTHS


def month_numbers(days: pd.DatetimeIndex) -> np.ndarray:
    """Months counted from year 0 (``12·year + month − 1``), for month arithmetic."""
    return np.asarray(days.year * 12 + days.month - 1, dtype=np.int64)


class MonthlySARIMAModel(DayTotalsModel):
    """SARIMA of monthly energy per day, spread to days and intervals (benchmark).

    Parameters
    ----------
    order : (int, int, int), default (1, 0, 0)
        Non-seasonal (p, d, q).
    seasonal_order : (int, int, int), default (0, 1, 1)
        Seasonal (P, D, Q) with a period of 12 months.
    min_month_coverage : float, default 0.8
        Share of a month's days that must be whole for the month to count.

    Attributes
    ----------
    first_month_ : str
        The history's first month, "YYYY-MM".
    monthly_energy_ : numpy.ndarray
        kWh per day of each month of the history (NaN where the month lacked data).
    parameters_ : numpy.ndarray
        statsmodels' fitted parameters.
    day_group_ratios_ : numpy.ndarray
        Mean energy of a day of each day group over that of an average day.
    converged_ : bool
    n_parameters_ : int
        SARIMA parameters, one free day-group ratio and the free day-shape shares.
    """

    family = "monthly_sarima"
    label = "seasonal ARIMA of monthly energy (SARIMA)"
    explainable = False

    def how_it_forecasts(self) -> str:
        return (
            "forecasts each month's energy per day with a seasonal ARIMA of the monthly series "
            "(a 12-month cycle) and spreads it over the days and intervals; it does not use weather"
        )

    _smoothed: MLEResults | None

    def __init__(
        self,
        order: tuple[int, int, int] = (1, 0, 0),
        seasonal_order: tuple[int, int, int] = (0, 1, 1),
        min_month_coverage: float = 0.8,
    ) -> None:
        self.order = order
        self.seasonal_order = seasonal_order
        self.min_month_coverage = min_month_coverage

    def _model(self, values: np.ndarray) -> SARIMAX:
        return SARIMAX(
            values,
            order=tuple(self.order),
            seasonal_order=(*self.seasonal_order, SEASON_MONTHS),
        )

    def fit(self, inputs: ModelInputs) -> MonthlySARIMAModel:
        """Fit SARIMA to the monthly energy per day and learn the day-group ratios."""
        view = self._fit_view(inputs)
        whole = np.isfinite(view.energy)
        month = month_numbers(view.days)
        first, last = int(month[whole].min()), int(month[whole].max())
        span = last - first + 1
        if span < MIN_MONTHS:
            raise InputError(
                f"the history spans {span} months; monthly SARIMA needs at least {MIN_MONTHS}.",
                hint="Fit on two years or more, or choose another model.",
            )
        at = month[whole] - first
        count = np.bincount(at, minlength=span)
        total = np.bincount(at, weights=view.energy[whole], minlength=span)
        months = pd.period_range(
            pd.Period(year=first // 12, month=first % 12 + 1, freq="M"), periods=span
        )
        enough = count >= self.min_month_coverage * np.asarray(months.days_in_month)
        with np.errstate(invalid="ignore", divide="ignore"):
            self.monthly_energy_ = np.where(enough, total / count, np.nan)
        result, self.converged_ = estimate(
            lambda: self._model(self.monthly_energy_).fit(disp=False, cov_type="none")
        )
        self.first_month_ = str(months[0])
        self.parameters_ = np.asarray(result.params, dtype=float)
        self._smoothed = result
        average = view.energy[whole].mean()
        ratios = [
            view.energy[whole & (view.group == code)].mean() / average
            if (whole & (view.group == code)).any()
            else 1.0
            for code in range(len(DAY_GROUPS))
        ]
        self.day_group_ratios_ = np.asarray(ratios, dtype=float)
        self.n_parameters_ = len(self.parameters_) + 1 + self.day_shapes_.n_parameters
        return self

    def _day_energy(self, view: DailyView) -> np.ndarray:
        first = pd.Period(self.first_month_, freq="M")
        position = month_numbers(view.days) - (first.year * 12 + first.month - 1)
        if position.min() < 0:
            raise InputError(
                f"the model's history starts in {self.first_month_}; it cannot predict "
                "earlier months.",
                hint="Predict the fit window or later.",
            )
        path = self._smoother().get_prediction(start=0, end=int(position.max())).predicted_mean
        return np.asarray(path, dtype=float)[position] * self.day_group_ratios_[view.group]

    def _smoother(self) -> MLEResults:
        """The state-space smoother over the monthly history with the fitted parameters: the
        fit's own, or run once after loading."""
        if self._smoothed is None:
            model = self._model(self.monthly_energy_)
            self._smoothed, _ = estimate(lambda: model.smooth(self.parameters_, cov_type="none"))
        return self._smoothed

    def _fitted_state(self) -> dict[str, Any]:
        return {
            **self._day_state(),
            "first_month": self.first_month_,
            "monthly_energy": float_list(self.monthly_energy_),
            "parameters": float_list(self.parameters_),
            "day_group_ratios": float_list(self.day_group_ratios_),
            "converged": self.converged_,
            "n_parameters": self.n_parameters_,
        }

    def _restore(self, state: dict[str, Any]) -> None:
        self._restore_days(state)
        self.first_month_ = str(state["first_month"])
        self.monthly_energy_ = float_array(state["monthly_energy"])
        self.parameters_ = float_array(state["parameters"])
        self.day_group_ratios_ = float_array(state["day_group_ratios"])
        self.converged_ = bool(state["converged"])
        self.n_parameters_ = int(state["n_parameters"])
        self._smoothed = None
