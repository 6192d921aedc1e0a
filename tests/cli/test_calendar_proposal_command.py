"""`loadledger calendar --propose` and the one-shot budget without a calendar.

Data: the invented three-year site of tests/engine/test_calendar_proposal.py (known breaks and
US public holidays), written as a daily meter file and an hourly weather file.
"""

from __future__ import annotations

import json
from datetime import date
from pathlib import Path

import pytest

from engine.project import Project
from engine.steps.calendar_edit import settle_one_shot
from engine.steps.site_calendar import stored_calendar
from tests.cli.cli_support import loadledger
from tests.engine.test_calendar_proposal import synthetic_site


@pytest.fixture(scope="module")
def files(tmp_path_factory) -> tuple[Path, Path]:
    folder = tmp_path_factory.mktemp("proposal")
    daily, hourly, _ = synthetic_site("US", seed=3)
    meters = folder / "daily.csv"
    columns = zip(daily.index, daily["Lecture"], daily["Boilers"], strict=True)
    rows = [f"{day:%Y-%m-%d},{a:.2f},{b:.2f}" for day, a, b in columns]
    meters.write_text("Date,Lecture (kWh),Boilers (kWh)\n" + "\n".join(rows) + "\n")
    weather = folder / "weather.csv"
    rows = [f"{t:%Y-%m-%dT%H:%M}+00:00,{v:.2f}" for t, v in hourly.items()]
    weather.write_text("Timestamp,Dry bulb (°C)\n" + "\n".join(rows) + "\n")
    return meters, weather


@pytest.fixture
def project(files, tmp_path) -> Path:
    meters, weather = files
    target = tmp_path / "site.loadledger"
    loadledger("new", target, "--meters", meters, "--weather", weather,
               "--timezone", "America/Chicago")  # fmt: skip
    return target


def test_propose_shows_the_evidence_and_changes_nothing(project):
    report = json.loads(loadledger("calendar", project, "--propose", "--json").stdout)
    assert not report["changed"] and report["periods"] == [] and report["country"] is None
    proposal = report["proposal"]
    assert proposal["holidays"]["country"] == "US"
    winter = [p for p in proposal["periods"] if p["name"].startswith("Winter break")]
    assert winter and all("of a term weekday" in p["evidence"] for p in winter)
    text = loadledger("calendar", project, "--propose").stdout
    assert "proposed from the readings:" in text and "runs at" in text


def test_accept_stores_the_proposal_as_an_entered_calendar_would_be(project):
    report = json.loads(loadledger("calendar", project, "--propose", "--accept", "--json").stdout)
    assert report["changed"] and report["country"] == "US"
    proposed = [{k: p[k] for k in ("name", "first_day", "last_day", "kind")}
                for p in report["proposal"]["periods"]]  # fmt: skip
    stored = json.loads(loadledger("calendar", project, "--json").stdout)
    assert stored["periods"] == proposed and stored["country"] == "US"
    # accepting again keeps what is stored: the proposal only fills what is missing
    again = json.loads(loadledger("calendar", project, "--propose", "--accept", "--json").stdout)
    assert not again["changed"]


def test_accept_needs_propose(project):
    done = loadledger("calendar", project, "--accept", expect=2)
    assert "--accept goes with --propose" in done.stderr


def test_one_shot_budget_uses_the_proposal_and_says_so(files):
    meters, weather = files
    args = ("budget", "--meters", meters, "--weather-file", weather, "--timezone",
            "America/Chicago", "--start", "2025-07", "--paths", "200")  # fmt: skip
    report = json.loads(loadledger(*args, "--json").stdout)
    calendar = report["assumptions"]["calendar"]
    assert calendar["source"].startswith("proposed from the readings")
    assert calendar["public holidays"].startswith("US public holidays")
    assert "Summer" in calendar["periods"] and "copied forward" in calendar["periods"]
    assert {"models", "calibration"} <= set(report["assumptions"])  # the other keys stay
    assert "calendar: proposed from the readings" in loadledger(*args).stdout


def test_the_one_shot_calendar_takes_what_is_given(project, tmp_path):
    """--calendar and --holidays as the one-shot budget hands them to the engine: given parts
    are stored as given, the rest is proposed (checked on a project, without a budget run)."""
    periods = tmp_path / "terms.csv"
    periods.write_text("Period,First Day,Last Day,Kind\n"
                       "Summer 2025,2025-05-31,2025-08-24,break\n")  # fmt: skip
    with Project.open(project) as opened:
        words = settle_one_shot(opened, file=periods, holidays="US-IL")
        stored = stored_calendar(opened)
        assert words == {
            "source": "given (--calendar and --holidays)",
            "periods": "1 from terms.csv",
            "public holidays": "given: US-IL",
        }
        assert (stored.country, stored.subdivision, len(stored.periods)) == ("US", "IL", 1)
        words = settle_one_shot(opened, holidays="none")
        stored = stored_calendar(opened)
        assert stored.country is None and stored.periods  # no holidays, periods proposed
        assert words["public holidays"] == "given: none"
        assert words["source"].startswith("partly given")
        # a budget as of a day with under two years before it gets no periods, and says so
        words = settle_one_shot(opened, as_of=date(2024, 3, 31))
        assert stored_calendar(opened).periods == ()
        assert words["periods"].startswith("none")


def test_a_project_budget_refuses_the_one_shot_calendar_options(project):
    done = loadledger("budget", project, "--start", "2025-07", "--holidays", "US", expect=2)
    assert "one-shot" in done.stderr
