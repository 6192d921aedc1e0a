"""Budget periods: which local calendar months a budget covers, and where "as of" cuts history.

A budget covers whole local calendar months: the next month, the next N months, a quarter or a
fiscal year. A fiscal year is named by the calendar year it ends in (fiscal year 2027 with a
July start runs July 2026 – June 2027; common practice in US universities and governments),
and with a January start it is the calendar year.

The as-of date is the last local day whose readings count: everything from the following local
midnight (the *cut*) on is ignored, so a budget made "as of" a date sees only what was known
then. A month under way at the cut is its metered energy to date plus a forecast of the rest.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from datetime import date, timedelta

import numpy as np
import pandas as pd

from engine.errors import InputError
from engine.weather import local_hours

_MONTH_TEXT = re.compile(r"^\s*(\d{4})-(\d{1,2})\s*$")
#: The longest budget a run may cover, in months (beyond it a forecast is a guess, not a budget).
MAX_MONTHS = 60


def _parse_month(text: str) -> pd.Period:
    found = _MONTH_TEXT.match(str(text))
    if not found or not 1 <= int(found.group(2)) <= 12:
        raise InputError(
            f"the budget month {text!r} is not a month.",
            hint="Write the month as YYYY-MM, e.g. 2027-07.",
        )
    return pd.Period(year=int(found.group(1)), month=int(found.group(2)), freq="M")


#: The month a fiscal year starts in unless told otherwise (July, common for campuses).
DEFAULT_FISCAL_START = 7


def budget_months(
    start: str | None = None,
    months: int | None = None,
    fiscal_year: int | None = None,
    fiscal_start_month: int = DEFAULT_FISCAL_START,
    quarter: int | None = None,
) -> list[str]:
    """The local calendar months a budget covers, as ``"YYYY-MM"`` text in order.

    Parameters
    ----------
    start : str, optional
        First month, ``"YYYY-MM"``; alone it is a one-month budget (e.g. next month).
    months : int, optional
        Number of months from ``start`` (3 for a quarter, 12 for a year).
    fiscal_year : int, optional
        The fiscal year, named by the calendar year it ends in; used instead of ``start``.
    fiscal_start_month : int, default 7
        The month (1–12) a fiscal year starts in.
    quarter : int, optional
        With ``fiscal_year``: only its 1st–4th fiscal quarter.

    Examples
    --------
    >>> budget_months(fiscal_year=2027, quarter=1)
    ['2026-07', '2026-08', '2026-09']
    """
    if not 1 <= int(fiscal_start_month) <= 12:
        raise InputError(
            f"the fiscal year cannot start in month {fiscal_start_month}.",
            hint="Give the fiscal year's first month as a number from 1 to 12.",
        )
    if fiscal_year is not None:
        if start is not None or months is not None:
            raise InputError(
                "a budget is either a fiscal year or a start month with a number of months, "
                "not both.",
                hint="Leave out the start month and number of months for a fiscal year.",
            )
        first = pd.Period(year=int(fiscal_year), month=int(fiscal_start_month), freq="M")
        if fiscal_start_month != 1:
            first -= 12
        count = 12
        if quarter is not None:
            if quarter not in (1, 2, 3, 4):
                raise InputError(
                    f"there is no fiscal quarter {quarter}.", hint="Choose quarter 1, 2, 3 or 4."
                )
            first += 3 * (quarter - 1)
            count = 3
    else:
        if start is None:
            raise InputError(
                "the budget has no period.",
                hint="Give a start month (YYYY-MM) or a fiscal year.",
            )
        if quarter is not None:
            raise InputError(
                "a quarter is chosen within a fiscal year.",
                hint="Give the fiscal year with the quarter, or a start month with 3 months.",
            )
        first = _parse_month(start)
        count = 1 if months is None else int(months)
        if not 1 <= count <= MAX_MONTHS:
            raise InputError(
                f"a budget of {months} months cannot be made.",
                hint=f"Choose from 1 to {MAX_MONTHS} months.",
            )
    return [str(month) for month in pd.period_range(first, periods=count, freq="M")]


def check_ahead(months: list[str], as_of: date) -> None:
    """Refuse a budget whose every month ends by ``as_of``: nothing of it is left to forecast
    (its months are metered, or lie before the readings and would be guessed backwards)."""
    if months and str(months[-1]) < first_open_month(as_of):
        span = months[0] if len(months) == 1 else f"{months[0]} .. {months[-1]}"
        raise InputError(
            f"the budget's months ({span}) all end by the as-of date {as_of:%Y-%m-%d}, so "
            "there is nothing to forecast.",
            hint=f"Budget months from {first_open_month(as_of)} on; to set passed months "
            "beside a budget, adopt one and track it.",
        )


def first_open_month(as_of: date) -> str:
    """The month holding the day after ``as_of``: the first one not fully metered."""
    following = as_of + timedelta(days=1)
    return f"{following.year:04d}-{following.month:02d}"


def fiscal_year_of(month: str, fiscal_start_month: int) -> int:
    """The fiscal year (by the engine's naming) that holds ``month``."""
    year = int(month[:4])
    return next(
        fiscal
        for fiscal in (year, year + 1)
        if month in budget_months(fiscal_year=fiscal, fiscal_start_month=fiscal_start_month)
    )


def fiscal_quarter_of(month: str, fiscal_year: int, fiscal_start_month: int) -> int:
    """The quarter of ``fiscal_year`` that holds ``month`` (1 when it is not in that year)."""
    for quarter in (1, 2, 3, 4):
        quarter_months = budget_months(
            fiscal_year=fiscal_year, fiscal_start_month=fiscal_start_month, quarter=quarter
        )
        if month in quarter_months:
            return quarter
    return 1


def as_of_date(as_of: date | str | pd.Timestamp) -> date:
    """The as-of date from a date, an ISO ``"YYYY-MM-DD"`` text or a (naive) timestamp."""
    if isinstance(as_of, pd.Timestamp):
        return as_of.date()
    if isinstance(as_of, date):
        return as_of
    try:
        return date.fromisoformat(str(as_of).strip())
    except ValueError:
        raise InputError(
            f"the as-of date {as_of!r} is not a date.",
            hint="Write it as YYYY-MM-DD: the last day whose readings count.",
        ) from None


def local_midnight(day: date, timezone: str) -> pd.Timestamp:
    """The UTC instant of local midnight starting ``day`` (shifted past a skipped hour)."""
    stamp = pd.Timestamp(day).tz_localize(timezone, nonexistent="shift_forward", ambiguous=True)
    return stamp.tz_convert("UTC")


def as_of_cut(as_of: date | str | pd.Timestamp, timezone: str) -> pd.Timestamp:
    """The UTC instant from which history is ignored: local midnight after the as-of date."""
    return local_midnight(as_of_date(as_of) + pd.Timedelta(days=1), timezone)


@dataclass(frozen=True)
class BudgetWindow:
    """The budget months on one site's local clock.

    ``hours`` are the UTC hour starts of every local day of the months; ``days`` the local
    days (naive midnights); ``start``/``end`` the UTC instants bounding the window.
    """

    months: tuple[str, ...]
    timezone: str
    start: pd.Timestamp
    end: pd.Timestamp
    days: pd.DatetimeIndex
    hours: pd.DatetimeIndex

    @classmethod
    def of(cls, months: list[str] | tuple[str, ...], timezone: str) -> BudgetWindow:
        """Check that ``months`` follow one another and lay them on the local clock."""
        if not months:
            raise InputError("the budget has no months.", hint="Choose at least one month.")
        periods = [_parse_month(month) for month in months]
        steps = np.diff([period.ordinal for period in periods])
        if (steps != 1).any():
            raise InputError(
                f"the budget months {', '.join(months)} do not follow one another.",
                hint="Choose consecutive months (see budget_months).",
            )
        first_day = periods[0].start_time.date()
        last_day = periods[-1].end_time.date()
        days = pd.date_range(first_day, last_day, freq="D", name="day")
        return cls(
            months=tuple(str(period) for period in periods),
            timezone=timezone,
            start=local_midnight(first_day, timezone),
            end=local_midnight(last_day + pd.Timedelta(days=1), timezone),
            days=days,
            hours=local_hours(first_day, last_day, timezone),
        )

    @property
    def first_day(self) -> date:
        return self.days[0].date()

    @property
    def last_day(self) -> date:
        return self.days[-1].date()

    def day_midnights(self) -> pd.DatetimeIndex:
        """UTC instants of every local midnight starting a day of the window."""
        local = self.days.tz_localize(self.timezone, nonexistent="shift_forward", ambiguous=True)
        return local.tz_convert("UTC")

    def month_of_day(self) -> np.ndarray:
        """Position in ``months`` of each local day."""
        codes = self.days.year * 12 + self.days.month
        return np.asarray(codes - codes[0], dtype=np.int64)
