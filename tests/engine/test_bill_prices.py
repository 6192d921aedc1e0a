"""Meters without a rate card are costed at the price per kWh their utility's bills give.

Invented example: a boiler house's daily gas meter (kWh) and its gas bills in therms with
costs; the price is worked out by hand from the bills and the NIST therm.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from engine.errors import InputError
from engine.reading import ReadOptions
from engine.steps.bill_prices import bill_prices
from engine.steps.budgeting import budget_project, budget_request
from engine.steps.fitting import fit_meter
from engine.steps.importing import create_project, read_project_files

ZONE = "America/Denver"
# NIST SP 811 (2008), Appendix B.9: 1 therm (EC) = 1.055 06 E+08 J; 1 kWh = 3.6 E+06 J.
KWH_PER_THERM = 1.05506e8 / 3.6e6


@pytest.fixture(scope="module")
def project(tmp_path_factory):
    folder = tmp_path_factory.mktemp("bills")
    days = pd.date_range("2024-01-01", "2025-12-31", freq="D")
    rng = np.random.default_rng(5)
    season = 1 + 0.6 * np.cos(2 * np.pi * (days.day_of_year.to_numpy() - 15) / 365.25)
    gas = 900 * season * (1 + rng.normal(0, 0.05, len(days)))
    meter = folder / "boiler-house.csv"
    meter.write_text("Date,Boiler house gas (kWh)\n" + "\n".join(
        f"{d:%Y-%m-%d},{v:.2f}" for d, v in zip(days, gas, strict=True)))  # fmt: skip
    starts = pd.date_range("2024-01-03", "2025-12-03", freq="MS") + pd.Timedelta(days=2)
    rows = []
    for number, start in enumerate(starts[:-1]):
        end = starts[number + 1] - pd.Timedelta(days=1)
        therms = 1000 + 15 * number
        rows.append(
            f"{start:%Y-%m-%d},{end:%Y-%m-%d},{therms},{therms * (0.9 + 0.01 * number):.2f}"
        )
    bills = folder / "gas-bills.csv"
    bills.write_text("Service From,Service To,Billed therms,Total Charges ($)\n" + "\n".join(rows))
    files = read_project_files([meter], [bills], (), ReadOptions(timezone=ZONE))
    path = folder / "site.loadledger"
    with create_project(path, files, timezone=ZONE) as made:
        fit_meter(made, "Boiler house gas", families=["seasonal_naive", "daily_ets"], origins=3)
    return path, bills


def test_the_price_is_the_bills_cost_over_their_kwh(project) -> None:
    from engine.project import Project

    path, bill_file = project
    bills = pd.read_csv(bill_file, parse_dates=["Service From", "Service To"])
    newest = bills["Service To"].max()
    recent = bills[bills["Service To"] > newest - pd.DateOffset(years=1)]
    by_hand = recent["Total Charges ($)"].sum() / (recent["Billed therms"].sum() * KWH_PER_THERM)
    with Project.open(path) as opened:
        (price,) = bill_prices(opened).values()
    assert price.utility == "natural_gas"
    assert price.rate == pytest.approx(by_hand, rel=1e-9)
    assert price.last_day == f"{newest:%Y-%m-%d}"
    assert "USD per kWh" in price.sentence("USD")


def test_a_meter_without_a_rate_card_is_costed_at_its_bills_price(project) -> None:
    from engine.project import Project

    path, _ = project
    with Project.open(path) as opened:
        (price,) = bill_prices(opened).values()
        request = budget_request(opened, ["2026-01", "2026-02"], paths=200, currency="cad")
        run = budget_project(opened, request).run
    assert run.currency == "CAD"
    meter, account = run.meters  # the bills are an account too, costed at its own price
    assert (meter.source, account.source) == ("readings", "bills")
    for month in [*meter.months, meter.total]:
        # cost is linear in energy path by path, so its mean is the energy's mean times the rate
        assert month.cost.mean == pytest.approx(month.energy.mean * price.rate, rel=1e-9)
        assert month.cost.quantiles["50"] == pytest.approx(
            month.energy.quantiles["50"] * price.rate, rel=1e-9
        )
    assert "CAD per kWh" in run.assumptions["prices from bills"]["natural_gas"]


def test_a_currency_must_be_a_three_letter_code(project) -> None:
    from engine.project import Project

    path, _ = project
    with Project.open(path) as opened, pytest.raises(InputError, match="three-letter"):
        budget_request(opened, ["2026-01"], currency="dollars")
