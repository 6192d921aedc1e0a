"""Helpers for the window's tests: real files written here, screenshots, waiting on workers."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[2]
SAMPLE = ROOT / "sample" / "data"
SCREENS = ROOT / "out" / "screens"
SITE_ZONE = "America/Chicago"
TASK_TIMEOUT_MS = 120_000  # generous: a loaded 2-core machine runs a budget slowly


def save_screen(widget, name: str) -> Path:
    """Save what ``widget`` shows to ``out/screens/<name>.png`` for a person to look at."""
    SCREENS.mkdir(parents=True, exist_ok=True)
    path = SCREENS / f"{name}.png"
    assert widget.grab().save(str(path))
    assert path.stat().st_size > 10_000
    return path


def wait_until_idle(qtbot, screen) -> None:
    """Wait (processing events, never sleeping) until the screen's worker task has ended."""
    qtbot.waitUntil(lambda: screen.task is None, timeout=TASK_TIMEOUT_MS)


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
