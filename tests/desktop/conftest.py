"""Fixtures for the window's tests: a real project built from the sample campus."""

from __future__ import annotations

import dataclasses
from pathlib import Path

import pytest
from desktop_support import LAPTOP, SAMPLE, SITE_ZONE
from PySide6.QtCore import QSettings

from engine.project import Project
from engine.reading import ReadOptions, read_file
from engine.steps.importing import ImportedFiles, store_files


@pytest.fixture(scope="session")
def sample_project(tmp_path_factory) -> Path:
    """A project holding the sample campus's Library meter and its weather station."""
    options = ReadOptions(timezone=SITE_ZONE)
    meters = read_file(SAMPLE / "electricity-15min.xlsx", options)
    library = dataclasses.replace(meters, meters=meters.meters[:1])
    weather = read_file(SAMPLE / "weather-station.csv", options)
    path = tmp_path_factory.mktemp("projects") / f"orrinvale{Project.EXTENSION}"
    with Project.create(path, timezone=SITE_ZONE) as project:
        store_files(project, ImportedFiles([library], [], [weather], options))
    return path


@pytest.fixture(autouse=True)
def own_settings(tmp_path_factory) -> Path:
    """Every window test keeps its remembered settings in a fresh folder, never the user's."""
    folder = tmp_path_factory.mktemp("settings")
    QSettings.setPath(QSettings.Format.IniFormat, QSettings.Scope.UserScope, str(folder))
    return folder


@pytest.fixture
def laptop_window(qtbot):
    """The main window shown at the size of a laptop screen (:data:`LAPTOP`)."""
    from desktop.main_window import MainWindow  # only the tests that ask pay for the import

    widget = MainWindow()
    qtbot.addWidget(widget)
    widget.resize(*LAPTOP)
    widget.show()
    yield widget
    widget.close()
