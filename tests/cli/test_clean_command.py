"""`loadledger clean` on a real project file: findings, applied fixes, undo, energy accounting."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest

from tests.cli.cli_support import loadledger


def _run(*args):
    return loadledger(*args).stdout


@pytest.fixture
def project(tmp_path):
    """Eight weeks of hourly readings with a 6-hour outage whose energy lands in one catch-up."""
    stamps = pd.date_range("2024-01-01", periods=24 * 7 * 8, freq="h")
    hours = stamps.hour.to_numpy()
    load = np.where((hours >= 8) & (hours < 18), 40.0, 20.0)
    load = load * (1 + 0.02 * np.sin(np.arange(len(stamps))))
    outage = slice(24 * 30 + 9, 24 * 30 + 15)  # six missing readings
    values = load.copy().astype(object)
    values[outage] = ""
    values[outage.stop] = load[outage].sum() + load[outage.stop]  # the catch-up holds them all
    path = tmp_path / "hall.csv"
    rows = [f"{t:%Y-%m-%d %H:%M},{v}" for t, v in zip(stamps, values, strict=True)]
    path.write_text("Timestamp,Hall (kWh)\n" + "\n".join(rows) + "\n")
    target = tmp_path / "hall.loadledger"
    _run("new", target, "--meters", path, "--timezone", "UTC")
    return target, float(np.nansum(np.where(values == "", np.nan, values).astype(float)))


def test_recommended_fixes_spread_the_catch_up_and_keep_the_recorded_energy(project):
    path, recorded = project
    before = json.loads(_run("clean", path, "--json"))["meters"][0]
    assert any(f["kind"] == "catch_up" for f in before["findings"])
    after = json.loads(_run("clean", path, "--apply-recommended", "--json"))["meters"][0]
    assert after["applied"], "the catch-up spread should have been logged"
    quality = after["quality"]
    assert quality["coverage_after"] == 1.0
    # energy the meter actually recorded is conserved by spreading it over the gap
    assert quality["energy_after_kwh"] == pytest.approx(recorded, rel=1e-9)
    assert quality["energy_before_kwh"] == pytest.approx(recorded, rel=1e-9)


def test_undo_returns_the_series_before_the_step(project):
    path, _ = project
    applied = json.loads(_run("clean", path, "--apply-recommended", "--json"))["meters"][0]
    for step in applied["applied"]:
        _run("clean", path, "--undo", step["id"], "--json")
    undone = json.loads(_run("clean", path, "--json"))["meters"][0]
    assert undone["steps"] == []
    assert undone["quality"]["estimated_intervals"] == 0
    assert undone["quality"]["coverage_after"] < 1.0


def test_undoing_a_step_not_in_the_log_is_refused_in_one_line(project):
    path, _ = project
    done = loadledger("clean", path, "--undo", "77", expect=2)  # was an internal error
    assert done.stderr.count("\n") == 1 and "has no step 77" in done.stderr


def test_an_accepted_finding_stays_as_read_and_no_longer_shows(project):
    path, _ = project
    before = json.loads(_run("clean", path, "--json"))["meters"][0]
    catch_up = next(f for f in before["findings"] if f["kind"] == "catch_up")
    after = json.loads(_run("clean", path, "--accept", catch_up["id"], "--json"))["meters"][0]
    assert all(f["id"] != catch_up["id"] for f in after["findings"])
    (step,) = after["steps"]
    assert step["kind"] == "accept" and step["params"]["finding"] == catch_up["id"]
    assert after["quality"]["estimated_intervals"] == 0  # the readings are as read
    # An id that is not shown now is refused in one line and nothing is saved.
    refused = loadledger("clean", path, "--accept", catch_up["id"], expect=2)
    assert refused.returncode == 2 and "no finding" in refused.stderr
    assert len(json.loads(_run("clean", path, "--json"))["meters"][0]["steps"]) == 1
