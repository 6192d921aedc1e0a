"""Malformed input files for every reader, made deterministically from a seed.

Two sources: the sample files (``sample/data``, ``sample/tariffs``), cut to their first rows
and then mutated (truncation, byte flips, shuffled, duplicated and missing rows and columns,
other delimiters and decimal marks, mixed and out-of-range dates, huge and non-finite numbers,
other encodings, stray line ends, very wide and very long lines); and files made from scratch
(binary garbage under spreadsheet names, damaged zip containers and sheet XML, sparse sheets
with huge used ranges, XML entities, OpenDocument repeats, legacy ``.xls`` cut short, rate
cards with absurd values). :func:`cases` yields :class:`Case` objects; the same seed and
count always give the same files.
"""

from __future__ import annotations

import io
import random
import struct
import warnings
import zlib
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from functools import cache
from pathlib import Path

from tests.fuzz import workbooks as wb

ROOT = Path(__file__).resolve().parents[2]
SAMPLE = ROOT / "sample"
HEAD_LINES = 120
LONG_FIELD = 140_000  # over the csv module's default field limit of 131,072 characters
READERS = ("meters", "bills", "weather", "calendar", "auto", "ratecard")


@dataclass(frozen=True)
class Case:
    """One input: which reader gets it, under which file name, with which bytes."""

    label: str
    reader: str
    filename: str
    content: bytes


# --- the seeds: sample files cut short, and small files made here ----------------------------


@cache
def text_seeds() -> dict[str, tuple[str, str, str]]:
    """label → (reader, file name, text) of every text seed."""
    data = SAMPLE / "data"

    def head(name: str, lines: int = HEAD_LINES) -> str:
        with open(data / name, encoding="utf-8") as handle:
            return "".join(line for _, line in zip(range(lines), handle, strict=False))

    hours = [f"2024-03-{1 + k // 24:02d} {k % 24:02d}:00" for k in range(96)]
    wide = "Timestamp,Main (kWh),Annex (kWh)\n" + "".join(
        f"{t},{10 + k % 7}.5,{3 + k % 5}.25\n" for k, t in enumerate(hours)
    )
    seeds = {
        "chilled-water": ("meters", "chilled-water-plant.csv", head("chilled-water-plant.csv")),
        "gas-daily": ("meters", "gas-boilerhouse-daily.csv", head("gas-boilerhouse-daily.csv")),
        "wide-hourly": ("meters", "wide-hourly.csv", wide),
        "bills": ("bills", "electric-bills.csv", head("electric-bills.csv")),
        "weather": ("weather", "weather-station.csv", head("weather-station.csv")),
        "calendar": ("calendar", "campus-calendar.csv", head("campus-calendar.csv")),
    }
    for path in sorted((SAMPLE / "tariffs").glob("*.ratecard.toml")):
        seeds[path.name.split(".")[0]] = ("ratecard", path.name, path.read_text("utf-8"))
    return seeds


def seed_rows(label: str) -> list[list[str]]:
    """A text seed split into rows of cells (the seeds use ',' and no quotes)."""
    return [line.split(",") for line in text_seeds()[label][2].splitlines()]


@cache
def sample_workbook_rows() -> tuple[tuple[object, ...], ...]:
    """The first rows of the sample interval workbook, as its reader sees them."""
    from python_calamine import CalamineWorkbook

    book = CalamineWorkbook.from_path(str(SAMPLE / "data" / "electricity-15min.xlsx"))
    sheet = book.get_sheet_by_name(book.sheet_names[0])
    return tuple(tuple(row) for row in sheet.to_python(nrows=HEAD_LINES))


def workbook_rows(rng: random.Random) -> list[list[object]]:
    """Rows for a generated workbook: the sample workbook's head, or a text seed's rows."""
    if rng.random() < 0.5:
        rows = [list(r) for r in sample_workbook_rows()]
        return [[None if v == "" else _plain(v) for v in row] for row in rows]
    label = rng.choice(["wide-hourly", "bills", "weather", "calendar", "gas-daily"])
    return [[_number_or_text(v) for v in row] for row in seed_rows(label)]


def _plain(value: object) -> object:
    return value if isinstance(value, int | float | str) else str(value)


def _number_or_text(text: str) -> object:
    try:
        return float(text)
    except ValueError:
        return text


@cache
def openpyxl_workbook() -> bytes:
    """A small workbook saved by openpyxl (styles, real date cells) for byte-level damage."""
    import datetime as dt

    import openpyxl

    book = openpyxl.Workbook()
    sheet = book.active
    sheet.append(["Timestamp", "Main (kWh)"])
    start = dt.datetime(2024, 5, 1)
    for k in range(60):
        sheet.append([start + dt.timedelta(minutes=15 * k), 4.0 + k % 3])
    buffer = io.BytesIO()
    book.save(buffer)
    return wb.repack(buffer.getvalue())  # openpyxl stamps the time of saving


@cache
def legacy_workbook() -> bytes:
    """A small legacy ``.xls`` (BIFF8, written by xlwt)."""
    import xlwt

    book = xlwt.Workbook()
    sheet = book.add_sheet("Readings")
    for r, row in enumerate(seed_rows("wide-hourly")[:60]):
        for c, value in enumerate(row):
            sheet.write(r, c, _number_or_text(value))
    buffer = io.BytesIO()
    book.save(buffer)
    return buffer.getvalue()


# --- text mutations ----------------------------------------------------------------------------

Rows = list[list[str]]


def _rows_to_text(rows: Rows, delimiter: str = ",", end: str = "\n") -> str:
    return end.join(delimiter.join(row) for row in rows) + end


def shuffle_rows(rows: Rows, rng: random.Random) -> Rows:
    body = rows[1:]
    rng.shuffle(body)
    return rows[:1] + body


def duplicate_rows(rows: Rows, rng: random.Random) -> Rows:
    out = list(rows)
    for _ in range(rng.randint(1, 10)):
        k = rng.randrange(len(out))
        out.insert(k, list(out[k]))
    return out


def drop_rows(rows: Rows, rng: random.Random) -> Rows:
    keep = max(1, int(len(rows) * rng.random()))
    return sorted(rng.sample(rows, keep), key=rows.index) if rng.random() < 0.5 else rows[:keep]


def drop_column(rows: Rows, rng: random.Random) -> Rows:
    k = rng.randrange(max(len(rows[0]), 1))
    return [row[:k] + row[k + 1 :] for row in rows]


def duplicate_column(rows: Rows, rng: random.Random) -> Rows:
    k = rng.randrange(max(len(rows[0]), 1))
    return [row[: k + 1] + row[k : k + 1] + row[k + 1 :] for row in rows]


def swap_columns(rows: Rows, rng: random.Random) -> Rows:
    order = list(range(max(len(r) for r in rows)))
    rng.shuffle(order)
    return [[row[i] for i in order if i < len(row)] for row in rows]


def ragged(rows: Rows, rng: random.Random) -> Rows:
    out = [list(r) for r in rows]
    for _ in range(rng.randint(1, 6)):
        row = out[rng.randrange(len(out))]
        if rng.random() < 0.5 and row:
            row.pop()
        else:
            row.extend(["x"] * rng.randint(1, 5))
    return out


def decimal_comma(rows: Rows, rng: random.Random) -> Rows:
    return [[c.replace(".", ",") if any(ch.isdigit() for ch in c) else c for c in r] for r in rows]


DATE_FORMS = (
    "%d/%m/%Y %H:%M",
    "%m/%d/%Y %I:%M %p",
    "%Y-%m-%dT%H:%M:%SZ",
    "%d.%m.%Y",
    "%d %B %Y %H:%M",
    "%Y%m%d%H%M",
    "%Y-%m-%d %H:%M:%S%z",
)
ODD_DATES = (
    "3023-01-01 00:00",
    "1700-06-01 12:00",
    "1677-09-21 00:00",
    "0001-01-01",
    "9999-12-31 23:59",
    "2262-04-12 00:00",
    "2024-02-30 10:00",
    "2024-13-01",
    "2023-03-12 02:30",
    "00/00/0000",
    "45000",
    "-1",
    "1e20",
    "24:00",
    "2024-01-01 25:61",
)


def mixed_dates(rows: Rows, rng: random.Random) -> Rows:
    import datetime as dt

    out = [list(r) for r in rows]
    for row in out[1:]:
        if row and rng.random() < 0.3:
            when = dt.datetime(2024, 1, 1) + dt.timedelta(hours=rng.randrange(20000))
            when = when.replace(tzinfo=dt.UTC) if rng.random() < 0.2 else when
            row[0] = when.strftime(rng.choice(DATE_FORMS))
    return out


def _scatter(rows: Rows, rng: random.Random, odd: tuple[str, ...], most: int, first: int) -> Rows:
    """Up to ``most`` random cells (from column ``first`` on) replaced by ``odd`` values."""
    out = [list(r) for r in rows]
    for _ in range(rng.randint(1, most)):
        row = out[rng.randrange(1, len(out))] if len(out) > 1 else out[0]
        if len(row) > first:
            row[rng.randrange(first, len(row))] = rng.choice(odd)
    return out


def odd_dates(rows: Rows, rng: random.Random) -> Rows:
    return _scatter(rows, rng, ODD_DATES, most=8, first=0)


ODD_NUMBERS = (
    "inf",
    "-inf",
    "nan",
    "NaN",
    "1e308",
    "1e309",
    "-1e308",
    "9" * 400,
    "-0",
    "1e-320",
    "0x1F",
    "1_000",
    "1,2,3",
    "1.2.3",
    "١٢٣",
    "∞",
    "+",
    "-",
    ".",
    "e5",
    "1e308",
    "12 345,6",
    "(5)",
    "5-",
    "$5",
    "5%",
    "TRUE",
)


def odd_numbers(rows: Rows, rng: random.Random) -> Rows:
    return _scatter(rows, rng, ODD_NUMBERS, most=12, first=1)


def many_huge(rows: Rows, rng: random.Random) -> Rows:
    """Every value a huge one, so sums would overflow."""
    value = rng.choice(["1e308", "1.7e308", "-1e308", "9" * 400, "inf"])
    return rows[:1] + [[row[0]] + [value] * (len(row) - 1) for row in rows[1:]]


def odd_headers(rows: Rows, rng: random.Random) -> Rows:
    headers = [
        "",
        "Main (gallons)",
        "Main",
        "Temperature",
        "kWh",
        "Period",
        "Service To",
        "Reading (kWh)",
        "Dry Bulb (°F)",
        "x" * 5000,
        "Main\n(kWh)",
        "=1+1",
        "Kind",
    ]
    out = [list(r) for r in rows]
    if rng.random() < 0.3:
        return out[1:]  # no header at all
    for k in range(len(out[0])):
        if rng.random() < 0.5:
            out[0][k] = rng.choice(headers)
    return out


ROW_MUTATIONS: tuple[Callable[[Rows, random.Random], Rows], ...] = (
    shuffle_rows,
    duplicate_rows,
    drop_rows,
    drop_column,
    duplicate_column,
    swap_columns,
    ragged,
    decimal_comma,
    mixed_dates,
    odd_dates,
    odd_numbers,
    many_huge,
    odd_headers,
)


def delimiter_and_ends(rows: Rows, rng: random.Random) -> str:
    delimiter = rng.choice([",", ";", "\t", "|", " ", ",", ","])
    end = rng.choice(["\n", "\r\n", "\r", "\n", "\n\n"])
    return _rows_to_text(rows, delimiter, end)


def truncate(data: bytes, rng: random.Random) -> bytes:
    return data[: rng.randrange(len(data) + 1)]


def flip_bytes(data: bytes, rng: random.Random) -> bytes:
    if not data:
        return data
    out = bytearray(data)
    for _ in range(rng.randint(1, 16)):
        out[rng.randrange(len(out))] = rng.randrange(256)
    return bytes(out)


def insert_noise(data: bytes, rng: random.Random) -> bytes:
    noise = rng.choice(
        [
            b"\r",
            b"\x00",
            b'"',
            b"\xff\xfe",
            b"\xef\xbb\xbf",
            b"\x1a",
            b"\\",
            b"\xc3",
            b"\xed\xa0\x80",
            b"\n\n\n",
            b",,,,",
        ]
    )
    out = bytearray(data)
    for _ in range(rng.randint(1, 6)):
        k = rng.randrange(len(out) + 1)
        out[k:k] = noise
    return bytes(out)


def encode(text: str, rng: random.Random) -> bytes:
    choice = rng.randrange(7)
    if choice == 0:
        return b"\xef\xbb\xbf" + text.encode("utf-8")
    if choice == 1:
        return text.encode("utf-16")  # with a byte-order mark
    if choice == 2:
        return text.encode("utf-16-le")  # without one
    if choice == 3:
        return text.encode("cp1252", errors="replace")
    if choice == 4:
        return text.encode("utf-8").replace(b"2", b"\xff", 3)  # invalid UTF-8
    if choice == 5:
        return text.encode("utf-32")
    return text.encode("utf-8")


def wide_or_long(rows: Rows, rng: random.Random, scale: int) -> str:
    """A very wide row, a very long field or line, or very many rows (``scale`` sizes them)."""
    text = _rows_to_text(rows)
    choice = rng.randrange(5)
    lines = text.splitlines(keepends=True)
    k = rng.randrange(1, len(lines)) if len(lines) > 1 else 0
    if choice == 0:
        lines.insert(k, ",".join(["1"] * (20 * scale)) + "\n")
    elif choice == 1:
        lines.insert(k, lines[k].rstrip("\n") + "x" * LONG_FIELD + "\n")
    elif choice == 2:
        lines.insert(k, "9" * LONG_FIELD + "\n")
    elif choice == 3:
        lines.insert(k, '"' + "a,b\n" * (10 * scale) + '"\n')
    else:
        lines = lines[:1] + lines[1:] * max(1, scale // 4)
    return "".join(lines)


def mutate_text(label: str, rng: random.Random, scale: int) -> Case:
    reader, filename, _ = text_seeds()[label]
    rows = seed_rows(label)
    steps = []
    for _ in range(rng.randint(1, 3)):
        mutation = rng.choice(ROW_MUTATIONS)
        rows = mutation(rows, rng) or [[""]]
        steps.append(mutation.__name__)
    if rng.random() < 0.15:
        text = wide_or_long(rows, rng, scale)
        steps.append("wide_or_long")
    else:
        text = delimiter_and_ends(rows, rng)
    data = encode(text, rng)
    for byte_mutation in (truncate, flip_bytes, insert_noise):
        if rng.random() < 0.12:
            data = byte_mutation(data, rng)
            steps.append(byte_mutation.__name__)
    return Case(f"{label}:{'+'.join(steps)}", _reader_for(reader, rng), filename, data)


def _reader_for(reader: str, rng: random.Random) -> str:
    """Mostly the seed's own reader, sometimes another or the automatic choice."""
    if reader == "ratecard":
        return reader
    return reader if rng.random() < 0.7 else rng.choice(READERS[:5])


# --- rate cards --------------------------------------------------------------------------------

CARD_VALUES = (
    "9" * 5000,
    "9" * 4000,
    "1e999",
    "inf",
    "-inf",
    "nan",
    "-5",
    "0",
    "1e308",
    "[" * 5000 + "]" * 5000,
    "[" * 200 + "]" * 200,
    "{" * 300 + "}" * 300,
    "0001-01-01",
    "9999-12-31",
    "24:00:00",
    '"' + "x" * 100000 + '"',
    '"\\u0000"',
    "true",
    "[]",
    "[1, 2, 3, 13]",
    '"weekdays"',
    '"25:00"',
    "1979-05-27T07:32:00Z",
)


def mutate_ratecard(label: str, rng: random.Random) -> Case:
    _, filename, text = text_seeds()[label]
    lines = text.splitlines()
    steps = []
    for _ in range(rng.randint(1, 3)):
        choice = rng.randrange(5)
        k = rng.randrange(len(lines))
        if choice == 0 and "=" in lines[k]:
            key = lines[k].split("=")[0]
            lines[k] = f"{key}= {rng.choice(CARD_VALUES)}"
            steps.append("value")
        elif choice == 1:
            del lines[k]
            steps.append("drop_line")
        elif choice == 2:
            lines.insert(k, lines[rng.randrange(len(lines))])
            steps.append("duplicate_line")
        elif choice == 3:
            rng.shuffle(lines)
            steps.append("shuffle")
        else:
            lines.insert(k, f"extra_{k} = {rng.choice(CARD_VALUES)}")
            steps.append("new_key")
    data = encode("\n".join(lines) + "\n", rng) if rng.random() < 0.3 else "\n".join(lines).encode()
    for byte_mutation in (truncate, flip_bytes, insert_noise):
        if rng.random() < 0.15:
            data = byte_mutation(data, rng)
            steps.append(byte_mutation.__name__)
    return Case(f"{label}:{'+'.join(steps)}", "ratecard", filename, data)


# --- spreadsheets ------------------------------------------------------------------------------

SPREADSHEET_NAMES = ("data.xlsx", "data.xls", "data.xlsm", "data.xlsb", "data.ods")
FAR_CELLS = (
    '<row r="1048576"><c r="XFD1048576" t="str"><v></v></c></row>',
    '<row r="1048576"><c r="XFD1048576" s="3"/></row>',
    '<row r="1048576"><c r="XFD1048576" t="inlineStr"><is><t></t></is></c></row>',
    '<row r="1048576"><c r="XFD1048576"><v>7</v></c></row>',
    '<row r="900000"><c r="A900000"><v>7</v></c></row>',
    '<row r="5"><c r="ZZZZ5"><v>1</v></c></row>',
    '<row r="99999999"><c r="A99999999"><v>1</v></c></row>',
    '<row r="3"><c r="A0"><v>1</v></c></row>',
    '<row r="2"><c r="B2" t="s"><v>999999999</v></c></row>',
    '<row r="2"><c r="B2" t="b"><v>7</v></c><c r="C2" t="e"><v>#DIV/0!</v></c></row>',
    '<row r="2"><c r="B2" t="d"><v>not a date</v></c><c r="C2" s="99"><v>1e999</v></c></row>',
    '<row r="2"><c r="B2"><v>NaN</v></c><c r="C2"><v>-1e308</v></c></row>',
)
ENTITY_BOMB = (
    '<?xml version="1.0"?><!DOCTYPE lolz [<!ENTITY lol "lol">'
    + "".join(
        f'<!ENTITY lol{i} "{("&lol" + (str(i - 1) if i > 1 else "") + ";") * 10}">'
        for i in range(1, 10)
    )
    + "]>"
)
EXTERNAL_ENTITY = '<?xml version="1.0"?><!DOCTYPE x [<!ENTITY ext SYSTEM "file:///etc/passwd">]>'


def sheet_xml_case(rng: random.Random) -> tuple[str, str]:
    """A workbook sheet made from seed rows, then damaged; returns (what was done, XML)."""
    rows = workbook_rows(rng)
    choice = rng.randrange(8)
    if choice == 0:
        return "far_cell", wb.sheet_xml(rows, tail=rng.choice(FAR_CELLS))
    if choice == 1:
        return "huge_dimension", wb.sheet_xml(
            rows, dimension=rng.choice(["A1:XFD1048576", "A1:B2", "A1:ZZZZZ99999999", "nonsense"])
        )
    xml = wb.sheet_xml(rows)
    if choice == 2:
        return "xml_truncated", xml[: rng.randrange(len(xml))]
    if choice == 3:
        body = xml.split("?>", 1)[1]
        return "xml_entities", rng.choice([ENTITY_BOMB, EXTERNAL_ENTITY]) + body.replace(
            "<sheetData>",
            '<sheetData><row r="1"><c r="A1" t="inlineStr"><is><t>&lol9;&ext;</t></is></c></row>',
            1,
        )
    if choice == 4:
        return "xml_flipped", flip_bytes(xml.encode(), rng).decode("latin-1")
    if choice == 5:
        return "xml_noise", xml.replace("</c>", rng.choice(["</c><c>", "</x>", "", "</c></c>"]), 3)
    if choice == 6:
        parts = xml.split("<row ")
        rng.shuffle(parts[1:])
        return "rows_shuffled", "<row ".join(parts)
    wide = ["x"] * rng.choice([300, 5000, 16384])
    return "wide_row", wb.sheet_xml([*rows, wide])


def xlsx_case(rng: random.Random) -> Case:
    what, xml = sheet_xml_case(rng)
    sheets = {"Data": xml}
    if rng.random() < 0.2:
        sheets["Other"] = wb.sheet_xml([["a", "b"], [1, 2]])
    parts = wb.xlsx_parts(sheets)
    steps = [what]
    if rng.random() < 0.3:
        steps.append(_damage_parts(parts, rng))
    data = _zip(parts, rng)
    if rng.random() < 0.2:
        data = rng.choice([truncate, flip_bytes, insert_noise])(data, rng)
        steps.append("container")
    name = rng.choice(["data.xlsx", "data.xlsx", "data.xlsm", "data.ods", "data.xlsb"])
    return Case(f"xlsx:{'+'.join(steps)}", rng.choice(["meters", "auto", "calendar"]), name, data)


def _damage_parts(parts: dict[str, bytes], rng: random.Random) -> str:
    name = rng.choice(sorted(parts))
    choice = rng.randrange(4)
    if choice == 0:
        del parts[name]
        return f"missing {name}"
    if choice == 1:
        parts[name] = b""
        return f"empty {name}"
    if choice == 2:
        parts[name] = truncate(parts[name], rng)
        return f"truncated {name}"
    count = rng.choice([1, 10**7, 2 * 10**9, 10**19])  # a reader may set room aside for them
    parts["xl/sharedStrings.xml"] = (
        f'<sst xmlns="{wb.MAIN}" count="{count}" uniqueCount="{count}"><si><t>{"&amp;" * 1000}'
        "</t></si></sst>"
    ).encode()
    return "shared strings"


def _zip(parts: dict[str, bytes], rng: random.Random) -> bytes:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # a duplicate member name is part of the damage
        data = wb.zip_parts(parts, stored=rng.random() < 0.3)
    if rng.random() < 0.1:
        data = _lie_about_sizes(data, rng)
    return data


def _lie_about_sizes(data: bytes, rng: random.Random) -> bytes:
    """Rewrite the uncompressed sizes in the local and central headers."""
    out = bytearray(data)
    lie = rng.choice([0, 1, 2**31 - 1, 2**32 - 1])
    for signature, offset in ((b"PK\x03\x04", 22), (b"PK\x01\x02", 24)):
        start = 0
        while (k := out.find(signature, start)) >= 0:
            out[k + offset : k + offset + 4] = struct.pack("<I", lie)
            start = k + 4
    return bytes(out)


def ods_case(rng: random.Random, scale: int) -> Case:
    """An OpenDocument sheet whose last row, and its last cell, repeat (``scale`` × 1000 rows
    at most, besides repeats far past any limit)."""
    rows = [[str(v) if v is not None else "" for v in r] for r in workbook_rows(rng)[:40]]
    rows = [r for r in rows if r] or [["x"]]
    content = wb.ods_content(
        rows,
        repeat_rows=rng.choice([1, 10 * scale, 1000 * scale, 2**31 - 1]),
        repeat_columns=rng.choice([1, 16_000, 1_000_000, 2**31 - 1]),
    )
    data = wb.zip_parts(wb.ods_parts(content), stored=True)
    return Case("ods:repeats", rng.choice(["meters", "auto"]), "data.ods", data)


def container_bytes_case(rng: random.Random) -> Case:
    """Byte damage to real workbooks: openpyxl's, a legacy .xls, garbage, text as .xlsx."""
    choice = rng.randrange(5)
    if choice == 0:
        data = rng.choice([truncate, flip_bytes, insert_noise])(openpyxl_workbook(), rng)
        return Case("openpyxl_bytes", "meters", "book.xlsx", data)
    if choice == 1:
        data = rng.choice([truncate, truncate, flip_bytes])(legacy_workbook(), rng)
        return Case("legacy_xls", rng.choice(["meters", "auto", "calendar"]), "legacy.xls", data)
    if choice == 2:
        size = rng.choice([1, 7, 100, 5000])
        head = rng.choice([b"", b"PK\x03\x04", b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1", b"\x89PNG"])
        data = head + rng.randbytes(size)
        return Case("garbage", "meters", rng.choice(SPREADSHEET_NAMES), data)
    if choice == 3:
        text = text_seeds()["wide-hourly"][2].encode()
        return Case("text_as_spreadsheet", "auto", rng.choice(SPREADSHEET_NAMES), text)
    data = zlib.compress(rng.randbytes(200))
    return Case("deflate_noise", "meters", rng.choice((*SPREADSHEET_NAMES, "x.csv")), data)


def sample_workbook_case(rng: random.Random) -> Case:
    """The full sample interval workbook, damaged at the byte level."""
    data = (SAMPLE / "data" / "electricity-15min.xlsx").read_bytes()
    mutation = rng.choice([truncate, flip_bytes])
    return Case(
        f"sample_xlsx:{mutation.__name__}", "meters", "electricity-15min.xlsx", mutation(data, rng)
    )


# --- the mix -----------------------------------------------------------------------------------


def cases(count: int, seed: int = 0, scale: int = 1000) -> Iterator[Case]:
    """``count`` cases from ``seed``; ``scale`` sizes very wide and very long lines.

    Text seeds take about half, rate cards a tenth, generated workbooks the rest; the full
    sample workbook (slow to read when a mutation leaves it intact) about one in two hundred.
    """
    rng = random.Random(seed)
    text_labels = [k for k, v in text_seeds().items() if v[0] != "ratecard"]
    card_labels = [k for k, v in text_seeds().items() if v[0] == "ratecard"]
    for index in range(count):
        pick = rng.random()
        case_rng = random.Random(rng.getrandbits(64))
        if pick < 0.5:
            case = mutate_text(case_rng.choice(text_labels), case_rng, scale)
        elif pick < 0.6:
            case = mutate_ratecard(case_rng.choice(card_labels), case_rng)
        elif pick < 0.8:
            case = xlsx_case(case_rng)
        elif pick < 0.85:
            case = ods_case(case_rng, scale)
        elif pick < 0.995:
            case = container_bytes_case(case_rng)
        else:
            case = sample_workbook_case(case_rng)
        yield Case(f"#{index} {case.label}", case.reader, case.filename, case.content)
