"""`clean --rescale FINDING=FACTOR`: a level change that is the meter's own (its multiplier
halved) is corrected by the factor from the meter's records.

Invented scenario: the Tamarack Hall meter on a site without daylight saving, hourly for 16
weeks; from 10:00 on the Monday of week 9 the export records half the true energy.
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest

from engine.cli.main import main

ZONE = "America/Phoenix"
HALVED_AT = 8 * 168 + 10


@pytest.fixture
def project(tmp_path):
    stamps = pd.date_range("2025-03-03", periods=16 * 168, freq="h")
    rng = np.random.default_rng(8)
    busy = (stamps.day_of_week < 5) & (stamps.hour >= 7) & (stamps.hour < 19)
    truth = np.round(30.0 + 50.0 * busy + rng.normal(0, 1.5, stamps.size), 3)
    recorded = truth.copy()
    recorded[HALVED_AT:] = np.round(truth[HALVED_AT:] / 2, 4)
    export = tmp_path / "tamarack.csv"
    pd.DataFrame(
        {"Timestamp": stamps.strftime("%Y-%m-%d %H:%M"), "Tamarack Hall (kWh)": recorded}
    ).to_csv(export, index=False)
    path = tmp_path / "tamarack.loadledger"
    assert main(["new", str(path), "--meters", str(export), "--timezone", ZONE]) == 0
    return path, recorded


def _clean(capsys, path, *args) -> tuple[int, dict | str]:
    code = main(["clean", str(path), *args, "--json"])
    out = capsys.readouterr()
    return code, (json.loads(out.out) if code == 0 else out.err)


def test_a_halved_multiplier_is_rescaled_from_the_hour_it_changed(project, capsys):
    path, recorded = project
    _, report = _clean(capsys, path)
    (shift,) = [f for f in report["meters"][0]["findings"] if f["kind"] == "level_shift"]
    _, report = _clean(capsys, path, "--rescale", f"{shift['id']}=2")
    meter = report["meters"][0]
    assert "level_shift" not in {f["kind"] for f in meter["findings"]}
    (step,) = [s for s in meter["steps"] if s["kind"] == "rescale"]
    stamps = pd.date_range("2025-03-03", periods=recorded.size, freq="h", tz=ZONE)
    assert pd.Timestamp(step["params"]["start"]) == stamps[HALVED_AT]
    assert step["params"]["factor"] == 2.0
    # the energy after cleaning: the readings before the change, and twice those after it
    expected = recorded[:HALVED_AT].sum() + 2 * recorded[HALVED_AT:].sum()
    assert meter["quality"]["energy_after_kwh"] == pytest.approx(expected, rel=1e-9)


@pytest.mark.parametrize(
    ("asked", "words"),
    [
        ("nonsense", "give a finding id and a positive factor"),
        ("abc=-2", "give a finding id and a positive factor"),
        ("0123456789abcdef=2", "no finding 0123456789abcdef is shown now"),
    ],
)
def test_a_bad_rescale_is_refused_and_changes_nothing(project, capsys, asked, words):
    path, _ = project
    code, err = _clean(capsys, path, "--rescale", asked)
    assert code != 0 and words in err
    _, report = _clean(capsys, path)
    assert report["meters"][0]["steps"] == []
