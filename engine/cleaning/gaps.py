"""Gaps: intervals with no reading, short (a straight line will do) or long."""

from __future__ import annotations

import numpy as np
import pandas as pd

from engine.cleaning.catch_up import catch_up_after
from engine.cleaning.findings import Finding
from engine.cleaning.grid import runs
from engine.cleaning.prepared import PreparedMeter
from engine.cleaning.wording import duration_text, energy_text


def find_gaps(meter: PreparedMeter, claimed: np.ndarray) -> list[Finding]:
    """One finding per run of missing intervals; a catch-up finding where one follows the gap.

    Marks the intervals it reports in ``claimed`` so later detectors leave them alone.
    """
    found = []
    for first, stop in zip(*runs(np.isnan(meter.values)), strict=True):
        catch_up = catch_up_after(meter, first, stop, "No readings")
        if catch_up is not None:
            claimed[first : stop + 1] = True
            found.append(catch_up)
        else:
            claimed[first:stop] = True
            found.append(_gap(meter, first, stop))
    return found


def _gap(meter: PreparedMeter, first: int, stop: int) -> Finding:
    settings = meter.settings
    span = (stop - first) * meter.interval
    short = span <= settings.short_gap
    severity = "info" if short else "serious" if span >= settings.serious_gap else "warning"
    fix = meter.fill_step(first, stop, "fill a gap")
    how = (
        "a straight line between the readings either side"
        if fix.kind == "interpolate"
        else "the meter's typical week from nearby weeks, scaled to the level around the gap"
    )
    if fix.kind == "profile_fill" and meter.holds_holiday(first, stop):
        how += (
            "; its public holiday hours at the share of a term weekday the meter's own "
            "holidays ran at"
        )
    expected = meter.expected_energy(first, stop)
    typical = f"; about {energy_text(expected)} would be typical" if np.isfinite(expected) else ""
    explanation = (
        f"No readings {meter.when(first, stop)}{typical}. Gaps up to "
        f"{duration_text(settings.short_gap)} count as short and are filled by a straight line, "
        "longer ones from the typical week; gaps of "
        f"{duration_text(settings.serious_gap)} or more are rated serious. "
        f"Recommended: fill with {how}."
    )
    return meter.finding(
        "gap",
        first,
        stop,
        severity,
        explanation,
        fix,
        hours=span / pd.Timedelta(hours=1),
        short_gap_hours=settings.short_gap / pd.Timedelta(hours=1),
    )
