"""Bad input gets a clear message naming the place and what to do, or a recorded finding."""

from __future__ import annotations

import io
import json
import zipfile

import openpyxl
import pytest

from engine.errors import InputError
from engine.reading import ReadOptions, describe, guess_kind, read_file, read_meter_file
from tests.fuzz import workbooks

UTC = ReadOptions(timezone="UTC")


def _csv(tmp_path, text, name="m.csv"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def _hours(n, start=0):
    return [f"2024-01-{1 + (start + k) // 24:02d} {(start + k) % 24:02d}:00" for k in range(n)]


def _error(path, options=UTC) -> InputError:
    with pytest.raises(InputError) as caught:
        read_file(path, options)
    return caught.value


def test_empty_file(tmp_path):
    error = _error(_csv(tmp_path, ""))
    assert "m.csv" in str(error) and "empty" in str(error)


def test_no_timestamp_column(tmp_path):
    error = _error(_csv(tmp_path, "Name,Main (kWh)\na,1\nb,2\nc,3\nd,4\n"))
    assert "m.csv" in str(error) and "dates" in str(error)


def test_unreadable_dates_are_left_out_and_the_rows_named(tmp_path):
    stamps = _hours(10)
    stamps[6] = "not a date"
    text = "Timestamp,Main (kWh)\n" + "".join(f"{s},1\n" for s in stamps)
    result = read_meter_file(_csv(tmp_path, text), UTC)
    finding = next(f for f in result.findings if f.kind == "unparsed_rows")
    assert finding.rows == (8,)  # header is row 1, the 7th reading is row 8
    assert result.excluded_rows == 1
    assert result.meters[0].meter.values.sum() == 9


def test_unknown_unit_names_the_column(tmp_path):
    text = "Timestamp,Irrigation (gallons)\n" + "".join(f"{s},1\n" for s in _hours(5))
    error = _error(_csv(tmp_path, text))
    assert error.place.column == "Irrigation (gallons)"
    assert "gallons" in str(error) and "--unit" in str(error)


def test_column_without_a_unit_asks_for_one(tmp_path):
    text = "Timestamp,Main\n" + "".join(f"{s},1\n" for s in _hours(5))
    error = _error(_csv(tmp_path, text))
    assert error.place.column == "Main" and "--unit" in str(error)
    meter = read_meter_file(tmp_path / "m.csv", ReadOptions(timezone="UTC", unit="kWh"))
    assert meter.meters[0].unit.name == "kWh"


def test_backwards_and_conflicting_duplicate_stamps_are_reported_not_lost(tmp_path):
    stamps = _hours(6)
    rows = [(stamps[0], 1), (stamps[2], 3), (stamps[1], 2), (stamps[3], 4), (stamps[3], 9),
            (stamps[4], 5), (stamps[5], 6)]  # fmt: skip
    text = "Timestamp,Main (kWh)\n" + "".join(f"{s},{v}\n" for s, v in rows)
    read = read_meter_file(_csv(tmp_path, text), UTC).meters[0]
    kinds = {f.kind: f for f in read.findings}
    assert kinds["backwards"].rows[0] == 4
    assert set(kinds["duplicate_conflict"].rows) == {5, 6}
    assert read.meter.values.tolist() == [1, 2, 3, 4, 5, 6]
    assert len(read.raw) == 7  # the raw readings keep the conflicting copy
    # counted in words that agree: "1 time", "1 timestamp appears", not "1 timestamp(s) appear"
    assert "go backwards 1 time," in kinds["backwards"].message
    assert kinds["duplicate_conflict"].message.startswith("1 timestamp appears more than once")
    assert not any("(s)" in finding.message for finding in read.findings)


def test_non_numeric_cells_are_counted_with_their_rows(tmp_path):
    values = ["1", "2", "n/a", "4", "ERR", "6"]
    text = "Timestamp,Main (kWh)\n" + "".join(
        f"{s},{v}\n" for s, v in zip(_hours(6), values, strict=True)
    )
    read = read_meter_file(_csv(tmp_path, text), UTC).meters[0]
    finding = next(f for f in read.findings if f.kind == "non_numeric")
    assert finding.rows == (4, 6) and finding.count == 2
    assert read.meter.values.sum() == 13


def test_corrupt_workbook(tmp_path):
    book = openpyxl.Workbook()
    book.active.append(["Timestamp", "Main (kWh)"])
    buffer = io.BytesIO()
    book.save(buffer)
    path = tmp_path / "broken.xlsx"
    path.write_bytes(buffer.getvalue()[:300])
    error = _error(path)
    assert "broken.xlsx" in str(error)


def test_password_protected_workbook(tmp_path):
    ooxml = pytest.importorskip("msoffcrypto.format.ooxml")
    plain = tmp_path / "plain.xlsx"
    book = openpyxl.Workbook()
    book.active.append(["Timestamp", "Main (kWh)"])
    book.save(plain)
    locked = tmp_path / "locked.xlsx"
    with open(plain, "rb") as source, open(locked, "wb") as target:
        ooxml.OOXMLFile(source).encrypt("secret", target)
    error = _error(locked)
    assert "locked.xlsx" in str(error) and "password" in str(error)


@pytest.mark.parametrize(
    ("name", "content"),
    [
        ("picture.xlsx", b"\x89PNG\r\n\x1a\n" + bytes(200)),
        ("data.csv", b"\x00\x01\x02\x03" * 100),
    ],
)
def test_files_that_are_not_spreadsheets(tmp_path, name, content):
    path = tmp_path / name
    path.write_bytes(content)
    error = _error(path)
    assert name in str(error)


def test_zip_that_is_not_a_workbook(tmp_path):
    path = tmp_path / "archive.xlsx"
    with zipfile.ZipFile(path, "w") as archive:
        archive.writestr("readme.txt", "hello")
    assert "archive.xlsx" in str(_error(path))


def test_ambiguous_day_and_month_is_never_guessed(tmp_path):
    text = "Date,Main (kWh)\n" + "".join(f"0{d}/0{d + 1}/2024,1\n" for d in range(1, 8))
    error = _error(_csv(tmp_path, text))
    assert "--day-first" in str(error) or "day" in str(error).lower()
    chosen = read_meter_file(tmp_path / "m.csv", ReadOptions(timezone="UTC", dayfirst=True))
    assert chosen.meters[0].meter.values.index[0].month == 2


# --- malformed files that once ended in a traceback or killed the process ---------------------


def _inspect(path, options=UTC, kind=None) -> dict:
    """What ``loadledger inspect --json`` builds, JSON-encoded as strictly as it prints it."""
    report = describe(read_file(path, options, kind=kind))
    json.dumps(report, allow_nan=False)
    return report


def _meter_rows(values, stamps=None) -> str:
    stamps = stamps or _hours(len(values))
    return "Timestamp,Main (kWh)\n" + "".join(
        f"{s},{v}\n" for s, v in zip(stamps, values, strict=True)
    )


@pytest.mark.parametrize(
    "odd", [["inf"], ["1e308", "1e308"], ["9" * 400], ["-inf", "nan", "1e309"], ["-2e15"]]
)
def test_non_finite_and_huge_values_are_left_out_and_named(tmp_path, odd):
    values = ["1"] * 10
    values[3 : 3 + len(odd)] = odd
    report = _inspect(_csv(tmp_path, _meter_rows(values)))  # before: inf broke the JSON
    meter = report["meters"][0]
    finding = next(f for f in meter["findings"] if f["kind"] == "non_numeric")
    assert finding["count"] == len(odd) and finding["rows"][0] == 5  # header row 1, 4th value
    assert meter["total_kwh"] == 10 - len(odd)


def test_stray_carriage_returns_and_old_mac_line_ends(tmp_path):
    plain = _meter_rows(["2"] * 12)
    mac = _csv(tmp_path, plain.replace("\n", "\r"), name="mac.csv")
    assert _inspect(mac)["meters"][0]["total_kwh"] == 24
    rows = plain.split("\n")
    rows[9] += ",7"  # a row further down with a third cell: the columns are counted again
    error = _error(_csv(tmp_path, "\r".join(rows), name="wider.csv"))
    assert "wider.csv" in str(error) and "new-line" not in str(error)


def test_a_field_longer_than_the_csv_modules_limit(tmp_path):
    values = ["1"] * 10
    values[6] = "x" * 140_000  # Python's csv module refuses fields over 131,072 characters
    meter = _inspect(_csv(tmp_path, _meter_rows(values)))["meters"][0]
    assert meter["total_kwh"] == 9
    assert next(f for f in meter["findings"] if f["kind"] == "non_numeric")["rows"] == [8]


@pytest.mark.parametrize("year", [3023, 1700, 1677])
def test_stamps_outside_the_years_a_reading_can_have(tmp_path, year):
    stamps = _hours(10)
    stamps[4] = f"{year}-01-01 00:00"
    report = _inspect(_csv(tmp_path, _meter_rows(["1"] * 10, stamps)))
    assert report["excluded_rows"] == 1
    finding = next(f for f in report["findings"] if f["kind"] == "unparsed_rows")
    assert finding["rows"] == [6] and "1900" in finding["message"]
    assert report["meters"][0]["count"] == 9


def test_calendar_with_ragged_rows_names_the_row_and_column(tmp_path):
    path = _csv(tmp_path, "Period,First Day,Last Day,Kind\n"
                "Fall,2031-09-01,2031-12-15,term,extra,cells\nSpring,2032-01-10\n",
                name="campus.csv")  # fmt: skip
    with pytest.raises(InputError) as caught:  # before: a TypeError from a tuple index
        read_file(path, ReadOptions(), kind="calendar")
    assert "campus.csv" in str(caught.value)
    assert (caught.value.place.row, caught.value.place.column) == (3, "Last Day")
    fixed = path.read_text().replace("Spring,2032-01-10", "Spring,2032-01-10,2032-05-01,term")
    path.write_text(fixed)
    periods = read_file(path, ReadOptions(), kind="calendar").calendar.periods
    assert [p.name for p in periods] == ["Fall", "Spring"]  # the extra cells are ignored


def _legacy_xls() -> bytes:
    xlwt = pytest.importorskip("xlwt")
    book = xlwt.Workbook()
    sheet = book.add_sheet("Readings")
    for row, cells in enumerate([("Timestamp", "Main (kWh)"), *((s, 1.5) for s in _hours(40))]):
        for column, value in enumerate(cells):
            sheet.write(row, column, value)
    buffer = io.BytesIO()
    book.save(buffer)
    return buffer.getvalue()


def test_legacy_xls_reads_and_cut_short_is_refused(tmp_path):
    data = _legacy_xls()
    whole = tmp_path / "old.xls"
    whole.write_bytes(data)
    assert _inspect(whole)["meters"][0]["total_kwh"] == 60
    for cut in (100, 600, 4096, 4608):  # calamine panicked on the last two (cfb.rs)
        whole.write_bytes(data[:cut])
        assert "old.xls" in str(_error(whole))


def _sheet_with(tail: str = "", dimension: str | None = None) -> bytes:
    rows = [["Timestamp", "Main (kWh)"], *([s, 2] for s in _hours(48))]
    sheet = workbooks.sheet_xml(rows, dimension=dimension, tail=tail)
    return workbooks.zip_parts(workbooks.xlsx_parts({"Data": sheet}))


@pytest.mark.parametrize(
    ("tail", "dimension"),
    [
        ('<row r="1048576"><c r="XFD1048576" t="str"><v></v></c></row>', None),
        ('<row r="1048576"><c r="XFD1048576" s="1"/></row>', "A1:XFD1048576"),
    ],
)
def test_far_empty_cell_does_not_stop_a_good_sheet(tmp_path, tail, dimension):
    path = tmp_path / "sparse.xlsx"
    path.write_bytes(_sheet_with(tail, dimension))  # before: calamine aborted the process
    assert _inspect(path)["meters"][0]["total_kwh"] == 96


def test_far_filled_cell_is_refused_naming_the_sheet(tmp_path):
    path = tmp_path / "sparse.xlsx"
    path.write_bytes(_sheet_with('<row r="1048576"><c r="XFD1048576"><v>5</v></c></row>'))
    error = _error(path)
    assert error.place.sheet == "Data" and "sparse.xlsx" in str(error)
    assert "rows" in str(error) and "columns" in str(error)


def test_sheet_that_unpacks_to_gigabytes_is_refused(tmp_path):
    path = tmp_path / "bomb.xlsx"
    parts = workbooks.xlsx_parts({"Data": workbooks.sheet_xml([["Timestamp", "Main (kWh)"]])})
    row = b"<row><c><v>1</v></c></row>" * 40_000
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED, compresslevel=1) as archive:
        for name, data in parts.items():
            if name.startswith("xl/worksheets/"):
                with archive.open(name, "w", force_zip64=True) as member:
                    for _ in range(1_500_000_000 // len(row)):
                        member.write(row)
            else:
                archive.writestr(name, data)
    assert path.stat().st_size < 20 * 2**20  # a few MiB on disk
    error = _error(path)
    assert "bomb.xlsx" in str(error) and "unpacks to" in str(error)


@pytest.mark.parametrize("entity", ["laughs", "external"])
def test_xml_entities_are_refused(tmp_path, entity):
    declaration = {
        "laughs": '<!DOCTYPE x [<!ENTITY a "aaaaaaaaaa"><!ENTITY b "&a;&a;&a;&a;&a;&a;&a;">]>',
        "external": '<!DOCTYPE x [<!ENTITY e SYSTEM "file:///etc/passwd">]>',
    }[entity]
    rows = [["Timestamp", "Main (kWh)"], *([s, 2] for s in _hours(10))]
    sheet = workbooks.sheet_xml(rows).replace("?>\n", "?>\n" + declaration, 1)
    path = tmp_path / "entities.xlsx"
    path.write_bytes(workbooks.zip_parts(workbooks.xlsx_parts({"Data": sheet})))
    error = _error(path)
    assert "entities.xlsx" in str(error) and "document type" in str(error)


@pytest.mark.parametrize(("count", "refused"), [(3, False), (2_000_000_000, True)])
def test_declared_shared_string_count_is_checked_before_reading(tmp_path, count, refused):
    rows = [["Timestamp", "Main (kWh)"], *([s, 2] for s in _hours(10))]
    parts = workbooks.xlsx_parts({"Data": workbooks.sheet_xml(rows)})
    parts["xl/sharedStrings.xml"] = (
        f'<sst xmlns="{workbooks.MAIN}" count="{count}" uniqueCount="{count}"><si><t>x</t></si>'
        "</sst>"
    ).encode()
    parts["xl/_rels/workbook.xml.rels"] = parts["xl/_rels/workbook.xml.rels"].replace(
        b"</Relationships>",
        f'<Relationship Id="rId99" Type="{workbooks.OFFICE_RELS}/sharedStrings" '
        'Target="sharedStrings.xml"/></Relationships>'.encode(),
    )
    path = tmp_path / "strings.xlsx"
    path.write_bytes(workbooks.zip_parts(parts))  # before: a 48 GB allocation aborted
    if refused:
        assert "declares 2,000,000,000 items" in str(_error(path))
    else:
        assert _inspect(path)["meters"][0]["total_kwh"] == 20


def test_zip_needing_an_unknown_version_is_refused(tmp_path):
    rows = [["Timestamp", "Main (kWh)"], *([s, 2] for s in _hours(10))]
    data = bytearray(workbooks.zip_parts(workbooks.xlsx_parts({"Data": workbooks.sheet_xml(rows)})))
    central = data.find(b"PK\x01\x02")
    data[central + 6] = 68  # "version needed to extract" 6.8: zipfile raises NotImplementedError
    path = tmp_path / "future.xlsx"
    path.write_bytes(bytes(data))
    assert "future.xlsx" in str(_error(path))


def test_a_file_that_fails_to_read_can_say_what_it_looked_like(tmp_path):
    # Two date columns and no numbers: a calendar, though its Kind column is missing.
    path = tmp_path / "terms.csv"
    path.write_text("Name,Start,End\nFall,2025-08-25,2025-12-12\n", encoding="utf-8")
    assert guess_kind(path) == "calendar"
    with pytest.raises(InputError, match="Kind"):
        read_file(path)
    path.write_text("Time,Hall (kWh)\n2025-01-06 00:00,1.0\n2025-01-06 01:00,2.0\n")
    assert guess_kind(path) == "meters" == describe(read_file(path))["kind"]
