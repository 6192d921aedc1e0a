"""The proposed calendar on the bundled sample campus, against the calendar it was made with.

Data: the invented Orrinvale College (sample/README.md), every meter and the weather station
read with the real importer, the recommended cleaning applied, no calendar given. Ground
truth: sample/data/campus-calendar.csv (the periods sample/campus_calendar.py generated the
loads from) and the US federal holidays (sample/campus.py, `holidays.US`).
"""

from __future__ import annotations

from datetime import date, timedelta
from pathlib import Path

import pytest

from engine.calendar_proposal import CalendarProposal, propose_for_site
from engine.reading import ReadOptions
from engine.reading.calendar_file import read_calendar_file
from engine.steps.cleaning import apply_recommended_everywhere
from engine.steps.importing import create_project, read_project_files
from engine.steps.prepared_site import prepare_site

DATA = Path(__file__).resolve().parents[2] / "sample" / "data"
FIRST, LAST = date(2023, 7, 1), date(2026, 10, 31)  # sample/README.md: the local days covered
SLACK = 4  # days: a period may start or end this far from the true one


@pytest.fixture(scope="module")
def proposal(tmp_path_factory) -> CalendarProposal:
    files = read_project_files(
        [DATA / "electricity-15min.xlsx", DATA / "gas-boilerhouse-daily.csv",
         DATA / "chilled-water-plant.csv"],
        weather=[DATA / "weather-station.csv"],
        options=ReadOptions(timezone="America/Chicago"),
    )  # fmt: skip
    path = tmp_path_factory.mktemp("sample") / "sample.loadledger"
    with create_project(path, files, timezone="America/Chicago") as project:
        apply_recommended_everywhere(project)
        return propose_for_site(prepare_site(project))


def stretches(periods: list[tuple[date, date]]) -> list[tuple[date, date]]:
    """Periods that touch (at most 3 days apart) joined into one stretch."""
    joined: list[tuple[date, date]] = []
    for first, last in sorted(periods):
        if joined and first - joined[-1][1] <= timedelta(days=3):
            joined[-1] = (joined[-1][0], max(last, joined[-1][1]))
        else:
            joined.append((first, last))
    return joined


def true_stretches(kinds: set[str]) -> list[tuple[date, date]]:
    """The sample's periods of ``kinds``, joined, that lie wholly within the readings."""
    calendar = read_calendar_file(DATA / "campus-calendar.csv")
    chosen = [(p.first_day, p.last_day) for p in calendar.periods if p.kind in kinds]
    return [(a, b) for a, b in stretches(chosen) if a >= FIRST + timedelta(days=7) and b <= LAST]


def found_stretches(proposal: CalendarProposal, kinds: set[str]) -> list[tuple[date, date]]:
    seen = [p.period for p in proposal.periods if not p.projected and p.period.kind in kinds]
    return stretches([(p.first_day, p.last_day) for p in seen])


@pytest.mark.parametrize(
    "kinds", [{"break", "closure"}, {"summer"}], ids=["breaks and closures", "summer sessions"]
)
def test_every_break_and_session_is_recovered_within_a_few_days(proposal, kinds):
    found = found_stretches(proposal, kinds)
    truth = true_stretches(kinds)
    assert len(truth) >= 3
    for first, last in truth:
        near = [(a, b) for a, b in found if a <= last and b >= first]
        assert len(near) == 1, (first, last, near)
        (a, b) = near[0]
        assert abs((a - first).days) <= SLACK and abs((b - last).days) <= SLACK, (first, last, a, b)
    # and nothing else: every proposed stretch is one of the true ones
    assert len(found) <= len(truth) + 1  # the first summer, cut by the start of the readings


def test_the_us_holidays_are_proposed_and_nearly_all_ran_low(proposal):
    assert proposal.holidays is not None and proposal.holidays.code == "US"
    assert proposal.holidays.low / proposal.holidays.tested >= 0.9


def test_no_busy_period_is_invented(proposal):
    assert not [p for p in proposal.periods if p.period.kind == "other"]
