"""A project with several weather files (one station's years in separate files, or a backup
station) has one site weather: every step uses it instead of stopping with an internal error."""

from __future__ import annotations

import json
from pathlib import Path

import pandas as pd
import pytest

from engine.cli.main import main
from engine.project import Project
from engine.steps.cleaning import SiteDrivers
from engine.steps.prepared_site import prepare_site

DATA = Path(__file__).resolve().parents[2] / "sample" / "data"
GAS = DATA / "gas-boilerhouse-daily.csv"


def _new(project: Path, *weather: Path) -> Project:
    args = ["new", project, "--timezone", "America/Chicago", "--meters", GAS]
    for path in weather:
        args += ["--weather", path]
    assert main([str(arg) for arg in args]) == 0
    return Project.open(project)


@pytest.fixture(scope="module")
def split(tmp_path_factory) -> tuple[Path, Path]:
    """The sample's weather file as it came, and the same split at 2025 into two files."""
    folder = tmp_path_factory.mktemp("weather")
    whole = pd.read_csv(DATA / "weather-station.csv")
    early = whole[whole.iloc[:, 0] < "2025"]
    early.to_csv(folder / "station-to-2024.csv", index=False)
    whole[whole.iloc[:, 0] >= "2025"].to_csv(folder / "station-from-2025.csv", index=False)
    with _new(folder / "one.loadledger", DATA / "weather-station.csv"):
        pass
    with _new(folder / "two.loadledger", folder / "station-to-2024.csv",
              folder / "station-from-2025.csv"):  # fmt: skip
        pass
    return folder / "one.loadledger", folder / "two.loadledger"


def test_a_station_split_over_two_files_is_the_same_site_weather(split) -> None:
    one, two = split
    with Project.open(one) as single, Project.open(two) as halves:
        assert len(halves.weather_stations()) == 2
        expected = prepare_site(single).hourly
        assert prepare_site(halves).hourly.equals(expected)
        assert SiteDrivers.of(halves).temperatures.equals(SiteDrivers.of(single).temperatures)


def test_budget_and_profile_run_on_two_stations(split, capsys) -> None:
    _, two = split
    code = main(["budget", str(two), "--start", "2026-11", "--paths", "100", "--workers", "1",
                 "--json"])  # fmt: skip
    out = capsys.readouterr()
    assert code == 0, out.err
    assert "internal error" not in out.err
    # The assumptions say which file's hours were taken as read and which only fill in.
    stations = json.loads(out.out)["assumptions"]["weather stations"]
    assert "'station-to-2024' (" in stations and "'station-from-2025' (" in stations
    assert main(["profile", str(two), "--meter", "gas-boilerhouse-daily", "--json"]) == 0
