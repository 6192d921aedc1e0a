"""Seasonal naive benchmark: the same local time one week (or 52 weeks) earlier.

The plainest forecast a model must beat. Each interval takes the reading at the same local
clock time one season earlier; beyond the end of the history it repeats the last season
available (the value ``k`` seasons back, with ``k`` the fewest that reach into the history).
A "year" is 52 weeks (364 days) so weekdays line up, as is common practice for load
forecasts. Where that reading is missing, the one a further season back is used (up to
three further seasons).
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd
from pandas.tseries.frequencies import to_offset

from engine.models._family import ModelFamily, timedelta_from, timedelta_seconds
from engine.models._history import StoredSeries
from engine.models._inputs import energy_values, local_clock, prediction, require_same_step, step_of
from engine.models.base import ModelInputs

#: Season lengths by setting.
LAGS: dict[str, pd.Timedelta] = {"week": pd.Timedelta(weeks=1), "year": pd.Timedelta(weeks=52)}
_FURTHER_SEASONS = 3


class SeasonalNaiveModel(ModelFamily):
    """Same local time one season earlier; repeats the last season beyond the history.

    Parameters
    ----------
    lag : {"week", "year"}, default "week"
        The season: one week, or 52 weeks (364 days, weekdays aligned).

    Attributes
    ----------
    history_ : StoredSeries
        Energy per interval on the local clock (naive times), NaN where unknown.
    n_parameters_ : int
        0: nothing is estimated.
    """

    family = "seasonal_naive"
    label = "seasonal naive benchmark"
    explainable = False
    benchmark = True

    def __init__(self, lag: str = "week") -> None:
        self.lag = lag

    @classmethod
    def candidate_settings(cls) -> list[dict[str, Any]]:
        return [{"lag": "week"}, {"lag": "year"}]

    def how_it_forecasts(self) -> str:
        return (
            f"repeats the readings of the same local time one {self.lag} earlier, and the last "
            f"{self.lag} of readings beyond them: a benchmark that any model should beat"
        )

    def fit(self, inputs: ModelInputs) -> SeasonalNaiveModel:
        """Remember the history on the local clock (readings of a repeated hour averaged)."""
        if self.lag not in LAGS:
            raise ValueError(f"lag must be one of {tuple(LAGS)}")
        step = step_of(inputs)
        energy = pd.Series(energy_values(inputs), index=local_clock(inputs))
        by_clock = energy.groupby(level=0).mean()
        grid = pd.date_range(by_clock.index[0], by_clock.index[-1], freq=step)
        self.interval_ = step
        self.history_ = StoredSeries(
            grid[0], to_offset(step).freqstr, by_clock.reindex(grid).to_numpy()
        )
        self.n_parameters_ = 0
        return self

    def predict(self, inputs: ModelInputs) -> pd.Series:
        """The reading one season (or as many as needed to reach the history) earlier."""
        self._require_fitted()
        step = step_of(inputs)
        require_same_step(self.interval_, step)
        season = LAGS[self.lag]
        local = local_clock(inputs)
        last = self.history_.index[-1]
        seasons_back = np.maximum(1, np.ceil(np.asarray((local - last) / season, dtype=float)))
        season_days = season / pd.Timedelta(days=1)
        values = np.full(len(local), np.nan)
        for extra in range(_FURTHER_SEASONS + 1):
            source = local - pd.to_timedelta((seasons_back + extra) * season_days, unit="D")
            values = np.where(np.isnan(values), self._lookup(source), values)
        return prediction(values, inputs)

    def _lookup(self, stamps: pd.DatetimeIndex) -> np.ndarray:
        """History values at local ``stamps``; NaN outside the history."""
        positions = self.history_.positions(stamps)
        inside = (positions >= 0) & (positions < len(self.history_.values))
        found = np.full(len(stamps), np.nan)
        found[inside] = self.history_.values[positions[inside]]
        return found

    def _fitted_state(self) -> dict[str, Any]:
        return {
            "interval_seconds": timedelta_seconds(self.interval_),
            "history": self.history_.to_dict(),
            "n_parameters": self.n_parameters_,
        }

    def _restore(self, state: dict[str, Any]) -> None:
        self.interval_ = timedelta_from(state["interval_seconds"])
        self.history_ = StoredSeries.from_dict(state["history"])
        self.n_parameters_ = int(state["n_parameters"])
