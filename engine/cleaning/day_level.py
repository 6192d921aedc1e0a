"""Whole days that depart from typical together: a day-level change, not a meter fault.

Next to the typical week each busy hour of a day that moved as a whole (an unlisted holiday, a
closure, an event, a heat wave) looks like a dip or a spike; fitted as a whole by its resistant
line (:mod:`engine.cleaning.day_lines`), the day is unremarkable. A reading is a spike or a dip
only when it stands out both from its typical hour and from its own day's line; readings only
the typical week finds unusual are summed up here, one finding per run of such days. A fault
lasting a large part of a day can move the line and then shows here instead. Zero runs, flat
lines and gaps are found by their own detectors, which do not rely on the line.
"""

from __future__ import annotations

import numpy as np

from engine.cleaning.findings import Finding
from engine.cleaning.grid import runs
from engine.cleaning.prepared import PreparedMeter
from engine.cleaning.wording import day_text, energy_text, ratio_text


def day_level_findings(meter: PreparedMeter, explained: np.ndarray) -> list[Finding]:
    """One "low_day" or "high_day" finding per run of days whose outliers their line explains.

    ``explained`` marks readings beyond ``spike_z`` robust deviations from typical but within it
    of their own day's line. Days the campus calendar makes quiet (holidays, breaks, closures)
    are expected to differ and are not reported.
    """
    lines = meter.day_lines
    n_days = lines.slope.size
    beyond = np.bincount(lines.day, weights=explained, minlength=n_days)
    changed = beyond > 0
    if meter.calendar_days is not None:
        quiet = meter.calendar_days.quiet
        changed &= np.bincount(lines.day, weights=quiet, minlength=n_days) == 0
    both = np.isfinite(meter.values) & np.isfinite(meter.typical)
    used = np.bincount(lines.day, weights=np.where(both, meter.values, 0.0), minlength=n_days)
    usual = np.bincount(lines.day, weights=np.where(both, meter.typical, 0.0), minlength=n_days)
    changed &= usual > 0
    low = used < usual
    found = []
    for kind, days in (("low_day", changed & low), ("high_day", changed & ~low)):
        for first_day, stop_day in zip(*runs(days), strict=True):
            first = int(np.searchsorted(lines.day, first_day, side="left"))
            stop = int(np.searchsorted(lines.day, stop_day - 1, side="right"))
            found.append(
                _day_change(
                    meter,
                    kind,
                    first,
                    stop,
                    used[first_day:stop_day].sum(),
                    usual[first_day:stop_day].sum(),
                    int(beyond[first_day:stop_day].sum()),
                )
            )
    return found


def _day_change(
    meter: PreparedMeter, kind: str, first: int, stop: int, used: float, usual: float, beyond: int
) -> Finding:
    settings = meter.settings
    days = int(meter.local_day[stop - 1] - meter.local_day[first]) + 1
    first_day = day_text(meter.index[first], meter.timezone)
    when = (
        f"on {first_day}"
        if days == 1
        else f"for {days} days from {first_day} to "
        f"{day_text(meter.index[stop - 1], meter.timezone)}"
    )
    low = kind == "low_day"
    side = "below" if low else "above"
    causes = (
        "a holiday, a closure, a schedule change or mild weather"
        if low
        else "unusual weather, an event or a schedule change"
    )
    if not low:
        calendar = ""
    elif meter.calendar_days is None:
        calendar = (
            " Import the campus calendar so that holidays, breaks and closures are compared "
            "with days of their own kind."
        )
    else:
        calendar = (
            " The campus calendar lists no holiday, break or closure then; add it there if the "
            "campus was closed."
        )
    explanation = (
        f"Readings ran {side} typical all day {when} (site time): "
        f"{energy_text(used)} where {energy_text(usual)} is {_typical_for(meter, first)} "
        f"({ratio_text(used / usual)}). {beyond:,} readings were more than "
        f"{settings.spike_z:g} robust deviations {side} typical, yet each stays close to the "
        "typical daily shape fitted to its own day's level, so they are not reported one by "
        f"one: the day as a whole changed ({causes}), not the meter. Nothing needs "
        f"fixing.{calendar}"
    )
    return meter.finding(
        kind,
        first,
        stop,
        "info",
        explanation,
        None,
        ratio=used / usual,
        days=days,
        readings_beyond=beyond,
        threshold_z=settings.spike_z,
    )


def _typical_for(meter: PreparedMeter, at: int) -> str:
    """ "typical", or for a weather-driven meter "expected for the day's weather"."""
    return "expected for the day's weather" if meter.judged_by_weather(at) else "typical"
