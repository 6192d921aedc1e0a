"""Choose the table to read from a file: the sheet that holds stamped readings."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from engine.errors import InputError
from engine.meters import Finding
from engine.reading.columns import ColumnFacts, describe_columns, is_stamp_column
from engine.reading.grid import Grid, read_grids
from engine.reading.table import Table, locate_table

#: How many of a table's headers a message names.
SHOWN_HEADERS = 6


@dataclass
class ChosenTable:
    table: Table
    facts: list[ColumnFacts]
    findings: list[Finding]


def choose_table(path: str | Path, sheet: str | None = None) -> ChosenTable:
    """The table with readings in ``path``; the named sheet, or the one with the most rows."""
    grids = read_grids(path)
    if sheet is not None:
        names = [g.sheet for g in grids]
        if sheet not in names:
            raise InputError(
                f"there is no sheet '{sheet}'.",
                hint=f"The sheets are: {', '.join(map(str, names))}.",
                file=path,
            )
        grids = [g for g in grids if g.sheet == sheet]
    candidates, undated = [], []
    for grid in grids:
        table = locate_table(grid)
        if table is None:
            continue
        facts = describe_columns(table)
        if any(is_stamp_column(f, table.data[f.position]) for f in facts):
            candidates.append(ChosenTable(table, facts, []))
        else:
            undated.append(table)
    if not candidates:
        raise InputError(
            _nothing_dated(grids, undated, sheet),
            hint="The file needs a column of dates or date-times and at least one column of "
            "numbers below a header row.",
            file=path,
        )
    candidates.sort(key=lambda c: len(c.table.data), reverse=True)
    chosen = candidates[0]
    others = [c.table.sheet for c in candidates[1:]]
    if others:
        chosen.findings.append(
            Finding(
                kind="other_sheets",
                message=(
                    f"read sheet '{chosen.table.sheet}' (most rows); sheets "
                    f"{', '.join(repr(o) for o in others)} also hold readings — choose one with "
                    "--sheet to read it instead."
                ),
                count=len(others),
            )
        )
    return chosen


def _nothing_dated(grids: list[Grid], undated: list[Table], sheet: str | None) -> str:
    """Why no readings were found, saying what the file holds instead: a table without
    dates (named by its first headers), a header row with nothing below it, or nothing."""
    if all(grid.sheet is None for grid in grids):
        where = "the file"
    elif sheet is not None or len(grids) == 1:
        where = f"sheet '{sheet or grids[0].sheet}'"
    else:
        where = "any sheet"
    if undated:
        columns = ", ".join(undated[0].headers[:SHOWN_HEADERS])
        return f"no column of dates or times was found in {where}; it holds a table of {columns}."
    for grid in grids:
        filled = grid.cells.dropna(how="all")
        if len(filled) == 1:
            names = ", ".join(str(v) for v in filled.iloc[0].dropna().tolist()[:SHOWN_HEADERS])
            return f"{where} holds a header row ({names}) but no readings below it."
    return f"no table of dated readings was found in {where}."


def read_table_with(read, path: str | Path, options, chosen: ChosenTable | None = None):
    """Run ``read(path, options, chosen)`` on the file's table, naming the file in any error."""
    path = Path(path)
    try:
        return read(path, options, chosen or choose_table(path, options.sheet))
    except InputError as error:
        raise error.at_file(path) from None
