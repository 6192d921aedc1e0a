"""Budget periods, the as-of cut and the window's local days and hours."""

from __future__ import annotations

from datetime import date

import pandas as pd
import pytest

from engine.budget import BudgetWindow, as_of_cut, budget_months
from engine.errors import InputError


def test_one_month_is_the_default() -> None:
    assert budget_months("2027-03") == ["2027-03"]


def test_the_next_months_run_across_a_year_end() -> None:
    assert budget_months("2026-11", months=3) == ["2026-11", "2026-12", "2027-01"]


def test_a_fiscal_year_is_named_by_the_year_it_ends_in() -> None:
    # Common practice (US universities, federal government): FY2027 with a July start runs
    # July 2026 – June 2027; with a January start it is the calendar year.
    july = budget_months(fiscal_year=2027)
    assert july[0] == "2026-07" and july[-1] == "2027-06" and len(july) == 12
    assert budget_months(fiscal_year=2027, fiscal_start_month=1)[0] == "2027-01"
    october = budget_months(fiscal_year=2027, fiscal_start_month=10)
    assert (october[0], october[-1]) == ("2026-10", "2027-09")


def test_a_fiscal_quarter() -> None:
    assert budget_months(fiscal_year=2027, quarter=3) == ["2027-01", "2027-02", "2027-03"]


@pytest.mark.parametrize(
    ("arguments", "words"),
    [
        ({}, "no period"),
        ({"start": "2027-13"}, "not a month"),
        ({"start": "March"}, "not a month"),
        ({"start": "2027-01", "months": 0}, "cannot be made"),
        ({"start": "2027-01", "fiscal_year": 2027}, "not both"),
        ({"fiscal_year": 2027, "quarter": 5}, "no fiscal quarter 5"),
        ({"start": "2027-01", "quarter": 1}, "within a fiscal year"),
        ({"fiscal_year": 2027, "fiscal_start_month": 13}, "cannot start in month 13"),
    ],
)
def test_periods_that_cannot_be_budgeted_say_why(arguments: dict, words: str) -> None:
    with pytest.raises(InputError, match=words) as caught:
        budget_months(**arguments)
    assert caught.value.hint


def test_the_cut_is_the_local_midnight_after_the_as_of_date() -> None:
    # 2026-03-08 is the day US clocks go forward (second Sunday of March); midnight after
    # it in Denver (UTC−6 from then on) is 06:00 UTC.
    assert as_of_cut("2026-03-08", "America/Denver") == pd.Timestamp("2026-03-09 06:00", tz="UTC")
    assert as_of_cut(date(2026, 1, 31), "Europe/Vienna") == pd.Timestamp(
        "2026-01-31 23:00", tz="UTC"
    )
    with pytest.raises(InputError, match="not a date"):
        as_of_cut("31/01/2026", "Europe/Vienna")


def test_a_window_over_a_clock_change_has_every_local_hour() -> None:
    window = BudgetWindow.of(["2026-10", "2026-11"], "America/Denver")
    # 31 + 30 days, one of them (1 November 2026) 25 hours long.
    assert len(window.days) == 61
    assert len(window.hours) == 61 * 24 + 1
    assert window.start == pd.Timestamp("2026-10-01 06:00", tz="UTC")
    assert window.end == pd.Timestamp("2026-12-01 07:00", tz="UTC")
    assert list(pd.Series(window.month_of_day()).value_counts().sort_index()) == [31, 30]


def test_months_that_do_not_follow_one_another_are_refused() -> None:
    with pytest.raises(InputError, match="do not follow one another"):
        BudgetWindow.of(["2026-01", "2026-03"], "UTC")
