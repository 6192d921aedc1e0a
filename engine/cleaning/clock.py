"""Clock problems in readings as they were read: duplicated stamps and daylight-saving artefacts.

This detector works on the raw readings frame (columns ``t`` and ``raw_value``) before the
import turns stamps into UTC. Naive ``t`` is read as the site's wall clock, where one hour a
year is skipped (clocks go forward) and one is repeated (clocks go back); tz-aware ``t`` can
only show plain duplicates.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from engine.cleaning.findings import Finding
from engine.cleaning.grid import infer_interval, runs
from engine.errors import InputError
from engine.words import counted

_HOUR = pd.Timedelta(hours=1)


def find_clock_problems(readings: pd.DataFrame, timezone: str, meter: str) -> list[Finding]:
    """Duplicated stamps and daylight-saving artefacts in a meter's readings as read.

    Parameters
    ----------
    readings : pd.DataFrame
        Columns ``t`` (stamps: naive site wall-clock times, or tz-aware instants) and
        ``raw_value`` (the numbers as read).
    timezone : str
        The site's IANA zone, which says when clocks change.
    meter : str
        The meter's name, for the findings.

    Returns
    -------
    list of Finding
        ``duplicate``/``conflict`` for stamps repeated beyond what the clock explains, and for
        wall-clock stamps ``dst_hole``, ``dst_nonexistent``, ``dst_repeat`` and ``dst_single``
        at each clock change the readings cover (hourly or finer readings only).
    """
    stamps, values = _read_frame(readings, meter)
    stats = (
        pd.DataFrame({"t": stamps, "v": values})
        .groupby("t", sort=True)["v"]
        .agg(["size", "nunique"])
    )
    unique = pd.DatetimeIndex(stats.index)
    copies = stats["size"].to_numpy()
    step = infer_interval(unique) if len(unique) > 1 else _HOUR
    wall_clock = unique.tz is None
    allowed = np.ones(len(unique), dtype=int)
    found: list[Finding] = []
    if wall_clock and step <= _HOUR:
        repeated_hour = unique.tz_localize(
            timezone, ambiguous="NaT", nonexistent="shift_forward"
        ).isna()
        allowed[repeated_hour] = 2
        found += _clock_changes(unique, copies, timezone, meter)
    instants = _instants(unique, timezone)
    excess = copies > allowed
    differ = stats["nunique"].to_numpy() > allowed
    for first, stop in zip(*runs(excess), strict=True):
        found.append(
            _duplicates(meter, unique, instants, copies, allowed, differ, first, stop, step)
        )
    return found


def _read_frame(readings: pd.DataFrame, meter: str) -> tuple[pd.DatetimeIndex, np.ndarray]:
    missing = [name for name in ("t", "raw_value") if name not in readings.columns]
    if missing:
        raise InputError(
            f"meter '{meter}': the readings frame lacks the column(s) {', '.join(missing)}.",
            hint="Pass the readings as read, with columns 't' and 'raw_value'.",
        )
    try:
        stamps = pd.DatetimeIndex(pd.to_datetime(readings["t"]))
    except (ValueError, TypeError) as error:
        raise InputError(
            f"meter '{meter}': some times in column 't' cannot be read ({error}).",
            column="t",
            hint="Check the time column's format at import.",
        ) from error
    if stamps.hasnans:
        row = int(np.flatnonzero(stamps.isna())[0])
        raise InputError(
            f"meter '{meter}': a reading has no time.", row=row, column="t", hint="Fill or drop it."
        )
    if stamps.tz is not None:
        stamps = stamps.tz_convert("UTC")
    values = pd.to_numeric(readings["raw_value"], errors="coerce").to_numpy(dtype="float64")
    return stamps, values


def _instants(stamps: pd.DatetimeIndex, timezone: str) -> pd.DatetimeIndex:
    """UTC instants of stamps; wall-clock ones read as summer time where the hour repeats."""
    if stamps.tz is not None:
        return stamps
    summer = np.ones(len(stamps), dtype=bool)
    local = stamps.tz_localize(timezone, ambiguous=summer, nonexistent="shift_forward")
    return local.tz_convert("UTC")


def _clock_changes(
    unique: pd.DatetimeIndex, copies: np.ndarray, timezone: str, meter: str
) -> list[Finding]:
    """One finding per clock change inside the readings' span."""
    hours = pd.date_range(unique[0].floor("h"), unique[-1].ceil("h") + _HOUR, freq="h")
    summer = np.ones(len(hours), dtype=bool)
    skipped = hours.tz_localize(timezone, ambiguous=summer, nonexistent="NaT").isna()
    doubled = hours.tz_localize(timezone, ambiguous="NaT", nonexistent="shift_forward").isna()
    found = []
    for first, stop in zip(*runs(skipped), strict=True):
        found.append(_skipped_hour(meter, unique, hours[first], hours[stop], timezone))
    for first, stop in zip(*runs(doubled), strict=True):
        inside = (unique >= hours[first]) & (unique < hours[stop])
        if inside.any():
            found.append(_doubled_hour(meter, copies[inside], hours[first], hours[stop], timezone))
    return found


def _skipped_hour(
    meter: str, unique: pd.DatetimeIndex, opens: pd.Timestamp, closes: pd.Timestamp, timezone: str
) -> Finding:
    at = _instants(pd.DatetimeIndex([opens]), timezone)[0]
    stamped = int(((unique >= opens) & (unique < closes)).sum())
    clock = f"{opens:%H:%M}–{closes:%H:%M} on {opens:%a %Y-%m-%d}"
    if stamped:
        kind, severity = "dst_nonexistent", "warning"
        explanation = (
            f"{counted(stamped, 'reading')} stamped {clock}, a clock time that did not exist in "
            f"{timezone} (clocks went forward). The logger probably keeps standard time all year: "
            "import this file with a fixed UTC offset instead of the site's zone."
        )
    else:
        kind, severity = "dst_hole", "info"
        explanation = (
            f"No readings {clock}: clocks went forward in {timezone}, so that hour did not "
            "happen. This is not a gap and needs no fix."
        )
    return Finding(
        meter=meter,
        kind=kind,
        start=at,
        end=at,
        severity=severity,
        explanation=explanation,
        fix=None,
        intervals=stamped,
        energy_kwh=float("nan"),
        expected_kwh=float("nan"),
        measures={"readings_in_skipped_hour": stamped},
    )


def _doubled_hour(
    meter: str, copies: np.ndarray, opens: pd.Timestamp, closes: pd.Timestamp, timezone: str
) -> Finding:
    start = _instants(pd.DatetimeIndex([opens]), timezone)[0]
    end = start + 2 * (closes - opens)
    clock = f"{opens:%H:%M}–{closes:%H:%M} on {opens:%a %Y-%m-%d}"
    single = int((copies == 1).sum())
    if single:
        kind, severity = "dst_single", "warning"
        explanation = (
            f"The clock hour {clock} happened twice in {timezone} (clocks went back), but "
            f"{counted(single, 'stamp')} in it appear only once. Either the logger keeps "
            "standard time all year (then import with a fixed UTC offset) or one of the two "
            "hours was lost (then the import shows a gap there)."
        )
    else:
        kind, severity = "dst_repeat", "info"
        explanation = (
            f"The clock hour {clock} appears twice, as it should: clocks went back in "
            f"{timezone}, so it holds two real hours. The import reads the first of each pair as "
            "summer time and the second as winter time; nothing needs fixing."
        )
    return Finding(
        meter=meter,
        kind=kind,
        start=start,
        end=end,
        severity=severity,
        explanation=explanation,
        fix=None,
        intervals=int(copies.sum()),
        energy_kwh=float("nan"),
        expected_kwh=float("nan"),
        measures={"stamps_seen_once": single},
    )


def _duplicates(
    meter: str,
    unique: pd.DatetimeIndex,
    instants: pd.DatetimeIndex,
    copies: np.ndarray,
    allowed: np.ndarray,
    differ: np.ndarray,
    first: int,
    stop: int,
    step: pd.Timedelta,
) -> Finding:
    extra = int((copies[first:stop] - allowed[first:stop]).sum())
    stamps = stop - first
    place = (
        f"at {unique[first]:%a %Y-%m-%d %H:%M}"
        if stamps == 1
        else f"from {unique[first]:%a %Y-%m-%d %H:%M} to {unique[stop - 1]:%a %Y-%m-%d %H:%M}"
    )
    where = f"{counted(stamps, 'time')} {place}"
    if differ[first:stop].any():
        kind, severity = "conflict", "warning"
        explanation = (
            f"{where} appear more than once with different values ({extra:,} extra rows). Decide "
            "which copy is right (for example, the newer export) and import only that one; the "
            "tool will not guess."
        )
    else:
        kind, severity = "duplicate", "info"
        explanation = (
            f"{where} appear more than once with the same values ({extra:,} extra rows), as when "
            "two exports overlap. The import keeps one copy of each; nothing is lost."
        )
    return Finding(
        meter=meter,
        kind=kind,
        start=instants[first],
        end=instants[stop - 1] + step,
        severity=severity,
        explanation=explanation,
        fix=None,
        intervals=extra,
        energy_kwh=float("nan"),
        expected_kwh=float("nan"),
        measures={"extra_rows": extra, "most_copies": int(copies[first:stop].max())},
    )
