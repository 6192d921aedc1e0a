"""A flexible challenger: gradient-boosted trees on calendar and weather drivers.

scikit-learn's ``HistGradientBoostingRegressor`` predicts energy per interval from the time of
week (local clock), day type, campus period kind, month, outdoor temperature (when given) and
the time since the start of the fit. It is a check on the explainable models (if it is much
better, they miss something), not a model to explain, so it is labelled less explainable.

Storage: trees cannot be written as plain numbers short of re-implementing them, and pickle is
never used, so a fitted challenger is stored as its settings and a summary only;
:meth:`GradientBoostingChallenger.from_dict` of a fitted one raises :class:`RefitNeeded`, and
the caller refits it on the project's stored data. The fit is deterministic (fixed random
state, no early stopping), so a refit on the same data gives the same model.
"""

from __future__ import annotations

from typing import Any, Self

import numpy as np
import pandas as pd
from sklearn.ensemble import HistGradientBoostingRegressor

from engine.calendar import DAY_TYPES, PERIOD_KINDS
from engine.models._family import ModelFamily, timedelta_seconds
from engine.models._inputs import (
    HOUR,
    energy_values,
    labels_of,
    local_clock,
    prediction,
    require_same_step,
    require_temperature,
    step_of,
    temperature_values,
)
from engine.models.base import ModelInputs

_YEAR = pd.Timedelta(days=365.25)


class RefitNeeded(Exception):
    """A stored model keeps no fitted state and must be refitted on the project's data;
    ``unfitted`` is the stored model without its fit (settings brought up to date), to refit."""

    def __init__(self, message: str, unfitted: ModelFamily) -> None:
        super().__init__(message)
        self.unfitted = unfitted


def _codes(values: pd.Series, categories: tuple[str, ...]) -> np.ndarray:
    return pd.Categorical(values.astype(str), categories=categories).codes.astype(float)


class GradientBoostingChallenger(ModelFamily):
    """Gradient-boosted trees on time of week, day type, period, month, temperature and trend.

    Parameters
    ----------
    max_iter : int, default 100
        Boosting iterations (trees).
    learning_rate : float, default 0.1
    max_leaf_nodes : int, default 31
    min_samples_leaf : int, default 20
    random_state : int, default 0
        Fixes the fit, so refits are reproducible.

    Attributes
    ----------
    regressor_ : HistGradientBoostingRegressor
        The fitted trees (in memory only; see the module docstring).
    trend_origin_ : pandas.Timestamp
        Start of the fit window; the trend feature counts years from it.
    n_parameters_ : int
        Leaf values fitted (trees × leaves per tree), at most half the fitted intervals:
        shrunken trees have fewer effective parameters than leaves, and n − p must stay
        meaningful.
    """

    family = "gradient_boosting"
    label = "gradient-boosted trees (challenger)"
    explainable = False

    def how_it_forecasts(self) -> str:
        return (
            "learns energy from the calendar and the temperature with gradient-boosted trees: "
            "flexible, but it states no effects in physical units"
        )

    def __init__(
        self,
        max_iter: int = 100,
        learning_rate: float = 0.1,
        max_leaf_nodes: int = 31,
        min_samples_leaf: int = 20,
        random_state: int = 0,
    ) -> None:
        self.max_iter = max_iter
        self.learning_rate = learning_rate
        self.max_leaf_nodes = max_leaf_nodes
        self.min_samples_leaf = min_samples_leaf
        self.random_state = random_state

    def _features(self, inputs: ModelInputs, temperature: np.ndarray | None) -> np.ndarray:
        local = local_clock(inputs)
        labels = labels_of(inputs)
        hour_of_week = np.asarray(
            (local - local.normalize()) / HOUR + local.day_of_week * 24, dtype=float
        )
        columns = [
            hour_of_week,
            _codes(labels["day_type"], DAY_TYPES),
            _codes(labels["period_kind"], ("", *PERIOD_KINDS)),
            np.asarray(local.month, dtype=float),
            np.asarray((inputs.index - self.trend_origin_) / _YEAR, dtype=float),
        ]
        if temperature is not None:
            columns.append(temperature)
        return np.column_stack(columns)

    def fit(self, inputs: ModelInputs) -> GradientBoostingChallenger:
        """Fit the trees on every interval with energy (missing temperatures are allowed)."""
        step = step_of(inputs)
        energy = energy_values(inputs, minimum=2 * self.min_samples_leaf)
        temperature = temperature_values(inputs)
        self.trend_origin_ = inputs.index[0]
        features = self._features(inputs, temperature)
        known = np.isfinite(energy)
        categorical = [False, True, True, False, False] + [False] * (temperature is not None)
        self.regressor_ = HistGradientBoostingRegressor(
            max_iter=self.max_iter,
            learning_rate=self.learning_rate,
            max_leaf_nodes=self.max_leaf_nodes,
            min_samples_leaf=self.min_samples_leaf,
            categorical_features=categorical,
            early_stopping=False,
            random_state=self.random_state,
        ).fit(features[known], energy[known])
        self.interval_ = step
        self.uses_temperature_ = temperature is not None
        leaves = self.regressor_.n_iter_ * self.max_leaf_nodes
        self.n_parameters_ = int(min(leaves, known.sum() // 2))
        return self

    def predict(self, inputs: ModelInputs) -> pd.Series:
        """Energy per interval from the trees."""
        self._require_fitted()
        require_same_step(self.interval_, step_of(inputs))
        temperature = require_temperature(inputs, self.label) if self.uses_temperature_ else None
        return prediction(self.regressor_.predict(self._features(inputs, temperature)), inputs)

    def _fitted_state(self) -> dict[str, Any]:
        return {
            "refit_needed": True,
            "interval_seconds": timedelta_seconds(self.interval_),
            "uses_temperature": self.uses_temperature_,
            "trend_origin": self.trend_origin_.isoformat(),
            "n_parameters": self.n_parameters_,
        }

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> Self:
        """Rebuild an unfitted challenger; a stored fitted one raises :class:`RefitNeeded`."""
        unfitted = super().from_dict({**data, "fitted": None})
        if data.get("fitted") is not None:
            raise RefitNeeded(
                "the gradient-boosted challenger is stored without its trees (they are never "
                "pickled); refit it on the project's stored readings.",
                unfitted,
            )
        return unfitted
