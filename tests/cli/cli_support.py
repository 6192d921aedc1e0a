"""Running the real `loadledger` command line in a subprocess, as scripts do."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd


def loadledger(*args, expect: int | None = 0, timeout: float = 900, cwd=None):
    """Run ``loadledger ARGS``; check the exit status unless ``expect`` is None."""
    done = subprocess.run(
        [sys.executable, "-m", "desktop.launcher", *map(str, args)],
        capture_output=True,
        text=True,
        timeout=timeout,
        cwd=cwd,
    )
    if expect is not None:
        assert done.returncode == expect, done.stderr
    return done


def write_hall_and_boiler(folder: Path, hours: pd.DatetimeIndex, hall, boiler, temps) -> tuple:
    """The two-meter invented site's meter export and weather file (CSV); their paths."""
    meters = folder / "campus.csv"
    meters.write_text("Timestamp,Hall (kWh),Boiler gas (kWh)\n" + "\n".join(
        f"{t:%Y-%m-%d %H:%M},{a:.3f},{b:.3f}"
        for t, a, b in zip(hours, hall, boiler, strict=True)))  # fmt: skip
    weather = folder / "station.csv"
    weather.write_text("Timestamp,Dry bulb (°C)\n" + "\n".join(
        f"{t:%Y-%m-%d %H:%M},{v:.2f}" for t, v in zip(hours, temps, strict=True)))  # fmt: skip
    return meters, weather


def hall_and_boiler_site(folder: Path, first: str, last: str, seed: int) -> Path:
    """The invented two-meter site from ``first`` to ``last`` (hourly, UTC) as a new project.

    Ground truth by construction: a hall with weekday hours and heating below 12 °C, a boiler
    house heating below 14 °C, and an invented weather station with a yearly cycle.
    """
    rng = np.random.default_rng(seed)
    hours = pd.date_range(first, last, freq="h")
    day = hours.day_of_year.to_numpy()
    temps = 11 - 12 * np.cos(2 * np.pi * (day - 20) / 365) + rng.normal(0, 2, len(hours))
    busy = (hours.day_of_week < 5) & (hours.hour >= 8) & (hours.hour < 18)
    hall = (50 + 60 * busy + 3 * np.maximum(12 - temps, 0)) * (1 + rng.normal(0, 0.04, len(hours)))
    boiler = (5 + 9 * np.maximum(14 - temps, 0)) * (1 + rng.normal(0, 0.05, len(hours)))
    meters, weather = write_hall_and_boiler(folder, hours, hall, boiler, temps)
    project = folder / "site.loadledger"
    loadledger("new", project, "--meters", meters, "--weather", weather, "--timezone", "UTC")
    return project
