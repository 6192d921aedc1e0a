"""Cumulative register reads (a meter's odometer) turned into consumption per interval.

A register only counts up, but the numbers in a file do not: the dial wraps to zero when it
passes its capacity (a rollover), a replaced meter starts again from about zero, and a misread
can step backwards. :func:`registers_to_usage` takes the differences between consecutive reads
and explains every drop as one of these, reporting each as a :class:`RegisterEvent` so the
cleaning step can show and log it. No negative consumption is ever produced silently.

How a drop from ``before`` to ``after`` is read, with ``limit`` the largest usage that is
plausible for the time between the two reads (see :data:`PLAUSIBLE_USAGE_FACTOR`):

* **rollover** when wrapping explains it with plausible usage,
  ``capacity - before + after <= limit``, or when the dial plainly went round: ``before`` in
  its top tenth and ``after`` in its bottom tenth (see :data:`DIAL_EDGE`), however large that
  interval's use; ``capacity - before + after`` is the usage;
* **replacement** when the new reading is small (``after <= limit``) but the drop is large
  (``before - after > limit``): a new meter that started from zero, so the usage is ``after``,
  an estimate (the old meter's last unread consumption is unknown);
* **decrease** otherwise (a small backwards step, e.g. a misread): usage is NaN.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from engine.errors import InputError

#: A drop is explained by a rollover or a replacement only if the usage that explanation
#: implies is at most this many times the meter's typical usage for the time elapsed (the
#: median rate over the rising steps), and less than half the register's capacity. Campus
#: meters seldom use more than a few times their median rate (common practice: winter gas or
#: summer chilled water runs several times the yearly median); fifty leaves ample room for
#: seasons and busy hours while a misread of a few units, which implies nearly a whole turn of
#: the dial, is still told apart.
PLAUSIBLE_USAGE_FACTOR = 50.0
#: Share of the dial at each end: from the top tenth to the bottom tenth is a rollover.
DIAL_EDGE = 0.1


@dataclass(frozen=True)
class RegisterEvent:
    """One drop in the register reads and how it was read."""

    kind: str  # "rollover", "replacement" or "decrease"
    timestamp: pd.Timestamp  # the read after the drop, where the usage is stamped
    before: float
    after: float
    usage: float  # the consumption assigned to the interval; NaN for a decrease
    assumption: str

    def as_dict(self) -> dict:
        return {
            "kind": self.kind,
            "timestamp": self.timestamp.isoformat(),
            "before": self.before,
            "after": self.after,
            "usage": None if np.isnan(self.usage) else self.usage,
            "assumption": self.assumption,
        }


@dataclass
class RegisterResult:
    """Consumption per interval derived from register reads.

    Attributes
    ----------
    usage : pandas.Series
        float64 consumption in the interval ending at each read after the first present one,
        in the unit of the reads; NaN where the register stepped backwards.
    events : list of RegisterEvent
        Every drop, in time order.
    capacity : float
        The reading at which the register returns to zero (10 000 for a four-digit dial).
    capacity_inferred : bool
        True when ``capacity`` was inferred from the number of digits of the largest read.
    """

    usage: pd.Series
    events: list[RegisterEvent]
    capacity: float
    capacity_inferred: bool


def registers_to_usage(reads: pd.Series, *, capacity: float | None = None) -> RegisterResult:
    """Turn cumulative register reads into consumption per interval.

    Parameters
    ----------
    reads : pandas.Series
        Register reads indexed by a sorted, unique ``DatetimeIndex``. Missing reads (NaN) are
        skipped, so the usage at the next present read covers the whole time since the previous
        present one and no consumption is lost.
    capacity : float, optional
        The reading at which the register returns to zero, e.g. 10 000 for a dial that shows
        0000–9999 (not 9 999). Any positive number is accepted (some electronic registers wrap at
        powers of two). When omitted it is the next power of ten above the largest read, i.e.
        inferred from the number of whole digits.

    Returns
    -------
    RegisterResult
        The usage, the events for every drop and the capacity used.

    Raises
    ------
    InputError
        For reads out of time order or at the same time, negative or infinite reads, or a read
        at or above the given capacity.

    Examples
    --------
    >>> stamps = pd.date_range("2031-01-01", periods=4, freq="D")
    >>> result = registers_to_usage(pd.Series([9_940.0, 9_985.0, 25.0, 70.0], index=stamps))
    >>> result.usage.tolist(), result.events[0].kind
    ([45.0, 40.0, 45.0], 'rollover')
    """
    _check_index(reads)
    values = reads.to_numpy(dtype="float64", na_value=np.nan)
    present = ~np.isnan(values)
    values = values[present]
    times = reads.index[present]
    _check_values(values, times)
    capacity, inferred = _capacity(values, capacity, times)

    usage = np.diff(values)
    drops = np.flatnonzero(usage < 0)
    events: list[RegisterEvent] = []
    if drops.size:
        elapsed = np.diff(times.asi8).astype("float64")
        limit = _plausible_usage(usage, elapsed, drops, capacity)
        before, after = values[drops], values[drops + 1]
        wrapped = capacity - before + after
        # a read in the dial's top tenth followed by one in its bottom tenth went round the
        # dial, even when that interval's use was unusually large for the meter
        across_zero = (before >= (1 - DIAL_EDGE) * capacity) & (after <= DIAL_EDGE * capacity)
        rollover = (wrapped <= limit) | across_zero
        replacement = ~rollover & (after <= limit) & (before - after > limit)
        usage[drops] = np.where(rollover, wrapped, np.where(replacement, after, np.nan))
        kinds = np.where(rollover, "rollover", np.where(replacement, "replacement", "decrease"))
        events = [
            _event(kind, times[i + 1], b, a, u, capacity)
            for kind, i, b, a, u in zip(kinds, drops, before, after, usage[drops], strict=True)
        ]
    series = pd.Series(usage, index=times[1:], name=reads.name, dtype="float64")
    return RegisterResult(series, events, capacity, inferred)


def _check_index(reads: pd.Series) -> None:
    index = reads.index
    if not isinstance(index, pd.DatetimeIndex):
        raise TypeError("register reads need a DatetimeIndex of read times")
    if index.is_monotonic_increasing and index.is_unique:
        return
    position = int(np.flatnonzero(np.diff(index.asi8) <= 0)[0]) + 1
    problem = "is repeated" if index[position] == index[position - 1] else "is out of time order"
    raise InputError(
        f"the register read at {index[position]} {problem}",
        hint="Keep one read per time, sorted from oldest to newest, and check the date format.",
    )


def _check_values(values: np.ndarray, times: pd.DatetimeIndex) -> None:
    bad = np.flatnonzero(~np.isfinite(values) | (values < 0))
    if bad.size:
        first = bad[0]
        raise InputError(
            f"the register read at {times[first]} is {values[first]:g}; "
            "a register cannot show a negative or infinite number",
            hint="Correct or delete that read.",
        )


def _capacity(
    values: np.ndarray, capacity: float | None, times: pd.DatetimeIndex
) -> tuple[float, bool]:
    """The capacity to use and whether it was inferred."""
    largest = float(values.max()) if values.size else 0.0
    if capacity is None:
        digits = int(np.floor(np.log10(largest))) + 1 if largest >= 1 else 1
        return float(10**digits), True
    if not (np.isfinite(capacity) and capacity > 0):
        raise InputError(
            f"the register capacity {capacity!r} is not a positive number",
            hint="Give the reading at which the register returns to zero, e.g. 10000.",
        )
    if largest >= capacity:
        at = times[int(np.argmax(values))]
        raise InputError(
            f"the register read at {at} is {largest:g}, at or above the capacity {capacity:g}",
            hint="Give the reading at which the register returns to zero (10000 for a dial "
            "showing 0000-9999), or leave the capacity out to infer it from the digits.",
        )
    return float(capacity), False


def _plausible_usage(
    usage: np.ndarray, elapsed: np.ndarray, drops: np.ndarray, capacity: float
) -> np.ndarray:
    """The largest usage a drop's explanation may imply, per drop."""
    half_turn = np.full(drops.size, capacity / 2.0)
    rising = usage > 0
    if not rising.any():
        return half_turn
    typical_rate = float(np.median(usage[rising] / elapsed[rising]))
    return np.minimum(half_turn, PLAUSIBLE_USAGE_FACTOR * typical_rate * elapsed[drops])


def _event(
    kind: str, timestamp: pd.Timestamp, before: float, after: float, usage: float, capacity: float
) -> RegisterEvent:
    if kind == "rollover":
        assumption = (
            f"the register passed {capacity:g} and restarted at zero: "
            f"usage = {capacity:g} - {before:g} + {after:g}"
        )
    elif kind == "replacement":
        assumption = (
            "a new meter started from zero: usage is its first reading, an estimate that "
            "misses what the old meter counted after its last read"
        )
    else:
        assumption = "the register stepped backwards (a misread?): usage left blank for cleaning"
    return RegisterEvent(
        kind=str(kind),
        timestamp=timestamp,
        before=float(before),
        after=float(after),
        usage=float(usage),
        assumption=assumption,
    )
