"""Change-point regression on utility bills: energy per day against the period's mean temperature.

For meters known only through monthly bills. Each billing period is one point: its mean daily
temperature against its energy per day, weighted by its number of days, with the RP-1050
shapes of :mod:`engine.changepoint` (ASHRAE RP-1050; Kissock, Haberl & Claridge 2003 fit
billing data this way). Without temperatures the model is the mean energy per day.

Why its own inputs (:class:`BillingInputs`) and not :class:`~engine.models.base.ModelInputs`:
bills are periods of uneven length (28 to 35 days, set by the meter-reading round) with no
regular index, and the driver is the period's mean of daily temperatures, not a value per
interval. Predictions are per period as well; for a budget, make the periods the months.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from engine.changepoint import PARAMETER_COUNT, ChangePointFit, select_best
from engine.errors import InputError
from engine.models._family import ModelFamily

#: Bill columns the model reads; ``quantity_kwh`` only when fitting.
BILL_PERIOD_COLUMNS: tuple[str, ...] = ("period_start", "period_end")
#: Share of a period's days that need a daily mean temperature.
MIN_PERIOD_COVERAGE = 0.9


@dataclass(frozen=True)
class BillingInputs:
    """Billing periods and the site's daily temperatures.

    Attributes
    ----------
    bills : pandas.DataFrame
        One row per billing period: ``period_start`` and ``period_end`` (local dates, the end
        inclusive) and, for fitting, ``quantity_kwh``. A ``source_row`` column, when present,
        names the bill's row in its file in messages.
    daily_temperature : pandas.Series or None
        Mean outdoor temperature (°C) per local day, indexed by naive dates; None when the
        project has no weather.
    """

    bills: pd.DataFrame
    daily_temperature: pd.Series | None = None


@dataclass(frozen=True)
class _Periods:
    first_day: np.ndarray  # datetime64[D]
    days: np.ndarray
    rows: list[str]  # how each bill is named in messages


def _bill_name(bills: pd.DataFrame, position: int, start: Any, end: Any) -> str:
    row = ""
    if "source_row" in bills.columns:
        row = f" (row {bills['source_row'].iloc[position]})"
    return f"the bill for {start:%Y-%m-%d} to {end:%Y-%m-%d}{row}"


def _periods(bills: pd.DataFrame) -> _Periods:
    missing = [column for column in BILL_PERIOD_COLUMNS if column not in bills.columns]
    if missing:
        raise InputError(
            f"the bills lack the columns {missing}.",
            hint="Import the bills again so each has a period start and end.",
        )
    if bills.empty:
        raise InputError("there are no bills.", hint="Import the meter's utility bills.")
    start = pd.to_datetime(bills["period_start"]).dt.normalize()
    end = pd.to_datetime(bills["period_end"]).dt.normalize()
    undated = (start.isna() | end.isna()).to_numpy()
    if undated.any():
        position = int(np.flatnonzero(undated)[0])
        raise InputError(
            f"bill number {position + 1} has no period start or end date.",
            hint="Fill in the billing period or leave the bill out.",
        )
    rows = [_bill_name(bills, i, s, e) for i, (s, e) in enumerate(zip(start, end, strict=True))]
    first = start.to_numpy().astype("datetime64[D]")
    last = end.to_numpy().astype("datetime64[D]")
    days = (last - first).astype(np.int64) + 1
    backwards = np.flatnonzero(days < 1)
    if backwards.size:
        raise InputError(
            f"{rows[backwards[0]]} ends before it starts.",
            hint="Swap the period's start and end, or correct the one that is wrong.",
        )
    order = np.argsort(first, kind="stable")
    overlap = np.flatnonzero(first[order][1:] <= last[order][:-1])
    if overlap.size:
        later = order[overlap[0] + 1]
        raise InputError(
            f"{rows[later]} overlaps the bill before it.",
            hint="Remove the duplicate or corrected bill so billing periods do not overlap.",
        )
    return _Periods(first, days, rows)


def _quantities_per_day(bills: pd.DataFrame, periods: _Periods) -> np.ndarray:
    if "quantity_kwh" not in bills.columns:
        raise InputError(
            "the bills have no quantity_kwh column.",
            hint="Import the bills with their billed quantity.",
        )
    quantity = pd.to_numeric(bills["quantity_kwh"], errors="coerce").to_numpy(dtype=float)
    bad = np.flatnonzero(~np.isfinite(quantity) | (quantity < 0))
    if bad.size:
        found = bills["quantity_kwh"].iloc[bad[0]]
        raise InputError(
            f"{periods.rows[bad[0]]} has no usable quantity ({found}).",
            hint="Enter the billed energy, or leave the bill out of the fit.",
        )
    return quantity / periods.days


def _period_means(temps: pd.Series, periods: _Periods) -> np.ndarray:
    """Mean of the daily temperatures over each period; raises when too many days lack one."""
    days = pd.DatetimeIndex(pd.to_datetime(temps.index))
    if days.tz is not None:
        raise InputError(
            "daily temperatures for bills must be indexed by plain local dates.",
            hint="Use the daily means of engine.weather.daily_stats (indexed by local day).",
        )
    days = days.normalize()
    values = pd.Series(temps.to_numpy(dtype=float), index=days).groupby(level=0).mean()
    first = periods.first_day.min()
    every_day = pd.date_range(first, periods.first_day.max() + periods.days.max(), freq="D")
    known = values.reindex(every_day).to_numpy()
    present = np.isfinite(known)
    total = np.concatenate(([0.0], np.cumsum(np.where(present, known, 0.0))))
    count = np.concatenate(([0], np.cumsum(present)))
    start = (periods.first_day - first).astype(np.int64)
    stop = start + periods.days
    covered = count[stop] - count[start]
    short = np.flatnonzero(covered < MIN_PERIOD_COVERAGE * periods.days)
    if short.size:
        at = short[0]
        raise InputError(
            f"{periods.rows[at]} has daily temperatures for only {covered[at]} of its "
            f"{periods.days[at]} days.",
            hint="Import weather covering the billing period, or leave the bill out.",
        )
    return (total[stop] - total[start]) / covered


class BillingPeriodChangePointModel(ModelFamily):
    """Change-point regression of billed energy per day on the period's mean temperature.

    Parameters
    ----------
    kind : {"2P", "3PH", "3PC", "4P", "5P"} or None, default None
        Shape; None picks by :func:`engine.changepoint.select_best` (lowest BIC among
        physically plausible fits).

    Attributes
    ----------
    change_point_model_ : ChangePointFit or None
        The weighted fit (weights = days per period); None when fitted without temperature.
    mean_daily_energy_ : float
        Billed kWh per day over all periods (total energy / total days).
    n_parameters_ : int
        The shape's parameter count, or 1 without temperature.
    """

    family = "billing_change_point"
    label = "billing-period change-point regression"
    explainable = True

    def how_it_forecasts(self) -> str:
        return (
            "fits each billing period's energy per day against its mean temperature with "
            "heating and cooling change points (ASHRAE RP-1050 shapes)"
        )

    def __init__(self, kind: str | None = None) -> None:
        self.kind = kind

    def fit(self, inputs: BillingInputs) -> BillingPeriodChangePointModel:
        """Fit on the bills (``quantity_kwh`` needed) and, when given, daily temperatures."""
        periods = _periods(inputs.bills)
        per_day = _quantities_per_day(inputs.bills, periods)
        self.mean_daily_energy_ = float(np.sum(per_day * periods.days) / np.sum(periods.days))
        self.change_point_model_ = None
        self.n_parameters_ = 1
        if inputs.daily_temperature is not None:
            temps = _period_means(inputs.daily_temperature, periods)
            if self.kind is None:
                model = select_best(temps, per_day, periods.days)
            else:
                model = ChangePointFit(self.kind).fit(temps, per_day, periods.days)
            self.change_point_model_ = model
            self.n_parameters_ = PARAMETER_COUNT[model.kind]
        return self

    def predict(self, inputs: BillingInputs) -> pd.Series:
        """Energy (kWh) of each billing period of ``inputs.bills``, on the bills' index."""
        self._require_fitted()
        periods = _periods(inputs.bills)
        if self.change_point_model_ is None:
            per_day = np.full(len(periods.days), self.mean_daily_energy_)
        else:
            if inputs.daily_temperature is None:
                raise InputError(
                    f"the {self.label} was fitted with temperatures, so predicting needs them.",
                    hint="Give daily temperatures for the periods (e.g. a typical weather year).",
                )
            temps = _period_means(inputs.daily_temperature, periods)
            per_day = self.change_point_model_.predict(temps)
        return pd.Series(per_day * periods.days, index=inputs.bills.index, name="kWh")

    def _fitted_state(self) -> dict[str, Any]:
        model = self.change_point_model_
        return {
            "change_point_model": None if model is None else model.to_dict(),
            "mean_daily_energy": self.mean_daily_energy_,
            "n_parameters": self.n_parameters_,
        }

    def _restore(self, state: dict[str, Any]) -> None:
        stored = state["change_point_model"]
        self.change_point_model_ = None if stored is None else ChangePointFit.from_dict(stored)
        self.mean_daily_energy_ = float(state["mean_daily_energy"])
        self.n_parameters_ = int(state["n_parameters"])
