"""Running statsmodels estimation quietly and cheaply.

statsmodels warns when it cannot estimate good starting values on short series
(``EstimationWarning``) and when series carry no date frequency (``ValueWarning``); both are
expected here. A ``ConvergenceWarning`` is worth knowing about, so it is returned as a flag the
model stores. Any other warning is passed on unchanged.

statsmodels' results objects also estimate the parameters' covariance (a numerical Hessian for
ETS, outer products of numerical scores for SARIMAX), which costs about as much as the fit and
which point forecasts never use. :func:`fit_ets` and :class:`ETSRun` skip it for ETS; SARIMAX
callers pass ``cov_type="none"``.
"""

from __future__ import annotations

import warnings
from collections.abc import Callable
from dataclasses import dataclass
from typing import TypeVar

import numpy as np
from statsmodels.tools.sm_exceptions import ConvergenceWarning, EstimationWarning, ValueWarning
from statsmodels.tsa.exponential_smoothing.ets import ETSModel

Result = TypeVar("Result")


def estimate(work: Callable[[], Result]) -> tuple[Result, bool]:
    """Run ``work``; return its result and whether the optimiser reported convergence."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        result = work()
    converged = True
    for notice in caught:
        if issubclass(notice.category, ConvergenceWarning):
            converged = False
        elif not issubclass(notice.category, EstimationWarning | ValueWarning):
            warnings.warn_explicit(notice.message, notice.category, notice.filename, notice.lineno)
    return result, converged


def fit_ets(model: ETSModel) -> tuple[np.ndarray, bool]:
    """Maximum-likelihood parameters of ``model`` and whether the optimiser converged."""
    params, converged = estimate(lambda: model.fit(disp=False, return_params=True))
    return np.asarray(params, dtype=float), converged


@dataclass(frozen=True)
class ETSRun:
    """An additive ETS model smoothed over its history: one-step values and the final states.

    Point forecasts follow from the final states alone: level + (φ + φ² + … + φʰ)·slope + the
    seasonal state of the same phase in the last season (Hyndman & Athanasopoulos,
    *Forecasting: principles and practice*, the ETS point-forecast equations). That is what
    statsmodels' ``ETSResults.forecast`` computes by simulating with zero errors, without
    building the results object.
    """

    fitted: np.ndarray
    level: float
    slope: float
    damping: float
    #: Seasonal states of the history's last season, oldest first ([0.0] without a season).
    seasons: np.ndarray

    @classmethod
    def smooth(cls, model: ETSModel, params: np.ndarray) -> ETSRun:
        """Run the smoother of ``model`` (additive error, trend and season) with ``params``."""
        if "mul" in (model.error, model.trend, model.seasonal):
            raise ValueError("ETSRun handles additive error, trend and season only")
        fitted, states = model.smooth(params, return_raw=True)
        states = np.asarray(states, dtype=float)
        named = dict(zip(model.param_names, params, strict=True))
        seasons = states[-model.seasonal_periods :, -1] if model.has_seasonal else np.zeros(1)
        return cls(
            fitted=np.asarray(fitted, dtype=float),
            level=float(states[-1, 0]),
            slope=float(states[-1, 1]) if model.has_trend else 0.0,
            damping=float(named.get("damping_trend", 1.0)),
            seasons=np.array(seasons),
        )

    def path(self, horizon: int) -> np.ndarray:
        """The one-step values over the history, then ``horizon`` point forecasts."""
        ahead = np.arange(1, horizon + 1)
        trend = np.cumsum(self.damping ** ahead.astype(float)) * self.slope
        forecasts = self.level + trend + self.seasons[(ahead - 1) % len(self.seasons)]
        return np.concatenate([self.fitted, forecasts])
