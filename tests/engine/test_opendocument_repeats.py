"""An OpenDocument sheet that repeats one row into millions of cells is refused before the
workbook reader expands it (each expanded cell costs the reader about 150 bytes; measured
with ``resource.getrusage``: 5 million cells of one number took 0.8 GB).
"""

from __future__ import annotations

import pytest

from engine.errors import InputError
from engine.reading import ReadOptions, read_file
from engine.reading.workbook import MAX_OPENDOCUMENT_CELLS
from tests.fuzz import workbooks as wb


def _ods(path, repeat_rows: int, columns: int):
    rows = [["Timestamp", *(f"M{i} (kWh)" for i in range(columns - 1))],
            ["2024-01-01 00:00", *([1.5] * (columns - 1))]]  # fmt: skip
    content = wb.ods_content(rows, repeat_rows=repeat_rows)
    path.write_bytes(wb.zip_parts(wb.ods_parts(content), stored=True))
    return path


def test_a_row_repeated_past_the_cell_limit_is_refused_before_reading(tmp_path):
    columns = 5
    path = _ods(tmp_path / "repeats.ods", MAX_OPENDOCUMENT_CELLS // columns, columns)
    assert path.stat().st_size < 10_000  # a few kilobytes on disk
    # the container check's message: the reader never saw the file
    with pytest.raises(InputError, match=r"repeats\.ods, sheet 'Data': .* 4,000,000 cells"):
        read_file(path, ReadOptions(timezone="UTC"), kind="meters")


def test_a_few_repeats_pass_the_check(tmp_path):
    """The same file repeating its row a thousand times gets past the container check to
    the meter reader (which then finds one timestamp a thousand times)."""
    path = _ods(tmp_path / "few.ods", 1_000, 5)
    with pytest.raises(InputError) as caught:
        read_file(path, ReadOptions(timezone="UTC"), kind="meters")
    assert "cells the tool reads" not in str(caught.value)
