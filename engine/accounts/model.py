"""An account's model from its bills: the billing-period change-point regression on the
weather of each period, or a calendar-only annual cycle when there is no weather.

The weather model is :class:`engine.models.BillingPeriodChangePointModel` (energy per day
against the period's mean daily temperature, weighted by days; shape by lowest BIC). Without
temperatures the bills' energy per day follows one annual cycle, ``a + b·cos(2πt/365.25) +
s·sin(2πt/365.25)`` with ``t`` the day of the year, fitted to each period's mean of it by least
squares weighted by days: a calendar-only model that still knows winter from summer.

Both give energy per day (``daily``) for consecutive days grouped into periods; the period's
total is what the model predicts for the period, shared among its days as
:mod:`engine.accounts.split` says.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from engine.accounts.split import period_starts, share_by_degree_days
from engine.changepoint import ChangePointFit
from engine.degree_days import mean_temperature_degree_days
from engine.errors import InputError
from engine.models.billing_change_point import BillingInputs, BillingPeriodChangePointModel

#: Fewest bills an account's model (and each refit before a past bill) is fitted on.
MIN_BILLS = 12
#: Fewest days the bills must cover without a break: a complete year.
YEAR = 365
CALENDAR_LABEL = "calendar-only annual cycle (bills, no weather)"
_YEAR_DAYS = 365.25


def _cycle(days: pd.DatetimeIndex) -> np.ndarray:
    """``[1, cos, sin]`` of the day of the year, one row per day."""
    angle = 2 * np.pi * (days.day_of_year.to_numpy() - 1) / _YEAR_DAYS
    return np.column_stack([np.ones(len(days)), np.cos(angle), np.sin(angle)])


def period_days(bills: pd.DataFrame) -> pd.Series:
    """Days in each billing period (both ends inclusive)."""
    return (bills["period_end"] - bills["period_start"]).dt.days + 1


def bill_days(bills: pd.DataFrame) -> tuple[pd.DatetimeIndex, np.ndarray]:
    """Every day the bills cover, and which bill (row position) each day belongs to."""
    start = pd.to_datetime(bills["period_start"]).to_numpy().astype("datetime64[D]")
    end = pd.to_datetime(bills["period_end"]).to_numpy().astype("datetime64[D]")
    lengths = (end - start).astype(np.int64) + 1
    owner = np.repeat(np.arange(len(bills)), lengths)
    first = np.repeat(start, lengths)
    offset = np.arange(len(owner)) - np.repeat(np.cumsum(lengths) - lengths, lengths)
    return pd.DatetimeIndex(first + offset.astype("timedelta64[D]")), owner


@dataclass
class AccountModel:
    """A fitted account model: ``change_point`` with weather, ``cycle`` (a, b, s) without."""

    change_point: ChangePointFit | None = None
    cycle: np.ndarray | None = None

    @property
    def uses_temperature(self) -> bool:
        return self.change_point is not None

    @property
    def label(self) -> str:
        if self.change_point is None:
            return CALENDAR_LABEL
        return f"billing-period change-point regression ({self.change_point.kind})"

    @classmethod
    def fit(cls, bills: pd.DataFrame, daily_temperature: pd.Series | None) -> AccountModel:
        """Fit on ``bills`` (``period_start``, ``period_end``, ``quantity_kwh``)."""
        if daily_temperature is not None:
            family = BillingPeriodChangePointModel().fit(BillingInputs(bills, daily_temperature))
            return cls(change_point=family.change_point_model_)
        days, owner = bill_days(bills)
        lengths = np.bincount(owner)
        design = np.add.reduceat(_cycle(days), period_starts(owner), axis=0) / lengths[:, None]
        per_day = bills["quantity_kwh"].to_numpy(dtype=float) / lengths
        root = np.sqrt(lengths)[:, None]
        coefficients, *_ = np.linalg.lstsq(design * root, per_day * root[:, 0], rcond=None)
        return cls(cycle=coefficients)

    def to_dict(self) -> dict:
        """Plain JSON: the change-point model's, or the annual cycle's coefficients."""
        if self.change_point is not None:
            return {"change_point": self.change_point.to_dict()}
        return {"cycle": [float(c) for c in self.cycle]}

    @classmethod
    def from_dict(cls, data: dict) -> AccountModel:
        if "change_point" in data:
            return cls(change_point=ChangePointFit.from_dict(data["change_point"]))
        return cls(cycle=np.asarray(data["cycle"], dtype=float))

    def daily(
        self, days: pd.DatetimeIndex, temperature: np.ndarray | None, period_of_day: np.ndarray
    ) -> np.ndarray:
        """Energy per day, ``(scenarios, days)``, for days grouped into consecutive periods.

        ``temperature`` is the mean °C of each day per weather scenario ``(scenarios, days)``
        (None for the calendar-only model). Each period's total is the model's prediction for
        it; the base goes by days and the weather-driven parts by degree-days.
        """
        if self.change_point is None:
            return (_cycle(days) @ self.cycle)[np.newaxis, :]
        if temperature is None:
            raise InputError(
                "the account's model uses temperature, but no weather was given.",
                hint="Give weather for the budget, or budget the account without weather.",
            )
        model = self.change_point
        starts = period_starts(period_of_day)
        lengths = np.diff(np.r_[starts, len(days)])
        means = np.add.reduceat(temperature, starts, axis=1) / lengths
        if model.kind == "2P":
            return np.repeat(model.predict(means), lengths, axis=1)
        heat_point, cool_point = model.change_points_[0], model.change_points_[-1]
        heating = model.heating_slope_ * lengths * np.maximum(heat_point - means, 0.0)
        cooling = model.cooling_slope_ * lengths * np.maximum(means - cool_point, 0.0)
        return share_by_degree_days(
            model.intercept_,
            heating,
            cooling,
            mean_temperature_degree_days(temperature, heat_point, "heating"),
            mean_temperature_degree_days(temperature, cool_point, "cooling"),
            period_of_day,
        )

    def period_total(
        self, first: pd.Timestamp, last: pd.Timestamp, temps: pd.Series | None
    ) -> float:
        """The model's energy for one period (measured daily temperatures when it uses them)."""
        days = pd.date_range(first, last, freq="D")
        temperature = None
        if self.change_point is not None:
            temperature = temps.reindex(days).to_numpy(dtype=float)[np.newaxis, :]
            temperature = _filled(temperature)
        return float(self.daily(days, temperature, np.zeros(len(days), np.int64)).sum())


def _filled(temperature: np.ndarray) -> np.ndarray:
    """Days without a temperature take the mean of the others (the family allows 10 %)."""
    row = temperature[0]
    return np.where(np.isfinite(row), row, np.nanmean(row))[np.newaxis, :]
