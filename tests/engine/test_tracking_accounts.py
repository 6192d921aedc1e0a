"""A bill account's adopted budget tracked against the bills that came after it.

Ground truth by construction: an invented weather station with a yearly cycle and an invented
annex heated by gas (300 kWh a day plus 45 per degree-day below 15 °C), billed in kWh on
periods of 27–35 days. November 2025 is made 6 °C warmer than the climate the budget assumed,
so its heating weather effect must be negative; the variance identity must hold exactly.
"""

from __future__ import annotations

import shutil
from datetime import date

import numpy as np
import pandas as pd
import pytest
from python_calamine import CalamineWorkbook

from engine.export.tracking_workbook import write_tracking_workbook
from engine.project import Project
from engine.reading import ReadOptions
from engine.steps.adopting import adopt_budget
from engine.steps.budgeting import budget_project, budget_request
from engine.steps.importing import create_project, read_project_files, store_files
from engine.steps.tracking import track_budget
from tests.bill_support import billing_periods

WARM_MONTH = "2025-11"


@pytest.fixture(scope="module")
def tracked(tmp_path_factory):
    folder = tmp_path_factory.mktemp("bill-tracking")
    rng = np.random.default_rng(21)
    hours = pd.date_range("2022-01-01", "2025-12-31 23:00", freq="h")
    day = hours.day_of_year.to_numpy()
    temps = 10 - 11 * np.cos(2 * np.pi * (day - 20) / 365.25) + rng.normal(0, 2, len(hours))
    temps = temps + 6.0 * (hours.strftime("%Y-%m") == WARM_MONTH)
    weather = folder / "station.csv"
    weather.write_text("Timestamp,Dry bulb (°C)\n" + "\n".join(
        f"{t:%Y-%m-%d %H:%M},{v:.2f}" for t, v in zip(hours, temps, strict=True)))  # fmt: skip
    daily_t = pd.Series(temps, index=hours).resample("D").mean()
    use = (300 + 45 * np.maximum(15 - daily_t, 0)) * (1 + rng.normal(0, 0.03, len(daily_t)))
    periods = billing_periods(use, "2022-01-03", "2025-12-31", seed=22)
    cost = 0.08 * periods["amount"] + 25
    rows = [
        f"{p.period_start:%Y-%m-%d},{p.period_end:%Y-%m-%d},{p.amount:.2f},{c:.2f}"
        for p, c in zip(periods.itertuples(), cost, strict=True)
    ]
    bills = folder / "annex.csv"
    bills.write_text("Period start,Period end,Billed kWh,Total cost ($)\n" + "\n".join(rows))
    files = read_project_files([], [bills], [weather], ReadOptions(timezone="UTC"))
    path = folder / "site.loadledger"
    months = [f"2025-{m:02d}" for m in range(7, 13)]
    with create_project(path, files, timezone="UTC") as project:
        request = budget_request(project, months, as_of=date(2025, 6, 30), paths=300)
        outcome = budget_project(project, request)
        adopt_budget(project, "FY", outcome, request)
        report = track_budget(project, "FY", as_of=date(2025, 12, 31))
    return report, use


def test_the_account_is_tracked_against_its_bills(tracked):
    report, use = tracked
    (account,) = report["meters"]
    assert (account["name"], account["source"]) == ("annex", "bills")
    by_month = {record["month"]: record for record in account["months"]}
    # complete months: every day billed; their actual is the bills' energy shared into days
    complete = [m for m, r in by_month.items() if r["complete"]]
    assert complete[:4] == ["2025-07", "2025-08", "2025-09", "2025-10"]
    for month in complete:
        truth = use[month].sum()
        assert by_month[month]["actual"] == pytest.approx(truth, rel=0.06)


def test_the_variance_parts_add_up_and_a_warm_month_saves_heating(tracked):
    report, _ = tracked
    (account,) = report["meters"]
    for record in account["months"]:
        if record["variance_kwh"] is None:
            continue
        assert record["weather_kwh"] + record["usage_kwh"] == pytest.approx(
            record["variance_kwh"], abs=1e-6
        )
        if record["complete"] and record.get("actual_cost") is not None:
            parts = record["weather_cost"] + record["usage_cost"] + record["price_cost"]
            assert parts == pytest.approx(record["variance_cost"], abs=1e-6)
    november = next(r for r in account["months"] if r["month"] == WARM_MONTH)
    assert november["weather_kwh"] < -0.1 * november["budget"]["quantiles"]["50"]


def test_a_month_not_yet_fully_billed_is_compared_to_date(tracked):
    report, _ = tracked
    (account,) = report["meters"]
    december = next(r for r in account["months"] if r["month"] == "2025-12")
    assert december["status"] == "under way"  # the last invented bill ends before 31 Dec
    assert december["budget_to_date"] < december["budget"]["quantiles"]["50"]
    assert any("no bill yet for every day of 2025-12" in c for c in report["cautions"])
    # so the year-end outlook is a fresh budget (billed days plus the rest), not the actuals
    (account,) = report["meters"]
    outlook = account["outlook"]
    billed = sum(record["actual"] for record in account["months"])
    assert outlook["mean"] > billed
    # the same bills; only the share of the bill straddling 1 July follows the fresh model
    assert outlook["actual_to_date"] == pytest.approx(billed, rel=1e-3)


def test_the_tracking_workbook_holds_the_account(tracked, tmp_path):
    report, _ = tracked
    written = write_tracking_workbook(tmp_path / "tracking.xlsx", report)
    rows = CalamineWorkbook.from_path(str(written)).get_sheet_by_name("Tracking").to_python()
    assert any("annex" in str(cell) for row in rows for cell in row)


@pytest.fixture(scope="module")
def mixed(fitted_site, tmp_path_factory):
    """The fitted two-meter site plus an unmetered annex billed in kWh (electricity, beside
    the Hall meter), its last bill ending before the tracking's as-of date."""
    folder = tmp_path_factory.mktemp("mixed")
    path = folder / "site.loadledger"
    shutil.copyfile(fitted_site, path)
    days = pd.date_range("2024-01-01", "2025-12-31", freq="D")
    use = pd.Series(400 + 30 * np.cos(2 * np.pi * days.day_of_year / 365.25), index=days)
    periods = billing_periods(use, "2024-01-01", "2025-12-24", seed=6)
    bills = folder / "annex.csv"
    periods.rename(columns={"period_start": "Period start", "period_end": "Period end",
                            "amount": "Billed kWh"}).to_csv(bills, index=False)  # fmt: skip
    months = [f"2025-{m:02d}" for m in range(7, 13)]
    with Project.open(path) as project:
        store_files(project, read_project_files([], [bills], [], ReadOptions(timezone="UTC")))
        request = budget_request(project, months, as_of=date(2025, 6, 30), paths=200)
        adopt_budget(project, "FY", budget_project(project, request), request)
        report = track_budget(project, "FY", as_of=date(2025, 12, 31))
    return report, periods["period_end"].max()


def test_a_roll_up_with_an_account_counts_only_the_billed_days(mixed):
    report, last_bill_end = mixed
    by_name = {meter["name"]: meter for meter in report["meters"]}
    assert by_name["annex"]["source"] == "bills" and by_name["Hall"]["source"] == "readings"
    electricity = next(u for u in report["utilities"] if u["group"] == "electricity")
    assert sorted(electricity["meters"]) == ["Hall", "annex"]
    for number, record in enumerate(electricity["months"]):
        hall, annex = by_name["Hall"]["months"][number], by_name["annex"]["months"][number]
        if annex["complete"]:  # every day billed: the roll-up is the two actuals
            assert record["complete"]
            assert record["actual"] == pytest.approx(hall["actual"] + annex["actual"], rel=1e-9)
    december = electricity["months"][-1]
    assert by_name["Hall"]["months"][-1]["complete"]  # the meter read all of December
    # but the annex's last bill ends mid-December: the roll-up counts only the billed days
    assert last_bill_end.month == 12 and last_bill_end.day < 31
    assert december["status"] == "under way"
    assert december["actual"] < (
        by_name["Hall"]["months"][-1]["actual"] + by_name["annex"]["months"][-1]["actual"]
    )
