"""Catch-up readings: a meter that missed a stretch delivers the missed energy in one interval.

After a communication gap (or a stretch of zeros from a stuck pulse count) many meters report
the energy accumulated meanwhile in the first interval after it (common practice). The reading
then stands far above typical by about what the stretch is missing.
"""

from __future__ import annotations

import numpy as np

from engine.cleaning.findings import Finding
from engine.cleaning.prepared import PreparedMeter
from engine.cleaning.wording import energy_text
from engine.words import counted


def catch_up_after(meter: PreparedMeter, first: int, stop: int, opening: str) -> Finding | None:
    """A catch-up finding over ``[first, stop]`` if the reading at ``stop`` holds the run's energy.

    The run ``[first, stop)`` is a gap or a near-zero stretch, described by ``opening`` (such as
    ``"No readings"``). The reading right after it is a catch-up when it is at least ``spike_z``
    robust deviations above usual and its excess over usual is within ``catch_up_ratio`` of
    the energy the run is missing (usual energy minus what it recorded). "Usual" is what each
    interval's own day makes usual (:attr:`PreparedMeter.usual`), so that a catch-up on a
    holiday is weighed against the holiday's level, not a term day's.
    """
    settings = meter.settings
    if stop >= len(meter):
        return None
    expected = meter.usual
    reading, usual = meter.values[stop], expected[stop]
    usual_run = expected[first:stop]
    if not (np.isfinite(reading) and np.isfinite(usual)) or np.isnan(usual_run).mean() > 0.5:
        return None
    missing = np.nanmean(usual_run) * (stop - first) - np.nansum(meter.values[first:stop])
    excess = reading - usual
    z = excess / meter.spread[stop]
    if missing <= 0 or z < settings.spike_z:
        return None
    ratio = excess / missing
    if not 1 / settings.catch_up_ratio <= ratio <= settings.catch_up_ratio:
        return None
    recorded = np.nansum(meter.values[first : stop + 1])
    explanation = (
        f"{opening} {meter.when(first, stop)}, then {energy_text(reading)} in the next interval "
        f"where about {energy_text(usual)} is usual. The extra {energy_text(excess)} is close "
        f"to the {energy_text(missing)} the stretch is missing (within a factor of "
        f"{settings.catch_up_ratio:g}), and the reading is {z:.0f} robust deviations above "
        f"usual (threshold {settings.spike_z:g}): the meter most likely delivered the missed "
        f"energy late. Recommended: share the {energy_text(recorded)} recorded over all "
        f"{counted(stop + 1 - first, 'interval')} following the typical week, which keeps the "
        "total the meter recorded."
    )
    fix = meter.step(
        "spread",
        first,
        stop + 1,
        "share a catch-up reading over the stretch it covers",
        timezone=meter.timezone,
    )
    return meter.finding(
        "catch_up",
        first,
        stop + 1,
        "warning",
        explanation,
        fix,
        excess_kwh=excess,
        missing_kwh=missing,
        z=z,
        ratio=ratio,
        threshold_z=settings.spike_z,
        threshold_ratio=settings.catch_up_ratio,
    )
