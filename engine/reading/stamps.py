"""Turn the stamp column(s) of a table into UTC instants, reporting what could not be read."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from engine.errors import InputError
from engine.meters import Finding
from engine.reading import stamp_cells
from engine.reading.columns import ColumnFacts, is_clock_column, is_stamp_column
from engine.reading.table import Table

#: Stamps outside these years are typing errors (a reading in 3023 or 1700). They are left out
#: like unreadable stamps, which also keeps every span within what nanosecond times can hold.
EARLIEST, LATEST = pd.Timestamp("1900-01-01"), pd.Timestamp("2100-01-01")
WINDOW_NOTE = "or one outside 1900–2099"


@dataclass
class StampColumns:
    """Which column(s) hold the stamps: one date-time column, or a date plus a clock column."""

    date: int
    clock: int | None = None

    def positions(self) -> tuple[int, ...]:
        return (self.date,) if self.clock is None else (self.date, self.clock)


@dataclass
class ParsedTable:
    """The stamps of every data row (NaT where unreadable) and how they were read."""

    stamps: pd.Series  # indexed like table.data; naive local or tz-aware
    has_offsets: bool
    format_note: str
    dayfirst_used: bool | None
    end_of_day: pd.Series  # True where the cell read 24:00 (evidence of interval-end stamps)
    findings: list[Finding] = field(default_factory=list)


def find_stamp_columns(table: Table, facts: list[ColumnFacts]) -> StampColumns:
    """The first stamp column, paired with a clock column right after it when there is one."""
    for f in facts:
        if is_stamp_column(f, table.data[f.position]):
            nxt = f.position + 1
            if nxt < len(facts) and is_clock_column(facts[nxt]):
                return StampColumns(f.position, nxt)
            return StampColumns(f.position)
    raise InputError(
        "no column of dates or date-times was found.",
        hint="The readings need a timestamp column (or a date and a time column).",
        sheet=table.sheet,
    )


def parse_table_stamps(table: Table, columns: StampColumns, dayfirst: bool | None) -> ParsedTable:
    """Parse the stamp cells of every row; unreadable rows are reported, not dropped silently."""
    data = table.data
    header = table.headers[columns.date]
    second = None
    if columns.clock is not None:
        second = data[columns.clock].rename(table.headers[columns.clock])
    try:
        parsed = stamp_cells.parse_stamps(
            data[columns.date].rename(header), dayfirst=dayfirst, second=second
        )
    except InputError as error:
        raise InputError(
            error.problem,
            hint=error.hint,
            sheet=table.sheet,
            row=_row_number(data, error.place.row),
            column=header,
        ) from error
    stamps, bad = within_window(parsed.values, parsed.bad_rows)
    values = pd.Series(stamps, index=data.index)
    end_of_day = pd.Series(False, index=data.index)
    end_of_day.iloc[np.asarray(parsed.end_of_day_rows, dtype=int)] = True
    findings = []
    if len(bad):
        rows = data.index[bad]
        empty = data[columns.date].iloc[bad].isna().to_numpy()
        findings.append(
            Finding(
                kind="unparsed_rows",
                message=(
                    f"{len(bad)} row(s) have no readable timestamp ({WINDOW_NOTE}) in column "
                    f"'{header}' ({int(empty.sum())} empty) and were left out: rows "
                    f"{_row_list(rows)}."
                ),
                count=len(bad),
                rows=tuple(int(r) for r in rows[:50]),
            )
        )
    return ParsedTable(
        stamps=values,
        has_offsets=bool(parsed.has_offsets),
        format_note=parsed.format_note,
        dayfirst_used=parsed.dayfirst_used,
        end_of_day=end_of_day,
        findings=findings,
    )


def within_window(
    stamps: pd.DatetimeIndex, bad_rows: np.ndarray
) -> tuple[pd.DatetimeIndex, np.ndarray]:
    """The stamps with those outside :data:`EARLIEST`..:data:`LATEST` made NaT, and the
    positions of every unusable stamp (``bad_rows`` and those)."""
    clock = stamps.tz_localize(None) if stamps.tz is not None else stamps
    outside = np.asarray((clock < EARLIEST) | (clock >= LATEST))
    bad = np.union1d(np.asarray(bad_rows, dtype=int), np.flatnonzero(outside)).astype(int)
    return stamps.where(~outside), bad


def _row_number(data: pd.DataFrame, position: int | None) -> int | None:
    """Map a position inside the data block to the file's row number."""
    if position is None or not 0 <= position < len(data):
        return None
    return int(data.index[position])


def _row_list(rows: pd.Index, limit: int = 10) -> str:
    shown = ", ".join(str(int(r)) for r in rows[:limit])
    return shown + (f" and {len(rows) - limit} more" if len(rows) > limit else "")
