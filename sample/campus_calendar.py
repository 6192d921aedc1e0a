"""The invented college's academic calendar and the day type of every day.

Periods are contiguous and do not overlap: a term interrupted by a break is listed as two
periods either side of it, so every day belongs to exactly one period.
"""

from __future__ import annotations

from calendar import FRIDAY, MONDAY, SATURDAY
from collections.abc import Iterable
from datetime import date, timedelta

import numpy as np
import pandas as pd

#: Period kinds as written in the calendar file.
PERIOD_KINDS = ("term", "break", "closure", "summer session")

#: Day types the load model knows, in order of precedence (first match wins):
#: closure, then federal holiday, then break, then weekend, then summer session, else weekday.
DAY_TYPES = ("closure", "holiday", "break", "weekend", "summer", "weekday")


def _weekday_on_or_after(day: date, weekday: int) -> date:
    """The first date on or after ``day`` falling on ``weekday`` (Monday is 0)."""
    return day + timedelta(days=(weekday - day.weekday()) % 7)


def _academic_year(year: int) -> list[tuple[str, date, date, str]]:
    """Periods from the fall term of ``year`` up to the day before the next fall term."""
    fall_first = _weekday_on_or_after(date(year, 8, 22), MONDAY)
    fall_last = _weekday_on_or_after(date(year, 12, 12), FRIDAY)
    closure_first, closure_last = date(year, 12, 24), date(year + 1, 1, 1)
    # Spring term opens the Tuesday after the third Monday of January.
    spring_first = _weekday_on_or_after(date(year + 1, 1, 15), MONDAY) + timedelta(days=1)
    spring_last = _weekday_on_or_after(date(year + 1, 5, 8), FRIDAY)
    # Spring break: nine days, Saturday to the Sunday a week later, seven weeks after the
    # first Saturday of the spring term.
    break_first = _weekday_on_or_after(spring_first, SATURDAY) + timedelta(weeks=7)
    break_last = break_first + timedelta(days=8)
    # Summer session opens the Tuesday after the last Monday of May.
    summer_first = _weekday_on_or_after(date(year + 1, 5, 25), MONDAY) + timedelta(days=1)
    summer_last = _weekday_on_or_after(date(year + 1, 8, 1), FRIDAY)
    next_fall_first = _weekday_on_or_after(date(year + 1, 8, 22), MONDAY)
    day = timedelta(days=1)
    spring = f"Spring term {year + 1}"
    return [
        (f"Fall term {year}", fall_first, fall_last, "term"),
        (f"Winter break Dec {year}", fall_last + day, closure_first - day, "break"),
        (f"Campus closure {year}-{(year + 1) % 100:02d}", closure_first, closure_last, "closure"),
        (f"Winter break Jan {year + 1}", closure_last + day, spring_first - day, "break"),
        (f"{spring} before break", spring_first, break_first - day, "term"),
        (f"Spring break {year + 1}", break_first, break_last, "break"),
        (f"{spring} after break", break_last + day, spring_last, "term"),
        (f"Summer break {year + 1}", spring_last + day, summer_first - day, "break"),
        (f"Summer session {year + 1}", summer_first, summer_last, "summer session"),
        (f"Late-summer break {year + 1}", summer_last + day, next_fall_first - day, "break"),
    ]


def campus_periods(first_day: date, last_day: date) -> pd.DataFrame:
    """Calendar periods covering every day from ``first_day`` to ``last_day``.

    Returns
    -------
    pandas.DataFrame
        Columns ``Period``, ``First Day``, ``Last Day`` (``datetime.date``, inclusive) and
        ``Kind`` (one of :data:`PERIOD_KINDS`), sorted and contiguous. The first and last
        periods are whole periods, so they may start before ``first_day`` or end after
        ``last_day``.
    """
    rows = [
        row
        for year in range(first_day.year - 1, last_day.year + 1)
        for row in _academic_year(year)
        if row[2] >= first_day and row[1] <= last_day
    ]
    return pd.DataFrame(rows, columns=["Period", "First Day", "Last Day", "Kind"])


def day_types(
    days: Iterable[date] | np.ndarray, periods: pd.DataFrame, holidays: Iterable[date]
) -> np.ndarray:
    """The day type (one of :data:`DAY_TYPES`) of each day.

    Parameters
    ----------
    days : dates or numpy datetime64 values
        Local calendar days.
    periods : pandas.DataFrame
        As returned by :func:`campus_periods`.
    holidays : dates
        Public holidays that close the campus offices.

    Returns
    -------
    numpy.ndarray
        Day-type strings, one per day.
    """
    wanted = np.asarray(days, dtype="datetime64[D]")
    first = np.asarray(periods["First Day"].tolist(), dtype="datetime64[D]")
    last = np.asarray(periods["Last Day"].tolist(), dtype="datetime64[D]")
    position = np.searchsorted(first, wanted, side="right") - 1
    outside = (position < 0) | (wanted > last[np.clip(position, 0, None)])
    if outside.any():
        raise ValueError(f"day {wanted[outside][0]} is not covered by the campus calendar")
    kind = periods["Kind"].to_numpy(dtype=object)[position]
    # 1970-01-01 was a Thursday, so (days since then + 3) % 7 counts from Monday = 0.
    weekday = (wanted.astype(np.int64) + 3) % 7
    holiday = np.isin(wanted, np.asarray(sorted(holidays), dtype="datetime64[D]"))
    conditions = [kind == "closure", holiday, kind == "break", weekday >= 5]
    conditions.append(kind == "summer session")
    return np.select(conditions, list(DAY_TYPES[:-1]), default=DAY_TYPES[-1])
