"""Shared fixtures of the engine tests: a small invented campus as a project file.

Ground truth by construction: two invented hourly meters over two years (a hall with weekday
hours and heating, a boiler house) sharing an invented weather station, imported with the
command line; ``fitted_site`` adds a chosen model per meter (seasonal naive, quick to refit).
"""

from __future__ import annotations

import shutil
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from engine.modelling import fit_meter
from engine.project import Project
from tests.cli.cli_support import loadledger, write_hall_and_boiler

METERS = ("Hall", "Boiler gas")


@pytest.fixture(scope="session")
def new_site(tmp_path_factory) -> Path:
    """The site's project as imported: no model chosen yet."""
    folder = tmp_path_factory.mktemp("kept")
    rng = np.random.default_rng(11)
    hours = pd.date_range("2024-01-01", "2025-12-31 23:00", freq="h")
    day = hours.day_of_year.to_numpy()
    temps = 11 - 12 * np.cos(2 * np.pi * (day - 20) / 365) + rng.normal(0, 2, len(hours))
    busy = (hours.day_of_week < 5) & (hours.hour >= 8) & (hours.hour < 18)
    hall = (50 + 60 * busy + 3 * np.maximum(12 - temps, 0)) * (1 + rng.normal(0, 0.04, len(hours)))
    boiler = (5 + 9 * np.maximum(14 - temps, 0)) * (1 + rng.normal(0, 0.05, len(hours)))
    meters, weather = write_hall_and_boiler(folder, hours, hall, boiler, temps)
    project = folder / "site.loadledger"
    loadledger("new", project, "--meters", meters, "--weather", weather, "--timezone", "UTC")
    return project


@pytest.fixture(scope="session")
def fitted_site(new_site, tmp_path_factory) -> Path:
    """The site with a model chosen for each meter (seasonal naive, quick to refit)."""
    project = tmp_path_factory.mktemp("fitted") / "site.loadledger"
    shutil.copyfile(new_site, project)
    with Project.open(project) as opened:
        for name in METERS:
            fit_meter(opened, name, families=["seasonal_naive"], origins=2)
    return project
