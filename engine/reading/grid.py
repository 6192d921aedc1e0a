"""Read any supported file into plain grids of cells, one per sheet.

A *grid* is a ``pandas.DataFrame`` of raw cells with a default integer index and integer
column labels: nothing is interpreted yet except that csv text is split into cells. The header
search, the column roles and the parsing happen later (``engine.reading.layout``).
"""

from __future__ import annotations

import io
import re
import zipfile
from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd

from engine.errors import InputError
from engine.reading.workbook import (
    EXCEL_COLUMNS,
    ZIP_ERRORS,
    check_zip_workbook,
    first_line,
    read_sheets,
)

SPREADSHEET_SUFFIXES = (".xlsx", ".xlsm", ".xls", ".xlsb", ".ods")
TEXT_SUFFIXES = (".csv", ".tsv", ".txt", ".dat")
OLE_MAGIC = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"
ZIP_MAGIC = b"PK\x03\x04"
DELIMITERS = (",", ";", "\t", "|")
HEAD_ROWS = 200
BLANK_HEADER = "column "  # name of a column whose header cell is empty
MAX_COLUMNS = EXCEL_COLUMNS
MAX_HEADED_ROWS = 10_000  # a campus calendar holds a few periods a year
_QUOTED = re.compile(r'"[^"]*"')
_LINE_END = re.compile(r"\r\n|\r|\n")


@dataclass
class Grid:
    """The raw cells of one sheet (or of a text file).

    ``cells`` holds every row of a workbook sheet, but only the first rows of a text file
    (enough to find the header); :meth:`block` returns the data rows from a given row on, which
    a text file reads in one fast, typed pass.
    """

    sheet: str | None
    cells: pd.DataFrame
    decimal_comma: bool = False
    delimiter: str | None = None
    text: str | None = field(default=None, repr=False)

    def block(self, first: int, width: int) -> pd.DataFrame:
        """Rows from position ``first`` on, ``width`` columns wide, indexed by position."""
        if self.text is None:
            return self.cells.iloc[first:, :width].copy()
        return _read_block(self.text, self.delimiter or ",", first, width, self.decimal_comma)


def read_grids(path: str | Path) -> list[Grid]:
    """Read every sheet of a workbook, or the single table of a text file."""
    path = Path(path)
    if not path.exists():
        raise InputError("file not found.", hint="Check the path.", file=path)
    if path.stat().st_size == 0:
        raise InputError("the file is empty.", hint="Export the readings again.", file=path)
    head = path.read_bytes()[:8]
    if head.startswith(ZIP_MAGIC) or head.startswith(OLE_MAGIC):
        return _read_workbook(path, head)
    if path.suffix.lower() in SPREADSHEET_SUFFIXES:
        raise InputError(
            "this is not a spreadsheet the tool can open (the file content is not a workbook).",
            hint="Open it in a spreadsheet program and save it as .xlsx or .csv.",
            file=path,
        )
    return [_read_text(path)]


def _read_workbook(path: Path, head: bytes) -> list[Grid]:
    if head.startswith(OLE_MAGIC) and _is_encrypted_ole(path):
        raise InputError(
            "the workbook is password-protected.",
            hint="Open it in a spreadsheet program, remove the password and save it again.",
            file=path,
        )
    stream_oversized = False
    if head.startswith(ZIP_MAGIC):
        if not _zip_is_workbook(path):
            raise InputError(
                "this zip archive is not a workbook.",
                hint="Unpack it and import the spreadsheet inside.",
                file=path,
            )
        stream_oversized = check_zip_workbook(path).oversized_sheet
    return [
        Grid(sheet=name, cells=_blank_to_none(cells))
        for name, cells in read_sheets(path, stream_oversized, legacy=head.startswith(OLE_MAGIC))
    ]


def _is_encrypted_ole(path: Path) -> bool:
    """An encrypted OOXML workbook is an OLE container holding an 'EncryptionInfo' stream."""
    marker = "EncryptionInfo".encode("utf-16-le")
    return marker in path.read_bytes()


def _zip_is_workbook(path: Path) -> bool:
    try:
        with zipfile.ZipFile(path) as archive:
            names = set(archive.namelist())
    except ZIP_ERRORS:
        return False
    return "[Content_Types].xml" in names or "mimetype" in names


def _read_text(path: Path) -> Grid:
    raw = path.read_bytes()
    if b"\x00" in raw[:4096] and not raw.startswith((b"\xff\xfe", b"\xfe\xff")):
        raise InputError(
            "this is not a text table or a spreadsheet (it contains binary data).",
            hint="Export the readings as .csv or .xlsx.",
            file=path,
        )
    text = _decode(raw)
    head_text = "\n".join(text.splitlines()[:HEAD_ROWS])
    delimiter = _sniff_delimiter(head_text)
    try:
        head = _text_cells(head_text, delimiter)
    except InputError as error:
        raise error.at_file(path) from None
    return Grid(
        sheet=None,
        cells=head,
        decimal_comma=_uses_decimal_comma(head, delimiter),
        delimiter=delimiter,
        text=text,
    )


def _text_cells(text: str, delimiter: str) -> pd.DataFrame:
    """Every row of ``text`` as text cells (None where blank), as wide as its widest row."""
    try:
        cells = pd.read_csv(
            io.StringIO(text),
            sep=delimiter,
            header=None,
            dtype=str,
            keep_default_na=False,
            skip_blank_lines=False,
            names=range(_widest_row(text, delimiter)),
        )
    except (pd.errors.ParserError, ValueError) as error:
        raise InputError(
            f"the text table cannot be split into columns ({first_line(error)}).",
            hint="Check that every row uses the same delimiter.",
        ) from error
    return _blank_to_none(cells.astype(object))


def read_headed_table(path: str | Path) -> tuple[pd.DataFrame, str | None]:
    """The first sheet (or the text table) under its first row's headers, and the sheet name.

    For small tables read whole, such as a campus calendar (at most :data:`MAX_HEADED_ROWS`
    rows): every row is kept (blank ones too), text stays text, short rows are padded and
    cells beyond the header get a column named by position. Headers are made unique.
    """
    path = Path(path)
    grid = read_grids(path)[0]
    try:
        cells = grid.cells if grid.text is None else _text_cells(grid.text, grid.delimiter)
    except InputError as error:
        raise error.at_file(path) from None
    if cells.empty:
        return pd.DataFrame(), grid.sheet
    if len(cells) > MAX_HEADED_ROWS + 1:
        raise InputError(
            f"the table has {len(cells) - 1:,} rows; a file of this kind has at most "
            f"{MAX_HEADED_ROWS:,}.",
            hint="Check that this is the right file.",
            file=path,
            sheet=grid.sheet,
        )
    table = cells.iloc[1:].reset_index(drop=True)
    table.columns = _unique_headers(cells.iloc[0].tolist())
    return table, grid.sheet


def _unique_headers(cells: list[object]) -> list[str]:
    headers: list[str] = []
    seen: set[str] = set()
    for position, cell in enumerate(cells):
        text = "" if cell is None else " ".join(str(cell).split())
        text = text or f"{BLANK_HEADER}{position + 1}"
        text = f"{text} ({position + 1})" if text in seen else text
        headers.append(text)
        seen.add(text)
    return headers


def _read_block(text: str, delimiter: str, first: int, width: int, decimal_comma: bool):
    """The data rows of a text table in one typed pass of pandas' C parser.

    Columns of plain numbers arrive as float64; anything else stays text for the caller to
    parse and report. The index is the row's position in the file (0-based). The number of
    columns comes from the first data row; a wider row later costs one exact re-read.
    """
    options = dict(
        sep=delimiter,
        header=None,
        skiprows=first,
        skip_blank_lines=False,
        keep_default_na=False,
        na_values=[""],
        decimal="," if decimal_comma else ".",
        thousands="." if decimal_comma else None,
        low_memory=False,
    )
    try:
        try:
            block = pd.read_csv(io.StringIO(text), **options)
        except pd.errors.ParserError:
            block = pd.read_csv(io.StringIO(text), names=range(_widest_row(text, delimiter)),
                                **options)  # fmt: skip
    except (pd.errors.ParserError, ValueError) as error:
        raise InputError(
            f"the rows cannot be split into columns ({first_line(error)}).",
            hint="Check that every row uses the same delimiter.",
        ) from error
    block = block.reindex(columns=range(width))
    block.index = block.index + first
    return block


def _decode(raw: bytes) -> str:
    for encoding in ("utf-8-sig", "utf-16"):
        try:
            text = raw.decode(encoding)
        except UnicodeDecodeError:
            continue
        if encoding == "utf-16" and not raw.startswith((b"\xff\xfe", b"\xfe\xff")):
            continue
        return text
    return raw.decode("cp1252", errors="replace")


def _sniff_delimiter(text: str) -> str:
    """The delimiter that splits the most of the first lines into the same number of cells."""
    lines = [line for line in text.splitlines()[:200] if line.strip()]
    best, best_score = ",", -1.0
    for candidate in DELIMITERS:
        counts = [_split_count(line, candidate) for line in lines]
        data = [c for c in counts if c > 1]
        if not data:
            continue
        mode = max(set(data), key=data.count)
        score = data.count(mode) * (1 + 0.01 * mode)
        if score > best_score:
            best, best_score = candidate, score
    return best


def _split_count(line: str, delimiter: str) -> int:
    """Cells in one line: the delimiters outside quotes, plus one."""
    return _QUOTED.sub("", line).count(delimiter) + 1


def _widest_row(text: str, delimiter: str) -> int:
    """Most cells in any row, never fewer than a row really holds.

    Counted without the csv module, whose field-size limit and line-end rules a damaged file
    breaks: once over the raw lines and once with quoted parts (which may span lines) taken
    out; the larger count wins, and a count too high only adds empty columns.
    """
    raw = max(line.count(delimiter) for line in _LINE_END.split(text))
    unquoted = max(line.count(delimiter) for line in _LINE_END.split(_QUOTED.sub("", text)))
    if min(raw, unquoted) >= MAX_COLUMNS:
        raise InputError(
            f"a row has more than {MAX_COLUMNS:,} cells.",
            hint="Check the delimiter, or split the file into narrower tables.",
        )
    return max(raw, unquoted) + 1


def _uses_decimal_comma(cells: pd.DataFrame, delimiter: str) -> bool:
    """Decimal comma when cells look like 12,5 and none look like 12.5 (never with ',' as sep)."""
    if delimiter == ",":
        return False
    sample = cells.head(500).stack().astype(str)
    comma = sample.str.fullmatch(r"-?\d+,\d+").sum()
    point = sample.str.fullmatch(r"-?\d+\.\d+").sum()
    return bool(comma > point)


def _blank_to_none(cells: pd.DataFrame) -> pd.DataFrame:
    """Empty-string cells become None so that 'empty' has one meaning downstream."""
    return cells.where(cells != "", None)
