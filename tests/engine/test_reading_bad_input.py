"""Bad input gets a clear message naming the place and what to do, or a recorded finding."""

from __future__ import annotations

import io
import zipfile

import openpyxl
import pytest

from engine.errors import InputError
from engine.reading import ReadOptions, read_file, read_meter_file

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
