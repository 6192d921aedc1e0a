"""The plain report of what the importer understood (``inspect`` text and ``--json``)."""

from __future__ import annotations

import math

import pandas as pd

from engine.meters import CANONICAL_UNIT, Finding
from engine.reading.bill_file import BillFile
from engine.reading.calendar_file import CalendarFile
from engine.reading.checks import coverage_count
from engine.reading.meter_file import MeterFile


def describe(result) -> dict:
    """A JSON-ready description of a read file (meters, bills or weather)."""
    if isinstance(result, MeterFile):
        return _meters(result)
    if isinstance(result, BillFile):
        return _bills(result)
    if isinstance(result, CalendarFile):
        return _calendar(result)
    return _weather(result)


def _calendar(result) -> dict:
    return {"file": str(result.path), "kind": "calendar", **describe_calendar(result.calendar),
            "findings": []}  # fmt: skip


def describe_calendar(calendar) -> dict:
    """A campus calendar's periods and the public holidays of the years they cover."""
    periods = [p.to_dict() for p in calendar.periods]
    years = sorted({d.year for p in calendar.periods for d in (p.first_day, p.last_day)})
    holidays = calendar.public_holidays(years) if calendar.country and years else {}
    return {
        "country": calendar.country,
        "subdivision": calendar.subdivision,
        "periods": periods,
        "public_holidays": [
            {"date": day.isoformat(), "name": name} for day, name in sorted(holidays.items())
        ],
    }


def _meters(result) -> dict:
    return {
        "file": str(result.path),
        "kind": "meters",
        "sheet": result.sheet,
        "header_row": result.header_row,
        "layout": result.layout,
        "timestamps": {
            "format": result.date_note,
            "clock": result.site.clock,
            "timezone": result.site.timezone,
            "note": result.site.note,
        },
        "excluded_rows": result.excluded_rows,
        "findings": _findings(result.findings),
        "meters": [_meter(read) for read in result.meters],
    }


def _meter(read) -> dict:
    meter = read.meter
    values = meter.values
    expected = coverage_count(meter)
    local = values.index.tz_convert(meter.timezone)
    return {
        "name": meter.name,
        "utility": meter.utility,
        "column": read.column,
        "unit_found": read.unit.name,
        "unit": CANONICAL_UNIT,
        "values": read.value_kind,
        "values_note": read.value_kind_reason,
        "interval_minutes": meter.interval / pd.Timedelta(minutes=1),
        "stamps": read.stamp_convention,
        "stamps_note": read.stamp_reason,
        "timezone": meter.timezone,
        "first": local[0].isoformat() if len(local) else None,
        "last": local[-1].isoformat() if len(local) else None,
        "count": int(values.notna().sum()),
        "expected": expected,
        "coverage": round(int(values.notna().sum()) / expected, 6) if expected else 0.0,
        "total_kwh": _number(values.sum()),
        "findings": _findings(read.findings),
    }


def _bills(result) -> dict:
    bills = result.bills
    return {
        "file": str(result.path),
        "kind": "bills",
        "account": result.account,
        "unit_found": result.unit.name,
        "unit": CANONICAL_UNIT,
        "period_end": result.end_convention,
        "periods": len(bills),
        "first_period_start": _date(bills["period_start"].min()),
        "last_period_end": _date(bills["period_end"].max()),
        "total_kwh": _number(bills["quantity_kwh"].sum()),
        "total_cost": _number(bills["cost"].sum(min_count=1)),
        "max_peak_kw": _number(bills["peak_kw"].max()),
        "findings": _findings(result.findings),
    }


def _weather(result) -> dict:
    temps = result.temps_c
    local = temps.index.tz_convert(result.site.timezone)
    steps = pd.Series(temps.index).diff().dropna()
    interval = steps.mode().iloc[0] if len(steps) else pd.NaT
    return {
        "file": str(result.path),
        "kind": "weather",
        "station": result.station,
        "unit_found": result.unit_found,
        "daily_extremes": result.daily_extremes is not None,
        "interval_minutes": interval / pd.Timedelta(minutes=1) if pd.notna(interval) else None,
        "timezone": result.site.timezone,
        "first": local[0].isoformat() if len(local) else None,
        "last": local[-1].isoformat() if len(local) else None,
        "count": len(temps),
        "mean_c": _number(temps.mean()),
        "min_c": _number(temps.min()),
        "max_c": _number(temps.max()),
        "findings": _findings(result.findings),
    }


def _findings(findings: list[Finding]) -> list[dict]:
    return [f.as_dict() for f in findings]


def _number(value) -> float | None:
    """A JSON-safe figure: None where there is none (NaN, or an infinity JSON cannot hold)."""
    value = float(value)
    return round(value, 6) if math.isfinite(value) else None


def _date(value) -> str | None:
    return None if pd.isna(value) else pd.Timestamp(value).date().isoformat()
