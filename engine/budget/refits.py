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

from engine.backtest import backtest_origins
from engine.budget.periods import BudgetWindow, as_of_cut, first_open_month
from engine.budget.plan import MeterPlan
from engine.errors import InputError
from engine.models.base import EnergyModel, ModelInputs, fresh
from engine.progress import Cancelled, Progress, step


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


def rolling_refits(
    family: EnergyModel,
    history: ModelInputs,
    months: int,
    *,
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
    progress : Progress, optional
        Stepped per month; cancelling raises ``Cancelled``.
    """
    starts = backtest_origins(history.index, history.timezone, months, history.interval)
    models: dict[str, EnergyModel] = {}
    failed: dict[str, str] = {}
    pieces: list[pd.Series] = []
    for number, start in enumerate(starts):
        month = start.tz_convert(history.timezone).strftime("%Y-%m")
        step(progress, number / max(len(starts), 1), f"refitting {family.label} before {month}")
        ahead = history.window(start=start, end=BudgetWindow.of([month], history.timezone).end)
        model = fresh(family)
        try:
            model.fit(history.window(end=start))
            predicted = np.asarray(model.predict(ahead.without_energy()), dtype=np.float64)
        except Cancelled:
            raise
        except Exception as error:  # a month the family cannot serve is reported, not fatal
            failed[month] = str(error) or type(error).__name__
            continue
        models[month] = model
        errors = ahead.energy.to_numpy(dtype=np.float64) - predicted
        pieces.append(pd.Series(errors, index=ahead.index, name="error"))
    step(progress, 1.0, "refits done")
    empty = pd.Series([], index=pd.DatetimeIndex([], tz="UTC"), dtype=np.float64, name="error")
    errors = pd.concat(pieces) if pieces else empty
    return RollingRefits(models=models, errors=errors.dropna(), failed=failed)


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
