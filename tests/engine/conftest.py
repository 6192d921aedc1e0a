"""Shared fixtures of the engine tests: a small invented campus as a project file.

Ground truth by construction: two invented hourly meters over two years (a hall with weekday
hours and heating, a boiler house) sharing an invented weather station, imported with the
command line; ``fitted_site`` adds a chosen model per meter (seasonal naive, quick to refit).
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from engine.project import Project
from engine.steps.fitting import fit_meter
from tests.cli.cli_support import hall_and_boiler_site

METERS = ("Hall", "Boiler gas")


@pytest.fixture(scope="session")
def new_site(tmp_path_factory) -> Path:
    """The site's project as imported: no model chosen yet."""
    return hall_and_boiler_site(tmp_path_factory.mktemp("kept"), "2024-01-01",
                                "2025-12-31 23:00", seed=11)  # fmt: skip


@pytest.fixture(scope="session")
def fitted_site(new_site, tmp_path_factory) -> Path:
    """The site with a model chosen for each meter (seasonal naive, quick to refit)."""
    project = tmp_path_factory.mktemp("fitted") / "site.loadledger"
    shutil.copyfile(new_site, project)
    with Project.open(project) as opened:
        for name in METERS:
            fit_meter(opened, name, families=["seasonal_naive"], origins=2)
    return project
