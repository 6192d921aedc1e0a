"""Stuck meters: one reading repeated too long, and zero runs when the meter is normally busy."""

from __future__ import annotations

import math

import numpy as np

from engine.cleaning.catch_up import catch_up_after
from engine.cleaning.findings import Finding
from engine.cleaning.grid import runs
from engine.cleaning.prepared import PreparedMeter
from engine.cleaning.wording import duration_text, energy_text
from engine.words import counted

#: Fewest repeats of one reading that make a day-long flat line serious: a day of hourly
#: readings. A daily meter on a whole-unit register repeats a quiet season's day for a week
#: (the sample's gas meter: 19 ccf seven days running in June), so a flat line is serious only
#: when it holds this many readings as well as a day.
MIN_SERIOUS_REPEATS = 24


def find_flat_lines(meter: PreparedMeter, claimed: np.ndarray) -> list[Finding]:
    """Runs of one non-zero reading repeated for longer than this meter plausibly repeats.

    The limit is learned from the meter's own history: ``flat_multiple`` times the
    ``flat_quantile`` of its repeat-run lengths (so a meter with a coarse register, which repeats
    often, is allowed longer repeats), never below ``flat_floor_hours``. Zeros are left to
    :func:`find_zero_runs`.
    """
    settings = meter.settings
    values = meter.values
    starts = np.flatnonzero(np.concatenate(([True], values[1:] != values[:-1])))
    lengths = np.diff(np.append(starts, values.size))
    repeated = values[starts]
    candidates = np.isfinite(repeated) & (repeated != 0)
    if not candidates.any():
        return []
    usual = float(np.quantile(lengths[candidates], settings.flat_quantile))
    floor = math.ceil(settings.flat_floor / meter.interval)
    limit = max(floor, math.ceil(settings.flat_multiple * usual))
    found = []
    for run in np.flatnonzero(candidates & (lengths > limit)):
        first, stop = int(starts[run]), int(starts[run] + lengths[run])
        if claimed[first:stop].any():
            continue
        claimed[first:stop] = True
        found.append(_flat_line(meter, first, stop, usual, limit))
    return found


def _flat_line(meter: PreparedMeter, first: int, stop: int, usual: float, limit: int) -> Finding:
    settings = meter.settings
    limit_span = duration_text(limit * meter.interval)
    explanation = (
        f"The reading {energy_text(meter.values[first])} repeats {meter.when(first, stop)}. "
        f"For this meter a repeat longer than {limit_span} is implausible "
        f"({settings.flat_multiple:g} times the length {settings.flat_quantile * 100:g}% of its "
        f"repeats stay within, {counted(math.ceil(usual), 'interval')}, but at least "
        f"{duration_text(settings.flat_floor)}): a stuck meter or a logger repeating its last "
        "value. "
    )
    long_enough = stop - first >= MIN_SERIOUS_REPEATS
    severity = _duration_severity(meter, stop - first) if long_enough else "warning"
    if severity == "serious":
        serious = duration_text(settings.serious_run)
        explanation += (
            "Recommended: replace the readings by an estimate (applied with the other "
            f"recommended fixes: no building uses exactly the same for {serious} or more, "
            f"{MIN_SERIOUS_REPEATS} readings in a row)."
        )
    else:
        coarse = (
            " (this meter's readings often repeat, as a register read in whole units does on a "
            "steady load: compare with the register's own reads)"
            if usual > 1
            else ""
        )
        explanation += f"Recommended, after checking{coarse}: replace the readings by an estimate."
    fix = meter.fill_step(first, stop, "replace a stuck reading")
    return meter.finding(
        "flat_line",
        first,
        stop,
        severity,
        explanation,
        fix,
        limit_intervals=limit,
        usual_repeat_intervals=usual,
        floor_hours=settings.flat_floor.total_seconds() / 3600,
    )


def find_zero_runs(meter: PreparedMeter, claimed: np.ndarray) -> list[Finding]:
    """Runs of readings at or near zero that cover hours when the meter is normally busy.

    A reading is near zero at or below ``near_zero_share`` of its typical value; an hour is busy
    when its typical reading is at least ``busy_share`` of the meter's median reading. A run is
    reported (trimmed to its busy part) when it covers ``zero_min_hours`` of busy time, and as
    a catch-up when the reading after it holds the energy it is missing. A run that switches
    off every busy hour of whole days the campus calendar makes quiet (holidays, breaks,
    closures) is most likely a building shut for them and is only noted (severity info); a run
    covering part of such a day is an outage like any other.
    """
    settings = meter.settings
    values, typical = meter.values, meter.typical
    with np.errstate(invalid="ignore"):
        low = (values >= 0) & (values <= settings.near_zero_share * typical)
        busy = (typical > 0) & (typical >= settings.busy_share * meter.level)
    starts, stops = runs(low & ~claimed)
    busy_count = np.concatenate(([0], np.cumsum(busy & low)))
    needed = settings.zero_min_duration / meter.interval
    found = []
    for run_first, run_stop in zip(starts, stops, strict=True):
        if busy_count[run_stop] - busy_count[run_first] < needed:
            continue
        busy_at = run_first + np.flatnonzero(busy[run_first:run_stop])
        first, stop = int(busy_at[0]), int(busy_at[-1]) + 1
        catch_up = catch_up_after(meter, first, int(run_stop), "Readings at or near zero")
        if catch_up is not None:
            claimed[first : run_stop + 1] = True
            found.append(catch_up)
        else:
            claimed[first:stop] = True
            shut = _shut_for_quiet_days(meter, busy, int(run_first), int(run_stop), first, stop)
            found.append(_zero_run(meter, first, stop, shut))
    return found


def _shut_for_quiet_days(
    meter: PreparedMeter, busy: np.ndarray, run_first: int, run_stop: int, first: int, stop: int
) -> bool:
    """Whether a near-zero run switches off whole quiet days.

    The run ``[run_first, run_stop)`` is busy from ``first`` to ``stop``; it switches off whole
    quiet days when the calendar makes all of those busy intervals quiet and no busy interval of
    the local days they lie on falls outside the run.
    """
    days = meter.calendar_days
    if days is None or not days.quiet[first:stop].all():
        return False
    day_first = int(np.searchsorted(meter.local_day, meter.local_day[first], side="left"))
    day_stop = int(np.searchsorted(meter.local_day, meter.local_day[stop - 1], side="right"))
    return not (busy[day_first:run_first].any() or busy[run_stop:day_stop].any())


def _zero_run(meter: PreparedMeter, first: int, stop: int, shut: bool) -> Finding:
    settings = meter.settings
    verdict = (
        ". The run covers every busy hour of whole days the campus calendar lists as holidays, "
        "breaks or closures, so the building was most likely shut for them: keep the readings "
        "unless it was running."
        if shut
        else ": an outage or a failed meter or logger. If the building was really off, keep the "
        "readings; if it was running, replace them by an estimate."
    )
    explanation = (
        f"Readings at or near zero (at most {settings.near_zero_share:.0%} of typical) "
        f"{meter.when(first, stop)}, hours when this meter normally uses "
        f"{energy_text(meter.expected_energy(first, stop))} (busy hours are those whose typical "
        f"reading is at least {settings.busy_share:.0%} of the meter's median reading; runs with "
        f"{duration_text(settings.zero_min_duration)} or more of busy time are reported)"
        f"{verdict}"
    )
    fix = meter.fill_step(first, stop, "replace a zero run")
    return meter.finding(
        "zero_run",
        first,
        stop,
        "info" if shut else _duration_severity(meter, stop - first),
        explanation,
        fix,
        near_zero_share=settings.near_zero_share,
        busy_share=settings.busy_share,
        min_hours=settings.zero_min_duration.total_seconds() / 3600,
    )


def _duration_severity(meter: PreparedMeter, intervals: int) -> str:
    return "serious" if intervals * meter.interval >= meter.settings.serious_run else "warning"
