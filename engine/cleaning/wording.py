"""Plain-words formatting for findings: durations, energy and site-local times."""

from __future__ import annotations

import math

import pandas as pd


def duration_text(span: pd.Timedelta) -> str:
    """``"45 min"``, ``"6 h"``, ``"3 days 4 h"``: the largest two units that matter."""
    minutes = round(span.total_seconds() / 60)
    days, minutes = divmod(minutes, 24 * 60)
    hours, minutes = divmod(minutes, 60)
    parts = []
    if days:
        parts.append(f"{days} day" if days == 1 else f"{days} days")
    if hours:
        parts.append(f"{hours} h")
    if minutes and not days:
        parts.append(f"{minutes} min")
    return " ".join(parts) if parts else "0 min"


def energy_text(kwh: float) -> str:
    """Energy with as many digits as a reader needs: ``"1,234 kWh"``, ``"7.25 kWh"``."""
    if not math.isfinite(kwh):
        return "an unknown amount of energy"
    size = abs(kwh)
    if size >= 100:
        return f"{kwh:,.0f} kWh"
    if size >= 10:
        return f"{kwh:.1f} kWh"
    if size >= 1:
        return f"{kwh:.2f} kWh"
    return f"{kwh:.3g} kWh"


def local_text(stamp: pd.Timestamp, timezone: str) -> str:
    """A UTC instant on the site's clock, e.g. ``"Mon 2024-03-04 10:15"``."""
    return stamp.tz_convert(timezone).strftime("%a %Y-%m-%d %H:%M")


def ratio_text(ratio: float) -> str:
    """A multiplicative change, e.g. ``"×1.47"``."""
    return f"×{ratio:.3g}"


def day_text(stamp: pd.Timestamp, timezone: str) -> str:
    """The local calendar day of a UTC instant, e.g. ``"Mon 2024-03-04"``."""
    return stamp.tz_convert(timezone).strftime("%a %Y-%m-%d")
