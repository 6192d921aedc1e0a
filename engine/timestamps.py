"""Meter time stamps as instants: local clock times placed in UTC, the interval, the convention.

Readers hand over naive local clock times (see :mod:`engine.reading.stamp_cells`, which reads
them from cells) or UTC instants, and need an unambiguous UTC index of interval starts:

1. :func:`localize` turns naive local clock times in an IANA zone into UTC: the repeated
   fall-back hour is placed by order of appearance, times in the spring-forward gap are reported.
2. :func:`detect_interval` finds the reading interval from the UTC index.
3. :func:`guess_stamp_convention` tells whether the stamps mark interval starts or ends, and
   :func:`to_interval_starts` moves interval-end stamps to starts.

Local calendar days on a zone's clock: :func:`local_midnights_utc` places their midnights in
UTC and :func:`day_lengths` gives their clock length (23, 24 or 25 hours around daylight saving).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np
import pandas as pd

from engine.errors import InputError
from engine.zone_names import require_zone

Convention = Literal["start", "end"]

_USUAL_STEPS = frozenset(
    pd.Timedelta(minutes=minutes) for minutes in (1, 5, 10, 15, 30, 60, 24 * 60)
)

# Daily stamps at local midnight are 23 or 25 hours apart in UTC across a daylight-saving change.
_DST_SLACK = pd.Timedelta(hours=1).value


@dataclass(frozen=True, eq=False)
class Localized:
    """Naive local clock times placed on UTC, with the daylight-saving problems found.

    Attributes
    ----------
    utc : pandas.DatetimeIndex
        Same length and order as the input; NaT where a clock time could not be placed.
    timezone : str
        The IANA zone the clock times were read in.
    fall_back_resolved : numpy.ndarray
        Positions in the repeated fall-back hour placed by order of appearance: the first
        appearance is the earlier instant (daylight time), the second the later (standard time).
    fall_back_single : numpy.ndarray
        Fall-back clock times that appear only once, taken as the earlier instant; the other
        pass of that hour is missing from the data.
    fall_back_unresolved : numpy.ndarray
        Fall-back clock times appearing a third time or more; order cannot place them (NaT).
    spring_gap : numpy.ndarray
        Clock times inside the spring-forward gap, which do not exist locally (NaT).
    """

    utc: pd.DatetimeIndex
    timezone: str
    fall_back_resolved: np.ndarray
    fall_back_single: np.ndarray
    fall_back_unresolved: np.ndarray
    spring_gap: np.ndarray

    def counts(self) -> dict[str, int]:
        """How many stamps fell in each case, keyed like the attributes."""
        return {
            "fall_back_resolved": len(self.fall_back_resolved),
            "fall_back_single": len(self.fall_back_single),
            "fall_back_unresolved": len(self.fall_back_unresolved),
            "spring_gap": len(self.spring_gap),
        }

    def notes(self) -> list[str]:
        """One sentence per case that occurred, for the inspect report."""
        counts = self.counts()
        sentences = {
            "fall_back_resolved": "stamps in the repeated fall-back hour placed by order "
            "(first pass daylight time, second pass standard time)",
            "fall_back_single": "fall-back stamps appear only once and were taken as daylight "
            "time; the standard-time pass of that hour is missing",
            "fall_back_unresolved": "fall-back stamps appear more than twice and could not be "
            "placed; check for duplicated rows or several meters in one column",
            "spring_gap": "stamps fall in the spring-forward gap, a clock time that does not "
            f"exist in {self.timezone}; they were not shifted",
        }
        return [f"{counts[key]} {text}" for key, text in sentences.items() if counts[key]]


@dataclass(frozen=True)
class DetectedInterval:
    """The reading interval found in an index.

    Attributes
    ----------
    step : pandas.Timedelta
        The usual step (1, 5, 10, 15, 30, 60 minutes or 1 day) when the stamps follow it;
        otherwise the most common step rounded to whole minutes (seconds below a minute).
    irregular : bool
        The stamps do not follow one of the usual steps.
    on_step_share : float
        Share of consecutive steps that are whole multiples of ``step`` (gaps included).
    """

    step: pd.Timedelta
    irregular: bool
    on_step_share: float


def local_midnights_utc(days: pd.DatetimeIndex, timezone: str) -> pd.DatetimeIndex:
    """UTC instants of the local midnights starting ``days`` (naive dates); a midnight the
    clock skips is the first instant after it."""
    return days.tz_localize(timezone, nonexistent="shift_forward", ambiguous=True).tz_convert("UTC")


def day_lengths(days: pd.DatetimeIndex, timezone: str) -> pd.TimedeltaIndex:
    """Clock length of each local day: 24 hours, or 23/25 on daylight-saving changes."""
    starts = local_midnights_utc(days, timezone)
    ends = local_midnights_utc(days + pd.Timedelta(days=1), timezone)
    return pd.TimedeltaIndex(ends - starts)


def localize(stamps: pd.DatetimeIndex, timezone: str) -> Localized:
    """Place naive local clock times of one meter sequence on UTC.

    Parameters
    ----------
    stamps : pandas.DatetimeIndex
        One meter's stamps in the order they appear in the file. Long layouts (stamps repeated
        per meter) must be split per meter first, or the repeats look like fall-back hours.
        Tz-aware stamps are only converted to UTC.
    timezone : str
        IANA zone name of the site, e.g. ``"America/New_York"``; ``"UTC"`` works.

    Returns
    -------
    Localized
        The fall-back hour is placed by order of appearance (first daylight, then standard
        time); times in the spring-forward gap are reported and left NaT, never shifted.
    """
    require_zone(timezone)
    stamps = pd.DatetimeIndex(stamps)
    nowhere = np.array([], dtype=np.int64)
    if stamps.tz is not None:
        return Localized(stamps.tz_convert("UTC"), timezone, nowhere, nowhere, nowhere, nowhere)
    size = len(stamps)
    unit = stamps.unit
    as_daylight = stamps.tz_localize(timezone, ambiguous=np.ones(size, bool), nonexistent="NaT")
    as_standard = stamps.tz_localize(timezone, ambiguous=np.zeros(size, bool), nonexistent="NaT")
    first, later = as_daylight.asi8, as_standard.asi8
    earlier = np.minimum(first, later)  # the earlier instant is the first pass of the clock
    latest = np.maximum(first, later)
    known = ~stamps.isna()
    in_gap = known & as_daylight.isna()
    repeated = np.flatnonzero(known & ~in_gap & (first != later))
    utc = earlier.copy()  # NaT in the gap, where neither reading exists
    single = unresolved = resolved = nowhere
    if repeated.size:
        clock = pd.Series(stamps.asi8[repeated])
        by_clock = clock.groupby(clock.to_numpy())
        appearance = by_clock.cumcount().to_numpy()
        appearances = by_clock.transform("size").to_numpy()
        utc[repeated] = np.where(appearance == 0, earlier[repeated], latest[repeated])
        unresolved = repeated[appearance >= 2]
        utc[unresolved] = np.iinfo(np.int64).min
        single = repeated[appearances == 1]
        resolved = repeated[(appearances >= 2) & (appearance < 2)]
    index = pd.DatetimeIndex(utc.view(f"datetime64[{unit}]")).tz_localize("UTC")
    return Localized(index, timezone, resolved, single, unresolved, np.flatnonzero(in_gap))


def detect_interval(index: pd.DatetimeIndex) -> DetectedInterval:
    """Find the reading interval of one meter's stamps (pass the UTC index).

    The most common step between distinct stamps is taken; gaps (multiples of the step) and
    daylight-saving shifts of daily stamps (23 or 25 hours in UTC) still count as on step.
    When the most common step is not one of 1, 5, 10, 15, 30, 60 minutes or 1 day, or under
    90 % of the steps are whole multiples of it, the result is flagged irregular and the step
    is the most common one rounded to whole minutes. No error is raised for irregular data.

    Raises
    ------
    InputError
        With fewer than two distinct stamps, where no interval can be seen.
    """
    moments = np.sort(pd.DatetimeIndex(index).dropna().as_unit("ns").asi8)
    moments = moments[np.r_[True, np.diff(moments) != 0]]
    if moments.size < 2:
        raise InputError(
            "fewer than two distinct timestamps, so the reading interval cannot be seen",
            hint="Check that the timestamp column was chosen and holds the readings' times.",
        )
    steps = np.diff(moments)
    minute = pd.Timedelta(minutes=1).value
    grain = minute if np.median(steps) >= minute else pd.Timedelta(seconds=1).value
    rounded = np.maximum(np.rint(steps / grain).astype(np.int64), 1) * grain
    values, counts = np.unique(rounded, return_counts=True)
    mode = pd.Timedelta(int(values[np.argmax(counts)]), unit="ns")
    usual = mode in _USUAL_STEPS
    share = float(np.mean(_on_step(steps, mode)))
    return DetectedInterval(step=mode, irregular=not (usual and share >= 0.9), on_step_share=share)


def guess_stamp_convention(
    local_stamps: pd.DatetimeIndex, interval: pd.Timedelta, *, end_of_day_cells: int = 0
) -> tuple[Convention, str]:
    """Guess whether stamps mark interval starts or ends, with the reason why.

    Parameters
    ----------
    local_stamps : pandas.DatetimeIndex
        One meter's stamps on the local clock (naive, or tz-aware in the site zone).
    interval : pandas.Timedelta
        The reading interval.
    end_of_day_cells : int
        How many cells were written ``24:00`` (``len(ParsedStamps.end_of_day_rows)``).

    Returns
    -------
    (convention, reason)
        ``"end"`` when cells read 24:00, or when unbroken runs of readings go from one interval
        after midnight to midnight more often than from midnight to one interval before it;
        otherwise ``"start"``, with a reason saying whether that is evidence or the default.
    """
    if end_of_day_cells:
        return "end", (
            f"{end_of_day_cells} cells read 24:00, a time only an interval-end stamp can have"
        )
    interval = pd.Timedelta(interval)
    day = pd.Timedelta(days=1)
    if interval >= day:
        return "start", "daily stamps carry no time of day to tell by; interval starts assumed"
    stamps = pd.DatetimeIndex(local_stamps).dropna()
    if stamps.tz is not None:
        stamps = stamps.tz_localize(None)
    stamps = stamps.unique().sort_values()
    breaks = np.flatnonzero(np.diff(stamps.as_unit("ns").asi8) != interval.value)
    first = stamps[np.r_[0, breaks + 1]]
    last = stamps[np.r_[breaks, len(stamps) - 1]]
    first_time = first - first.normalize()
    last_time = last - last.normalize()
    end_ends = int(np.sum(first_time == interval) + np.sum(last_time == pd.Timedelta(0)))
    start_ends = int(np.sum(first_time == pd.Timedelta(0)) + np.sum(last_time == day - interval))
    after_midnight = _clock_text(interval)
    before_midnight = _clock_text(day - interval)
    if end_ends > start_ends:
        return "end", (
            f"runs of readings begin at {after_midnight} or end at 00:00 ({end_ends} times, "
            f"against {start_ends} for 00:00 to {before_midnight}), as interval-end stamps do"
        )
    if start_ends > end_ends:
        return "start", (
            f"runs of readings begin at 00:00 or end at {before_midnight} ({start_ends} times, "
            f"against {end_ends} the other way), as interval-start stamps do"
        )
    return "start", "nothing in the stamps tells starts from ends; interval starts assumed"


def to_interval_starts(
    utc_index: pd.DatetimeIndex, interval: pd.Timedelta, convention: Convention
) -> pd.DatetimeIndex:
    """Stamps as interval starts: unchanged for ``"start"``, one interval earlier for ``"end"``."""
    if convention == "start":
        return pd.DatetimeIndex(utc_index)
    if convention == "end":
        return pd.DatetimeIndex(utc_index) - pd.Timedelta(interval)
    raise ValueError(f"stamp convention must be 'start' or 'end', not {convention!r}")


def _clock_text(span: pd.Timedelta) -> str:
    minutes = int(span.total_seconds() // 60)
    return f"{minutes // 60:02d}:{minutes % 60:02d}"


def _on_step(steps: np.ndarray, step: pd.Timedelta) -> np.ndarray:
    """Which steps (ns) are whole multiples of ``step``; daily steps may be off by the DST hour."""
    if step < pd.Timedelta(days=1):
        return steps % step.value == 0
    rest = steps % step.value
    near = (rest <= _DST_SLACK) | (rest >= step.value - _DST_SLACK)
    return near & (steps >= step.value - _DST_SLACK)
