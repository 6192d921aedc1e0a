"""Same day last year, adjusted for the weather and the calendar: the trade's own baseline.

A finance office budgets a month as "the same month last year". That carries last year's
level with it, which a regression fitted on several years averages away when the level
drifts, but it also carries last year's weather and calendar. This family keeps the
carrying and takes those out: the forecast for an interval is the calendar regression's
prediction for it plus ``weight`` times last year's departure from the regression on the
same weekday 52 weeks before (the actual minus the regression's fit, as a mean per interval
of that local day). With ``weight`` 1 it is last year's actual, adjusted by the regression
for the difference in weather and calendar (holidays, term dates) between the two days;
with ``weight`` 0.5 it is the even combination of that and the regression alone. Days with
no departure known (before the history, or a day with no readings) add nothing.

Weekday alignment (52 weeks, 364 days, not the calendar date) is common practice for daily
load baselines, since the week shapes use more than the date does.
"""

from __future__ import annotations

import copy
from collections.abc import Sequence
from typing import Any

import numpy as np
import pandas as pd

from engine.models._family import ModelFamily, Statement, statement_table
from engine.models._inputs import energy_values, local_clock, prediction
from engine.models.base import ModelInputs, scenario_rows
from engine.models.calendar_regression import CalendarRegressionModel

#: How far back "last year" is: 52 weeks, so a Monday is compared with a Monday.
LAG = pd.Timedelta(days=364)


class LastYearAdjustedModel(ModelFamily):
    """Last year's departure from the calendar regression, carried onto its forecast.

    Parameters
    ----------
    weight : float, default 1.0
        Share of last year's departure carried (1: last year adjusted for weather and
        calendar; 0.5: the even combination with the regression alone).
    regression : dict, optional
        Settings of the calendar regression it adjusts with (default: its defaults); the fit
        wizard gives it the orders it chose for the calendar regression, so the combination
        is with that model.

    Attributes
    ----------
    regression_ : CalendarRegressionModel
        The regression fitted on the same history (default settings).
    departures_ : pandas.Series
        Mean departure (actual − regression) in kWh per interval of each local day of the
        last 52 weeks of the history, indexed by the naive local day.
    uses_temperature_ : bool
    n_parameters_ : int
        The regression's.
    """

    family = "last_year_adjusted"
    label = "same day last year, weather-adjusted"
    explainable = True

    def how_it_forecasts(self) -> str:
        return (
            "takes the same weekday 52 weeks earlier and adjusts it by the calendar regression "
            "for the difference in weather and calendar between the two days (the trade's own "
            "baseline, last year's actual, with the weather and calendar taken out); the fit "
            "wizard also tries the even combination of that with the regression alone"
        )

    def __init__(self, weight: float = 1.0, regression: dict[str, Any] | None = None) -> None:
        self.weight = weight
        self.regression = regression

    def _regression(self) -> CalendarRegressionModel:
        return CalendarRegressionModel(**(self.regression or {}))

    @classmethod
    def candidate_settings(cls) -> list[dict[str, Any]]:
        return [{"weight": 1.0}, {"weight": 0.5}]

    def fit(self, inputs: ModelInputs) -> LastYearAdjustedModel:
        """Fit the regression and keep last year's daily departures from it."""
        return self._take(self._regression().fit(inputs), inputs)

    def fit_before_each(
        self, inputs: ModelInputs, cuts: Sequence[pd.Timestamp]
    ) -> list[LastYearAdjustedModel | Exception]:
        """The regression's shared refits (:meth:`CalendarRegressionModel.fit_before_each`),
        each with the departures of its own window."""
        fitted: list[LastYearAdjustedModel | Exception] = []
        regressions = self._regression().fit_before_each(inputs, cuts)
        for cut, regression in zip(cuts, regressions, strict=True):
            if isinstance(regression, Exception):
                fitted.append(regression)
                continue
            fitted.append(self.around(regression, inputs.window(end=cut)))
        return fitted

    def around(
        self, regression: CalendarRegressionModel, inputs: ModelInputs
    ) -> LastYearAdjustedModel:
        """A fitted copy of this model from a regression already fitted on ``inputs`` with its
        ``regression`` settings (the fit wizard shares the calendar regression's fits so)."""
        return LastYearAdjustedModel(**self.settings())._take(regression, inputs)

    def reweighted(self, weight: float) -> LastYearAdjustedModel:
        """This fitted model carrying another share of last year (the fit does not depend on
        the share, so candidates of every weight share one fit)."""
        model = copy.copy(self)
        model.weight = weight
        return model

    def _take(self, regression: CalendarRegressionModel, inputs: ModelInputs) -> Any:
        recent = inputs.window(start=inputs.index[-1] - LAG)
        energy = energy_values(recent)
        fitted = np.asarray(regression.predict(recent.without_energy()), dtype=float)
        days = local_clock(recent).normalize()
        departures = pd.Series(energy - fitted).groupby(days).mean()
        self.regression_ = regression
        self.departures_ = departures.dropna()
        self.uses_temperature_ = regression.uses_temperature_
        self.n_parameters_ = regression.n_parameters_
        return self

    def _carried(self, inputs: ModelInputs) -> np.ndarray:
        """``weight`` × last year's departure on each interval's local day 52 weeks before."""
        self._require_fitted()
        before = local_clock(inputs).normalize() - LAG
        shift = self.departures_.reindex(before).to_numpy(dtype=float)
        return self.weight * np.nan_to_num(shift, nan=0.0)

    def predict(self, inputs: ModelInputs) -> pd.Series:
        """The regression's prediction plus the carried departure (kWh per interval)."""
        self._require_fitted()
        base = np.asarray(self.regression_.predict(inputs), dtype=float)
        return prediction(base + self._carried(inputs), inputs)

    def predict_scenarios(self, inputs: ModelInputs, temperatures: np.ndarray) -> np.ndarray:
        """:meth:`predict` under each row of ``temperatures`` (scenarios × intervals)."""
        self._require_fitted()
        rows = scenario_rows(inputs, temperatures)
        return self.regression_.predict_scenarios(inputs, rows) + self._carried(inputs)

    def coefficients_table(self, temperature_unit: str = "°C") -> pd.DataFrame:
        """The regression's statements, after one saying what is carried from last year."""
        self._require_fitted()
        mean = float(self.departures_.mean()) if len(self.departures_) else 0.0
        hours = self.regression_.interval_ / pd.Timedelta(hours=1)
        carried: Statement = (
            "last year's departure",
            self.weight * mean / hours,
            "kWh per hour",
            f"{self.weight:.0%} of last year's departure from the regression on the same weekday "
            f"52 weeks before is carried; over the last year it averaged {mean / hours:+,.1f} "
            "kWh per hour",
        )
        return pd.concat(
            [statement_table([carried]), self.regression_.coefficients_table(temperature_unit)],
            ignore_index=True,
        )

    def _fitted_state(self) -> dict[str, Any]:
        return {
            "regression": self.regression_.to_dict(),
            "days": [day.date().isoformat() for day in self.departures_.index],
            "departures": self.departures_.to_numpy(dtype=float).tolist(),
        }

    def _restore(self, state: dict[str, Any]) -> None:
        self.regression_ = CalendarRegressionModel.from_dict(state["regression"])
        index = pd.DatetimeIndex(pd.to_datetime(state["days"]))
        self.departures_ = pd.Series(state["departures"], index=index, dtype=float)
        self.uses_temperature_ = self.regression_.uses_temperature_
        self.n_parameters_ = self.regression_.n_parameters_
