"""`loadledger budget --adopt` and `loadledger track` as scripts use them: the JSON keys the
issue lists, refused names and dates (exit 2, nothing stored changes), the workbook.

Ground truth by construction: two invented hourly meters (a hall and a boiler house, both
heating) over 2023 to March 2025 under one invented weather station, on UTC.
"""

from __future__ import annotations

import json
import shutil
import sqlite3
from pathlib import Path

import pytest
from python_calamine import CalamineWorkbook

from engine.project import documents
from tests.cli.cli_support import hall_and_boiler_site, loadledger

NAME = "H1 2025"
MONTH_KEYS = {
    "month", "budget", "actual", "complete", "variance_kwh", "weather_kwh", "usage_kwh",
    "outside_range",
}  # fmt: skip


@pytest.fixture(scope="module")
def adopted(tmp_path_factory) -> tuple[Path, dict]:
    folder = tmp_path_factory.mktemp("track")
    project = hall_and_boiler_site(folder, "2023-01-01", "2025-03-31 23:00", seed=8)
    for name in ("Hall", "Boiler gas"):
        loadledger("fit", project, "--meter", name, "--models", "daily_change_point",
                   "--origins", "2")  # fmt: skip
    done = loadledger("budget", project, "--start", "2025-01", "--months", "6", "--as-of",
                      "2024-12-31", "--paths", "100", "--workers", "1", "--adopt", NAME,
                      "--json")  # fmt: skip
    return project, json.loads(done.stdout)


def _stored(path: Path) -> list[tuple]:
    with sqlite3.connect(path) as conn:
        return conn.execute("SELECT name, adopted_at, body FROM adopted_budgets").fetchall()


def _body(row: tuple) -> dict:
    """An adopted budget's document out of the envelope it is stored in."""
    stored = json.loads(row[2])
    kind = "adopted budget"
    assert (stored["document"], stored["version"]) == (kind, documents.version(kind))
    return stored["body"]


def test_budget_adopt_stores_the_budget_and_says_so(adopted):
    project, report = adopted
    assert report["adopted"] == NAME
    assert any("not a design load" in caution for caution in report["cautions"])
    (row,) = _stored(project)
    body = _body(row)
    assert row[0] == NAME
    assert body["run"]["meters"] == report["meters"]
    assert body["request"]["as_of"] == "2024-12-31"
    assert set(body["meters"]) == {"Hall", "Boiler gas"}
    assert body["meters"]["Hall"]["model"]["family"] == "daily_change_point"
    info = json.loads(loadledger("info", project, "--json").stdout)
    assert info["adopted_budgets"] == [NAME]


def test_track_json_has_the_keys_the_issue_lists(adopted, tmp_path):
    project, _ = adopted
    out = tmp_path / "tracking.xlsx"
    done = loadledger("track", project, "--budget", NAME, "--as-of", "2025-02-14",
                      "--workers", "1", "--xlsx", out, "--json")  # fmt: skip
    report = json.loads(done.stdout)
    assert {"budget", "as_of", "meters", "utilities", "campus", "cautions"} <= set(report)
    assert (report["budget"], report["as_of"]) == (NAME, "2025-02-14")
    for meter in report["meters"]:
        assert {"name", "utility", "unit", "months", "outlook", "adopted_total"} <= set(meter)
        assert set(meter["outlook"]) >= {"mean", "quantiles"}
        assert set(meter["adopted_total"]) >= {"mean", "quantiles"}
        january, february, march = meter["months"][:3]
        for month in meter["months"]:
            assert set(month) >= MONTH_KEYS
            assert set(month["budget"]) == {"mean", "quantiles"}
        assert (january["complete"], february["complete"], march["complete"]) == (
            True, False, False
        )  # fmt: skip
        assert january["outside_range"] in (True, False)
        assert february["actual"] > 0 and march["actual"] is None
    assert any("not a design load" in caution for caution in report["cautions"])
    assert report["workbook"] == str(out.resolve())
    assert CalamineWorkbook.from_path(out).sheet_names == ["Tracking", "Notes"]


def test_track_text_shows_the_split_the_outlook_and_the_caution(adopted):
    project, _ = adopted
    done = loadledger("track", project, "--budget", NAME, "--as-of", "2025-03-31",
                      "--workers", "1")  # fmt: skip
    assert "weather" in done.stdout and "year-end outlook" in done.stdout
    assert "not a design load" in done.stdout


@pytest.mark.parametrize(
    ("args", "words"),
    [
        (("track", "--budget", "FY1999"), "no budget is adopted as 'FY1999'"),
        (("track", "--budget", NAME, "--as-of", "2024-12-01"), "comes before the budget"),
        (("budget", "--start", "2025-04", "--paths", "100", "--adopt", NAME),
         f"already adopted as '{NAME}'"),
        (("budget", "--start", "2025-01", "--paths", "100", "--replace"), "--replace goes with"),
    ],
)  # fmt: skip
def test_refused_requests_exit_2_and_change_nothing(adopted, tmp_path, args, words):
    project = tmp_path / "copy.loadledger"
    shutil.copyfile(adopted[0], project)
    before = project.read_bytes()
    done = loadledger(args[0], project, *args[1:], expect=2)
    assert words in done.stderr and "Traceback" not in done.stderr
    assert project.read_bytes() == before


def test_replace_adopts_the_new_budget_in_the_old_ones_place(adopted, tmp_path):
    project = tmp_path / "copy.loadledger"
    shutil.copyfile(adopted[0], project)
    loadledger("budget", project, "--start", "2025-01", "--months", "2", "--as-of",
               "2024-12-31", "--paths", "100", "--workers", "1", "--adopt", NAME,
               "--replace")  # fmt: skip
    (row,) = _stored(project)
    assert _body(row)["request"]["months"] == ["2025-01", "2025-02"]
