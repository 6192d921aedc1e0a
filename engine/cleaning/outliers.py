"""Spikes and dips: readings far from what is typical for their hour and for their own day."""

from __future__ import annotations

import numpy as np

from engine.cleaning.day_level import day_level_findings
from engine.cleaning.findings import Finding
from engine.cleaning.grid import runs
from engine.cleaning.prepared import PreparedMeter
from engine.cleaning.wording import energy_text, local_text


def find_spikes_and_dips(meter: PreparedMeter, claimed: np.ndarray) -> list[Finding]:
    """Runs of readings far above (spike) or below (dip) typical, and days that moved as a whole.

    The robust z of a reading is its distance from the median of its local hour of the week
    (on days of the same calendar class when a calendar is given) over ``pattern_weeks`` nearby
    weeks, in units of 1.4826·MAD. A reading at least ``spike_z`` robust deviations away is a
    spike or dip only when it is also that far from its own day's resistant line (see
    :mod:`engine.cleaning.day_lines`); readings only the typical week finds unusual belong to a
    day that changed as a whole and are summed up in one low-day or high-day finding. A spike is
    serious when it also exceeds ``implausible_factor`` times the meter's 99.5th-percentile
    reading. For a weather-driven meter the typical value includes its response to that
    interval's temperature (:mod:`engine.cleaning.weather_response`), so a hot afternoon is
    compared with what such an afternoon uses.
    """
    settings = meter.settings
    limit = settings.spike_z
    with np.errstate(invalid="ignore"):
        z = (meter.values - meter.typical) / meter.spread
        z_day = (meter.values - meter.day_lines.expected) / meter.spread
        high = (z >= limit) & ~claimed
        low = (z <= -limit) & (meter.values >= 0) & ~claimed
        # A day without a line (too few readings) leaves the typical week to decide alone.
        up = high & ~(z_day < limit)
        down = low & ~(z_day > -limit)
    claimed[up | down] = True
    found = [_spike(meter, first, stop, z) for first, stop in zip(*runs(up), strict=True)]
    found += [_dip(meter, first, stop, z) for first, stop in zip(*runs(down), strict=True)]
    found += day_level_findings(meter, (high & ~up) | (low & ~down))
    return found


def _spike(meter: PreparedMeter, first: int, stop: int, z: np.ndarray) -> Finding:
    settings = meter.settings
    peak_at = first + int(np.argmax(meter.values[first:stop]))
    peak = meter.values[peak_at]
    limit = float(np.max(meter.typical[first:stop] + settings.spike_z * meter.spread[first:stop]))
    implausible = peak >= settings.implausible_factor * meter.high
    beyond = (
        f" It is also more than {settings.implausible_factor:g} times the meter's "
        f"99.5th-percentile reading ({energy_text(meter.high)}), beyond what it plausibly uses."
        if implausible
        else ""
    )
    advice = "Recommended: cap at" if implausible else "If this was not real use, cap at"
    explanation = (
        f"{_readings(meter, first, stop, 'up to')} {meter.expectation(peak_at)}: "
        f"{z[peak_at]:.0f} robust deviations above that (threshold {settings.spike_z:g}, "
        f"over {settings.pattern_weeks} nearby weeks), and beyond that threshold from its own "
        f"day's level too.{beyond} {advice} "
        f"{energy_text(limit)}, the highest value {_plausible_by(meter, peak_at)} makes "
        "plausible."
    )
    fix = meter.step("cap", first, stop, "cap a spike", high=limit)
    return meter.finding(
        "spike",
        first,
        stop,
        "serious" if implausible else "warning",
        explanation,
        fix,
        z=z[peak_at],
        threshold_z=settings.spike_z,
        limit_kwh=limit,
        high_kwh=meter.high,
        **_weather_measures(meter, peak_at),
    )


def _dip(meter: PreparedMeter, first: int, stop: int, z: np.ndarray) -> Finding:
    settings = meter.settings
    low_at = first + int(np.argmin(meter.values[first:stop]))
    limit = float(np.min(meter.typical[first:stop] - settings.spike_z * meter.spread[first:stop]))
    limit = max(limit, 0.0)
    explanation = (
        f"{_readings(meter, first, stop, 'down to')} {meter.expectation(low_at)}: "
        f"{-z[low_at]:.0f} robust deviations below that (threshold {settings.spike_z:g}, "
        f"over {settings.pattern_weeks} nearby weeks), and beyond that threshold from its own "
        "day's level too. A partial outage, a lost phase or a logger fault. If confirmed, raise "
        f"the readings to {energy_text(limit)}, the lowest value "
        f"{_plausible_by(meter, low_at)} makes plausible."
    )
    fix = meter.step("cap", first, stop, "raise a dip", low=limit)
    return meter.finding(
        "dip",
        first,
        stop,
        "warning",
        explanation,
        fix,
        z=z[low_at],
        threshold_z=settings.spike_z,
        limit_kwh=limit,
        **_weather_measures(meter, low_at),
    )


def _plausible_by(meter: PreparedMeter, at: int) -> str:
    if meter.judged_by_weather(at):
        return "the meter's typical week and its response to the weather"
    return "the meter's typical week"


def _weather_measures(meter: PreparedMeter, at: int) -> dict[str, float]:
    """The temperature a reading was judged at and the energy the weather added there."""
    if not meter.judged_by_weather(at):
        return {}
    return {
        "temperature_c": meter.weather.temperature[at],
        "weather_kwh": meter.weather.effect[at],
    }


def _readings(meter: PreparedMeter, first: int, stop: int, bound: str) -> str:
    if stop - first == 1:
        stamp = local_text(meter.index[first], meter.timezone)
        return f"A reading of {energy_text(meter.values[first])} at {stamp} site time"
    extreme = np.max if bound == "up to" else np.min
    reach = energy_text(extreme(meter.values[first:stop]))
    return f"Readings {bound} {reach} {meter.when(first, stop)}"
