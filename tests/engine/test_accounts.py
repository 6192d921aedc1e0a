"""Accounts that only have bills: splitting billing periods into months, the account's model
against reference least squares, the checks on its bills, and its budget paths.

Invented bills on invented weather (ground truth by construction) unless a test names another
source beside it.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm

from engine.accounts.budget import plan_accounts
from engine.accounts.model import AccountModel, bill_days
from engine.accounts.paths import account_paths, bill_only_totals
from engine.accounts.plan import backtest_bills, checked_bills
from engine.accounts.split import cycle_periods
from engine.budget import WeatherAssumption
from engine.changepoint import ChangePointFit
from engine.errors import InputError
from engine.models import BillingInputs, BillingPeriodChangePointModel
from tests.bill_support import billing_periods


def _weather(first: str, last: str, seed: int) -> pd.Series:
    """Invented daily mean °C with a yearly cycle (cold in January), indexed by local day."""
    days = pd.date_range(first, last, freq="D")
    rng = np.random.default_rng(seed)
    season = 10 - 11 * np.cos(2 * np.pi * (days.day_of_year.to_numpy() - 20) / 365.25)
    return pd.Series(season + rng.normal(0, 2.5, len(days)), index=days)


def _bills(daily_kwh: pd.Series, first: str, seed: int, last: str | None = None) -> pd.DataFrame:
    """Consecutive billing periods of 27–35 days from ``first`` with the days' kWh."""
    periods = billing_periods(daily_kwh, first, last or str(daily_kwh.index[-1]), seed)
    return periods.rename(columns={"amount": "quantity_kwh"})


def _heating_account(temps: pd.Series, seed: int = 4) -> pd.Series:
    """Invented gas use: 300 kWh a day plus 45 kWh per degree-day below 15 °C, 4 % noise."""
    rng = np.random.default_rng(seed)
    use = 300 + 45 * np.maximum(15 - temps, 0)
    return use * (1 + rng.normal(0, 0.04, len(temps)))


def _hourly(daily: pd.Series) -> pd.Series:
    """Each day's mean °C repeated over its 24 UTC hours."""
    hours = pd.date_range(daily.index[0], periods=24 * len(daily), freq="h", tz="UTC")
    return pd.Series(np.repeat(daily.to_numpy(), 24), index=hours)


# -- the split of a billing period into months -----------------------------------------------


def _by_month(days: pd.DatetimeIndex, kwh: np.ndarray) -> dict[str, float]:
    return pd.Series(kwh, index=days).groupby(days.strftime("%Y-%m")).sum().to_dict()


def test_a_billing_period_splits_into_months_by_degree_days_as_worked_by_hand():
    """Worked by hand (degree-day apportioning; mean-temperature degree-days, CIBSE TM41).

    Period 20 Jan – 18 Feb 2025: 12 days in January at 2 °C, 18 in February at 8 °C; a 3PH
    model with base 10 kWh a day, change point 15 °C and heating slope 1,700 / 282 kWh per
    °C·day, so the period (mean 5.6 °C) is 30 × (10 + 9.4 × 1,700 / 282) = 2,000 kWh.
      base: 30 days × 10 = 300 kWh → January 12 × 10 = 120, February 18 × 10 = 180
      weather-driven: 2,000 − 300 = 1,700 kWh over the degree-days
        January 12 × (15 − 2) = 156 °C·d, February 18 × (15 − 8) = 126 °C·d, total 282
        January 1,700 × 156 / 282 = 940.43 kWh, February 1,700 × 126 / 282 = 759.57 kWh
      months: January 120 + 940.43 = 1,060.43 kWh; February 180 + 759.57 = 939.57 kWh
    """
    model = ChangePointFit("3PH")
    model.change_points_, model.intercept_ = (15.0,), 10.0
    model.heating_slope_, model.cooling_slope_ = 1700 / 282, 0.0
    days = pd.date_range("2025-01-20", "2025-02-18", freq="D")
    temps = np.where(days.month == 1, 2.0, 8.0)[np.newaxis, :]
    daily = AccountModel(change_point=model).daily(days, temps, np.zeros(len(days), int))[0]
    assert _by_month(days, daily) == pytest.approx(
        {"2025-01": 1060.4255, "2025-02": 939.5745}, abs=1e-3
    )
    # A calendar-only model shares by its own daily values: a flat one, 12/30 and 18/30.
    flat = AccountModel(cycle=np.array([2000 / 30, 0.0, 0.0]))
    daily = flat.daily(days, None, np.zeros(len(days), int))[0]
    assert _by_month(days, daily) == pytest.approx({"2025-01": 800.0, "2025-02": 1200.0})


def test_a_period_s_days_add_up_to_the_billing_family_s_prediction():
    """The days of a period add up to what the billing-period change-point family predicts for
    it: the change-point model at the period's mean temperature, times its days."""
    temps = _weather("2022-01-01", "2024-12-31", seed=2)
    bills = _bills(_heating_account(temps), "2022-01-04", seed=3)
    family = BillingPeriodChangePointModel().fit(BillingInputs(bills, temps))
    model = AccountModel(change_point=family.change_point_model_)
    days = pd.date_range("2024-11-17", "2024-12-16", freq="D")
    daily = model.daily(days, temps[days].to_numpy()[None, :], np.zeros(len(days), int))[0]
    period = pd.DataFrame({"period_start": [days[0]], "period_end": [days[-1]]})
    predicted = family.predict(BillingInputs(period, temps))
    assert daily.sum() == pytest.approx(predicted.iloc[0], rel=1e-10)
    assert (daily > 0).all()


def test_forecast_periods_follow_the_billing_cycle_from_the_last_bill():
    days = pd.date_range("2025-03-01", "2025-04-30", freq="D")
    last_end = np.full(len(days), np.datetime64("2025-02-14"))
    periods = cycle_periods(days, last_end, 30)
    starts = days[np.r_[True, periods[1:] != periods[:-1]]]
    # the cycle runs 15 Feb – 16 Mar, 17 Mar – 15 Apr, 16 Apr – …: inside the window
    assert [f"{d:%m-%d}" for d in starts] == ["03-01", "03-17", "04-16"]


# -- the fit against reference least squares -------------------------------------------------


def test_the_weather_fit_equals_statsmodels_wls_on_the_same_design():
    """Reference: statsmodels WLS on the chosen shape's design at the fitted change point(s),
    [1, (c_h − T̄)⁺, (T̄ − c_c)⁺] as the shape has them, weights = days (ASHRAE RP-1050 fits
    billing data this way; the weights make it a fit per day)."""
    temps = _weather("2021-06-01", "2024-12-31", seed=7)
    bills = _bills(_heating_account(temps, seed=8), "2021-06-05", seed=9)
    model = AccountModel.fit(bills, temps).change_point
    days, owner = bill_days(bills)
    lengths = np.bincount(owner)
    means = np.bincount(owner, weights=temps.reindex(days).to_numpy()) / lengths
    columns = [np.ones(len(means))]
    if model.kind in ("3PH", "4P", "5P"):
        columns.append(np.maximum(model.change_points_[0] - means, 0))
    if model.kind in ("3PC", "4P", "5P"):
        columns.append(np.maximum(means - model.change_points_[-1], 0))
    per_day = bills["quantity_kwh"].to_numpy() / lengths
    reference = sm.WLS(per_day, np.column_stack(columns), weights=lengths).fit()
    assert model.intercept_ == pytest.approx(reference.params[0], rel=1e-8)
    assert model.heating_slope_ == pytest.approx(reference.params[1], rel=1e-8)
    if model.kind in ("4P", "5P"):
        assert model.cooling_slope_ == pytest.approx(reference.params[2], rel=1e-6, abs=1e-6)
    # and it finds the invented response: 300 kWh a day + 45 per degree-day below 15 °C
    assert model.predict([0.0, 5.0, 10.0]) == pytest.approx([975, 750, 525], rel=0.05)


def test_the_calendar_only_fit_equals_statsmodels_wls_on_period_means_of_the_cycle():
    """Reference: statsmodels WLS of kWh per day on each period's mean of [1, cos, sin] of the
    day of the year, weights = days."""
    temps = _weather("2021-01-01", "2023-12-31", seed=5)
    bills = _bills(_heating_account(temps), "2021-01-02", seed=6)
    model = AccountModel.fit(bills, None)
    days, owner = bill_days(bills)
    angle = 2 * np.pi * (days.day_of_year.to_numpy() - 1) / 365.25
    lengths = np.bincount(owner)
    design = np.column_stack(
        [np.ones(len(lengths))]
        + [np.bincount(owner, weights=f(angle)) / lengths for f in (np.cos, np.sin)]
    )
    per_day = bills["quantity_kwh"].to_numpy() / lengths
    reference = sm.WLS(per_day, design, weights=lengths).fit()
    assert model.cycle == pytest.approx(reference.params, rel=1e-8)
    assert model.label.startswith("calendar-only")


# -- bad bills --------------------------------------------------------------------------------


def _stored(bills: pd.DataFrame, account: str = "annex") -> pd.DataFrame:
    """The bills as a project stores them (account and unit beside each period)."""
    return bills.assign(account=account, unit_found="therm", cost=np.nan)


def test_overlapping_bills_are_refused_by_name():
    temps = _weather("2022-01-01", "2024-12-31", seed=1)
    bills = _bills(_heating_account(temps), "2022-01-01", seed=2)
    bills.loc[5, "period_start"] = bills.loc[4, "period_end"] - pd.Timedelta(days=3)
    with pytest.raises(InputError, match=r"account 'annex': the bill for .* overlaps") as error:
        checked_bills("annex", bills)
    assert "duplicate or corrected bill" in error.value.hint


def test_a_missing_period_is_named_in_a_caution():
    temps = _weather("2022-01-01", "2024-12-31", seed=1)
    bills = _bills(_heating_account(temps), "2022-01-01", seed=2).drop(index=7)
    _, cautions = checked_bills("annex", bills)
    (caution,) = cautions
    assert "1 gap(s) between billing periods" in caution
    assert f"after {bills.loc[6, 'period_end']:%Y-%m-%d}" in caution


def test_less_than_a_complete_year_leaves_the_account_out_with_the_reason():
    temps = _weather("2024-01-01", "2024-12-31", seed=1)
    bills = _stored(_bills(_heating_account(temps), "2024-03-01", seed=2))
    found = plan_accounts(
        bills, pd.Timestamp("2024-12-31").date(), None, "UTC",
        with_weather=False, levels=(10, 50, 90), currency="USD", metered_by={},
    )  # fmt: skip
    assert found.plans == []
    (failure,) = found.failures
    assert failure.name == "annex"
    assert "complete year" in failure.reason


# -- backtest and paths ----------------------------------------------------------------------


def test_past_bill_errors_are_out_of_sample():
    """Each past bill's error comes from a model fitted on the bills before it only: changing
    a later bill leaves earlier errors as they were."""
    temps = _weather("2021-01-01", "2024-12-31", seed=3)
    bills = _bills(_heating_account(temps), "2021-01-01", seed=4)
    errors, pairs = backtest_bills(bills, temps, (10, 50, 90))
    changed = bills.copy()
    changed.loc[len(bills) - 1, "quantity_kwh"] *= 1.5
    again, _ = backtest_bills(changed, temps, (10, 50, 90))
    assert np.array_equal(errors[:-1], again[:-1])
    assert again[-1] == pytest.approx((1 + errors[-1]) * 1.5 - 1, rel=1e-9)
    assert len(pairs) == 12 and (pairs["P10"] < pairs["P90"]).all()


def test_equal_bills_are_backtested_once_and_the_copies_stay_apart(monkeypatch):
    # The window budgets a project again and again: the second backtest of the same bills
    # and weather refits nothing, and changing what came back leaves the next answer alone.
    temps = _weather("2021-01-01", "2024-12-31", seed=5)
    bills = _bills(_heating_account(temps), "2021-01-01", seed=6)
    first, pairs = backtest_bills(bills, temps, (10, 50, 90))
    fits = []
    real_fit = AccountModel.fit
    monkeypatch.setattr(AccountModel, "fit", lambda *a, **k: fits.append(1) or real_fit(*a, **k))
    first[:] = 0.0
    pairs.loc[:, "P50"] = 0.0
    again, again_pairs = backtest_bills(bills.copy(), temps.copy(), (10, 50, 90))
    assert fits == [] and np.abs(again).sum() > 0 and (again_pairs["P50"] > 0).all()
    # Other levels or another temperature are another backtest.
    backtest_bills(bills, temps, (5, 50, 95))
    backtest_bills(bills, temps + 0.5, (10, 50, 90))
    assert len(fits) > 2


def test_budget_days_of_known_bills_add_up_to_the_bills_and_the_rest_is_forecast():
    temps = _weather("2021-01-01", "2025-03-31", seed=11)
    use = _heating_account(temps, seed=12)
    bills = _stored(_bills(use, "2021-01-01", seed=13, last="2025-01-20"))
    as_of = pd.Timestamp("2025-01-31").date()
    hourly = _hourly(temps[:"2025-01-31"])
    found = plan_accounts(
        bills, as_of, hourly, "UTC",
        with_weather=True, levels=(10, 50, 90), currency="USD", metered_by={},
    )  # fmt: skip
    (plan,) = found.plans
    totals = bill_only_totals(
        ["2025-01", "2025-02"], as_of, WeatherAssumption.typical(hourly), "UTC", 200,
        np.random.default_rng(1),
    )  # fmt: skip
    paths = account_paths(plan, totals, np.random.default_rng(2))
    last = plan.bills.iloc[-1]
    in_january = pd.date_range(max(last["period_start"], pd.Timestamp("2025-01-01")),
                               last["period_end"])  # fmt: skip
    known_days = (plan.bills["period_end"] >= "2025-01-01").sum()
    assert known_days >= 1
    # every path holds the same energy on billed days: the bills' own kWh shared by the model
    assert np.ptp(paths.days[:, : (last["period_end"] - pd.Timestamp("2025-01-01")).days + 1],
                  axis=0).max() == 0  # fmt: skip
    assert paths.actual_to_date[1] == 0 and paths.actual_to_date[0] > 0
    assert len(in_january) > 0
    # February is forecast: it spreads over the paths, and lands near the invented truth
    february = paths.months[:, 1]
    assert np.ptp(february) > 0
    truth = use["2025-02-01":"2025-02-28"].sum()
    assert np.median(february) == pytest.approx(truth, rel=0.1)


def test_bills_older_than_the_weather_are_left_out_of_the_weather_model():
    temps = _weather("2021-01-01", "2024-12-31", seed=15)
    bills = _stored(_bills(_heating_account(temps), "2021-01-01", seed=16))
    found = plan_accounts(
        bills, pd.Timestamp("2024-12-31").date(), _hourly(temps["2022-07-01":]), "UTC",
        with_weather=True, levels=(10, 50, 90), currency="USD", metered_by={},
    )  # fmt: skip
    (plan,) = found.plans
    assert plan.model.uses_temperature
    (caution,) = found.cautions
    assert "have no weather for most of their days and are left out of its model" in caution
    # with no weather at all it falls back to the calendar and says so
    found = plan_accounts(
        bills, pd.Timestamp("2024-12-31").date(), None, "UTC",
        with_weather=True, levels=(10, 50, 90), currency="USD", metered_by={},
    )  # fmt: skip
    assert not found.plans[0].model.uses_temperature
    assert "calendar alone" in found.cautions[0]
