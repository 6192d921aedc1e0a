"""Exponential smoothing (ETS) of daily totals with a weekly season: a benchmark.

statsmodels' ``ETSModel`` (Hyndman et al.'s innovations state-space form) with additive errors,
an additive (by default damped) trend and an additive weekly season is fitted to the meter's
daily energy; forecasts continue from the end of the history, and each day is spread over its
intervals by the meter's typical day shape. It uses neither weather nor the campus calendar, so
it is shown as less explainable. Missing days are bridged (see
:func:`engine.models._history.bridged_stretch`); the fitted parameters and the bridged daily
history are stored. The smoother's run over that history is kept from the fit (and rebuilt
once after loading), so predictions only extend its final states.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd
from statsmodels.tsa.exponential_smoothing.ets import ETSModel

from engine.models._day_totals import DayTotalsModel
from engine.models._days import DailyView
from engine.models._family import float_array, float_list
from engine.models._history import StoredSeries, bridged_stretch
from engine.models._statsmodels import ETSRun, fit_ets
from engine.models.base import ModelInputs

_WEEK = 7


class DailyETSModel(DayTotalsModel):
    """ETS on daily totals with weekly seasonality, spread to intervals (benchmark).

    Parameters
    ----------
    trend : bool, default True
        Include an additive trend.
    damped_trend : bool, default True
        Damp the trend so long forecasts level off.
    longest_gap_days : int, default 14
        Longer runs of missing days end the usable history (it restarts after them).

    Attributes
    ----------
    history_ : StoredSeries
        The bridged daily energy (kWh per local day) the smoother runs over.
    parameters_ : numpy.ndarray
        statsmodels' fitted parameters (smoothing weights, damping, initial states).
    converged_ : bool
        Whether the optimiser reported convergence.
    n_parameters_ : int
        ETS parameters plus the free day-shape shares.
    """

    family = "daily_ets"
    label = "exponential smoothing of daily totals (ETS)"
    explainable = False

    def how_it_forecasts(self) -> str:
        return (
            "forecasts each day's total by exponential smoothing (ETS) with a weekly cycle and "
            "spreads it over the day by the meter's typical day shape; it does not use weather"
        )

    _run: ETSRun | None

    def __init__(
        self, trend: bool = True, damped_trend: bool = True, longest_gap_days: int = 14
    ) -> None:
        self.trend = trend
        self.damped_trend = damped_trend
        self.longest_gap_days = longest_gap_days

    def _model(self, values: np.ndarray) -> ETSModel:
        return ETSModel(
            values,
            error="add",
            trend="add" if self.trend else None,
            damped_trend=self.damped_trend and self.trend,
            seasonal="add",
            seasonal_periods=_WEEK,
        )

    def fit(self, inputs: ModelInputs) -> DailyETSModel:
        """Fit ETS to the daily totals of the history after its last long gap."""
        view = self._fit_view(inputs)
        daily = pd.Series(view.energy, index=view.days)
        every_day = pd.date_range(view.days[0], view.days[-1], freq="D")
        start, values = bridged_stretch(
            daily.reindex(every_day).to_numpy(),
            self.longest_gap_days,
            _WEEK,
            minimum=4 * _WEEK,
            what=self.label,
        )
        model = self._model(values)
        self.parameters_, self.converged_ = fit_ets(model)
        self.history_ = StoredSeries(every_day[start], "D", values)
        self._run = ETSRun.smooth(model, self.parameters_)
        self.n_parameters_ = len(self.parameters_) + self.day_shapes_.n_parameters
        return self

    def _smoothed(self) -> ETSRun:
        """The smoother's run over the history: kept from the fit, rebuilt once after loading."""
        if self._run is None:
            self._run = ETSRun.smooth(self._model(self.history_.values), self.parameters_)
        return self._run

    def _day_energy(self, view: DailyView) -> np.ndarray:
        return self.history_.continued(view.days, self._smoothed().path)

    def _fitted_state(self) -> dict[str, Any]:
        return {
            **self._day_state(),
            "history": self.history_.to_dict(),
            "parameters": float_list(self.parameters_),
            "converged": self.converged_,
            "n_parameters": self.n_parameters_,
        }

    def _restore(self, state: dict[str, Any]) -> None:
        self._restore_days(state)
        self.history_ = StoredSeries.from_dict(state["history"])
        self.parameters_ = float_array(state["parameters"])
        self.converged_ = bool(state["converged"])
        self.n_parameters_ = int(state["n_parameters"])
        self._run = None
