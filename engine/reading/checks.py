"""What the importer reports about one meter's readings: the problems it noticed on the way.

Each check returns a list of :class:`~engine.meters.Finding`; none changes the readings.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from engine.meters import Finding, MeterSeries
from engine.timestamps import DetectedInterval
from engine.words import counted

ROWS_SHOWN = 10


def non_numeric(cells: pd.Series, numbers: np.ndarray, meter: str, column: str) -> list[Finding]:
    """Cells that hold something other than a usable number (empty cells are counted apart)."""
    findings = []
    bad = np.isnan(numbers) & cells.notna().to_numpy()
    if bad.any():
        rows = cells.index[bad]
        examples = ", ".join(repr(str(v))[:20] for v in cells[bad].unique()[:3])
        findings.append(
            Finding(
                kind="non_numeric",
                meter=meter,
                count=int(bad.sum()),
                rows=_rows(rows),
                message=(
                    f"{counted(int(bad.sum()), 'cell')} in column '{column}' "
                    f"{_agree(int(bad.sum()), 'is', 'are')} not numbers, or too "
                    f"large to be readings (e.g. {examples}), and were left out: rows "
                    f"{_row_text(rows)}."
                ),
            )
        )
    empty = cells.isna().to_numpy()
    if empty.any():
        rows = cells.index[empty]
        findings.append(
            Finding(
                kind="empty_values",
                meter=meter,
                count=int(empty.sum()),
                rows=_rows(rows),
                message=f"{counted(int(empty.sum()), 'empty cell')} in column '{column}': rows "
                f"{_row_text(rows)}.",
            )
        )
    return findings


def order_and_duplicates(raw: pd.DataFrame, meter: str) -> list[Finding]:
    """Stamps that go backwards, and stamps given twice (same or different values)."""
    findings = []
    t = raw["t"]
    back = np.flatnonzero(np.diff(pd.DatetimeIndex(t).asi8) < 0) + 1
    if len(back):
        rows = raw["source_row"].iloc[back]
        findings.append(
            Finding(
                kind="backwards",
                meter=meter,
                count=len(back),
                rows=_rows(rows),
                message=(
                    f"timestamps go backwards {counted(len(back), 'time')}, first at row "
                    f"{int(rows.iloc[0])}; the readings were put in time order."
                ),
            )
        )
    repeated = raw[t.duplicated(keep=False)]
    if len(repeated):
        spread = repeated.groupby("t")["raw_value"].agg(lambda v: v.nunique(dropna=False))
        conflicts = spread[spread > 1].index
        same = len(spread) - len(conflicts)
        if same:
            rows = repeated.loc[~repeated["t"].isin(conflicts), "source_row"]
            findings.append(
                Finding(
                    kind="duplicate_same",
                    meter=meter,
                    count=int(same),
                    rows=_rows(rows),
                    message=f"{counted(same, 'timestamp')} {_agree(same, 'appears', 'appear')} "
                    f"twice with the same value; one copy was kept: rows {_row_text(rows)}.",
                )
            )
        if len(conflicts):
            rows = repeated.loc[repeated["t"].isin(conflicts), "source_row"]
            findings.append(
                Finding(
                    kind="duplicate_conflict",
                    meter=meter,
                    count=len(conflicts),
                    rows=_rows(rows),
                    message=(
                        f"{counted(len(conflicts), 'timestamp')} "
                        f"{_agree(len(conflicts), 'appears', 'appear')} more than once with "
                        f"different values (rows {_row_text(rows)}); the first was kept and the "
                        "others are "
                        "kept in the raw readings for review."
                    ),
                )
            )
    return findings


def register_events(events: list, meter: str) -> list[Finding]:
    """Register rollovers, replacements and backward steps found while differencing."""
    findings = []
    for kind in ("rollover", "replacement", "decrease"):
        chosen = [e for e in events if e.kind == kind]
        if chosen:
            detail = "; ".join(
                f"{e.timestamp:%Y-%m-%d %H:%M} {e.before:g} → {e.after:g}: {e.assumption}"
                for e in chosen[:5]
            )
            findings.append(
                Finding(kind=kind, meter=meter, count=len(chosen), message=f"{detail}.")
            )
    return findings


def irregular(detected: DetectedInterval, meter: str) -> list[Finding]:
    """Stamps that follow no usual reading interval."""
    if not detected.irregular:
        return []
    return [
        Finding(
            kind="irregular_interval",
            meter=meter,
            message=(
                f"the stamps follow no usual interval: the most common step is "
                f"{detected.step}, and {detected.on_step_share:.0%} of steps are multiples of it."
            ),
        )
    ]


def negatives(meter: MeterSeries) -> list[Finding]:
    """Intervals with negative energy (a meter should not run backwards)."""
    bad = meter.values < 0
    if not bad.any():
        return []
    first = meter.values.index[bad.to_numpy()][0].tz_convert(meter.timezone)
    return [
        Finding(
            kind="negative",
            meter=meter.name,
            count=int(bad.sum()),
            message=f"{counted(int(bad.sum()), 'interval')} "
            f"{_agree(int(bad.sum()), 'has', 'have')} negative energy, first at "
            f"{first:%Y-%m-%d %H:%M}.",
        )
    ]


def gaps(meter: MeterSeries) -> list[Finding]:
    """Missing intervals between the first and the last reading, and the longest gap."""
    index = meter.values.index
    expected = coverage_count(meter)
    missing = expected - len(index)
    if missing <= 0:
        return []
    steps = np.diff(index.as_unit("ns").asi8)
    longest = pd.Timedelta(int(steps.max()), unit="ns") - meter.interval
    at = index[int(steps.argmax())].tz_convert(meter.timezone)
    return [
        Finding(
            kind="gaps",
            meter=meter.name,
            count=int(missing),
            message=(
                f"{counted(int(missing), 'interval')} missing between the first and last "
                "reading; the "
                f"longest gap is {_duration(longest)} after {at:%Y-%m-%d %H:%M}."
            ),
        )
    ]


def coverage_count(meter: MeterSeries) -> int:
    """How many intervals the span from first to last reading holds."""
    index = meter.values.index
    if len(index) == 0:
        return 0
    return int((index[-1] - index[0]) / meter.interval) + 1


def _duration(delta: pd.Timedelta) -> str:
    hours = delta / pd.Timedelta(hours=1)
    return f"{hours / 24:.1f} days" if hours >= 48 else f"{hours:g} h"


def _rows(rows) -> tuple[int, ...]:
    return tuple(int(r) for r in list(rows)[:50])


def _row_text(rows) -> str:
    rows = list(rows)
    shown = ", ".join(str(int(r)) for r in rows[:ROWS_SHOWN])
    return shown + (f" and {len(rows) - ROWS_SHOWN} more" if len(rows) > ROWS_SHOWN else "")


def _agree(count: int, one: str, many: str) -> str:
    """The verb that agrees with ``count`` things: ``one`` for one, else ``many``."""
    return one if count == 1 else many
