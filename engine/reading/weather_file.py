"""Read a weather-station file: dry-bulb temperature, hourly or sub-hourly, or daily max/min."""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from engine import units
from engine.errors import InputError
from engine.meters import Finding
from engine.reading import vocabulary as vocab
from engine.reading.columns import ColumnFacts, is_numeric_column, to_numbers
from engine.reading.options import ReadOptions
from engine.reading.sheets import ChosenTable, read_table_with
from engine.reading.stamps import find_stamp_columns, parse_table_stamps
from engine.reading.zones import SiteTime, resolve_site_time


@dataclass
class WeatherFile:
    """Temperatures in °C at UTC instants (daily files: the daily mean at local midnight)."""

    path: Path
    station: str
    temps_c: pd.Series
    raw: pd.Series  # the temperatures as read, in the file's unit
    unit_found: str
    daily_extremes: pd.DataFrame | None  # tmax_c, tmin_c per local day for daily files
    site: SiteTime
    findings: list[Finding] = field(default_factory=list)


def read_weather_file(
    path: str | Path, options: ReadOptions | None = None, chosen: ChosenTable | None = None
) -> WeatherFile:
    """Read ``path``; :class:`InputError` when no temperature column or unit can be found."""
    return read_table_with(_read, path, options or ReadOptions(), chosen)


def looks_like_weather(facts: list[ColumnFacts]) -> bool:
    return any(_is_temperature(f) for f in facts)


def _read(path: Path, options: ReadOptions, chosen: ChosenTable) -> WeatherFile:
    table, facts = chosen.table, chosen.facts
    stamp_cols = find_stamp_columns(table, facts)
    parsed = parse_table_stamps(table, stamp_cols, options.dayfirst)
    site = resolve_site_time(parsed, options.timezone)
    temps = [f for f in facts if f.position not in stamp_cols.positions() and _is_temperature(f)
             and is_numeric_column(f)]  # fmt: skip
    if not temps:
        raise InputError(
            "no temperature column was found.",
            hint="Name it e.g. 'Dry bulb (°F)' or 'Temperature °C'.",
            sheet=table.sheet,
        )
    high = next((f for f in temps if f.has(vocab.MAX_WORDS)), None)
    low = next((f for f in temps if f.has(vocab.MIN_WORDS)), None)
    keep = parsed.stamps.notna().to_numpy()
    instants, zone_findings = site.to_utc(parsed.stamps[keep])
    unit_of = _unit_reader(options, table.sheet)
    if high is not None and low is not None:
        tmax = _column(table, high, unit_of)[keep]
        tmin = _column(table, low, unit_of)[keep]
        extremes = pd.DataFrame({"tmax_c": tmax, "tmin_c": tmin}, index=instants)
        extremes = extremes[~extremes.index.duplicated()].sort_index()
        temps_c = extremes.mean(axis=1)
        raw = pd.Series(to_numbers(table.data[high.position], table.decimal_comma)[keep],
                        index=instants)  # fmt: skip
        unit_name = unit_of(high).name
    else:
        column = temps[0]
        temps_c = pd.Series(_column(table, column, unit_of)[keep], index=instants)
        raw = pd.Series(to_numbers(table.data[column.position], table.decimal_comma)[keep],
                        index=instants)  # fmt: skip
        extremes = None
        unit_name = unit_of(column).name
    findings = chosen.findings + parsed.findings + site.findings + zone_findings
    duplicated = temps_c.index.duplicated()
    if duplicated.any():
        findings.append(Finding(kind="duplicate_same", count=int(duplicated.sum()),
                                message=f"{int(duplicated.sum())} repeated timestamp(s); the "
                                "first reading of each was kept."))  # fmt: skip
    temps_c = temps_c[~duplicated & temps_c.index.notna()].sort_index().dropna()
    raw = raw[~raw.index.duplicated()].reindex(temps_c.index)  # the same readings as kept
    findings += _implausible(temps_c)
    return WeatherFile(path, path.stem, temps_c.rename("temp_c"), raw.rename("raw"), unit_name,
                       extremes, site, findings)  # fmt: skip


def _unit_reader(options: ReadOptions, sheet: str | None):
    def unit_of(facts: ColumnFacts) -> units.Unit:
        unit = units.find_unit(facts.header)
        if (unit is None or unit.kind != "temperature") and options.temperature_unit:
            unit = units.find_unit(options.temperature_unit)
        if unit is None or unit.kind != "temperature":
            raise InputError(
                "the temperature column does not say whether it is °F or °C.",
                hint="Add the unit to the header, e.g. 'Dry bulb (°F)', or give "
                "--temperature-unit F or C.",
                sheet=sheet,
                column=facts.header,
            )
        return unit

    return unit_of


def _column(table, facts: ColumnFacts, unit_of) -> np.ndarray:
    values = to_numbers(table.data[facts.position], table.decimal_comma)
    return np.asarray(units.convert_temperature(values, unit_of(facts)), dtype="float64")


def _is_temperature(facts: ColumnFacts) -> bool:
    unit = units.find_unit(facts.header)
    return (unit is not None and unit.kind == "temperature") or facts.has(vocab.TEMPERATURE_WORDS)


def _implausible(temps_c: pd.Series) -> list[Finding]:
    """Temperatures outside anything a weather station records (−90 °C .. 60 °C)."""
    bad = (temps_c < -90) | (temps_c > 60)
    if not bad.any():
        return []
    return [Finding(kind="implausible_temperature", count=int(bad.sum()),
                    message=f"{int(bad.sum())} temperature(s) outside −90..60 °C; check the unit "
                    "setting.")]  # fmt: skip
