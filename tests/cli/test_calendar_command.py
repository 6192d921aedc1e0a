"""`loadledger calendar`: the campus calendar is stored in the project and can be edited."""

from __future__ import annotations

import datetime as dt
import json
import subprocess
import sys

import holidays
import pandas as pd
import pytest

from tests.cli.cli_support import loadledger


def _run(*args):
    return json.loads(loadledger(*args).stdout)


@pytest.fixture
def project(tmp_path):
    stamps = pd.date_range("2025-01-01", periods=24 * 20, freq="h")
    meters = tmp_path / "m.csv"
    meters.write_text("Timestamp,Hall (kWh)\n" + "".join(f"{t:%Y-%m-%d %H:%M},1\n" for t in stamps))
    periods = tmp_path / "terms.csv"
    periods.write_text("Period,First Day,Last Day,Kind\nFall term 2025,2025-09-01,2025-12-12,term\n"
                       "Winter break 2025,2025-12-13,2026-01-04,break\n")  # fmt: skip
    target = tmp_path / "p.loadledger"
    subprocess.run([sys.executable, "-m", "desktop.launcher", "new", target, "--meters", meters,
                    "--timezone", "UTC", "--calendar", periods, "--holidays", "US"],
                   check=True, capture_output=True)  # fmt: skip
    return target


def test_copy_forward_keeps_weekdays_and_moves_the_names(project):
    report = _run("calendar", project, "--copy-forward", "--json")
    assert report["changed"]
    first, _, copied, _ = report["periods"]
    assert copied["name"] == "Fall term 2026"
    start, moved = (dt.date.fromisoformat(p["first_day"]) for p in (first, copied))
    assert moved.weekday() == start.weekday() and (moved - start).days in (364, 371)
    again = _run("calendar", project, "--json")  # stored: reopening shows the same
    assert again["periods"] == report["periods"] and not again["changed"]


def test_holidays_follow_the_holidays_package(project):
    report = _run("calendar", project, "--holidays", "US-CA", "--json")
    years = {2025, 2026}
    expected = holidays.country_holidays("US", subdiv="CA", years=sorted(years), observed=True)
    assert {h["date"] for h in report["public_holidays"]} == {d.isoformat() for d in expected}
    assert _run("calendar", project, "--holidays", "none", "--json")["public_holidays"] == []


def test_new_keeps_public_holidays_given_without_a_calendar_file(tmp_path):
    """`new --holidays` alone stores the country's holidays (it once stored none, silently)."""
    stamps = pd.date_range("2025-06-01", periods=24 * 10, freq="h")
    meters = tmp_path / "m.csv"
    meters.write_text("Timestamp,Hall (kWh)\n" + "".join(f"{t:%Y-%m-%d %H:%M},1\n" for t in stamps))
    target = tmp_path / "p.loadledger"
    _run("new", target, "--meters", meters, "--timezone", "America/Chicago", "--holidays",
         "US-IL", "--json")  # fmt: skip
    report = _run("calendar", target, "--json")
    assert (report["country"], report["subdivision"]) == ("US", "IL")
    assert report["periods"] == []
    text = loadledger("calendar", target).stdout
    assert "public holidays: US-IL" in text and "covered years" not in text
