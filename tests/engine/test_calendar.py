"""Campus calendar: public holidays, campus periods, occupancy and interval labels."""

from __future__ import annotations

import json
from datetime import date, timedelta
from pathlib import Path

import holidays
import numpy as np
import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st
from openpyxl import Workbook

from engine.calendar import (
    CampusCalendar,
    CampusPeriod,
    OccupancyRule,
    holiday_countries,
    holiday_subdivisions,
    label_intervals,
    shift_to_year,
)
from engine.errors import InputError
from engine.reading.calendar_file import read_calendar_file


def _hours(first: str, last: str, timezone: str, freq: str = "h") -> pd.DatetimeIndex:
    """UTC interval starts covering local days ``first`` .. ``last``."""
    start = pd.Timestamp(first, tz=timezone).tz_convert("UTC")
    stop = (pd.Timestamp(last) + pd.Timedelta(days=1)).tz_localize(timezone).tz_convert("UTC")
    return pd.date_range(start, stop, freq=freq, inclusive="left")


def _labels_by_local_day(labels: pd.DataFrame) -> pd.Series:
    return labels.groupby(labels["local"].dt.normalize())["day_type"].first()


# --- public holidays --------------------------------------------------------------------------


def test_us_state_holidays_with_observed_dates() -> None:
    calendar = CampusCalendar(country="US", subdivision="CA")
    labels = label_intervals(
        _hours("2021-01-01", "2021-12-31", "America/Los_Angeles"), "America/Los_Angeles", calendar
    )
    by_day = _labels_by_local_day(labels)
    holiday_days = {day.date() for day in by_day.index[by_day == "holiday"]}
    # Reference: the holidays package itself for the same country, state and year.
    assert holiday_days == set(holidays.country_holidays("US", subdiv="CA", years=2021))
    # 5 U.S.C. 6103(b) (from memory): a holiday on a Sunday is observed the next Monday, one
    # on a Saturday the Friday before. 4 July 2021 was a Sunday; 1 January 2022 a Saturday.
    assert date(2021, 7, 4).weekday() == 6 and date(2022, 1, 1).weekday() == 5
    assert by_day.loc["2021-07-05"] == "holiday"
    assert by_day.loc["2021-12-31"] == "holiday"
    assert by_day.loc["2021-07-09"] == "weekday"  # an ordinary Friday
    assert by_day.loc["2021-07-10"] == "saturday" and by_day.loc["2021-07-11"] == "sunday"


def test_uk_subdivision_holidays_differ_between_nations() -> None:
    # Banking and Financial Dealings Act 1971, Schedule 1 (from memory): 2 January and
    # St Andrew's Day (30 November) are bank holidays in Scotland but not in England.
    zone = "Europe/London"
    index = _hours("2024-01-01", "2024-12-31", zone)
    scotland = _labels_by_local_day(label_intervals(index, zone, CampusCalendar("GB", "SCT")))
    england = _labels_by_local_day(label_intervals(index, zone, CampusCalendar("GB", "ENG")))
    for nation, by_day in [("SCT", scotland), ("ENG", england)]:
        expected = set(holidays.country_holidays("GB", subdiv=nation, years=2024))
        assert {day.date() for day in by_day.index[by_day == "holiday"]} == expected
    assert scotland.loc["2024-01-02"] == "holiday" and england.loc["2024-01-02"] == "weekday"
    # St Andrew's Day 2024 fell on a Saturday and is observed on Monday 2 December.
    assert date(2024, 11, 30).weekday() == 5
    assert scotland.loc["2024-12-02"] == "holiday" and england.loc["2024-12-02"] == "weekday"


def test_calendar_validates_country_and_subdivision() -> None:
    with pytest.raises(InputError, match="country 'ZZ'") as error:
        CampusCalendar(country="ZZ")
    assert "ISO 3166" in error.value.message
    with pytest.raises(InputError, match="SCT"):
        CampusCalendar(country="DE", subdivision="SCT")  # the hint lists BY, BE, …
    assert CampusCalendar(country="de", subdivision="BY").country == "DE"
    assert CampusCalendar().public_holidays([2024]) == {}


def test_calendar_round_trips_through_json() -> None:
    calendar = CampusCalendar(
        country="DE",
        subdivision="BY",
        periods=(
            CampusPeriod("Wintersemester lectures", date(2031, 10, 13), date(2032, 2, 6), "term"),
            CampusPeriod("Year-end shutdown", date(2031, 12, 22), date(2032, 1, 2), "closure"),
        ),
    )
    assert CampusCalendar.from_dict(json.loads(json.dumps(calendar.to_dict()))) == calendar
    with pytest.raises(ValueError, match="term, break"):
        CampusPeriod("Odd", date(2031, 1, 1), date(2031, 1, 2), "holiday")
    with pytest.raises(ValueError, match="ends before"):
        CampusPeriod("Backwards", date(2031, 1, 2), date(2031, 1, 1), "term")


# --- labels and occupancy ---------------------------------------------------------------------


def test_hour_of_week_and_local_time_match_pandas_on_a_dst_year() -> None:
    zone = "America/New_York"
    index = pd.date_range("2030-01-01", "2031-01-01", freq="15min", tz="UTC")
    labels = label_intervals(index, zone, CampusCalendar())
    local = index.tz_convert(zone)
    # Computed another way: pandas' own weekday and hour of the converted stamps.
    expected = local.day_of_week.to_numpy() * 24 + local.hour.to_numpy()
    np.testing.assert_array_equal(labels["hour_of_week"].to_numpy(), expected)
    assert labels["local"].equals(pd.Series(local.tz_localize(None), index=index, name="local"))
    assert labels["hour_of_week"].min() == 0 and labels["hour_of_week"].max() == 167


def test_occupancy_follows_local_clock_holidays_periods_and_saturdays() -> None:
    zone = "Europe/Berlin"
    calendar = CampusCalendar(
        country="DE",
        subdivision="BY",
        periods=(
            CampusPeriod("Summer lectures", date(2032, 4, 12), date(2032, 7, 23), "term"),
            CampusPeriod("Whitsun pause", date(2032, 5, 18), date(2032, 5, 22), "break"),
            CampusPeriod("Boiler works", date(2032, 6, 7), date(2032, 6, 9), "closure"),
        ),
    )
    rule = OccupancyRule(opens="07:30", closes="18:00", saturday_hours=("09:00", "13:00"))
    index = _hours("2032-03-22", "2032-07-31", zone, freq="30min")
    labels = label_intervals(index, zone, calendar, rule)
    at = labels.set_index("local")

    def label(stamp: str, column: str) -> object:
        return at.loc[pd.Timestamp(stamp), column]

    # Berlin moved to summer time on 28 March 2032; 07:30 local opens either side of it.
    assert not label("2032-03-25 07:00", "occupied") and label("2032-03-25 07:30", "occupied")
    assert label("2032-03-26 10:00", "day_type") == "holiday"  # Good Friday in Germany
    assert label("2032-03-30 07:30", "occupied") and not label("2032-03-30 18:00", "occupied")
    assert label("2032-04-20 10:00", "period") == "Summer lectures"
    assert label("2032-04-20 10:00", "period_kind") == "term"
    assert label("2032-03-25 10:00", "period") == ""  # before any period
    # The shorter break wins inside the term, and a break is still occupied by default.
    assert label("2032-05-19 10:00", "period") == "Whitsun pause"
    assert label("2032-05-19 10:00", "occupied")
    # A closure is not occupied on a weekday.
    assert label("2032-06-08 10:00", "period_kind") == "closure"
    assert not label("2032-06-08 10:00", "occupied")
    # Corpus Christi (Thursday 27 May 2032) is a public holiday in Bavaria.
    corpus_christi = holidays.country_holidays("DE", subdiv="BY", years=2032).get_named(
        "Corpus Christi"
    )
    assert corpus_christi == [date(2032, 5, 27)]
    assert label("2032-05-27 10:00", "day_type") == "holiday"
    assert not label("2032-05-27 10:00", "occupied")
    # Saturday has its own hours, Sunday none.
    assert label("2032-04-24 09:00", "occupied") and not label("2032-04-24 13:00", "occupied")
    assert not label("2032-04-25 10:00", "occupied")


def test_occupancy_rule_validates_and_round_trips() -> None:
    rule = OccupancyRule(days=(0, 1, 2, 3, 4, 6), opens="06:15", closes="24:00")
    assert OccupancyRule.from_dict(json.loads(json.dumps(rule.to_dict()))) == rule
    index = _hours("2032-09-05", "2032-09-05", "UTC")  # a Sunday
    labels = label_intervals(index, "UTC", CampusCalendar(), rule)
    assert labels["occupied"].tolist() == [h >= 7 for h in range(24)]  # 06:15 .. midnight
    with pytest.raises(ValueError, match="not after opening"):
        OccupancyRule(opens="19:00", closes="07:00")
    with pytest.raises(ValueError, match="HH:MM"):
        OccupancyRule(opens="7am")
    with pytest.raises(ValueError, match="Saturday"):
        OccupancyRule(days=(0, 5), saturday_hours=("09:00", "12:00"))


# --- shifting to another year -----------------------------------------------------------------


def _first_monday_of_september(year: int) -> date:
    first = date(year, 9, 1)
    return first + timedelta(days=(7 - first.weekday()) % 7)


def test_shift_keeps_weekdays_and_recomputes_holidays() -> None:
    term = CampusPeriod(
        "Fall semester", _first_monday_of_september(2024), date(2024, 12, 13), "term"
    )
    recess = CampusPeriod("Autumn recess", date(2024, 11, 25), date(2024, 11, 29), "break")
    calendar = CampusCalendar("US", "TX", (term, recess))
    moved = shift_to_year(calendar, 2025)
    new_term, new_recess = moved.periods
    assert new_term.first_day == _first_monday_of_september(2025)  # Monday 1 September 2025
    shift = (new_term.first_day - term.first_day).days
    assert shift in (364, 371)
    assert (new_recess.first_day - recess.first_day).days == shift  # touching stays touching
    assert new_term.days == term.days and new_term.name == term.name
    index = _hours("2025-09-01", "2025-09-01", "America/Chicago")
    labels = label_intervals(index, "America/Chicago", moved)
    assert (labels["day_type"] == "holiday").all()  # Labor Day 2025, from the new year
    assert (labels["period"] == "Fall semester").all()


@given(
    anchor=st.dates(min_value=date(2000, 1, 1), max_value=date(2060, 12, 31)),
    years=st.integers(-5, 5),
)
def test_shift_is_whole_weeks_closest_to_the_same_date(anchor: date, years: int) -> None:
    calendar = CampusCalendar(periods=(CampusPeriod("Any", anchor, anchor, "other"),))
    target = anchor.year + years
    moved = shift_to_year(calendar, target).periods[0].first_day
    assert (moved - anchor).days % 7 == 0
    same_date = date(target, anchor.month, min(anchor.day, 28 if anchor.month == 2 else 31))
    assert abs((moved - same_date).days) <= 3


# --- reading a calendar file ------------------------------------------------------------------


def _write_csv(path: Path, text: str) -> Path:
    path.write_text(text, encoding="utf-8")
    return path


def test_reads_csv_with_loose_headers_and_day_first_dates(tmp_path: Path) -> None:
    path = _write_csv(
        tmp_path / "terms.csv",
        "Period name;Start date;End date;Type\n"
        "Michaelmas teaching;06/10/2031;12/12/2031;Term\n"
        "\n"
        "Winter shutdown;22/12/2031;02/01/2032;closure\n"
        "Lent teaching;19 January 2032;2032-03-13;TERM\n",
    )
    calendar = read_calendar_file(path, country="GB", subdivision="WLS")
    assert calendar.country == "GB"
    assert [p.name for p in calendar.periods] == [
        "Michaelmas teaching",
        "Winter shutdown",
        "Lent teaching",
    ]
    assert calendar.periods[0].first_day == date(2031, 10, 6)  # 22/12 settles day-first
    assert calendar.periods[1].last_day == date(2032, 1, 2)
    assert calendar.periods[2] == CampusPeriod(
        "Lent teaching", date(2032, 1, 19), date(2032, 3, 13), "term"
    )


def test_reads_xlsx_with_real_date_cells(tmp_path: Path) -> None:
    book = Workbook()
    sheet = book.active
    sheet.title = "Campus year"
    sheet.append(["Name", "From", "Until", "Kind"])
    sheet.append(["Spring block", date(2033, 1, 10), date(2033, 5, 6), "term"])
    sheet.append(["Summer", date(2033, 5, 7), date(2033, 8, 28), "summer"])
    path = tmp_path / "year.xlsx"
    book.save(path)
    calendar = read_calendar_file(path)
    assert calendar.periods == (
        CampusPeriod("Spring block", date(2033, 1, 10), date(2033, 5, 6), "term"),
        CampusPeriod("Summer", date(2033, 5, 7), date(2033, 8, 28), "summer"),
    )


@pytest.mark.parametrize(
    ("rows", "problem", "row", "column"),
    [
        ("Autumn,2031-09-01,2031-13-40,term", "not a date", 3, "Last Day"),
        ("Autumn,2031-09-01,2031-08-01,term", "before the first day", 3, "Last Day"),
        ("Autumn,2031-09-01,2031-12-01,festival", "term, break, closure, summer, other", 3, "Kind"),
        (",2031-09-01,2031-12-01,term", "no name", 3, "Period"),
    ],
)
def test_bad_rows_are_named(tmp_path: Path, rows: str, problem: str, row: int, column: str) -> None:
    path = _write_csv(
        tmp_path / "calendar.csv",
        "Period,First Day,Last Day,Kind\nSpring,2031-01-06,2031-04-25,term\n" + rows + "\n",
    )
    with pytest.raises(InputError) as error:
        read_calendar_file(path)
    assert problem in error.value.message
    assert error.value.place.row == row
    assert error.value.place.column == column
    assert error.value.place.file == str(path)


def test_missing_columns_and_ambiguous_dates_are_explained(tmp_path: Path) -> None:
    no_kind = _write_csv(tmp_path / "a.csv", "Period,First Day,Last Day\nX,2031-01-01,2031-01-02\n")
    with pytest.raises(InputError, match="no column for Kind"):
        read_calendar_file(no_kind)
    ambiguous = _write_csv(
        tmp_path / "b.csv", "Period,First Day,Last Day,Kind\nX,03/04/2031,05/06/2031,term\n"
    )
    with pytest.raises(InputError, match="day-first or month-first"):
        read_calendar_file(ambiguous)
    calendar = read_calendar_file(ambiguous, day_first=False)
    assert calendar.periods[0].first_day == date(2031, 3, 4)
    mixed = _write_csv(
        tmp_path / "c.csv", "Period,First Day,Last Day,Kind\nX,25/04/2031,05/28/2031,term\n"
    )
    with pytest.raises(InputError, match="mix"):
        read_calendar_file(mixed)
    with pytest.raises(InputError, match="not read"):
        read_calendar_file(_write_csv(tmp_path / "d.json", "{}"))


@pytest.mark.parametrize("rows", ["", ",,,\n,,,\n"], ids=["headers only", "blank rows"])
def test_a_calendar_without_periods_is_explained(tmp_path: Path, rows: str) -> None:
    empty = _write_csv(tmp_path / "e.csv", "Period,First Day,Last Day,Kind\n" + rows)
    with pytest.raises(InputError, match="lists no periods") as error:
        read_calendar_file(empty)
    assert error.value.place.file == str(empty)


def test_the_holiday_lists_offer_what_a_calendar_accepts():
    countries = holiday_countries()
    # ISO 3166-1: US is the United States, GB the United Kingdom (from memory).
    assert countries["US"] == "United States" and countries["GB"] == "United Kingdom"
    assert list(countries.values()) == sorted(countries.values())
    assert set(countries) == set(holidays.list_supported_countries(include_aliases=False))
    regions = holiday_subdivisions("US")
    assert regions["IL"] == "Illinois"  # ISO 3166-2:US (from memory)
    for code in ("US", "GB", "DE"):
        for region in holiday_subdivisions(code):
            assert CampusCalendar(code, region).subdivision == region
    assert holiday_subdivisions("XX") == {}
