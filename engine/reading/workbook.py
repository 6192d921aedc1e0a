"""Open workbooks safely: check the container before any reader sees it, then read the sheets.

A damaged or hostile workbook must end in an :class:`~engine.errors.InputError`, never in a
hang, a memory blow-up or a crash of the process. Before the workbook reader (calamine) is
given an ``.xlsx``/``.xlsm``/``.xlsb``/``.ods`` file, every zip member is unpacked once as a
stream and checked against these limits:

* at most :data:`MAX_MEMBERS` members;
* each member unpacks to at most :data:`MAX_MEMBER_BYTES` (256 MiB), and all of them together
  to at most :data:`MAX_TOTAL_BYTES` (1 GiB); the stream is counted, so a member that lies
  about its size is caught too (the zip's CRC check fails);
* no XML member declares a document type (``<!DOCTYPE``/``<!ENTITY``): spreadsheet XML never
  needs one, and refusing it rules out entity expansion ("billion laughs") and external
  entities;
* a sheet's used range, from the ``<dimension>`` it declares and from the cell references it
  holds, spans at most :data:`MAX_SHEET_CELLS` (10 million) cells.

A sheet over the cell limit is read by a streaming reader (openpyxl, read-only) that keeps only
cells holding something, so a far empty cell (say at XFD1048576) does not stop a good sheet;
if the filled cells still span too many, the sheet is refused. The reader's own failures,
including Rust panics, become an ``InputError`` naming the file and sheet.
"""

from __future__ import annotations

import re
import zipfile
from dataclasses import dataclass
from pathlib import Path

import pandas as pd

from engine.errors import InputError

MAX_MEMBERS = 10_000
MAX_MEMBER_BYTES = 256 * 2**20
MAX_TOTAL_BYTES = 2**30
MAX_SHEET_CELLS = 10_000_000
EXCEL_COLUMNS = 16_384  # XFD, the widest sheet Excel allows

_CHUNK = 2**20
_OVERLAP = 64  # bytes kept between chunks so a reference cut in two is still seen whole
_DOCTYPE = re.compile(rb"<!(DOCTYPE|ENTITY)", re.IGNORECASE)
_CELL_REF = re.compile(rb"<(?:\w+:)?c\b[^>]{0,200}?\br=\"([A-Z]{1,4})(\d{1,8})\"")
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
    except (zipfile.BadZipFile, zipfile.LargeZipFile, NotImplementedError, EOFError,
            OSError, ValueError) as error:  # fmt: skip
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
            if is_sheet:
                rows, columns = _widen(window, rows, columns)
            tail = window[-_OVERLAP:]
    return rows * columns > MAX_SHEET_CELLS


def _widen(xml: bytes, rows: int, columns: int) -> tuple[int, int]:
    """The used range grown by the cell references and declared dimension in ``xml``."""
    refs = [(letters, digits) for letters, digits in _CELL_REF.findall(xml)]
    for ref in _DIMENSION.findall(xml):
        end = _RANGE_END.search(ref.decode("ascii", "replace"))
        if end:
            refs.append((end[1].encode(), end[2].encode()))
    for letters, digits in refs:
        rows = max(rows, int(digits))
        columns = max(columns, column_number(letters.decode("ascii")))
    return rows, columns


def column_number(letters: str) -> int:
    """1 for A, 27 for AA, 16384 for XFD."""
    number = 0
    for letter in letters:
        number = number * 26 + ord(letter) - 64
    return number


def read_sheets(path: Path, stream_oversized: bool) -> list[tuple[str, pd.DataFrame]]:
    """Every sheet's raw cells; sheets over the cell limit are read by the streaming reader."""
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


def _too_big(path: Path, sheet: str, rows: int, columns: int) -> InputError:
    return InputError(
        f"the sheet's filled cells span {rows:,} rows × {columns:,} columns, more than the "
        f"{MAX_SHEET_CELLS:,} cells the tool reads.",
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
