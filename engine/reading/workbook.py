"""Open workbooks safely: check the container before any reader sees it, then read the sheets.

A damaged or hostile workbook must end in an :class:`~engine.errors.InputError`, never in a
hang, a memory blow-up or a crash of the process. Before the workbook reader (calamine) is
given an ``.xlsx``/``.xlsm``/``.xlsb``/``.ods`` file, every zip member is unpacked once as a
stream and checked against these limits:

* at most :data:`MAX_MEMBERS` members;
* each member unpacks to at most :data:`MAX_MEMBER_BYTES` (256 MiB), and all of them together
  to at most :data:`MAX_TOTAL_BYTES` (1 GiB); the stream is counted, so a member that lies
  about its size is caught too (the zip's CRC check fails);
* no XML part declares more shared strings or styles (``count``, ``uniqueCount``) than the
  cell limit below, since the reader sets room aside for all of them first;
* no XML member declares a document type (``<!DOCTYPE``/``<!ENTITY``): spreadsheet XML never
  needs one, and refusing it rules out entity expansion ("billion laughs") and external
  entities;
* a sheet's used range, from the ``<dimension>`` it declares and from the cell references it
  holds, spans at most :data:`MAX_SHEET_CELLS` (10 million) cells, and no cell lies beyond
  Excel's last row (1,048,576) or column (XFD); in an OpenDocument file, repeated filled rows
  and cells count as many times as they repeat, against a lower limit,
  :data:`MAX_OPENDOCUMENT_CELLS` (4 million): the reader expands every repeat.

Legacy ``.xls`` files are read by xlrd, in pure Python, so that damage inside them ends in an
exception rather than an abort. A sheet over the cell limit is read by a streaming reader
(openpyxl, read-only) that keeps only cells holding something, so a far empty cell (say at
XFD1048576) does not stop a good sheet; if the filled cells still span too many, the sheet is
refused. The reader's own failures,
including Rust panics, become an ``InputError`` naming the file and sheet.
"""

from __future__ import annotations

import contextlib
import io
import re
import warnings
import zipfile
import zlib
from dataclasses import dataclass
from pathlib import Path
from xml.etree.ElementTree import ParseError, iterparse

import pandas as pd

from engine.errors import InputError

MAX_MEMBERS = 10_000
MAX_MEMBER_BYTES = 256 * 2**20
MAX_TOTAL_BYTES = 2**30
MAX_SHEET_CELLS = 10_000_000
#: The cells an OpenDocument table may span once its repeats are counted. The reader expands
#: every repeat (150 to 250 bytes a cell with its Python value), so a few kilobytes repeating
#: one row a million times would take over a gigabyte. Written out, an OpenDocument cell takes
#: 50 to 100 bytes of XML, so few files within MAX_MEMBER_BYTES span this many without repeats.
MAX_OPENDOCUMENT_CELLS = 4_000_000
EXCEL_COLUMNS = 16_384  # XFD, the widest sheet Excel allows
EXCEL_ROWS = 1_048_576  # the longest

#: What the zip module and the XML parser raise for a damaged container (NotImplementedError:
#: a version or compression method it does not know).
ZIP_ERRORS = (zipfile.BadZipFile, zipfile.LargeZipFile, NotImplementedError, EOFError, OSError,
              ValueError, zlib.error, ParseError)  # fmt: skip

_CHUNK = 2**20
_OVERLAP = 64  # bytes kept between chunks so a reference cut in two is still seen whole
_DOCTYPE = re.compile(rb"<!(DOCTYPE|ENTITY)", re.IGNORECASE)
_CELL_COLUMN = re.compile(rb' r="([A-Z]{1,4})\d')  # a cell reference such as r="B17"
_CELL_ROW = re.compile(rb' r="[A-Z]{1,4}(\d{1,8})"')
_DECLARED_COUNT = re.compile(rb'ount="(\d{8,20})"')  # count="…" and uniqueCount="…"
_DIMENSION = re.compile(rb"<(?:\w+:)?dimension\b[^>]{0,200}?\bref=\"([^\"]{1,40})\"")
_RANGE_END = re.compile(r"([A-Z]{1,4})(\d{1,8})$")
_SHEET_MEMBER = re.compile(r"xl/worksheets/[^/]+\.xml", re.IGNORECASE)
_DAMAGED_HINT = "It may be damaged: open it in a spreadsheet program and save it again."


@dataclass(frozen=True)
class ContainerCheck:
    """What the check of a zip workbook found: whether some sheet spans too many cells."""

    oversized_sheet: bool


def check_zip_workbook(path: Path) -> ContainerCheck:
    """Check a zip workbook against the limits above; :class:`InputError` when one is broken."""
    try:
        with zipfile.ZipFile(path) as archive:
            members = archive.infolist()
            if len(members) > MAX_MEMBERS:
                raise _refused(path, f"it holds {len(members):,} parts (at most {MAX_MEMBERS:,})")
            declared = sum(m.file_size for m in members)
            if declared > MAX_TOTAL_BYTES:
                raise _refused(path, f"it unpacks to {_size(declared)} (at most 1 GiB)")
            oversized = False
            for member in members:
                oversized |= _check_member(archive, member, path)
    except ZIP_ERRORS as error:
        raise InputError(
            f"the workbook cannot be unpacked ({first_line(error)}).",
            hint=_DAMAGED_HINT,
            file=path,
        ) from None
    return ContainerCheck(oversized_sheet=oversized)


def _check_member(archive: zipfile.ZipFile, member: zipfile.ZipInfo, path: Path) -> bool:
    """Unpack one member as a stream; True when it is a sheet spanning too many cells."""
    if member.file_size > MAX_MEMBER_BYTES:
        raise _refused(path, f"part '{member.filename}' unpacks to {_size(member.file_size)}")
    is_xml = member.filename.lower().endswith((".xml", ".rels"))
    is_sheet = _SHEET_MEMBER.fullmatch(member.filename) is not None
    rows = columns = 0
    tail = b""
    unpacked = 0
    with archive.open(member) as stream:  # zipfile checks the size and CRC as it reads
        while chunk := stream.read(_CHUNK):
            unpacked += len(chunk)
            if unpacked > MAX_MEMBER_BYTES:
                raise _refused(path, f"part '{member.filename}' unpacks to more than 256 MiB")
            window = tail + chunk
            if is_xml and _DOCTYPE.search(window):
                raise InputError(
                    f"part '{member.filename}' declares a document type (XML entities), "
                    "which workbooks never need; it is refused as unsafe.",
                    hint="Open the workbook in a spreadsheet program and save it as .xlsx.",
                    file=path,
                )
            if is_xml:
                _check_counts(window, member.filename, path)
            if is_sheet:
                rows, columns = _widen(window, rows, columns)
            tail = window[-_OVERLAP:]
    if rows > EXCEL_ROWS or columns > EXCEL_COLUMNS:
        raise InputError(
            f"part '{member.filename}' places a cell beyond the last row or column a "
            "spreadsheet can have.",
            hint=_DAMAGED_HINT,
            file=path,
        )
    if member.filename == "content.xml" and "mimetype" in archive.namelist():
        _check_opendocument(archive, member, path)
    return rows * columns > MAX_SHEET_CELLS


def _check_counts(xml: bytes, part: str, path: Path) -> None:
    """Refuse a declared item count (shared strings, styles) no sheet within the limit needs:
    the reader sets aside room for that many before it reads one."""
    for digits in _DECLARED_COUNT.findall(xml):
        if int(digits) > MAX_SHEET_CELLS:
            raise InputError(
                f"part '{part}' declares {int(digits):,} items, more than a sheet of at most "
                f"{MAX_SHEET_CELLS:,} cells can hold.",
                hint=_DAMAGED_HINT,
                file=path,
            )


def _check_opendocument(archive: zipfile.ZipFile, member: zipfile.ZipInfo, path: Path) -> None:
    """Refuse an OpenDocument table whose repeated rows and cells span more filled cells than
    :data:`MAX_OPENDOCUMENT_CELLS`.

    Repeated empty rows and cells (how OpenDocument pads a sheet to its edge) do not count:
    the span runs to the last filled cell and row.
    """
    table = "{urn:oasis:names:tc:opendocument:xmlns:table:1.0}"
    office = "{urn:oasis:names:tc:opendocument:xmlns:office:1.0}"
    cells = (f"{table}table-cell", f"{table}covered-table-cell")
    name, at_row, rows, at_cell, width, filled_to = "", 0, 0, 0, 0, 0
    with archive.open(member) as stream:
        for event, element in iterparse(stream, events=("start", "end")):
            if event == "start":
                if element.tag == f"{table}table":
                    name, at_row, rows, width = element.get(f"{table}name", ""), 0, 0, 0
                elif element.tag == f"{table}table-row":
                    at_cell, filled_to = 0, 0
                continue
            if element.tag in cells:
                at_cell += _repeat(element, f"{table}number-columns-repeated")
                if element.get(f"{office}value-type") is not None or len(element):
                    filled_to = at_cell
            elif element.tag == f"{table}table-row":
                at_row += _repeat(element, f"{table}number-rows-repeated")
                if filled_to:
                    rows, width = at_row, max(width, filled_to)
                if rows * width > MAX_OPENDOCUMENT_CELLS:
                    raise _too_big(path, name, rows, width, MAX_OPENDOCUMENT_CELLS)
                element.clear()


def _repeat(element, attribute: str) -> int:
    text = element.get(attribute, "1")
    return int(text) if text.isdigit() and len(text) < 12 else 1


def _widen(xml: bytes, rows: int, columns: int) -> tuple[int, int]:
    """The used range grown by the cell references and declared dimension in ``xml``.

    Only distinct column letters and row numbers are converted: a sheet of a million cells
    has a handful of columns.
    """
    letters = set(_CELL_COLUMN.findall(xml))
    digits = set(_CELL_ROW.findall(xml))
    for ref in _DIMENSION.findall(xml):
        end = _RANGE_END.search(ref.decode("ascii", "replace"))
        if end:
            letters.add(end[1].encode())
            digits.add(end[2].encode())
    if digits:
        rows = max(rows, *map(int, digits))
    if letters:
        columns = max(columns, *(column_number(text.decode("ascii")) for text in letters))
    return rows, columns


def column_number(letters: str) -> int:
    """1 for A, 27 for AA, 16384 for XFD."""
    number = 0
    for letter in letters:
        number = number * 26 + ord(letter) - 64
    return number


def read_sheets(
    path: Path, stream_oversized: bool, legacy: bool = False
) -> list[tuple[str, pd.DataFrame]]:
    """Every sheet's raw cells; sheets over the cell limit are read by the streaming reader,
    legacy ``.xls`` files by xlrd (pure Python: damage there cannot abort the process)."""
    if legacy:
        return _read_legacy(path)
    if stream_oversized:
        return _read_streaming(path)
    from python_calamine import CalamineWorkbook

    book = _guarded(lambda: CalamineWorkbook.from_path(str(path)), path, None)
    sheets = []
    for name in _guarded(lambda: list(book.sheet_names), path, None):
        sheet = _guarded(lambda n=name: book.get_sheet_by_name(n), path, name)
        if sheet.height * sheet.width > MAX_SHEET_CELLS:
            raise _too_big(path, name, sheet.height, sheet.width)
        rows = _guarded(lambda s=sheet: s.to_python(skip_empty_area=False), path, name)
        sheets.append((str(name), pd.DataFrame(rows, dtype=object)))
    return sheets


def _guarded(call, path: Path, sheet: str | None):
    """Run a workbook-reader call; its errors and panics become an InputError."""
    try:
        return call()
    except Exception as error:  # calamine raises its own error types for damaged files
        raise _unreadable(path, sheet, error) from None
    except BaseException as error:  # a Rust panic arrives as pyo3's PanicException
        if type(error).__name__ != "PanicException":
            raise
        raise _unreadable(path, sheet, error) from None


def _unreadable(path: Path, sheet: str | None, error: BaseException) -> InputError:
    what = "sheet" if sheet is not None else "workbook"
    return InputError(f"the {what} cannot be read ({first_line(error)}).", hint=_DAMAGED_HINT,
                      file=path, sheet=sheet)  # fmt: skip


def _read_streaming(path: Path) -> list[tuple[str, pd.DataFrame]]:
    """Read sheets row by row, keeping only filled cells (for sheets with a huge used range)."""
    import openpyxl

    with warnings.catch_warnings():  # its notes on styles and extensions do not touch values
        warnings.simplefilter("ignore")
        try:
            book = openpyxl.load_workbook(path, read_only=True, data_only=True)
        except Exception as error:  # openpyxl raises many types for damaged files
            raise _unreadable(path, None, error) from None
        try:
            return [(sheet.title, _filled_cells(sheet, path)) for sheet in book.worksheets]
        finally:
            book.close()


def _filled_cells(sheet, path: Path) -> pd.DataFrame:
    sheet.reset_dimensions()  # the declared dimension may be huge; follow the cells instead
    rows: dict[int, dict[int, object]] = {}
    width = 0
    try:
        for number, values in enumerate(sheet.iter_rows(values_only=True)):
            kept = {i: v for i, v in enumerate(values) if v is not None and v != ""}
            if kept:
                rows[number] = kept
                width = max(width, max(kept) + 1)
                if (number + 1) * width > MAX_SHEET_CELLS:
                    raise _too_big(path, sheet.title, number + 1, width)
    except InputError:
        raise
    except Exception as error:
        raise _unreadable(path, sheet.title, error) from None
    grid = [[None] * width for _ in range(max(rows, default=-1) + 1)]
    for number, kept in rows.items():
        for column, value in kept.items():
            grid[number][column] = value
    return pd.DataFrame(grid, dtype=object)


def _read_legacy(path: Path) -> list[tuple[str, pd.DataFrame]]:
    """The sheets of a legacy BIFF workbook (``.xls``) with date cells as datetimes."""
    import xlrd

    try:
        book = xlrd.open_workbook(str(path), logfile=io.StringIO(), on_demand=True)
    except Exception as error:  # xlrd raises many types for damaged files
        raise _unreadable(path, None, error) from None
    sheets = []
    try:
        for name in book.sheet_names():
            try:
                sheet = book.sheet_by_name(name)
                if sheet.nrows * sheet.ncols > MAX_SHEET_CELLS:
                    raise _too_big(path, name, sheet.nrows, sheet.ncols)
                rows = [_legacy_row(sheet, r, book.datemode) for r in range(sheet.nrows)]
            except InputError:
                raise
            except Exception as error:
                raise _unreadable(path, name, error) from None
            sheets.append((name, pd.DataFrame(rows, dtype=object)))
    finally:
        book.release_resources()
    return sheets


def _legacy_row(sheet, number: int, datemode: int) -> list[object]:
    import xlrd

    cells = []
    for kind, value in zip(sheet.row_types(number), sheet.row_values(number), strict=True):
        if kind == xlrd.XL_CELL_DATE:
            # a bad serial stays a number, for the stamp reader to judge and report
            with contextlib.suppress(xlrd.xldate.XLDateError, ValueError, OverflowError):
                value = xlrd.xldate.xldate_as_datetime(value, datemode)
        elif kind in (xlrd.XL_CELL_EMPTY, xlrd.XL_CELL_BLANK, xlrd.XL_CELL_ERROR):
            value = None
        elif kind == xlrd.XL_CELL_BOOLEAN:
            value = bool(value)
        cells.append(value)
    return cells


def _too_big(
    path: Path, sheet: str, rows: int, columns: int, limit: int = MAX_SHEET_CELLS
) -> InputError:
    return InputError(
        f"the sheet's filled cells span {rows:,} rows × {columns:,} columns, more than the "
        f"{limit:,} cells the tool reads.",
        hint="Delete the unused rows and columns (or far-away cells) and save it again.",
        file=path,
        sheet=sheet,
    )


def _refused(path: Path, why: str) -> InputError:
    return InputError(
        f"the workbook is refused: {why}.",
        hint="A meter export is far smaller; export the readings again, or as .csv.",
        file=path,
    )


def _size(count: int) -> str:
    return f"{count / 2**20:,.0f} MiB"


def first_line(error: BaseException) -> str:
    """The first line of an error's text, shortened, for a one-line message."""
    text = str(error).strip().splitlines()
    return text[0][:160] if text else type(error).__name__
