"""Negative readings, and register resets or rollovers the import did not resolve."""

from __future__ import annotations

import math

import numpy as np

from engine.cleaning.findings import Finding
from engine.cleaning.grid import runs
from engine.cleaning.prepared import PreparedMeter
from engine.cleaning.wording import energy_text, local_text


def find_negatives(meter: PreparedMeter, claimed: np.ndarray) -> list[Finding]:
    """Runs of negative readings; a lone, very large one is reported as a register reset."""
    settings = meter.settings
    found = []
    with np.errstate(invalid="ignore"):
        negative = meter.values < 0
    for first, stop in zip(*runs(negative), strict=True):
        claimed[first:stop] = True
        reading = meter.values[first]
        reset = stop - first == 1 and meter.high > 0
        if reset and -reading >= settings.reset_factor * meter.high:
            found.append(_reset(meter, first, reading))
        else:
            found.append(_negative(meter, first, stop))
    return found


def _reset(meter: PreparedMeter, at: int, reading: float) -> Finding:
    settings = meter.settings
    size = 10.0 ** math.ceil(math.log10(-reading))
    register = (
        f" The drop is close to {size:,.0f}, a likely register size."
        if -reading >= 0.9 * size
        else ""
    )
    explanation = (
        f"A reading of {energy_text(reading)} at "
        f"{local_text(meter.index[at], meter.timezone)} site time, larger in size than "
        f"{settings.reset_factor:g} times this meter's 99.5th-percentile reading "
        f"({energy_text(meter.high)}), and normal readings after it: a register that rolled over "
        f"or a replaced meter that the import did not resolve.{register} Recommended: replace "
        "the interval by a straight line (its true consumption is not known), or import the "
        "register reads again with the rollover handled."
    )
    fix = meter.step("interpolate", at, at + 1, "replace a register reset")
    return meter.finding(
        "register_reset",
        at,
        at + 1,
        "serious",
        explanation,
        fix,
        reading_kwh=reading,
        high_kwh=meter.high,
        reset_factor=settings.reset_factor,
    )


def _negative(meter: PreparedMeter, first: int, stop: int) -> Finding:
    lowest = float(np.min(meter.values[first:stop]))
    explanation = (
        f"Negative readings (lowest {energy_text(lowest)}) {meter.when(first, stop)}: a "
        "consumption meter cannot run backwards. If this meter also measures energy sent out "
        "(for example from solar panels), import it as two meters; otherwise a wiring or "
        "logger fault is likely. Recommended: replace the readings by an estimate."
    )
    fix = meter.fill_step(first, stop, "replace negative readings")
    return meter.finding(
        "negative", first, stop, "serious", explanation, fix, lowest_kwh=lowest, threshold_kwh=0.0
    )
