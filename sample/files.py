"""Byte-stable writers: the same data always gives the same bytes (CSV, JSON and xlsx)."""

from __future__ import annotations

import io
import json
from collections.abc import Sequence
from datetime import datetime
from pathlib import Path
from zipfile import ZIP_DEFLATED, ZipFile, ZipInfo

import numpy as np
import pandas as pd
from openpyxl import Workbook
from openpyxl.xml.constants import ARC_CORE
from openpyxl.xml.functions import tostring


def fixed_decimals(values: np.ndarray | pd.Series, decimals: int) -> np.ndarray:
    """Numbers as text with exactly ``decimals`` decimals (blank for NaN)."""
    numbers = np.asarray(values, dtype=float)
    text = np.char.mod(f"%.{decimals}f", np.nan_to_num(numbers))
    return np.where(np.isnan(numbers), "", text)


def write_csv(path: Path, table: pd.DataFrame) -> None:
    """UTF-8 (no byte-order mark), LF line ends, no index, cells written as given."""
    path.write_text(table.to_csv(index=False, lineterminator="\n"), encoding="utf-8")


def write_json(path: Path, content: dict | list) -> None:
    """Indented UTF-8 JSON with a final newline; keys keep their insertion order."""
    path.write_text(json.dumps(content, indent=1, ensure_ascii=False) + "\n", encoding="utf-8")


def _stable_zip(packed: bytes, when: datetime, replacements: dict[str, bytes]) -> bytes:
    """Re-pack a zip with every entry stamped ``when`` and some entries' content replaced."""
    out = io.BytesIO()
    with ZipFile(io.BytesIO(packed)) as source, ZipFile(out, "w", ZIP_DEFLATED) as target:
        for entry in source.infolist():
            info = ZipInfo(entry.filename, date_time=when.timetuple()[:6])
            info.compress_type = ZIP_DEFLATED
            info.external_attr = 0o644 << 16
            content = replacements.get(entry.filename) or source.read(entry.filename)
            target.writestr(info, content)
    return out.getvalue()


def write_interval_workbook(
    path: Path,
    *,
    sheet: str,
    title_rows: Sequence[Sequence[object]],
    header: Sequence[str],
    stamps: Sequence[datetime],
    values: np.ndarray,
    author: str,
    saved_at: datetime,
) -> None:
    """One sheet: title rows, a header row, then one row per stamp (NaN cells left blank).

    ``saved_at`` (naive UTC) goes into the workbook's created/modified properties and into
    every zip entry, so the same inputs give the same bytes. openpyxl stamps the zip entries
    and the modified property with the current time on saving, so both are put back after.
    """
    book = Workbook(write_only=True)
    book.properties.creator = author
    book.properties.lastModifiedBy = author
    book.properties.created = saved_at
    book.properties.modified = saved_at
    sheet_out = book.create_sheet(sheet)
    sheet_out.column_dimensions["A"].width = 19
    for row in title_rows:
        sheet_out.append(list(row))
    sheet_out.append(list(header))
    cells = np.where(np.isnan(values), None, values.astype(object)).tolist()
    for stamp, row in zip(stamps, cells, strict=True):
        sheet_out.append([stamp, *row])
    packed = io.BytesIO()
    book.save(packed)
    book.properties.modified = saved_at
    properties = {ARC_CORE: tostring(book.properties.to_tree())}
    path.write_bytes(_stable_zip(packed.getvalue(), saved_at, properties))
