"""Calendar-aware detectors on an invented campus meter whose calendar effects are known.

Scenario (invented): Fenwright Hall, a teaching building of Marlowe Heath College, on a site in
the America/Chicago zone, with US public holidays. A 15-minute electricity meter: 40 kW base load
all day, plus 120 kW × a day factor from 07:00 to 19:00. Day factors: term weekday 1, weekend
0.35, public holiday 0.12, break 0.3, closure 0.05 (first match wins in that order: closure,
holiday, break, weekend). A mild season (±10 %) and 3 % noise. The readings hold no fault, so
every finding on them is one the calendar or the day-level test should have prevented.
"""

from __future__ import annotations

from datetime import date

import holidays
import numpy as np
import pandas as pd
import pytest
from scipy.stats import theilslopes

from engine.calendar import CampusCalendar, CampusPeriod, label_intervals
from engine.cleaning import find_all
from engine.cleaning.day_lines import fit_day_lines
from engine.cleaning.like_days import BREAK, CLOSURE, ORDINARY, SUMMER, CalendarDays
from engine.errors import InputError
from engine.meters import MeterSeries
from engine.project import Project
from engine.reading import ReadOptions
from engine.steps.cleaning import review_meter
from engine.steps.importing import create_project, read_project_files
from engine.steps.site_calendar import CALENDAR_SETTING

SITE_ZONE = "America/Chicago"
QUARTER_HOUR = pd.Timedelta(minutes=15)
METER = "Fenwright Hall"
BASE_KW, OCCUPIED_KW = 40.0, 120.0
FACTORS = {"term": 1.0, "weekend": 0.35, "holiday": 0.12, "break": 0.3, "closure": 0.05}
CALENDAR = CampusCalendar(
    country="US",
    periods=(
        CampusPeriod("Late-summer break", date(2024, 8, 3), date(2024, 8, 25), "break"),
        CampusPeriod("Fall term", date(2024, 8, 26), date(2024, 12, 13), "term"),
        CampusPeriod("Winter break before", date(2024, 12, 14), date(2024, 12, 23), "break"),
        CampusPeriod("New-year closure", date(2024, 12, 24), date(2025, 1, 1), "closure"),
        CampusPeriod("Winter break after", date(2025, 1, 2), date(2025, 1, 19), "break"),
        CampusPeriod("Spring term", date(2025, 1, 20), date(2025, 5, 9), "term"),
    ),
)
# US federal holidays on fall-term weekdays (holidays package, observed dates).
TERM_HOLIDAYS = ("Labor Day", "Columbus Day", "Veterans Day", "Thanksgiving Day")


def hall_readings(weeks: int = 30, closed: tuple[date, ...] = ()) -> pd.Series:
    """Clean 15-minute kWh from Monday 2024-07-29, the day factors following ``CALENDAR``;
    ``closed`` days the calendar does not list run as on a holiday."""
    generator = np.random.default_rng(5)
    start = pd.Timestamp("2024-07-29", tz=SITE_ZONE).tz_convert("UTC")
    index = pd.date_range(start, periods=weeks * 7 * 96, freq="15min")
    labels = label_intervals(index, SITE_ZONE, CALENDAR)
    kind = labels["period_kind"].astype(str).to_numpy()
    day_type = labels["day_type"].astype(str).to_numpy()
    local = index.tz_convert(SITE_ZONE)
    unlisted = np.isin(local.date, closed)
    factor = np.select(
        [
            kind == "closure",
            (day_type == "holiday") | unlisted,
            kind == "break",
            day_type != "weekday",
        ],
        [FACTORS["closure"], FACTORS["holiday"], FACTORS["break"], FACTORS["weekend"]],
        FACTORS["term"],
    )
    hour = local.hour.to_numpy() + local.minute.to_numpy() / 60
    kw = BASE_KW + OCCUPIED_KW * factor * ((hour >= 7) & (hour < 19))
    season = 1 + 0.1 * np.cos(2 * np.pi * (local.day_of_year.to_numpy() - 20) / 365)
    noise = 1 + 0.03 * generator.standard_normal(index.size)
    return pd.Series(kw / 4 * season * noise, index=index, name=METER)


@pytest.fixture(scope="module")
def clean() -> pd.Series:
    return hall_readings()


def meter_of(readings: pd.Series) -> MeterSeries:
    return MeterSeries(METER, "electricity", readings.dropna(), QUARTER_HOUR, SITE_ZONE)


def at(readings: pd.Series, local_time: str) -> int:
    return int(readings.index.get_loc(pd.Timestamp(local_time, tz=SITE_ZONE).tz_convert("UTC")))


def term_holidays() -> dict[str, date]:
    found = holidays.country_holidays("US", years=2024, observed=True)
    return {name: day for day, name in found.items() if name in TERM_HOLIDAYS}


def local_days(finding) -> set[date]:
    days = pd.date_range(finding.start, finding.end - QUARTER_HOUR, freq="15min")
    return set(days.tz_convert(SITE_ZONE).date)


def test_with_the_calendar_holidays_breaks_and_a_closure_raise_nothing(clean):
    assert find_all(meter_of(clean), calendar=CALENDAR) == []


def test_without_the_calendar_quiet_days_are_low_days_not_dips(clean):
    findings = find_all(meter_of(clean))
    assert not [f for f in findings if f.kind in ("spike", "dip")]
    low_days = [f for f in findings if f.kind == "low_day"]
    assert low_days and {f.severity for f in low_days} == {"info"}
    assert all(f.fix is None for f in low_days)
    # Every low day is one the calendar makes quiet: a holiday, a break or the closure.
    quiet = CalendarDays.label(clean.index, SITE_ZONE, CALENDAR).quiet
    quiet_days = set(clean.index[quiet].tz_convert(SITE_ZONE).date)
    for finding in low_days:
        assert local_days(finding) <= quiet_days, finding.explanation
    # Each term-weekday holiday is one low day whose energy ratio follows from the scenario:
    # (24 h × 40 kW + 12 h × 120 kW × 0.12) / (24 h × 40 kW + 12 h × 120 kW) = 0.472.
    expected = (24 * BASE_KW + 12 * OCCUPIED_KW * FACTORS["holiday"]) / (
        24 * BASE_KW + 12 * OCCUPIED_KW
    )
    for name, day in term_holidays().items():
        covering = [f for f in low_days if local_days(f) == {day}]
        assert covering, f"{name} {day} is not a low day"
        assert covering[0].measures["ratio"] == pytest.approx(expected, rel=0.05), name
        assert "Import the campus calendar" in covering[0].explanation


def test_a_closed_day_the_calendar_does_not_list_is_one_low_day():
    closed = hall_readings(closed=(date(2024, 10, 16),))  # a term Wednesday
    first = at(closed, "2024-10-16 00:00")
    findings = find_all(meter_of(closed), calendar=CALENDAR)
    assert [(f.kind, f.severity, f.start, f.end) for f in findings] == [
        ("low_day", "info", closed.index[first], closed.index[first + 96])
    ]
    assert "lists no holiday, break or closure then" in findings[0].explanation


def test_real_faults_on_holidays_and_term_days_are_still_found(clean):
    faulty = clean.copy()
    days = term_holidays()
    stuck = at(faulty, f"{days['Labor Day']} 08:00")
    faulty.iloc[stuck : stuck + 48] = faulty.iloc[stuck]
    gap = at(faulty, f"{days['Columbus Day']} 10:00")
    faulty.iloc[gap + 16] = clean.iloc[gap : gap + 17].sum()
    faulty.iloc[gap : gap + 16] = np.nan
    holiday_outage = at(faulty, f"{days['Veterans Day']} 09:00")
    faulty.iloc[holiday_outage : holiday_outage + 20] = 0.0
    spike = at(faulty, f"{days['Thanksgiving Day']} 12:00")
    faulty.iloc[spike] *= 6
    term_outage = at(faulty, "2024-10-09 10:00")
    faulty.iloc[term_outage : term_outage + 20] = 0.0

    findings = find_all(meter_of(faulty), calendar=CALENDAR)
    found = {(f.kind, f.start, f.intervals) for f in findings}
    index = faulty.index
    assert found == {
        ("flat_line", index[stuck], 48),
        ("catch_up", index[gap], 17),
        ("zero_run", index[holiday_outage], 20),
        ("spike", index[spike], 1),
        ("zero_run", index[term_outage], 20),
    }
    # The catch-up is weighed against the holiday's own level: the extra energy in the late
    # reading matches what the gap missed, as the scenario made it.
    catch_up = next(f for f in findings if f.kind == "catch_up")
    assert catch_up.measures["ratio"] == pytest.approx(1.0, rel=0.1)


def test_a_building_shut_for_whole_closure_days_is_only_noted(clean):
    shut = clean.copy()
    christmas = at(shut, "2024-12-25 00:00")
    shut.iloc[christmas : christmas + 2 * 96] = 0.0
    outage = at(shut, "2024-12-20 03:00")  # a break morning: part of a day, an outage
    shut.iloc[outage : outage + 20] = 0.0
    with_calendar = {f.start: f for f in find_all(meter_of(shut), calendar=CALENDAR)}
    assert set(with_calendar) == {shut.index[outage], shut.index[christmas]}
    assert with_calendar[shut.index[christmas]].severity == "info"
    assert "most likely shut" in with_calendar[shut.index[christmas]].explanation
    assert with_calendar[shut.index[outage]].severity == "warning"
    without = {f.start: f for f in find_all(meter_of(shut)) if f.kind == "zero_run"}
    assert without[shut.index[christmas]].severity == "serious"


def test_calendar_days_follow_the_period_kinds():
    index = pd.DatetimeIndex(
        pd.to_datetime(["2024-08-05 12:00", "2024-09-02 12:00", "2024-09-03 12:00"])
        .tz_localize(SITE_ZONE)
        .tz_convert("UTC")
    )
    session = CampusPeriod("Summer session", date(2024, 8, 1), date(2024, 8, 9), "summer")
    summer = CampusCalendar(country="US", periods=(session, CALENDAR.periods[1]))
    days = CalendarDays.label(index, SITE_ZONE, summer)
    assert days.day_class.tolist() == [SUMMER, ORDINARY, ORDINARY]
    assert days.holiday.tolist() == [False, True, False]  # Labor Day 2024 was 2 September
    assert days.quiet.tolist() == [False, True, False]
    noons = pd.DatetimeIndex(["2024-12-20 18:00", "2024-12-27 18:00"], tz="UTC")
    closure = CalendarDays.label(noons, SITE_ZONE, CALENDAR)
    assert closure.day_class.tolist() == [BREAK, CLOSURE]
    assert closure.quiet.all()


def test_the_day_line_matches_a_reference_robust_fit_and_ignores_a_spike():
    # One local day of a holiday-like shape: readings = 9 + 0.25 × typical, with noise and a
    # spike; Theil–Sen (scipy.stats.theilslopes), another robust line, must agree closely.
    generator = np.random.default_rng(3)
    typical = np.r_[np.full(28, 10.0), np.linspace(10, 40, 8), np.full(48, 40.0), np.full(12, 10.0)]
    typical = typical * (1 + 0.02 * generator.standard_normal(96))
    values = 9 + 0.25 * typical + 0.3 * generator.standard_normal(96)
    values[60] = 80.0
    lines = fit_day_lines(np.full(96, 20_000), values, typical, np.full(96, 0.5))
    reference = theilslopes(values, typical)
    assert lines.slope[0] == pytest.approx(reference.slope, abs=0.02)
    assert lines.offset[0] == pytest.approx(reference.intercept, abs=0.5)
    assert lines.slope[0] == pytest.approx(0.25, abs=0.03)
    assert abs(values[60] - lines.expected[60]) > 60  # the spike stays far from the line
    exact = fit_day_lines(np.full(96, 20_000), 9 + 0.25 * typical, typical, np.full(96, 0.5))
    np.testing.assert_allclose(exact.expected, 9 + 0.25 * typical, rtol=1e-12)


def test_days_with_too_few_readings_get_no_line():
    typical = np.linspace(10, 40, 96)
    values = typical.copy()
    values[:60] = np.nan  # 36 readings left: fewer than half the day
    lines = fit_day_lines(np.full(96, 20_000), values, typical, np.ones(96))
    assert np.isnan(lines.slope).all() and np.isnan(lines.expected).all()


@pytest.fixture(scope="module")
def project_files(tmp_path_factory, clean):
    folder = tmp_path_factory.mktemp("marlowe")
    meter_csv = folder / "fenwright-hall.csv"
    stamps = clean.index.strftime("%Y-%m-%dT%H:%M:%S+00:00")
    pd.DataFrame({"Timestamp": stamps, f"{METER} (kWh)": clean.round(4).to_numpy()}).to_csv(
        meter_csv, index=False
    )
    calendar_csv = folder / "calendar.csv"
    rows = [f"{p.name},{p.first_day},{p.last_day},{p.kind}" for p in CALENDAR.periods]
    calendar_csv.write_text("Period,First Day,Last Day,Kind\n" + "\n".join(rows) + "\n")
    return folder, meter_csv, calendar_csv


def test_review_meter_uses_the_calendar_stored_in_the_project(project_files):
    folder, meter_csv, calendar_csv = project_files
    options = ReadOptions(timezone=SITE_ZONE, stamps="start", holidays="US")
    files = read_project_files([meter_csv], options=options, calendar=calendar_csv)
    path = folder / f"marlowe{Project.EXTENSION}"
    with create_project(path, files, timezone=SITE_ZONE) as project:
        assert project.get_setting(CALENDAR_SETTING) == CALENDAR.to_dict()
        assert [f.kind for f in review_meter(project, METER).findings] == []
        project.set_setting(CALENDAR_SETTING, None)
        kinds = {f.kind for f in review_meter(project, METER).findings}
        assert kinds == {"low_day", "level_shift"}  # no calendar: breaks look like shifts
        project.set_setting(CALENDAR_SETTING, {"periods": [{"name": "Fall"}]})
        with pytest.raises(InputError, match="campus calendar cannot be read"):
            review_meter(project, METER)
