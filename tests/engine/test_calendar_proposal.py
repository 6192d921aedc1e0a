"""The calendar proposed from the readings, on invented sites whose calendar is known.

Ground truth by construction: three years of daily use of three meters (a lecture building, a
residence hall and a boiler house that ignores the term) with a winter break, a spring break
and a low summer that move with the weekdays as academic calendars do, a country's public
holidays, weather that drives two of the meters, and 3 % noise. Recall is the share of the
true break weekdays inside a proposed period; precision the share of proposed weekdays that
are true break weekdays. Both must reach 0.9: on clean series the only misses are the days at
a period's edges where a weekday's noise straddles the band, a few days in some 200.
"""

from __future__ import annotations

from datetime import date, timedelta

import holidays
import numpy as np
import pandas as pd
import pytest

from engine.calendar import CampusCalendar, CampusPeriod
from engine.calendar_proposal import (
    CalendarProposal,
    ProposedHolidays,
    ProposedPeriod,
    propose_calendar,
    with_proposal,
    zone_country,
)

FIRST, LAST = date(2022, 7, 1), date(2025, 6, 30)


def _on_or_after(day: date, weekday: int) -> date:
    return day + timedelta(days=(weekday - day.weekday()) % 7)


def true_periods() -> list[tuple[date, date, float]]:
    """Breaks (first, last, share of a term weekday's occupied use) of the invented campus."""
    periods = []
    for year in range(2021, 2026):
        winter = _on_or_after(date(year, 12, 17), 5), _on_or_after(date(year + 1, 1, 3), 6)
        spring_first = _on_or_after(date(year + 1, 3, 10), 5)
        spring = spring_first, spring_first + timedelta(days=8)
        summer = _on_or_after(date(year + 1, 5, 28), 5), _on_or_after(date(year + 1, 8, 20), 6)
        periods += [(*winter, 0.2), (*spring, 0.35), (*summer, 0.55)]
    return periods


def synthetic_site(
    country: str, seed: int, subdivision: str | None = None
) -> tuple[pd.DataFrame, pd.Series, pd.Series]:
    """Daily kWh of three meters, hourly °C (UTC, America/Chicago days) and each day's
    truth: 'break' (inside a true period), 'holiday' or 'ordinary'."""
    rng = np.random.default_rng(seed)
    days = pd.date_range(FIRST, LAST, freq="D")
    occupied = np.where(days.day_of_week < 5, 1.0, 0.25)
    truth = np.full(len(days), "ordinary", dtype=object)
    for first, last, share in true_periods():
        inside = (days >= pd.Timestamp(first)) & (days <= pd.Timestamp(last))
        occupied[inside & (days.day_of_week < 5)] = share
        truth[inside] = "break"
    named = holidays.country_holidays(
        country, subdiv=subdivision, years=range(2022, 2026), observed=True
    )
    holiday = days.isin(pd.DatetimeIndex(sorted(named))) & (truth == "ordinary")
    occupied[holiday] = 0.2
    truth[holiday] = "holiday"
    hourly = _weather(days, rng)
    local_days = hourly.index.tz_convert("America/Chicago").tz_localize(None).normalize()
    # buildings answer each hour's temperature: degree-hours summed over the day, per day
    heating = np.maximum(14 - hourly, 0).groupby(local_days).mean().reindex(days).to_numpy()
    cooling = np.maximum(hourly - 18, 0).groupby(local_days).mean().reindex(days).to_numpy()
    loads = {
        "Lecture": 400 + 900 * occupied + 20 * heating + 60 * cooling,
        "Residence": 500 + 400 * np.where(truth == "break", 0.3, 1.0) + 30 * cooling,
        "Boilers": 150 + 90 * heating,
    }
    noise = {name: rng.lognormal(0, 0.03, len(days)) for name in loads}
    daily = pd.DataFrame({name: load * noise[name] for name, load in loads.items()}, index=days)
    return daily, hourly, pd.Series(truth, index=days)


def _weather(days: pd.DatetimeIndex, rng: np.random.Generator) -> pd.Series:
    hours = pd.date_range(
        pd.Timestamp(FIRST, tz="America/Chicago"),
        pd.Timestamp(LAST + timedelta(days=1), tz="America/Chicago"),
        freq="h",
        inclusive="left",
    ).tz_convert("UTC")
    seasonal = 11 - 13 * np.cos(2 * np.pi * (hours.day_of_year.to_numpy() - 20) / 365.25)
    anomaly = np.repeat(rng.normal(0, 3, len(days) + 2), 24)[: len(hours)]
    diurnal = 5 * np.sin(2 * np.pi * (hours.hour.to_numpy() - 15) / 24)
    return pd.Series(seasonal + anomaly + diurnal, index=hours)


def weekdays_in(periods: list[ProposedPeriod]) -> pd.DatetimeIndex:
    inside = [pd.date_range(p.period.first_day, p.period.last_day) for p in periods]
    days = inside[0].append(inside[1:]) if inside else pd.DatetimeIndex([])
    return days[days.day_of_week < 5].unique()


@pytest.fixture(scope="module")
def us_site():
    daily, hourly, truth = synthetic_site("US", seed=3)
    return daily, hourly, truth, propose_calendar(daily, "America/Chicago", hourly)


def test_breaks_are_found_with_high_recall_and_precision(us_site):
    *_, truth, proposal = us_site
    seen = [p for p in proposal.periods if not p.projected]
    weekdays = truth[truth.index.day_of_week < 5]
    true_breaks = weekdays.index[weekdays == "break"]
    found = weekdays_in(seen).intersection(weekdays.index)
    recall = len(found.intersection(true_breaks)) / len(true_breaks)
    precision = len(found.intersection(true_breaks)) / len(found)
    assert recall >= 0.9, recall
    assert precision >= 0.9, precision


def test_each_break_is_found_in_every_year_within_a_few_days(us_site):
    *_, proposal = us_site
    seen = [p.period for p in proposal.periods if not p.projected]
    for first, last, _share in true_periods():
        if first < FIRST or last > LAST:
            continue
        overlapping = [p for p in seen if p.first_day <= last and p.last_day >= first]
        assert overlapping, (first, last)
        assert abs((min(p.first_day for p in overlapping) - first).days) <= 3
        assert abs((max(p.last_day for p in overlapping) - last).days) <= 3


def test_the_evidence_states_the_level_and_the_years(us_site):
    *_, proposal = us_site
    winter = next(p for p in proposal.periods if p.period.first_day.month == 12)
    assert "of a term weekday in all 3 years" in winter.evidence
    assert winter.level < 0.8
    assert winter.period.kind == "break" and winter.period.name.startswith("Winter break")


def test_periods_are_copied_forward_on_the_same_weekdays(us_site):
    *_, proposal = us_site
    ahead = [p for p in proposal.periods if p.projected]
    assert ahead and min(p.period.first_day for p in ahead) > LAST
    for period in ahead:
        source = [
            p
            for p in proposal.periods
            if not p.projected
            and p.period.kind == period.period.kind
            and (period.period.first_day - p.period.first_day).days % 7 == 0
        ]
        assert source, period.period


def test_the_zone_s_country_is_confirmed_by_its_holidays(us_site):
    *_, truth, proposal = us_site
    assert proposal.holidays is not None and proposal.holidays.code == "US"
    # recall: every true holiday on an ordinary weekday is among those tested and ran low
    weekday_holidays = truth[(truth == "holiday") & (truth.index.day_of_week < 5)]
    assert proposal.holidays.tested == len(weekday_holidays)
    assert proposal.holidays.low / proposal.holidays.tested >= 0.9
    assert f"{proposal.holidays.low} of {proposal.holidays.tested}" in proposal.holidays.evidence


def test_another_country_s_holidays_are_not_proposed():
    """Days off on German holidays at a site whose clock says Chicago: the US list is tested,
    few of its days ran low, so no holidays are proposed and the notes say why."""
    daily, hourly, _ = synthetic_site("DE", seed=5)
    proposal = propose_calendar(daily, "America/Chicago", hourly)
    assert proposal.holidays is None
    assert any(note.startswith("Not proposed: US public holidays") for note in proposal.notes)


def test_a_subdivision_s_own_holidays_that_ran_as_ordinary_weekdays_are_named(us_site):
    """A site closed on the US holidays only, entered with Illinois's: the notes name
    Illinois's own days (Lincoln's Birthday, Casimir Pulaski Day, Election Day), which ran as
    ordinary weekdays; a site closed on Illinois's too gets no such note."""
    daily, hourly, truth, _ = us_site
    given = CampusCalendar("US", "IL")
    proposal = propose_calendar(daily, "America/Chicago", hourly, given=given)
    (note,) = [note for note in proposal.notes if note.startswith("US-IL's own public holidays")]
    own = {day for day, name in holidays.US(subdiv="IL", years=range(2022, 2026)).items()}
    own -= set(holidays.US(years=range(2022, 2026)))
    tested = [
        d for d in own if pd.Timestamp(d) in truth.index and truth[pd.Timestamp(d)] == "ordinary"
    ]
    tested = [d for d in tested if d.weekday() < 5]
    assert f"ran like ordinary weekdays: {len(tested)} of {len(tested)}" in note
    assert "Lincoln's Birthday" in note and "public holidays of US" in note

    daily, hourly, _ = synthetic_site("US", seed=3, subdivision="IL")
    proposal = propose_calendar(daily, "America/Chicago", hourly, given=given)
    assert not [note for note in proposal.notes if "own public holidays" in note]


def test_without_weather_the_short_breaks_are_still_found():
    """Without temperatures, yearly harmonics stand in for the seasons; they also take up most
    of a twelve-week summer (a yearly swing is a yearly swing) and leave a busy-looking edge
    after it, so recall is asked of the winter and spring breaks, precision of the low
    periods against every true break."""
    daily, _, truth = synthetic_site("US", seed=7)
    proposal = propose_calendar(daily.drop(columns="Boilers"), "America/Chicago", None)
    weekdays = truth.index[truth.index.day_of_week < 5]
    short = [pd.date_range(first, last) for first, last, share in true_periods() if share < 0.5]
    short_breaks = short[0].append(short[1:]).intersection(weekdays)
    low = [p for p in proposal.periods if not p.projected and p.period.kind != "other"]
    found = weekdays_in(low).intersection(weekdays)
    assert len(found.intersection(short_breaks)) / len(short_breaks) >= 0.9
    all_breaks = truth.index[truth == "break"]
    assert len(found.intersection(all_breaks)) / len(found) >= 0.9


def test_a_year_of_readings_is_too_short_and_says_so():
    daily, hourly, _ = synthetic_site("US", seed=3)
    proposal = propose_calendar(daily.loc[:"2023-06-30"], "America/Chicago", hourly)
    assert proposal.periods == () and proposal.holidays is None
    assert "two years" in proposal.notes[0]


@pytest.mark.parametrize(
    ("zone", "country", "southern"),
    # IANA tz database zone.tab (from memory): one country per zone, coordinates' sign
    [
        ("America/Chicago", "US", False),
        ("Europe/Berlin", "DE", False),
        ("Australia/Sydney", "AU", True),
        ("America/Toronto", "CA", False),
        ("UTC", None, False),
    ],
)
def test_a_zone_names_its_country(zone, country, southern):
    assert zone_country(zone) == (country, southern)


def test_accepting_gives_the_calendar_a_user_would_enter():
    winter = CampusPeriod("Winter break 2024-25", date(2024, 12, 14), date(2025, 1, 5), "break")
    spring = CampusPeriod("Spring break 2025", date(2025, 3, 15), date(2025, 3, 23), "break")
    proposal = CalendarProposal(
        (ProposedPeriod(winter, "seen", 0.4), ProposedPeriod(spring, "seen", 0.5)),
        ProposedHolidays("US", None, 9, 10, "9 of 10"),
    )
    chosen = proposal.calendar([proposal.periods[1]])
    assert chosen == CampusCalendar("US", None, (spring,))
    assert CampusCalendar.from_dict(chosen.to_dict()) == chosen
    assert proposal.calendar(with_holidays=False).country is None
    # what a calendar already has is kept; only what it lacks is taken from the proposal
    own = CampusCalendar("CA", "ON", ())
    assert with_proposal(own, proposal) == CampusCalendar("CA", "ON", (winter, spring))
    assert with_proposal(CampusCalendar(periods=(spring,)), proposal).periods == (spring,)
