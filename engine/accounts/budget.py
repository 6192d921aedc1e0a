"""A project's bill accounts in a budget: their plans, then their paths beside the meters'.

Each account is one bill file: its bills known at the as-of date (the period ended by then)
are checked, modelled against the weather of each period (degree-days per day), or on the
calendar alone with a caution when there is no weather, backtested over its past bills and
calibrated, and priced at its own bills' price per kWh (fixed and demand charges folded in).
An account that cannot be budgeted (less than a complete year of bills) is left out with a
caution; overlapping billing periods are refused, since the bills themselves are wrong.
"""

from __future__ import annotations

from collections.abc import Collection, Mapping, Sequence
from dataclasses import dataclass, field
from datetime import date

import numpy as np
import pandas as pd

from engine.accounts.model import AccountModel, period_days
from engine.accounts.paths import account_paths
from engine.accounts.plan import (
    AccountPlan,
    TooFewBills,
    a_complete_year,
    account_calibration,
    backtest_bills,
    checked_bills,
    weather_covers,
)
from engine.accounts.utility import account_utility
from engine.budget.result import BudgetRun, Calibration
from engine.budget.simulate import MeterPaths, PathTotals
from engine.errors import InputError
from engine.meters import utility_words
from engine.tariffs import effective_rate
from engine.weather import daily_stats

#: Hours of readings a day needs for its mean temperature to count.
MIN_HOURS = 18
NO_WEATHER = (
    "Account '{name}' is budgeted on the calendar alone (an annual cycle fitted to its bills): "
    "{why}. Weather-driven use follows the average year, not the weather."
)


@dataclass
class AccountFailure:
    """An account left out of the budget, and why."""

    name: str
    reason: str


@dataclass
class Accounts:
    """The accounts a budget runs with, what it says about them, and those left out."""

    plans: list[AccountPlan] = field(default_factory=list)
    cautions: list[str] = field(default_factory=list)
    failures: list[AccountFailure] = field(default_factory=list)

    def measured_by_only(self, meters: Collection[str]) -> None:
        """Keep only ``meters`` (those budgeted) as measuring their accounts: an account whose
        meters are all left out counts in the totals again."""
        for plan in self.plans:
            plan.metered_by = tuple(meter for meter in plan.metered_by if meter in meters)

    def meter_rates(self) -> dict[str, float]:
        """The price per kWh of the account each meter belongs to, where its bills give one
        (such a meter without a rate card is costed at it)."""
        return {
            meter: plan.rate
            for plan in self.plans
            if plan.rate is not None
            for meter in plan.metered_by
        }


def daily_means(hourly: pd.Series | None, timezone: str) -> pd.Series | None:
    """Mean °C per local day (naive dates) of days with enough hours; None without weather."""
    if hourly is None or hourly.dropna().empty:
        return None
    daily = daily_stats(hourly.dropna(), timezone)
    return daily["tmean"].where(daily["hours"] >= MIN_HOURS).dropna()


def plan_accounts(
    bills: pd.DataFrame,
    as_of: date,
    hourly: pd.Series | None,
    timezone: str,
    *,
    with_weather: bool,
    levels: Sequence[int],
    currency: str,
    metered_by: Mapping[str, tuple[str, ...]],
    taken: Sequence[str] = (),
) -> Accounts:
    """Every account of ``bills`` (the project's stored bills) made ready to budget.

    ``with_weather`` is whether the budget's weather scenarios have temperatures;
    ``taken`` are the meters' names (an account of the same name is called "NAME (bills)").
    """
    temps = daily_means(hourly, timezone) if with_weather else None
    found = Accounts()
    for name, group in bills.groupby("account", sort=True):
        known = group[group["period_end"] <= pd.Timestamp(as_of)]
        try:
            plan, cautions = _plan(str(name), known, temps, levels, currency)
        except _LeftOut as why:
            found.failures.append(AccountFailure(str(name), str(why)))
            continue
        plan.account = plan.name
        if plan.name in taken:
            plan.name = f"{plan.name} (bills)"
        plan.metered_by = tuple(metered_by.get(str(name), ()))
        found.plans.append(plan)
        found.cautions += cautions
    return found


class _LeftOut(Exception):
    """An account that cannot be budgeted; the budget goes on without it."""


def _plan(
    name: str,
    bills: pd.DataFrame,
    temps: pd.Series | None,
    levels: Sequence[int],
    currency: str,
) -> tuple[AccountPlan, list[str]]:
    try:
        bills, cautions = checked_bills(name, bills)
    except TooFewBills as error:
        raise _LeftOut(error.problem) from error
    utility = account_utility(bills)
    if utility is None:
        raise _LeftOut(
            f"its unit ({bills['unit_found'].iloc[0]}) serves several utilities, so it "
            "cannot join a utility's roll-up"
        )
    used, fitted = _weather_fit(name, bills, temps, cautions)
    model = AccountModel.fit(fitted, used)
    errors, pairs = backtest_bills(fitted, used, levels)
    source = (
        f"out-of-sample errors (actual ÷ predicted − 1) of {len(errors)} past bills, each "
        "predicted by the model refitted on the bills before it; one drawn per forecast "
        "billing period"
    )
    if len(errors) == 0:
        errors = _fit_errors(model, fitted, used)
        errors = errors[np.isfinite(errors)] if np.isfinite(errors).any() else np.zeros(1)
        source = "the fit's own errors on its bills (too few bills for a backtest)"
        cautions.append(
            f"Account '{name}' has too few bills to test its model on bills it did not see: "
            "its range comes from the fit's own errors and is likely too narrow."
        )
    plan = AccountPlan(
        name=name,
        utility=utility,
        model=model,
        bills=bills,
        daily_temperature=used,
        errors=errors,
        errors_source=source,
        cycle_days=int(np.median(period_days(bills).iloc[-12:])),
        calibration=account_calibration(pairs, levels),
        **_price(bills, currency),
    )
    return plan, cautions


def _weather_fit(
    name: str, bills: pd.DataFrame, temps: pd.Series | None, cautions: list[str]
) -> tuple[pd.Series | None, pd.DataFrame]:
    """The temperatures the account's model uses (None: calendar only) and the bills it is
    fitted on: every bill, or those the weather covers when they make a complete year."""
    covered = weather_covers(bills, temps)
    if covered.all():
        return temps, bills
    if temps is not None and a_complete_year(bills[covered]):
        cautions.append(
            f"Account '{name}': {int((~covered).sum())} of its bills have no weather for most "
            "of their days and are left out of its model."
        )
        return temps, bills[covered].reset_index(drop=True)
    why = "the budget has no weather" if temps is None else "the weather does not cover its bills"
    cautions.append(NO_WEATHER.format(name=name, why=why))
    return None, bills


def _fit_errors(model: AccountModel, bills: pd.DataFrame, temps: pd.Series | None) -> np.ndarray:
    predicted = np.array(
        [
            model.period_total(s, e, temps)
            for s, e in zip(bills["period_start"], bills["period_end"], strict=True)
        ]
    )
    return bills["quantity_kwh"].to_numpy(dtype=float) / predicted - 1.0


def _price(bills: pd.DataFrame, currency: str) -> dict:
    """The account's own price per kWh over its newest year of bills, when they show costs."""
    try:
        return {"rate": effective_rate(bills), "currency": currency}
    except InputError:
        return {}


def account_totals(accounts: Accounts, totals: PathTotals, rng_seed: int) -> list[MeterPaths]:
    """The accounts' paths on the run's window and weather scenarios (one generator each)."""
    return [
        account_paths(plan, totals, np.random.default_rng([rng_seed, number]))
        for number, plan in enumerate(accounts.plans)
    ]


def calibrations(accounts: Accounts) -> dict[str, Calibration]:
    return {plan.name: plan.calibration for plan in accounts.plans if plan.calibration}


def describe(run: BudgetRun, accounts: Accounts, priced: Collection[str] = ()) -> None:
    """What the run says about its accounts: assumptions, cautions, accounts left out;
    ``priced`` are the meters costed at the price of the account they belong to."""
    if not accounts.plans and not accounts.failures:
        return
    errors = run.assumptions.setdefault("model_errors", {})
    for plan in accounts.plans:
        errors[plan.name] = plan.errors_source
    if all(meter.source == "bills" for meter in run.meters):
        run.assumptions["resampling"] = (
            "each account's out-of-sample bill errors, drawn independently per path and "
            "forecast billing period"
        )
    run.assumptions["bill accounts"] = {
        "models": {plan.name: plan.model.label for plan in accounts.plans},
        "months from billing periods": (
            "forecast billing periods continue each account's cycle (its usual period length "
            "from the day after its last bill); a period's energy is shared among its days: "
            "the base load by days, the heating and cooling parts by the day's degree-days at "
            "the model's change point (mean-temperature method); without weather, by the "
            "model's annual cycle. Days a known bill covers hold that bill's energy, shared "
            "the same way under the weather that happened"
        ),
        "calibration": (
            "each account's range is checked against bill-ahead budgets of its newest past "
            "bills (model refitted before each, errors known before it, weather of the same "
            "days in each earlier year), corrected as a meter's"
        ),
        "prices": {
            plan.name: f"{plan.rate:.4f} {plan.currency} per kWh from its own bills"
            for plan in accounts.plans
            if plan.rate is not None
        },
        "measured by meters": {
            plan.name: list(plan.metered_by) for plan in accounts.plans if plan.metered_by
        },
        "meters priced by their account": {
            meter: f"{plan.rate:.4f} {plan.currency} per kWh, the price of account '{plan.name}'"
            for plan in accounts.plans
            for meter in plan.metered_by
            if meter in priced
        },
    }
    run.cautions += accounts.cautions
    run.cautions += [
        f"Account '{failure.name}' is left out of this budget: {failure.reason}."
        for failure in accounts.failures
    ]
    run.cautions += _maybe_counted_twice(run, accounts)
    counted_twice = [plan.name for plan in accounts.plans if plan.metered_by]
    if counted_twice:
        run.cautions.append(
            f"Account(s) {', '.join(counted_twice)} are measured by meters: they are listed "
            "but left out of the utility and campus totals, where their meters count."
        )


def _maybe_counted_twice(run: BudgetRun, accounts: Accounts) -> list[str]:
    """A caution per account counted in the totals beside meters of its utility that belong
    to no account: if they measure part of its supply, the totals count it twice. Which
    meters an account covers is the user's to say; it is never guessed."""
    members = {meter for plan in accounts.plans for meter in plan.metered_by}
    cautions = []
    for plan in accounts.plans:
        if plan.metered_by:
            continue
        beside = [
            meter.name
            for meter in run.meters
            if meter.source == "readings"
            and meter.utility == plan.utility
            and meter.name not in members
        ]
        if beside:
            cautions.append(
                f"Account '{plan.name}' ({utility_words(plan.utility)}) is counted in the "
                f"totals beside {'the meter' if len(beside) == 1 else 'the meters'} "
                f"{', '.join(beside)} of the same utility. If one of them measures part of the "
                "account's supply, say so (loadledger accounts "
                "PROJECT --meter-account METER=ACCOUNT, or the window's Project ▸ Meters, "
                "units and calendar), or that supply is counted twice."
            )
    return cautions
