"""Running the real `loadledger` command line in a subprocess, as scripts do."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

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
