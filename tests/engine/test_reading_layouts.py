"""The importer on synthetic files with known totals: every layout, stamp form and convention.

Each file is written here from a known series, so the expected totals are known exactly
(ground truth by construction, not by running the importer).
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import openpyxl
import pandas as pd
import pytest

from engine.reading import ReadOptions, read_file, read_meter_file

ZONE = "America/New_York"


def _known_series(freq="15min", days=400, start="2024-01-01"):
    """A positive load with daily shape, in local wall-clock order as a meter system exports."""
    utc = pd.date_range(start, periods=days * pd.Timedelta("1D") // pd.Timedelta(freq),
                        freq=freq, tz="UTC")  # fmt: skip
    rng = np.random.default_rng(7)
    hours = utc.tz_convert(ZONE).hour.to_numpy()
    values = np.round(10 + 5 * np.sin(hours / 24 * 2 * np.pi) + rng.random(len(utc)), 3)
    return pd.Series(values, index=utc)


def _write_csv(path, header_lines, rows, sep=","):
    with open(path, "w", encoding="utf-8", newline="") as handle:
        for line in header_lines:
            handle.write(line + "\n")
        for row in rows:
            handle.write(sep.join(str(c) for c in row) + "\n")


def test_wide_csv_local_time_with_title_rows_keeps_every_kwh(tmp_path):
    series = _known_series()
    local = series.index.tz_convert(ZONE).tz_localize(None)
    path = tmp_path / "export.csv"
    rows = [(t.strftime("%Y-%m-%d %H:%M"), v, round(v * 4, 3)) for t, v in
            zip(local, series.to_numpy(), strict=True)]  # fmt: skip
    _write_csv(path, ["Campus energy export", "Generated 2025-02-10", "",
                      "Timestamp,Main (kWh),Annex Demand (kW)"], rows)  # fmt: skip
    result = read_meter_file(path, ReadOptions(timezone=ZONE))
    assert result.header_row == 4
    assert result.layout == "wide"
    main, annex = result.meters
    assert main.meter.name == "Main" and main.unit.name == "kWh"
    assert main.meter.interval == pd.Timedelta("15min")
    # every reading kept, across both daylight-saving changes: nothing double-counted or lost
    assert len(main.meter.values) == len(series)
    assert main.meter.values.sum() == pytest.approx(series.sum(), rel=1e-12)
    assert main.meter.values.index.equals(series.index)
    # kW demand over a 15-minute interval is a quarter of it in kWh
    assert annex.meter.values.sum() == pytest.approx((series * 4).round(3).sum() / 4, rel=1e-12)


def test_long_layout_semicolons_decimal_comma_and_german_headers(tmp_path):
    series = _known_series(freq="60min", days=30)
    utc = series.index
    path = tmp_path / "lastgang.csv"
    rows = []
    for name, scale in (("Halle A", 1.0), ("Halle B", 2.0)):
        for t, v in zip(utc, series.to_numpy(), strict=True):
            rows.append((t.strftime("%d.%m.%Y %H:%M"), name, f"{v * scale:.3f}".replace(".", ",")))
    _write_csv(path, ["Zeitstempel;Zähler;Verbrauch (kWh)"], rows, sep=";")
    result = read_meter_file(path, ReadOptions(timezone="UTC"))
    assert result.layout == "long"
    totals = {m.meter.name: m.meter.values.sum() for m in result.meters}
    assert totals["Halle A"] == pytest.approx(series.round(3).sum(), rel=1e-9)
    assert totals["Halle B"] == pytest.approx((series * 2).round(3).sum(), rel=1e-9)


def test_separate_date_and_time_columns_decide_day_first_from_the_data(tmp_path):
    utc = pd.date_range("2024-03-01", periods=24 * 20, freq="h", tz="UTC")
    path = tmp_path / "daytime.csv"
    rows = [(t.strftime("%d/%m/%Y"), t.strftime("%H:%M"), 1.5) for t in utc]
    _write_csv(path, ["Date,Time,Usage (kWh)"], rows)
    result = read_meter_file(path, ReadOptions(timezone="UTC"))
    meter = result.meters[0].meter
    assert meter.values.index[0] == utc[0] and meter.values.index[-1] == utc[-1]
    assert meter.values.sum() == pytest.approx(1.5 * len(utc))


def test_excel_serial_numbers_in_a_workbook(tmp_path):
    utc = pd.date_range("2024-05-01", periods=96, freq="15min", tz="UTC")
    # Excel's serial date: days since 1899-12-30 (ECMA-376 Part 1, 18.17.4.1, 1900 date system)
    serials = (utc.tz_localize(None) - pd.Timestamp("1899-12-30")) / pd.Timedelta("1D")
    book = openpyxl.Workbook()
    sheet = book.active
    sheet.append(["Time", "Chiller (ton-hours)"])
    for serial in serials:
        sheet.append([float(serial), 2.0])
    path = tmp_path / "serials.xlsx"
    book.save(path)
    meter = read_meter_file(path, ReadOptions(timezone="UTC")).meters[0].meter
    assert meter.values.index.equals(utc)
    assert meter.utility == "chilled_water"
    # NIST SP 811: 1 ton of refrigeration = 12,000 Btu/h = 3.516 853 kW
    assert meter.values.sum() == pytest.approx(96 * 2.0 * 3.516853, rel=1e-6)


def test_iso_stamps_with_offsets_need_no_zone(tmp_path):
    utc = pd.date_range("2024-11-02", periods=72, freq="h", tz="UTC")
    local = utc.tz_convert(ZONE)
    path = tmp_path / "offsets.csv"
    _write_csv(path, ["Read time,Feeder (kWh)"], [(t.isoformat(), 3.0) for t in local])
    result = read_meter_file(path)
    meter = result.meters[0].meter
    assert result.site.clock == "offsets"
    assert meter.values.index.equals(utc)


def test_interval_end_stamps_shift_to_interval_starts(tmp_path):
    utc = pd.date_range("2024-06-01", periods=48, freq="h", tz="UTC")
    path = tmp_path / "ends.csv"
    _write_csv(
        path,
        ["Timestamp,Main (kWh)"],
        [((t + pd.Timedelta("1h")).strftime("%Y-%m-%d %H:%M"), 1.0) for t in utc],
    )
    meter = read_meter_file(path, ReadOptions(timezone="UTC", stamps="end")).meters[0].meter
    assert meter.values.index.equals(utc)


def test_cumulative_register_with_rollover_gives_interval_usage(tmp_path):
    days = pd.date_range("2024-01-01", periods=60, freq="D")
    usage = np.full(59, 700.0)
    reads = (98_000 + np.concatenate([[0.0], np.cumsum(usage)])) % 100_000
    path = tmp_path / "gas.csv"
    _write_csv(
        path,
        ["Read Date,Meter Reading (CCF)"],
        [(d.strftime("%m/%d/%Y"), f"{r:.0f}") for d, r in zip(days, reads, strict=True)],
    )
    result = read_meter_file(path, ReadOptions(timezone="America/Chicago"))
    read = result.meters[0]
    assert read.value_kind == "register"
    assert read.meter.utility == "natural_gas"
    assert any(f.kind == "rollover" for f in read.findings)
    # a read dated D is the register as day D closes: read[D] − read[D−1] is day D's use
    assert read.meter.values.index[0] == pd.Timestamp("2024-01-02", tz="America/Chicago")
    ccf_total = 59 * 700.0
    # 1 ccf = 100 ft³; heat content per engine.units default (EIA average, from memory)
    from engine import units

    expected = units.to_kwh(pd.Series([ccf_total]), units.find_unit("ccf")).iloc[0]
    assert read.meter.values.sum() == pytest.approx(expected, rel=1e-9)


def test_workbook_with_several_sheets_picks_the_readings_and_names_the_others(tmp_path):
    book = openpyxl.Workbook()
    notes = book.active
    notes.title = "Notes"
    notes.append(["This export holds interval data."])
    for title, value in (("Building 1", 1.0), ("Building 2", 2.0)):
        sheet = book.create_sheet(title)
        sheet.append(["Timestamp", "Load (kWh)"])
        rows = 40 if title == "Building 1" else 20
        for k in range(rows):
            sheet.append([dt.datetime(2024, 1, 1) + dt.timedelta(hours=k), value])
    path = tmp_path / "sheets.xlsx"
    book.save(path)
    result = read_file(path, ReadOptions(timezone="UTC"))
    assert result.sheet == "Building 1"
    assert any(f.kind == "other_sheets" and "Building 2" in f.message for f in result.findings)
    chosen = read_file(path, ReadOptions(timezone="UTC", sheet="Building 2"))
    assert chosen.meters[0].meter.values.sum() == pytest.approx(40.0)


def test_two_row_header_of_names_over_units(tmp_path):
    path = tmp_path / "trend.csv"
    rows = [f"2024-01-01 {h:02d}:00,{h},{2 * h}" for h in range(24)]
    path.write_text("Trend log\nTime,Boiler gas,Chiller\n,therm,ton-hours\n" + "\n".join(rows))
    result = read_meter_file(path, ReadOptions(timezone="UTC"))
    units_found = {m.meter.name: m.unit.name for m in result.meters}
    assert units_found == {"Boiler gas": "therm", "Chiller": "ton-hour"}


def test_wide_columns_named_meter_are_not_mistaken_for_a_long_layout(tmp_path):
    path = tmp_path / "meters.csv"
    rows = [f"2024-01-01 {h:02d}:00,{h % 5},{h % 3}" for h in range(24)]
    path.write_text("Timestamp,Meter 1 (kWh),Meter 2 (kWh)\n" + "\n".join(rows) + "\n")
    result = read_meter_file(path, ReadOptions(timezone="UTC"))
    assert result.layout == "wide"
    assert [m.meter.name for m in result.meters] == ["Meter 1", "Meter 2"]


def test_legacy_xls_workbook(tmp_path):
    xlwt = pytest.importorskip("xlwt")  # writes the old binary .xls format (BIFF8)
    book = xlwt.Workbook()
    sheet = book.add_sheet("Export")
    stamp_style = xlwt.easyxf(num_format_str="yyyy-mm-dd hh:mm")
    sheet.write(0, 0, "Campus export (legacy format)")
    sheet.write(2, 0, "Timestamp")
    sheet.write(2, 1, "Chapel (kWh)")
    start = dt.datetime(2024, 3, 1)
    for k in range(48):
        sheet.write(3 + k, 0, start + dt.timedelta(hours=k), stamp_style)
        sheet.write(3 + k, 1, 1.25)
    path = tmp_path / "legacy.xls"
    book.save(str(path))
    result = read_meter_file(path, ReadOptions(timezone="UTC"))
    meter = result.meters[0].meter
    assert result.header_row == 3
    assert meter.name == "Chapel" and meter.interval == pd.Timedelta("1h")
    assert meter.values.sum() == pytest.approx(48 * 1.25)
    assert meter.values.index[0] == pd.Timestamp("2024-03-01", tz="UTC")
