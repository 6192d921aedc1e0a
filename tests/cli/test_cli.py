"""The command line as scripts use it: exit codes, one-line errors, JSON, and a real project."""

from __future__ import annotations

import json

import pandas as pd
import pytest

from tests.cli.cli_support import loadledger


def _run(*args, cwd=None):
    return loadledger(*args, expect=None, cwd=cwd)


def _meter_csv(path, hours=72):
    stamps = pd.date_range("2024-03-09", periods=hours, freq="h")
    path.write_text("Timestamp,Main (kWh),Annex (kWh)\n"
                    + "".join(f"{t:%Y-%m-%d %H:%M},2.0,1.0\n" for t in stamps))  # fmt: skip
    return hours


def test_inspect_json_describes_each_meter(tmp_path):
    hours = _meter_csv(tmp_path / "m.csv")
    done = _run("inspect", tmp_path / "m.csv", "--timezone", "America/Chicago", "--json")
    assert done.returncode == 0, done.stderr
    report = json.loads(done.stdout)
    assert report["kind"] == "meters" and report["layout"] == "wide"
    main = report["meters"][0]
    assert main["name"] == "Main" and main["unit_found"] == "kWh" and main["unit"] == "kWh"
    assert main["interval_minutes"] == 60 and main["timezone"] == "America/Chicago"
    # 2024-03-10 02:00 does not exist in Chicago: that stamp cannot be placed and is reported
    assert (
        main["count"]
        + report["excluded_rows"]
        + sum(f["count"] for f in main["findings"] if f["kind"] == "nonexistent_local")
        >= hours - 1
    )
    for key in ("first", "last", "coverage", "total_kwh", "stamps", "values", "findings"):
        assert key in main


def test_bad_input_exits_2_with_one_line_and_no_traceback(tmp_path):
    empty = tmp_path / "empty.csv"
    empty.write_text("")
    done = _run("inspect", empty)
    assert done.returncode == 2
    assert "Traceback" not in done.stderr
    assert done.stderr.strip().count("\n") == 0 and "empty.csv" in done.stderr


def test_new_then_info_round_trip(tmp_path):
    _meter_csv(tmp_path / "m.csv")
    project = tmp_path / "site.loadledger"
    done = _run("new", project, "--meters", tmp_path / "m.csv", "--timezone", "UTC", "--json")
    assert done.returncode == 0, done.stderr
    created = json.loads(done.stdout)
    info = _run("info", project, "--json")
    assert info.returncode == 0, info.stderr
    summary = json.loads(info.stdout)
    names = [m["name"] for m in summary["meters"]]
    assert names == ["Main", "Annex"]
    assert summary["meters"][0]["total_kwh"] == pytest.approx(2.0 * 72)
    assert created["summary"]["meters"] == summary["meters"]


def test_new_needs_a_time_zone(tmp_path):
    _meter_csv(tmp_path / "m.csv")
    done = _run("new", tmp_path / "p.loadledger", "--meters", tmp_path / "m.csv")
    assert done.returncode == 2 and "--timezone" in done.stderr
    assert not (tmp_path / "p.loadledger").exists()


def test_info_on_a_file_that_is_not_a_project(tmp_path):
    bogus = tmp_path / "notes.loadledger"
    bogus.write_text("hello")
    done = _run("info", bogus)
    assert done.returncode == 2 and "notes.loadledger" in done.stderr
