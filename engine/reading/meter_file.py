"""Read a meter export (wide or long, interval or register values) into kWh interval series.

``read_meter_file`` does everything short of storing: it returns what it understood for each
meter (unit, interval, stamp convention, time zone, coverage, problems) so that ``inspect`` can
show it and ``new`` can store it.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from engine import registers, timestamps, units
from engine.errors import InputError
from engine.meters import UTILITIES, Finding, MeterSeries
from engine.reading import checks
from engine.reading import vocabulary as vocab
from engine.reading.columns import ColumnFacts, is_label_column, is_numeric_column, to_numbers
from engine.reading.options import ReadOptions
from engine.reading.sheets import ChosenTable, choose_table
from engine.reading.stamps import ParsedTable, find_stamp_columns, parse_table_stamps
from engine.reading.table import Table
from engine.reading.zones import SiteTime, resolve_site_time

REGISTER_LEVEL_RATIO = 20.0


@dataclass
class MeterRead:
    """One meter as the importer understood it."""

    meter: MeterSeries
    raw: pd.DataFrame  # t (UTC instant of the reading as stamped), raw_value, source_row
    column: str
    unit: units.Unit
    value_kind: str  # "interval" or "register"
    value_kind_reason: str
    stamp_convention: str
    stamp_reason: str
    findings: list[Finding] = field(default_factory=list)


@dataclass
class MeterFile:
    """Everything read from one meter file, before anything is stored."""

    path: Path
    sheet: str | None
    layout: str  # "wide" or "long"
    header_row: int | None
    site: SiteTime
    date_note: str
    meters: list[MeterRead]
    findings: list[Finding]
    options: ReadOptions

    @property
    def excluded_rows(self) -> int:
        return sum(f.count for f in self.findings if f.kind == "unparsed_rows")


def read_meter_file(
    path: str | Path, options: ReadOptions | None = None, chosen: ChosenTable | None = None
) -> MeterFile:
    """Read every meter in ``path``; raise :class:`InputError` when the file cannot be read."""
    path = Path(path)
    options = options or ReadOptions()
    try:
        chosen = chosen or choose_table(path, options.sheet)
        table, facts = chosen.table, chosen.facts
        stamp_cols = find_stamp_columns(table, facts)
        parsed = parse_table_stamps(table, stamp_cols, options.dayfirst)
        site = resolve_site_time(parsed, options.timezone)
        others = [f for f in facts if f.position not in stamp_cols.positions()]
        label = next((f for f in others if is_label_column(f, len(table.data))), None)
        if label is not None:
            groups = _long_groups(table, others, label)
            layout = "long"
        else:
            groups = _wide_groups(table, others, path)
            layout = "wide"
        meters = [
            _read_one(path, table, parsed, site, name, column, rows, unit_text, options)
            for name, column, rows, unit_text in groups
        ]
    except InputError as error:
        raise error.at_file(path) from None
    return MeterFile(
        path=path,
        sheet=table.sheet,
        layout=layout,
        header_row=table.header_row,
        site=site,
        date_note=parsed.format_note,
        meters=meters,
        findings=chosen.findings + parsed.findings + site.findings,
        options=options,
    )


Group = tuple[str, ColumnFacts, pd.Index, str]


def _wide_groups(table: Table, others: list[ColumnFacts], path: Path) -> list[Group]:
    """One meter per numeric column; the name is the header without its unit."""
    groups = [
        (_meter_name(f.header, path), f, table.data.index, f.header)
        for f in others
        if is_numeric_column(f) and not _is_temperature(f)
    ]
    if not groups:
        raise InputError(
            "no column of numbers (readings) was found next to the timestamps.",
            hint="Check that the readings are numbers, not text.",
            sheet=table.sheet,
        )
    return groups


def _long_groups(table: Table, others: list[ColumnFacts], label: ColumnFacts) -> list[Group]:
    """One meter per distinct name in the label column; one value column, maybe a unit column."""
    values = [f for f in others if f is not label and is_numeric_column(f)]
    if len(values) != 1:
        found = ", ".join(f"'{f.header}'" for f in values) or "none"
        raise InputError(
            f"a long layout (one row per meter and time, names in column '{label.header}') needs "
            f"exactly one column of values; found {found}.",
            hint="Keep one value column, or save one file per quantity.",
            sheet=table.sheet,
        )
    value = values[0]
    unit_col = next((f for f in others if f.has(vocab.UNIT_COLUMN_WORDS) and f is not label), None)
    names = table.data[label.position].astype(str).str.strip()
    groups = []
    for name, rows in names.groupby(names, sort=False).groups.items():
        unit_text = value.header
        if unit_col is not None:
            unit_cells = table.data.loc[rows, unit_col.position].dropna().astype(str).unique()
            unit_text = f"{value.header} ({unit_cells[0]})" if len(unit_cells) else value.header
            if len(unit_cells) > 1:
                raise InputError(
                    f"meter '{name}' is given in several units ({', '.join(unit_cells)}).",
                    hint="Split the file by unit, or convert the readings to one unit.",
                    sheet=table.sheet,
                    column=unit_col.header,
                )
        groups.append((str(name), value, pd.Index(rows), unit_text))
    return groups


def _read_one(
    path: Path,
    table: Table,
    parsed: ParsedTable,
    site: SiteTime,
    name: str,
    column: ColumnFacts,
    rows: pd.Index,
    unit_text: str,
    options: ReadOptions,
) -> MeterRead:
    unit = _unit_of(unit_text, column.header, options, table.sheet)
    utility = _utility_of(name, unit_text, path, unit, options)
    cells = table.data.loc[rows, column.position]
    raw_values = to_numbers(cells, table.decimal_comma)
    stamps = parsed.stamps.loc[rows]
    findings = checks.non_numeric(cells, raw_values, name, column.header)
    keep = stamps.notna().to_numpy()
    instants, zone_findings = site.to_utc(stamps[keep])
    findings += zone_findings
    raw = pd.DataFrame(
        {"t": instants, "raw_value": raw_values[keep], "source_row": rows[keep].astype("int64")}
    )
    raw = raw[raw["t"].notna()]
    findings += checks.order_and_duplicates(raw, name)
    ordered = raw.sort_values("t", kind="stable").drop_duplicates("t", keep="first")
    ordered = ordered[ordered["raw_value"].notna()]
    if len(ordered) < 2:
        raise InputError(
            f"meter '{name}' has fewer than two readings with a time and a value.",
            hint="Check the value column and the timestamp column.",
            sheet=table.sheet,
            column=column.header,
        )
    index = pd.DatetimeIndex(ordered["t"])
    detected = timestamps.detect_interval(index)
    interval = detected.step
    findings += checks.irregular(detected, name)
    kind, kind_reason = _value_kind(ordered["raw_value"], unit_text, unit, options)
    if kind == "register":
        usage, events, convention, reason = _register_usage(ordered, index, site, options)
        findings += checks.register_events(events, name)
    else:
        usage = pd.Series(ordered["raw_value"].to_numpy(), index=index)
        end_of_day = int(parsed.end_of_day.loc[rows].sum())
        convention, reason = _convention(index, interval, site, options, end_of_day)
        usage.index = timestamps.to_interval_starts(index, interval, convention)
    kwh = units.to_kwh(usage.astype("float64"), unit, interval=interval)
    meter = MeterSeries(
        name=name,
        utility=utility,
        values=kwh.rename(name),
        interval=interval,
        timezone=site.timezone,
        unit_found=unit.name,
        source=path.name,
    )
    findings += checks.negatives(meter) + checks.gaps(meter)
    return MeterRead(
        meter=meter,
        raw=raw.reset_index(drop=True),
        column=column.header,
        unit=unit,
        value_kind=kind,
        value_kind_reason=kind_reason,
        stamp_convention=convention,
        stamp_reason=reason,
        findings=findings,
    )


def _unit_of(unit_text: str, header: str, options: ReadOptions, sheet: str | None) -> units.Unit:
    unit = units.find_unit(unit_text) or (units.find_unit(options.unit) if options.unit else None)
    if unit is None:
        bracket = _bracketed(unit_text)
        problem = (
            f"the unit '{bracket}' is not one the tool knows."
            if bracket
            else "the column does not say its unit."
        )
        raise InputError(
            problem,
            hint="Put the unit in the header, e.g. 'Main (kWh)', or give it with --unit "
            "(kWh, MWh, Wh, kW, therm, ccf, m3, MMBtu, GJ, ton-hour, lb, klb).",
            sheet=sheet,
            column=header,
        )
    if unit.kind == "temperature":
        raise InputError(
            "this column holds temperatures, not meter readings.",
            hint="Import it as a weather file.",
            sheet=sheet,
            column=header,
        )
    return unit


def _utility_of(
    name: str, unit_text: str, path: Path, unit: units.Unit, options: ReadOptions
) -> str:
    """The utility from the setting, the header, the file name or the unit — else ask."""
    if options.utility:
        if options.utility not in UTILITIES:
            raise InputError(
                f"unknown utility '{options.utility}'.",
                hint=f"Choose one of: {', '.join(UTILITIES)}.",
            )
        return options.utility
    found = (
        vocab.utility_from_text(f"{name} {unit_text}")
        or vocab.utility_from_text(path.stem.replace("-", " ").replace("_", " "))
        or unit.utility_hint
    )
    if found is None:
        raise InputError(
            f"{unit.name} is used by several utilities and nothing names this one.",
            hint=f"Say which with --utility ({', '.join(UTILITIES)}), or name it in the header.",
            column=unit_text,
        )
    return found


def _value_kind(
    values: pd.Series, header: str, unit: units.Unit, options: ReadOptions
) -> tuple[str, str]:
    """Interval values or a cumulative register, from the setting, the header or the numbers."""
    if options.values:
        return options.values, "as set"
    if unit.kind == "power":
        return "interval", f"{unit.name} is a demand: energy = demand × interval length"
    if vocab.has_word(header, vocab.REGISTER_WORDS):
        return "register", "the header names a register or meter reading"
    steps = np.diff(values.to_numpy())
    rising = np.mean(steps >= 0) if len(steps) else 0.0
    positive = steps[steps > 0]
    if (
        rising >= 0.98
        and len(positive)
        and (np.median(values) > REGISTER_LEVEL_RATIO * np.median(positive))
    ):
        return "register", (
            f"the numbers rise in {rising:.1%} of steps and stand far above each step: "
            "a cumulative register (set --values interval if not)"
        )
    return "interval", "values per interval"


def _register_usage(
    ordered: pd.DataFrame, index: pd.DatetimeIndex, site: SiteTime, options: ReadOptions
) -> tuple[pd.Series, list, str, str]:
    """Usage between consecutive reads, placed in the interval from one read to the next.

    Reads dated without a time of day are taken at the END of their day (the register as the
    day closes, so read[D] − read[D−1] is day D's use) unless ``--stamps start`` says they were
    taken as the day began. Reads with a time of day are taken at that time.
    """
    reads = pd.Series(ordered["raw_value"].to_numpy(), index=index)
    result = registers.registers_to_usage(reads)
    local = index.tz_convert(site.timezone)
    date_only = bool((local == local.normalize()).all())
    reason = "each difference between two reads is placed in the interval between them"
    if date_only and options.stamps != "start":
        index = (local + pd.DateOffset(days=1)).tz_convert("UTC")
        reason += "; reads dated without a time are taken at the end of their day (set " \
            "--stamps start if they were taken as the day began)"  # fmt: skip
    elif date_only:
        reason += "; reads dated without a time are taken as their day began (as set)"
    usage = pd.Series(result.usage.to_numpy(), index=index[:-1])
    return usage, result.events, "between reads", reason


def _convention(
    index: pd.DatetimeIndex,
    interval: pd.Timedelta,
    site: SiteTime,
    options: ReadOptions,
    end_of_day: int,
) -> tuple[str, str]:
    if options.stamps:
        return options.stamps, "as set"
    local = index.tz_convert(site.timezone)
    return timestamps.guess_stamp_convention(local, interval, end_of_day_cells=end_of_day)


def _is_temperature(facts: ColumnFacts) -> bool:
    unit = units.find_unit(facts.header)
    return (unit is not None and unit.kind == "temperature") or (
        unit is None and facts.has(vocab.TEMPERATURE_WORDS)
    )


def _meter_name(header: str, path: Path) -> str:
    """The header without its unit; the file's name when the header only says "reading"."""
    cut = header
    for opener in ("(", "["):
        if opener in cut:
            cut = cut[: cut.index(opener)]
    cut = cut.strip()
    if not cut or cut.lower() in vocab.GENERIC_VALUE_NAMES:
        return path.stem
    return cut


def _bracketed(text: str) -> str:
    for opener, closer in (("(", ")"), ("[", "]")):
        if opener in text and closer in text:
            return text[text.index(opener) + 1 : text.rindex(closer)].strip()
    return ""
