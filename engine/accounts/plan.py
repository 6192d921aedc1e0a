"""An account that only has bills, made ready for a budget: its checked bills, model, the model's
out-of-sample errors on past bills, the past bill-ahead budgets that calibrate its range, and
its price.

Past bills are the account's backtest: before each of its newest :data:`ERROR_BILLS` bills
(with a complete year of bills before it) the model is refitted on the bills before that one
and predicts it under the weather that happened; ``actual ÷ predicted − 1`` is that bill's
out-of-sample error, and a budget draws its model error from them per forecast billing
period. The newest :data:`CALIBRATION_BILLS` of those bills also get a bill-ahead budget, made
from that refit and the errors known before the bill under the same days' weather of each
earlier year (365 days back, and back again): its P-low–P-high range against the bill's actual
is checked and corrected with :func:`engine.budget.calibrate`, as meters' month-ahead budgets
are.
"""

from __future__ import annotations

import hashlib
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import ClassVar

import numpy as np
import pandas as pd

from engine.accounts.model import MIN_BILLS, YEAR, AccountModel, bill_days, period_days
from engine.budget.calibration import calibrate
from engine.budget.result import Calibration
from engine.errors import InputError
from engine.ready_meters import fingerprint

#: Newest bills whose out-of-sample errors a budget draws from (as the meters' 24 months).
ERROR_BILLS = 24
#: Newest of those that calibrate the range (as the meters' 12 months).
CALIBRATION_BILLS = 12
#: Fewest earlier errors a past bill-ahead budget needs to have a range.
MIN_ERRORS = 6
#: Share of a bill's days that need a daily mean temperature (as the billing family).
COVERAGE = 0.9


class TooFewBills(InputError):
    """An account whose bills do not cover a complete year: a budget can go on without it."""


@dataclass
class AccountPlan:
    """One bill account in a budget run; reads like a :class:`engine.budget.MeterPlan` to the
    summary (name, utility, model label, price) and says where its figures come from."""

    source: ClassVar[str] = "bills"
    tariff: ClassVar[None] = None

    name: str
    utility: str
    model: AccountModel
    bills: pd.DataFrame  # the bills known at the as-of date, oldest first
    daily_temperature: pd.Series | None  # measured mean °C per local day, before the cut
    errors: np.ndarray  # actual ÷ predicted − 1 of past bills
    errors_source: str
    cycle_days: int
    calibration: Calibration | None = None
    rate: float | None = None
    currency: str | None = None
    metered_by: tuple[str, ...] = ()
    account: str = ""  # the bills' account in the project ("" : the same as ``name``)
    scores: dict = field(default_factory=dict)  # none yet: the summary passes them through

    @property
    def in_roll_ups(self) -> bool:
        """An account a meter measures is left out of roll-ups: the meter counts instead."""
        return not self.metered_by

    @property
    def price_currency(self) -> str | None:
        return self.currency if self.rate is not None else None


def checked_bills(account: str, bills: pd.DataFrame) -> tuple[pd.DataFrame, list[str]]:
    """The account's bills in order; overlaps are refused, gaps are named in a caution.

    Raises :class:`InputError` when two billing periods overlap or a bill has no usable
    quantity, and :class:`TooFewBills` when the bills do not cover a complete year.
    """
    bills = bills.sort_values("period_start", kind="stable").reset_index(drop=True)
    start, end = bills["period_start"], bills["period_end"]
    overlap = np.flatnonzero(start.iloc[1:].to_numpy() <= end.iloc[:-1].to_numpy())
    if overlap.size:
        at = overlap[0] + 1
        raise InputError(
            f"account '{account}': the bill for {start[at]:%Y-%m-%d} to {end[at]:%Y-%m-%d} "
            f"overlaps the bill before it ({start[at - 1]:%Y-%m-%d} to {end[at - 1]:%Y-%m-%d}).",
            hint="Remove the duplicate or corrected bill from the file so billing periods do "
            "not overlap, and import it again.",
        )
    quantity = pd.to_numeric(bills["quantity_kwh"], errors="coerce")
    bad = np.flatnonzero(~np.isfinite(quantity.to_numpy(dtype=float)) | (quantity < 0))
    if bad.size:
        at = bad[0]
        raise InputError(
            f"account '{account}': the bill for {start[at]:%Y-%m-%d} to {end[at]:%Y-%m-%d} "
            "has no usable quantity.",
            hint="Enter the billed energy, or leave the bill out of the file.",
        )
    days = period_days(bills)
    if not a_complete_year(bills):
        raise TooFewBills(
            f"account '{account}' has {len(bills)} bill(s) covering {days.sum()} days before the "
            f"as-of date; a budget needs at least a complete year ({MIN_BILLS} bills, {YEAR} "
            "days).",
            hint="Import a year or more of the account's bills, or budget it later.",
        )
    gaps = np.flatnonzero(start.iloc[1:].to_numpy() > (end.iloc[:-1] + pd.Timedelta(days=1)))
    cautions = []
    if gaps.size:
        first = gaps[0]
        cautions.append(
            f"Account '{account}' has {gaps.size} gap(s) between billing periods (the first "
            f"after {end[first]:%Y-%m-%d}, to {start[first + 1]:%Y-%m-%d}): the days without a "
            "bill are left out of its model, and budget days without one are forecast."
        )
    return bills, cautions


def weather_covers(bills: pd.DataFrame, daily_temperature: pd.Series | None) -> np.ndarray:
    """Per bill, whether it has a daily mean temperature on most of its days."""
    if daily_temperature is None:
        return np.zeros(len(bills), dtype=bool)
    days, owner = bill_days(bills)
    known = np.bincount(owner, weights=days.isin(daily_temperature.dropna().index))
    return known >= COVERAGE * np.bincount(owner)


def a_complete_year(bills: pd.DataFrame) -> bool:
    """Whether the bills are enough to model: :data:`MIN_BILLS` covering :data:`YEAR` days."""
    days = period_days(bills)
    return len(bills) >= MIN_BILLS and days.sum() >= YEAR


#: Backtests made in this process, by a digest of their bills, temperatures and levels: the
#: window budgets one project again and again, and an account's backtest (its model refitted
#: before each of its newest bills) depends on nothing else. A few accounts' worth are kept.
_MADE: dict[str, tuple[np.ndarray, pd.DataFrame]] = {}
_KEPT_BACKTESTS = 16


def backtest_bills(
    bills: pd.DataFrame, temps: pd.Series | None, levels: Sequence[int]
) -> tuple[np.ndarray, pd.DataFrame]:
    """Out-of-sample errors of the newest bills, and the bill-ahead budgets of the newest.

    Returns the errors (``actual ÷ predicted − 1``, oldest first) and the past budgets as
    :func:`engine.budget.calibrate` reads them (``actual kWh``, ``mean kWh``, ``P{level}``).
    Equal inputs are backtested once per process (copies of the first result come back).
    """
    rows = pd.util.hash_pandas_object(bills, index=True).to_numpy()
    key = fingerprint(temps, list(levels), hashlib.sha256(rows.tobytes()).hexdigest())
    if key not in _MADE:
        if len(_MADE) >= _KEPT_BACKTESTS:
            del _MADE[next(iter(_MADE))]  # the oldest
        _MADE[key] = _backtest(bills, temps, levels)
    errors, pairs = _MADE[key]
    return errors.copy(), pairs.copy()


def _backtest(
    bills: pd.DataFrame, temps: pd.Series | None, levels: Sequence[int]
) -> tuple[np.ndarray, pd.DataFrame]:
    days = period_days(bills)
    covered = np.cumsum(days.to_numpy())
    origins = [i for i in range(MIN_BILLS, len(bills)) if covered[i - 1] >= YEAR]
    origins = origins[-ERROR_BILLS:]
    errors, rows = [], []
    for number, position in enumerate(origins):
        refit = AccountModel.fit(bills.iloc[:position], temps)
        bill = bills.iloc[position]
        actual = float(bill["quantity_kwh"])
        predicted = refit.period_total(bill["period_start"], bill["period_end"], temps)
        if not predicted > 0:  # no relative error of a bill predicted at nothing
            continue
        known = np.asarray(errors)
        errors.append(actual / predicted - 1.0)
        if len(origins) - number > CALIBRATION_BILLS or len(known) < MIN_ERRORS:
            continue
        outcomes = _past_years(refit, bill, temps)[:, None] * (1.0 + known[None, :])
        rows.append(_spread_row(bill, actual, outcomes.ravel(), levels))
    return np.asarray(errors), pd.DataFrame(rows)


def _past_years(model: AccountModel, bill: pd.Series, temps: pd.Series | None) -> np.ndarray:
    """The model's energy for the bill's days under each earlier year's weather on them."""
    if not model.uses_temperature:
        return np.array([model.period_total(bill["period_start"], bill["period_end"], None)])
    totals = []
    for back in range(1, 31):
        shift = pd.Timedelta(days=365 * back)
        days = pd.date_range(bill["period_start"] - shift, bill["period_end"] - shift, freq="D")
        same_days = temps.reindex(days)
        if same_days.notna().sum() < COVERAGE * len(days):
            break
        shifted = pd.Series(same_days.to_numpy(), index=days + shift)
        totals.append(model.period_total(bill["period_start"], bill["period_end"], shifted))
    if not totals:  # no earlier year: the weather that happened
        totals.append(model.period_total(bill["period_start"], bill["period_end"], temps))
    return np.asarray(totals)


def _spread_row(bill: pd.Series, actual: float, outcomes: np.ndarray, levels: Sequence[int]):
    quantiles = np.quantile(outcomes, np.asarray(levels) / 100.0)
    row = {
        "month": f"{bill['period_start']:%Y-%m-%d} to {bill['period_end']:%Y-%m-%d}",
        "actual kWh": actual,
        "mean kWh": float(outcomes.mean()),
    }
    row.update({f"P{level}": float(q) for level, q in zip(levels, quantiles, strict=True)})
    return row


def account_calibration(pairs: pd.DataFrame, levels: Sequence[int]) -> Calibration | None:
    """The range check of the past bill-ahead budgets (None when there were none)."""
    if pairs.empty:
        return None
    return calibrate(pairs, level_low=min(levels), level_high=max(levels), periods="bills")
