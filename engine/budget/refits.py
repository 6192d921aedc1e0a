"""One model family refitted month by month before a cut, with its month-ahead errors.

A budget's range needs the model's *forecast* error, not how well it fits its own history
(which understates it), and the check of that range needs the model each past budget would
have had. Both come from the same refits: for each of the last whole months before the cut,
the family is fitted on the readings before the month and predicts the month under its
actual weather (or with no weather, for calendar-only models). The month's errors, actual −
predicted per interval, are that model's out-of-sample errors; the weather's own spread is
added by the budget's weather scenarios, so it is not counted twice.

A past budget made as of the day before month ``m`` uses the model refitted for ``m`` and
the errors of the months before ``m`` only (:meth:`RollingRefits.errors_before`), so the
calibration of the range sees exactly what a budget made then would have seen.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, replace
from datetime import date

import numpy as np
import pandas as pd

from engine.backtest import ACTUAL_WEATHER, NO_WEATHER, BacktestResult, backtest_origins
from engine.budget.periods import BudgetWindow, as_of_cut, first_open_month
from engine.budget.plan import MeterPlan
from engine.errors import InputError
from engine.models.base import EnergyModel, ModelInputs
from engine.models.registry import model_from_dict
from engine.progress import Cancelled, Progress, step

#: Past month-ahead budgets that check a budget's range (the calibration), by default.
CALIBRATION_MONTHS = 12
#: Months of out-of-sample errors a budget draws its model error from.
ERROR_MONTHS = 12
#: Months a budget refits its models for: each calibration month needs the errors of the
#: year before it.
REFIT_MONTHS = CALIBRATION_MONTHS + ERROR_MONTHS


@dataclass(frozen=True)
class RollingRefits:
    """Per past month (``"YYYY-MM"``), the model fitted before it; and every month's errors.

    ``errors`` is actual − predicted kWh per interval of the refitted months, on UTC interval
    starts. ``failed`` maps a month whose fit or forecast failed to the reason.
    """

    models: dict[str, EnergyModel]
    errors: pd.Series
    failed: dict[str, str]

    def model_for(self, month: str) -> EnergyModel:
        """The model fitted on the readings before ``month``."""
        if month not in self.models:
            reason = self.failed.get(month, "the month is not among those refitted")
            raise InputError(
                f"no model fitted before {month}: {reason}.",
                hint="Past budgets start where the history allows a fit.",
            )
        return self.models[month]

    def errors_before(self, cut: pd.Timestamp) -> pd.Series:
        """The errors of the months that ended before ``cut``."""
        return self.errors[self.errors.index < cut]

    @classmethod
    def from_backtest(cls, backtest: BacktestResult, name: str) -> RollingRefits:
        """The refits a backtest already made of model ``name`` (kept with ``keep_fitted``):
        its one-month-ahead forecasts under the actual weather (or none) are exactly the
        month-ahead errors :func:`rolling_refits` would compute for the same months."""
        forecasts = backtest.forecasts
        condition = NO_WEATHER if NO_WEATHER in backtest.conditions else ACTUAL_WEATHER
        first = forecasts[
            (forecasts["model"] == name)
            & (forecasts["weather"] == condition)
            & (forecasts["lead"] == 1)
        ]
        errors = pd.Series(
            first["actual kWh"].to_numpy() - first["predicted kWh"].to_numpy(),
            index=pd.DatetimeIndex(first["start"]),
            name="error",
        )
        models = dict(backtest.fitted.get(name, {}))
        failures = backtest.model_failures(name, condition)
        failed = {str(row.origin): str(row.message) for row in failures.itertuples()}
        return cls(models=models, errors=errors.dropna().sort_index(), failed=failed)

    def to_dict(self) -> dict:
        """JSON-safe form (models as their own JSON, errors as UTC seconds and kWh)."""
        return {
            "models": {month: model.to_dict() for month, model in self.models.items()},
            "errors": {
                "seconds": self.errors.index.as_unit("s").asi8.tolist(),
                "kWh": self.errors.to_numpy(dtype=np.float64).tolist(),
            },
            "failed": dict(self.failed),
        }

    @classmethod
    def from_dict(cls, data: dict) -> RollingRefits:
        index = pd.to_datetime(data["errors"]["seconds"], unit="s", utc=True)
        errors = pd.Series(data["errors"]["kWh"], index=index, dtype=np.float64, name="error")
        models = {month: model_from_dict(body) for month, body in data["models"].items()}
        return cls(models=models, errors=errors, failed=dict(data["failed"]))


def rolling_refits(
    family: EnergyModel,
    history: ModelInputs,
    months: int,
    *,
    reuse: RollingRefits | None = None,
    progress: Progress | None = None,
) -> RollingRefits:
    """Refit ``family`` before each of the last ``months`` whole months of ``history``.

    Parameters
    ----------
    family : EnergyModel
        The model whose settings are refitted (it is not changed).
    history : ModelInputs
        The readings and drivers to refit on: only those before each month are used for it.
    months : int
        How many of the last whole local months to refit for (fewer when the history is
        short; the first month of the data is never one).
    reuse : RollingRefits, optional
        Refits already made of the same family on the same history (e.g. by the fit
        wizard's backtest, :meth:`RollingRefits.from_backtest`): their months are taken as
        they are instead of being fitted again.
    progress : Progress, optional
        Stepped per month; cancelling raises ``Cancelled``.
    """
    starts = backtest_origins(history.index, history.timezone, months, history.interval)
    months_of = [start.tz_convert(history.timezone).strftime("%Y-%m") for start in starts]
    kept = reuse.models if reuse is not None else {}
    missing = [start for start, month in zip(starts, months_of, strict=True) if month not in kept]
    step(progress, 0.0, f"refitting {family.label} before {len(missing)} months")
    made = dict(zip(missing, family.fit_before_each(history, missing), strict=True))
    models: dict[str, EnergyModel] = {}
    failed: dict[str, str] = {}
    pieces: list[pd.Series] = []
    for number, (start, month) in enumerate(zip(starts, months_of, strict=True)):
        step(progress, 0.5 + number / (2 * max(len(starts), 1)), f"forecasting {month}")
        end = BudgetWindow.of([month], history.timezone).end
        if month in kept:
            models[month] = kept[month]
            errors = reuse.errors
            pieces.append(errors[(errors.index >= start) & (errors.index < end)])
            continue
        model = made[start]
        if isinstance(model, Exception):  # a month the family cannot serve is reported
            failed[month] = _reason(model)
            continue
        ahead = history.window(start=start, end=end)
        try:
            predicted = np.asarray(model.predict(ahead.without_energy()), dtype=np.float64)
        except Cancelled:
            raise
        except Exception as error:  # ... whether its fit or its forecast failed
            failed[month] = _reason(error)
            continue
        models[month] = model
        errors = ahead.energy.to_numpy(dtype=np.float64) - predicted
        pieces.append(pd.Series(errors, index=ahead.index, name="error"))
    step(progress, 1.0, "refits done")
    empty = pd.Series([], index=pd.DatetimeIndex([], tz="UTC"), dtype=np.float64, name="error")
    errors = pd.concat(pieces) if pieces else empty
    return RollingRefits(models=models, errors=errors.dropna(), failed=failed)


def _reason(error: Exception) -> str:
    return str(error) or type(error).__name__


def plans_from_refits(
    plans: Sequence[MeterPlan], refits: Mapping[str, RollingRefits]
) -> Callable[[date], list[MeterPlan]]:
    """A plan factory for :func:`engine.budget.backtest_budget` from each meter's refits.

    As of a past day, each plan gets the model refitted before the following month and the
    errors of the months that ended by then; everything else (history, calendar, price) is
    the plan's own.
    """

    def as_of(day: date) -> list[MeterPlan]:
        month = first_open_month(day)
        made = []
        for plan in plans:
            cut = as_of_cut(day, plan.timezone)
            chosen = refits[plan.name]
            made.append(
                replace(plan, model=chosen.model_for(month), residuals=chosen.errors_before(cut))
            )
        return made

    return as_of
