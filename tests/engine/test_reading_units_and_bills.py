"""Units in headers, bills and weather files, against factors written out from their sources."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from engine.reading import ReadOptions, read_bill_file, read_file, read_weather_file

BTU_J = 1055.05585262  # NIST SP 811 (2008) B.8: British thermal unit (IT) = 1.055 056 E+03 J
KWH_J = 3.6e6  # NIST SP 811 (2008) B.8: kilowatt hour = 3.6 E+06 J


def _hourly_file(path, header, value, hours=48):
    stamps = pd.date_range("2024-02-01", periods=hours, freq="h")
    lines = [f"Timestamp,{header}"] + [f"{t:%Y-%m-%d %H:%M},{value}" for t in stamps]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return hours * value


@pytest.mark.parametrize(
    ("header", "kwh_per_unit", "utility"),
    [
        ("Main (kWh)", 1.0, "electricity"),
        ("Main (MWh)", 1000.0, "electricity"),
        ("Main (Wh)", 0.001, "electricity"),
        ("Boiler gas (therms)", 1e5 * BTU_J / KWH_J, "natural_gas"),  # therm = 100,000 Btu
        ("Boiler gas (MMBtu)", 1e6 * BTU_J / KWH_J, "natural_gas"),
        ("District heat (GJ)", 1e9 / KWH_J, "hot_water"),
        (
            "Chiller plant (ton-hours)",
            12_000 * BTU_J / KWH_J,
            "chilled_water",
        ),  # ton = 12,000 Btu/h
    ],
)
def test_energy_units_in_headers_convert_to_kwh(tmp_path, header, kwh_per_unit, utility):
    raw_total = _hourly_file(tmp_path / "unit.csv", header, 2.5)
    meter = read_file(tmp_path / "unit.csv", ReadOptions(timezone="UTC")).meters[0].meter
    assert meter.values.sum() == pytest.approx(raw_total * kwh_per_unit, rel=2e-5)
    assert meter.utility == utility


def test_bills_with_read_date_periods_not_matching_months(tmp_path):
    reads = pd.to_datetime(["2024-01-15", "2024-02-14", "2024-03-15", "2024-04-16"])
    lines = ["Service From,Service To,Billed kWh,Max Demand kW,Total Charges ($)"]
    for k in range(3):
        lines.append(f"{reads[k]:%m/%d/%Y},{reads[k + 1]:%m/%d/%Y},{100_000 + k},"
                     f"{400 + k},\"${12_345.5 + k:,.2f}\"")  # fmt: skip
    path = tmp_path / "electric-bills.csv"
    path.write_text("\n".join(lines) + "\n")
    result = read_bill_file(path)
    bills = result.bills
    assert "read dates" in result.end_convention
    # each period ends the day before the next read date, so the days add up with no overlap
    assert bills["days"].sum() == (reads[-1] - reads[0]).days
    assert bills["quantity_kwh"].tolist() == [100_000, 100_001, 100_002]
    assert bills["cost"].tolist() == pytest.approx([12_345.5, 12_346.5, 12_347.5])
    assert bills["peak_kw"].tolist() == [400, 401, 402]


def test_bill_file_is_recognised_without_being_told(tmp_path):
    path = tmp_path / "b.csv"
    path.write_text("Period start,Period end,Usage (kWh)\n2024-01-01,2024-01-31,10\n"
                    "2024-02-01,2024-02-29,12\n2024-03-01,2024-03-31,11\n")  # fmt: skip
    result = read_file(path)
    assert result.end_convention.startswith("first and last day")
    assert result.bills["days"].tolist() == [31, 29, 31]


def test_weather_in_fahrenheit_becomes_celsius(tmp_path):
    stamps = pd.date_range("2024-07-01", periods=72, freq="h")
    temps_f = 68 + 10 * np.sin(np.arange(72) / 24 * 2 * np.pi)
    lines = ["Observation Time (local),Dry Bulb (°F)"]
    lines += [f"{t:%Y-%m-%d %H:%M},{v:.1f}" for t, v in zip(stamps, temps_f, strict=True)]
    path = tmp_path / "station.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    result = read_weather_file(path, ReadOptions(timezone="America/Chicago"))
    expected_c = (np.round(temps_f, 1) - 32) * 5 / 9  # NIST SP 811 B.8: t/°C = (t/°F − 32)/1.8
    assert result.temps_c.to_numpy() == pytest.approx(expected_c, abs=1e-9)
    assert result.unit_found == "°F"


def test_daily_max_min_weather(tmp_path):
    days = pd.date_range("2015-01-01", periods=10, freq="D")
    lines = ["date,temp_max (C),temp_min (C)"]
    lines += [f"{d:%Y-%m-%d},{10 + k},{k}" for k, d in enumerate(days)]
    path = tmp_path / "daily.csv"
    path.write_text("\n".join(lines) + "\n")
    result = read_weather_file(path, ReadOptions(timezone="UTC"))
    assert result.daily_extremes is not None
    assert result.temps_c.tolist() == [5 + k for k in range(10)]
