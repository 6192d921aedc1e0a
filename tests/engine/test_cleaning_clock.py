"""Clock problems in readings as read: duplicates and the daylight-saving hour skipped or repeated.

Clock changes checked against EU Directive 2000/84/EC, Arts. 2–3 (from memory): summer time
starts and ends at 01:00 UTC on the last Sunday of March and of October, so in Europe/Berlin
the wall clock skips 02:00–03:00 on 2024-03-31 and repeats it on 2024-10-27.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from engine.cleaning import find_clock_problems
from engine.errors import InputError

ZONE = "Europe/Berlin"
METER = "Heronsgate Lab chilled water"


def wall_clock_frame(start: str, end: str) -> pd.DataFrame:
    """Readings as a logger that follows the site's clock writes them (naive local stamps)."""
    instants = pd.date_range(start, end, freq="15min", tz="UTC", inclusive="left")
    stamps = instants.tz_convert(ZONE).tz_localize(None)
    return pd.DataFrame({"t": stamps, "raw_value": np.arange(stamps.size, dtype=float)})


def standard_time_frame(start: str, end: str) -> pd.DataFrame:
    """Readings from a logger that keeps UTC+1 all year."""
    instants = pd.date_range(start, end, freq="15min", tz="UTC", inclusive="left")
    stamps = instants.tz_convert("Etc/GMT-1").tz_localize(None)  # POSIX sign: UTC+1
    return pd.DataFrame({"t": stamps, "raw_value": np.ones(stamps.size)})


def kinds(findings):
    return [(f.kind, f.severity) for f in findings]


def test_a_logger_on_the_site_clock_shows_the_expected_hole_and_repeat():
    spring = find_clock_problems(wall_clock_frame("2024-03-30", "2024-04-01"), ZONE, METER)
    assert kinds(spring) == [("dst_hole", "info")]
    assert spring[0].start == pd.Timestamp("2024-03-31 01:00", tz="UTC")
    assert "02:00–03:00 on Sun 2024-03-31" in spring[0].explanation
    assert "not a gap" in spring[0].explanation

    autumn = find_clock_problems(wall_clock_frame("2024-10-26", "2024-10-28"), ZONE, METER)
    assert kinds(autumn) == [("dst_repeat", "info")]
    assert (autumn[0].start, autumn[0].end) == (
        pd.Timestamp("2024-10-27 00:00", tz="UTC"),
        pd.Timestamp("2024-10-27 02:00", tz="UTC"),
    )
    assert autumn[0].intervals == 8


def test_a_logger_on_standard_time_is_told_apart():
    spring = find_clock_problems(standard_time_frame("2024-03-30", "2024-04-01"), ZONE, METER)
    assert kinds(spring) == [("dst_nonexistent", "warning")]
    assert spring[0].intervals == 4
    assert "fixed UTC offset" in spring[0].explanation
    autumn = find_clock_problems(standard_time_frame("2024-10-26", "2024-10-28"), ZONE, METER)
    assert kinds(autumn) == [("dst_single", "warning")]
    assert autumn[0].measures["stamps_seen_once"] == 4


def test_overlapping_exports_are_duplicates_and_disagreeing_copies_conflicts():
    frame = wall_clock_frame("2024-06-03", "2024-06-05")
    overlap = frame.iloc[10:14]
    edited = frame.iloc[40:41].assign(raw_value=-1.0)
    readings = pd.concat([frame, overlap, edited], ignore_index=True)
    findings = find_clock_problems(readings, ZONE, METER)
    assert kinds(findings) == [("duplicate", "info"), ("conflict", "warning")]
    duplicate, conflict = findings
    # Row 10 is stamped 04:30 on the Berlin clock, summer time (UTC+2): 02:30 UTC.
    assert duplicate.start == pd.Timestamp("2024-06-03 02:30", tz="UTC")
    assert duplicate.end == pd.Timestamp("2024-06-03 03:30", tz="UTC")
    assert "from Mon 2024-06-03 04:30 to Mon 2024-06-03 05:15" in duplicate.explanation
    assert duplicate.intervals == 4
    assert "nothing is lost" in duplicate.explanation
    assert conflict.intervals == 1 and "will not guess" in conflict.explanation


def test_utc_stamps_only_show_plain_duplicates():
    instants = pd.date_range("2024-03-30", "2024-04-01", freq="h", tz="UTC", inclusive="left")
    readings = pd.DataFrame({"t": instants.append(instants[:2]), "raw_value": 1.0})
    assert kinds(find_clock_problems(readings, ZONE, METER)) == [("duplicate", "info")]


def test_a_repeated_hour_with_a_third_copy_is_a_duplicate():
    frame = wall_clock_frame("2024-10-26", "2024-10-28")
    third = frame[frame["t"] == pd.Timestamp("2024-10-27 02:15")].iloc[:1]
    findings = find_clock_problems(pd.concat([frame, third]), ZONE, METER)
    assert kinds(findings) == [("dst_repeat", "info"), ("duplicate", "info")]


def test_daily_readings_raise_no_clock_findings():
    days = pd.date_range("2024-03-01", "2024-11-30", freq="D")
    readings = pd.DataFrame({"t": days, "raw_value": 5.0})
    assert find_clock_problems(readings, ZONE, METER) == []


def test_a_frame_without_the_columns_is_refused():
    with pytest.raises(InputError, match="lacks the column"):
        find_clock_problems(pd.DataFrame({"time": []}), ZONE, METER)
    with pytest.raises(InputError, match="has no time"):
        find_clock_problems(
            pd.DataFrame({"t": [None, "2024-01-01"], "raw_value": 1.0}), ZONE, METER
        )
