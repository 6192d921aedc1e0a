"""Helpers for the window's tests: real files written here, screenshots, waiting on workers."""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np
import pandas as pd

from engine.project import Project
from engine.reading import ReadOptions, read_calendar, read_file
from engine.steps.fitting import fit_meter
from engine.steps.importing import ImportedFiles, store_files

ROOT = Path(__file__).resolve().parents[2]
SAMPLE = ROOT / "sample" / "data"
SCREENS = ROOT / "out" / "screens"
SITE_ZONE = "America/Chicago"
RATE_CARD = ROOT / "sample" / "tariffs" / "orrinvale-main-electric.ratecard.toml"
#: The meters of :func:`fitted_campus`.
FITTED_METERS = ("Library", "Science Labs")
TASK_TIMEOUT_MS = 120_000  # generous: a loaded 2-core machine runs a budget slowly
#: A common laptop screen (HD, 16:9), in pixels: the whole window must work at this size.
LAPTOP = (1280, 720)


def save_screen(widget, name: str, min_bytes: int = 10_000) -> Path:
    """Save what ``widget`` shows to ``out/screens/<name>.png`` for a person to look at
    (a picture smaller than ``min_bytes`` is taken for an empty one)."""
    SCREENS.mkdir(parents=True, exist_ok=True)
    path = SCREENS / f"{name}.png"
    assert widget.grab().save(str(path))
    assert path.stat().st_size > min_bytes
    return path


def show_widget(qtbot, widget, size: tuple[int, int] | None = None):
    """Show ``widget`` (at ``size``, if given) under qtbot's care; the widget."""
    qtbot.addWidget(widget)
    if size is not None:
        widget.resize(*size)
    widget.show()
    return widget


def wait_until_idle(qtbot, screen) -> None:
    """Wait (processing events, never sleeping) until the screen's worker task has ended."""
    qtbot.waitUntil(lambda: not screen.runner.busy, timeout=TASK_TIMEOUT_MS)


def write_hourly_meter(path: Path, header: str, values: np.ndarray, start: str) -> pd.DatetimeIndex:
    """A wide CSV of hourly readings stamped at interval start on the local clock."""
    stamps = pd.date_range(start, periods=len(values), freq="h")
    lines = [f"Timestamp,{header}"] + [
        f"{t:%Y-%m-%d %H:%M},{v:.3f}" for t, v in zip(stamps, values, strict=True)
    ]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return stamps


def write_hourly_weather(path: Path, temps_c: np.ndarray, start: str) -> None:
    stamps = pd.date_range(start, periods=len(temps_c), freq="h")
    lines = ["Time,Outdoor temperature (°C)"] + [
        f"{t:%Y-%m-%d %H:%M},{v:.2f}" for t, v in zip(stamps, temps_c, strict=True)
    ]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")


def short_sample_project(path: Path, meters: int = 1, first_day: str = "2025-06-01") -> Path:
    """A project of the sample's first ``meters`` electricity meters from ``first_day`` (local)
    on, with its weather station and campus calendar (US public holidays)."""
    options = ReadOptions(timezone=SITE_ZONE, holidays="US")
    found = read_file(SAMPLE / "electricity-15min.xlsx", options)
    start = pd.Timestamp(first_day, tz=SITE_ZONE).tz_convert("UTC")
    reads = []
    for read in found.meters[:meters]:
        values = read.meter.values[read.meter.values.index >= start]
        meter = dataclasses.replace(read.meter, values=values)
        reads.append(dataclasses.replace(read, meter=meter, raw=read.raw[read.raw["t"] >= start]))
    weather = read_file(SAMPLE / "weather-station.csv", options)
    calendar = read_calendar(SAMPLE / "campus-calendar.csv", options)
    files = ImportedFiles([dataclasses.replace(found, meters=reads)], [], [weather], options)
    with Project.create(path, timezone=SITE_ZONE) as project:
        store_files(project, dataclasses.replace(files, calendar=calendar))
    return path


def fitted_campus(path: Path) -> Path:
    """Two sample meters from June 2025, each with a quickly fitted daily change-point model."""
    short_sample_project(path, meters=len(FITTED_METERS))
    with Project.open(path) as project:
        for name in FITTED_METERS:
            fit_meter(project, name, families=["daily_change_point"], origins=3)
    return path
