"""What happened in an adopted budget's months for a bill account: its bills' energy and cost
per day, and its adopted model under the weather that happened.

An account's actual is known only where a bill has arrived: each bill that ended by the
tracking's as-of date is shared among its days by the adopted model under the weather that
happened (base by days, heating and cooling by degree-days; :mod:`engine.accounts.split`), and
its cost the same way — the bill's own prices. A month counts as complete for the account when
bills cover every one of its days; partly covered, it is under way (compared with the budget to
date). The model under the weather that happened keeps the adopted forecast billing periods,
cut to the days whose weather is known.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from engine.accounts.model import AccountModel
from engine.accounts.paths import shared_bills
from engine.budget import BudgetWindow


@dataclass(frozen=True)
class BilledDays:
    """Per local day of the window: the bills' kWh and cost (NaN where no bill has arrived or
    it shows no cost), and the adopted model under the weather that happened (None when the
    model needs weather the project does not have)."""

    kwh: np.ndarray
    cost: np.ndarray
    happened: np.ndarray | None

    @property
    def covered(self) -> np.ndarray:
        return np.isfinite(self.kwh)


def billed_days(
    adopted: dict,
    bills: pd.DataFrame,
    temperature: pd.Series | None,
    window: BudgetWindow,
    as_of: pd.Timestamp,
) -> BilledDays:
    """The account's bills that ended by ``as_of`` laid on the window, and its adopted model
    under ``temperature`` (measured mean °C per local day)."""
    model = AccountModel.from_dict(adopted["model"])
    arrived = bills[bills["period_end"] <= as_of]
    days = window.days
    if arrived.empty:
        nothing = np.full(len(days), np.nan)
        return BilledDays(nothing, nothing, _happened(model, adopted, temperature, window))
    kwh = shared_bills(model, arrived, temperature, days)
    cost = shared_bills(model, arrived, temperature, days, column="cost")
    return BilledDays(kwh, cost, _happened(model, adopted, temperature, window))


def _happened(
    model: AccountModel, adopted: dict, temperature: pd.Series | None, window: BudgetWindow
) -> np.ndarray | None:
    """The model's kWh per day under the weather that happened on the adopted forecast days
    (the assumed figures on the days known bills covered at adoption)."""
    assumed = np.asarray(adopted["assumed_weather_kwh"], dtype=np.float64)
    period = np.asarray(adopted["forecast_period"])
    if not model.uses_temperature:
        return assumed.copy()
    if temperature is None:
        return None
    measured = temperature.reindex(window.days).to_numpy(dtype=float)
    happened = np.where(period < 0, assumed, np.nan)
    known = np.flatnonzero((period >= 0) & np.isfinite(measured))
    if known.size:
        daily = model.daily(window.days[known], measured[known][np.newaxis, :], period[known])
        happened[known] = daily[0]
    return happened
