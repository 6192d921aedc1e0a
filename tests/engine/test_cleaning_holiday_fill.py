"""A gap over a public holiday is filled as the meter's own holidays ran, not like its class.

Invented ground truth: an office whose weekdays repeat exactly, whose weekends run at a flat
night load, whose breaks run at 60 % of a weekday and whose public holidays (Germany's) run at
a quarter of one, hour by hour.
"""

from __future__ import annotations

from datetime import date

import numpy as np
import pandas as pd
import pytest

from engine.calendar import CampusCalendar, CampusPeriod
from engine.cleaning.cleaned import CleanedSeries
from engine.cleaning.find import find_all
from engine.cleaning.fixes import profile_fill
from engine.meters import MeterSeries

HOUR = pd.Timedelta(hours=1)
ZONE = "Europe/Berlin"
HOLIDAY_SHARE = 0.25
BREAK_SHARE = 0.6
WHITSUN_BREAK = CampusPeriod("Whitsun break", date(2023, 5, 22), date(2023, 6, 4), "break")
WHITSUN_CALENDAR = CampusCalendar(periods=(WHITSUN_BREAK,))


def office(first: str, last: str, calendar: CampusCalendar) -> pd.Series:
    """Hourly kWh of the invented office from local ``first`` to ``last`` (inclusive days)."""
    start = pd.Timestamp(first, tz=ZONE).tz_convert("UTC")
    end = (pd.Timestamp(last, tz=ZONE) + pd.Timedelta(days=1)).tz_convert("UTC")
    index = pd.date_range(start, end, freq="h", inclusive="left")
    local = index.tz_convert(ZONE)
    hour = local.hour.to_numpy()
    weekday = 20.0 + 15.0 * ((hour >= 8) & (hour < 18)) + 0.5 * hour
    load = np.where(local.day_of_week.to_numpy() < 5, weekday, 12.0)
    days = local.tz_localize(None).normalize()
    holidays = pd.DatetimeIndex(list(calendar.public_holidays(range(2022, 2025))))
    for period in calendar.periods:
        inside = (days >= pd.Timestamp(period.first_day)) & (days <= pd.Timestamp(period.last_day))
        load = np.where(inside, BREAK_SHARE * weekday, load)
    load = np.where(days.isin(holidays), HOLIDAY_SHARE * weekday, load)
    return pd.Series(load, index=index)


def gap_on(truth: pd.Series, day: str) -> tuple[pd.Series, dict]:
    """The readings with the local day ``day`` missing, and the fill step over it."""
    local_days = truth.index.tz_convert(ZONE).tz_localize(None).normalize()
    where = np.flatnonzero(local_days == pd.Timestamp(day))
    readings = truth.copy()
    readings.iloc[where] = np.nan
    end = truth.index[where[-1]] + HOUR
    step = {"start": truth.index[where[0]].isoformat(), "end": end.isoformat(), "timezone": ZONE}
    return readings, step


def filled_day(truth: pd.Series, day: str, calendar: CampusCalendar) -> tuple[float, float]:
    """The fill's energy over ``day`` and the truth's."""
    readings, step = gap_on(truth, day)
    filled = profile_fill(CleanedSeries.start(readings, HOUR, calendar), step)
    inside = readings.isna().to_numpy()
    return float(filled.values[inside].sum()), float(truth[inside].sum())


def test_a_holiday_in_a_break_is_filled_as_the_meters_holidays_ran():
    """Whit Monday falls in the break: like days would fill it at the break's 60 %, the meter's
    other holidays of the year (Easter, May Day, Ascension, October, Christmas) say a quarter."""
    calendar = CampusCalendar(country="DE", periods=(WHITSUN_BREAK,))
    truth = office("2023-01-02", "2023-12-31", calendar)
    fill, expected = filled_day(truth, "2023-05-29", calendar)
    assert fill == pytest.approx(expected, rel=0.01)
    like_its_class, _ = filled_day(truth, "2023-05-29", WHITSUN_CALENDAR)
    assert like_its_class == pytest.approx(expected * BREAK_SHARE / HOLIDAY_SHARE, rel=0.01)


def test_a_holiday_in_term_is_filled_from_the_term_weekdays_around_it():
    """German Unity Day (a Tuesday in 2023) in ordinary weeks, with the holidays of the year
    around it as the yardstick: a quarter of the term weekdays around it."""
    calendar = CampusCalendar(country="DE", periods=(WHITSUN_BREAK,))
    truth = office("2023-01-02", "2024-06-30", calendar)
    fill, expected = filled_day(truth, "2023-10-03", calendar)
    assert fill == pytest.approx(expected, rel=0.01)


def test_a_lone_holiday_keeps_the_typical_value_of_its_class():
    """With one other holiday in the record (May Day before Ascension Day) the ratios rest on
    too little, so Ascension Day is filled like the Thursdays around it."""
    calendar = CampusCalendar(country="DE")
    truth = office("2023-04-17", "2023-05-26", calendar)
    fill, expected = filled_day(truth, "2023-05-18", calendar)
    assert fill == pytest.approx(expected / HOLIDAY_SHARE, rel=0.01)


def test_a_holiday_beside_the_range_does_not_scale_the_fill():
    """The Tuesday after Easter Monday: the holiday's quarter load, compared with a Monday's
    typical value, would scale the fill down; it is left out of the level around the range."""
    calendar = CampusCalendar(country="DE")
    truth = office("2023-03-06", "2023-04-30", calendar)
    fill, expected = filled_day(truth, "2023-04-11", calendar)
    assert fill == pytest.approx(expected, rel=1e-9)


def test_the_gap_finding_says_how_its_holiday_is_filled_and_expects_what_it_gives():
    calendar = CampusCalendar(country="DE", periods=(WHITSUN_BREAK,))
    truth = office("2023-01-02", "2023-12-31", calendar)
    readings, _ = gap_on(truth, "2023-05-29")
    meter = MeterSeries("Hall", "electricity", readings.dropna(), HOUR, ZONE)
    (gap,) = [f for f in find_all(meter, calendar=calendar) if f.kind == "gap"]
    assert gap.fix.kind == "profile_fill"
    assert "holiday hours at the share of a term weekday the meter's own" in gap.explanation
    # What it calls typical is what the fill gives, not a break day's 60 %.
    assert gap.expected_kwh == pytest.approx(truth[readings.isna()].sum(), rel=0.01)
    (blind,) = [f for f in find_all(meter, calendar=WHITSUN_CALENDAR) if f.kind == "gap"]
    assert "holiday" not in blind.explanation
