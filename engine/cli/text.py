"""Human-readable renderings of the command reports (the JSON holds the same facts)."""

from __future__ import annotations

import pandas as pd

from engine.meters import utility_words


def file_report(report: dict) -> str:
    """What ``inspect`` prints for one file."""
    lines = [f"{report['file']}  ({report['kind']})"]
    if report["kind"] == "meters":
        stamps = report["timestamps"]
        lines += [
            f"  sheet: {report['sheet'] or '-'}   header row: {report['header_row'] or 'none'}"
            f"   layout: {report['layout']}",
            f"  timestamps: {stamps['format']}; {stamps['note']}",
            f"  rows left out: {report['excluded_rows']}",
        ]
        lines += _findings(report["findings"], "  ")
        for meter in report["meters"]:
            lines += _meter(meter)
    elif report["kind"] == "calendar":
        lines += _calendar_lines(report)
    elif report["kind"] == "bills":
        lines += [
            f"  account: {report['account']}   unit: {report['unit_found']} -> kWh",
            f"  periods: {report['periods']} from {report['first_period_start']} to "
            f"{report['last_period_end']} ({report['period_end']})",
            f"  total: {_num(report['total_kwh'])} kWh   cost: {_num(report['total_cost'])}"
            f"   max peak: {_num(report['max_peak_kw'])} kW",
        ]
        lines += _findings(report["findings"], "  ")
    else:
        lines += [
            f"  station: {report['station']}   unit: {report['unit_found']} -> °C   "
            f"interval: {_num(report['interval_minutes'])} min",
            f"  from {report['first']} to {report['last']}: {report['count']} readings, "
            f"mean {_num(report['mean_c'])} °C (min {_num(report['min_c'])}, "
            f"max {_num(report['max_c'])})",
        ]
        lines += _findings(report["findings"], "  ")
    return "\n".join(lines) + "\n"


def _meter(meter: dict) -> list[str]:
    lines = [
        f"  meter '{meter['name']}' ({utility_words(meter['utility'])}) "
        f"from column '{meter['column']}'",
        f"    unit: {meter['unit_found']} -> {meter['unit']}   values: {meter['values']} "
        f"({meter['values_note']})",
        f"    interval: {_num(meter['interval_minutes'])} min   stamps: {meter['stamps']} "
        f"({meter['stamps_note']})",
        f"    {meter['first']} .. {meter['last']}   {meter['count']} of {meter['expected']} "
        f"intervals ({meter['coverage']:.2%})   total {_num(meter['total_kwh'])} kWh",
    ]
    return lines + _findings(meter["findings"], "    ")


def _findings(findings: list[dict], indent: str) -> list[str]:
    if not findings:
        return [f"{indent}no problems noticed"]
    return [f"{indent}! {f['kind']}: {f['message']}" for f in findings]


def new_report(report: dict) -> str:
    parts = [file_report(r) for r in report["files"]]
    parts.append(f"created {report['project']}\n")
    parts.append(project_report(report["summary"]))
    return "\n".join(parts)


def project_report(summary: dict) -> str:
    """What ``info`` prints for a project."""
    lines = [
        f"project {summary['path']} (format {summary['format_version']}, "
        f"site zone {summary['timezone']})"
    ]
    for meter in summary.get("meters", []):
        lines.append(
            f"  {_shown(meter):<28} {utility_words(meter['utility']):<14} "
            f"{_num(meter['interval_minutes']):>5} min"
            f"  {meter['first']} .. {meter['last']}  {meter['count']} readings  "
            f"{_num(meter['total_kwh'])} kWh"
        )
    for key in ("bills", "weather"):
        for item in summary.get(key, []):
            lines.append(f"  {key}: " + ", ".join(f"{k}={_num(v)}" for k, v in item.items()))
    if summary.get("adopted_budgets"):
        lines.append(f"  adopted budgets: {', '.join(summary['adopted_budgets'])}")
    return "\n".join(lines) + "\n"


def _shown(meter: dict) -> str:
    """A meter as readers know it: its display name, else its raw name."""
    return meter.get("display_name") or meter["name"]


def _local(iso_utc: str, timezone: str) -> str:
    return f"{pd.Timestamp(iso_utc).tz_convert(timezone):%Y-%m-%d %H:%M}"


def _num(value) -> str:
    if value is None:
        return "-"
    if isinstance(value, int | float) and abs(value) >= 1000:
        return f"{value:,.0f}"
    return f"{value:.4g}" if isinstance(value, float) else str(value)


def clean_report(report: dict) -> str:
    """What ``clean`` prints: findings, applied steps and data quality per meter."""
    lines = [f"project {report['project']}"]
    for meter in report["meters"]:
        quality = meter["quality"]
        lines.append(
            f"  meter '{_shown(meter)}': {len(meter['findings'])} finding(s); coverage "
            f"{quality['coverage_before']:.2%} -> {quality['coverage_after']:.2%}, estimated "
            f"{quality['estimated_share']:.2%} ({_num(quality['estimated_kwh'])} kWh)"
        )
        notes = [f for f in meter["findings"] if f["severity"] == "info"]
        if notes:
            lines.append(f"    ({len(notes)} informational note(s), not listed: see --json)")
        for finding in meter["findings"]:
            if finding["severity"] == "info":
                continue
            start = _local(finding["start"], meter["timezone"])
            lines.append(
                f"    [{finding['severity']}] {finding['kind']} from {start}: "
                f"{finding['explanation']}"
            )
        if meter["applied"]:
            lines.append(
                f"    applied {len(meter['applied'])} step(s): energy added "
                f"{_num(quality['energy_added_kwh'])} kWh, removed "
                f"{_num(quality['energy_removed_kwh'])} kWh"
            )
    return "\n".join(lines) + "\n"


def profile_report(report: dict) -> str:
    """What ``profile`` prints: each meter's key figures and weather response."""
    lines = [f"project {report['project']}"]
    for meter in report["meters"]:
        lines.append(f"  meter '{_shown(meter)}' ({utility_words(meter['utility'])})")
        for name, entry in meter["figures"].items():
            if name == "weather response":
                parts = [f"{k} {_num(v)}" for k, v in entry.items() if v is not None]
                lines.append(f"    weather response: {'; '.join(parts)}")
            else:
                lines.append(f"    {name}: {_num(entry['value'])} {entry['unit']}")
    if "workbook" in report:
        lines.append(f"wrote {report['workbook']}")
    return "\n".join(lines) + "\n"


def fit_report(report: dict) -> str:
    """What ``fit`` prints: the scorecard per meter, the recommendation and why."""
    lines = [f"project {report['project']}"]
    for meter in report["meters"]:
        lines.append(f"  meter '{_shown(meter)}': recommended {meter['recommended'] or 'none'}")
        lines.append(
            f"    {'model':<44} {'month MAPE %':>12} {'CV(RMSE) %':>10} {'NMBE %':>7}  G14"
        )
        for row in meter["ranking"]:
            lines.append(
                f"    {row['name']:<44} {_num(row['month-total MAPE %']):>12} "
                f"{_num(row['CV(RMSE) %']):>10} {_num(row['NMBE %']):>7}  "
                f"{'met' if row['meets Guideline 14'] else 'not met'}"
            )
        lines += [f"    why: {reason}" for reason in meter["reasons"]]
        lines += [f"    note: {warning}" for warning in meter["warnings"]]
        lines += [f"    {row['meaning']}" for row in meter["explanation"] if row.get("meaning")]
        for row in meter["contributions"]:
            weather = ", ".join(
                f"{part} {row[part]:.0f} %" for part in ("heating", "cooling") if row.get(part)
            )
            lines.append(f"    {row['month']}: {_num(row['kWh'])} kWh modelled; {weather or '-'}")
    return "\n".join(lines) + "\n"


def budget_report(report: dict) -> str:
    """What ``budget`` prints: period totals per meter and roll-up, with the range and cost."""
    levels = [str(level) for level in report["levels"]]
    currency = report.get("currency") or ""
    lines = [
        f"budget {report['months'][0]} .. {report['months'][-1]} as of {report['as_of']}; "
        f"{report['weather']}; {report['paths']} paths",
    ]
    groups = [*report["meters"], *report["utilities"]]
    if report.get("campus"):
        groups.append(report["campus"])
    shown = {m["name"]: m.get("display_name", m["name"]) for m in report["meters"]}
    for group in groups:
        label = utility_words(group.get("display_name") or group.get("name") or group.get("group"))
        if group.get("source") == "bills":
            label += " (bills)" if not group["metered_by"] else " (bills, not in totals)"
        line = _total_line(label, group["total"], levels, currency)
        if "in_read_unit" in group:
            read, middle = group["in_read_unit"], levels[len(levels) // 2]
            line += f" (P{middle} {_num(read['quantiles'][middle])} {read['unit']})"
        lines.append(line)
        part = group.get("priced_meters_only")
        if part:
            left_out = ", ".join(shown.get(name, name) for name in part["left_out"])
            priced = f"{label}, priced meters only"
            lines.append(
                _total_line(priced, part["total"], levels, currency)
                + f" (leaves out {left_out}: no price)"
            )
    for name, calibration in report["calibration"].items():
        lines.append(f"  {shown.get(name, name)}: {calibration['summary']}")
    return _with_closing_lines(lines, report)


def _total_line(label: str, total: dict, levels: list[str], currency: str) -> str:
    """``label``'s period total: its energy at each level, and its cost P50 when priced."""
    spread = " / ".join(f"P{level} {_num(total['quantiles'][level])}" for level in levels)
    line = f"  {label:<28} {spread} kWh"
    if "cost" in total:
        line += f"; cost P50 {currency} {_num(total['cost']['quantiles']['50'])}"
    return line


def meter_report(report: dict) -> str:
    """What ``meter`` prints: each meter's raw name, how it is shown, its utility and unit."""
    lines = [f"temperatures shown in {report['temperature_unit']}"]
    for meter in report["meters"]:
        shown = meter["display_name"]
        named = f"shown as '{shown}'" if shown != meter["name"] else "shown under its own name"
        lines.append(
            f"  {meter['name']}: {named}; {utility_words(meter['utility'])}; "
            f"read in {meter['read_unit']}"
        )
    return "\n".join(lines) + "\n"


def _calendar_lines(report: dict) -> list[str]:
    where = report["country"] or "no country"
    if report["subdivision"]:
        where += f"-{report['subdivision']}"
    counted = (  # the periods' years; without periods the readings' years are used
        f" ({len(report['public_holidays'])} in the covered years)" if report["periods"] else ""
    )
    lines = [f"  {len(report['periods'])} campus periods; public holidays: {where}{counted}"]
    return lines + [
        f"    {p['first_day']} .. {p['last_day']}  {p['kind']:<8} {p['name']}"
        for p in report["periods"]
    ]


def calendar_report(report: dict) -> str:
    """What ``calendar`` prints: the stored calendar, whether this run changed it, and what
    the readings propose when asked."""
    state = "changed and saved" if report["changed"] else "unchanged"
    lines = [f"project {report['project']}: campus calendar {state}", *_calendar_lines(report)]
    if "proposal" in report:
        lines += _proposal_lines(report["proposal"])
    return "\n".join(lines) + "\n"


def _proposal_lines(proposal: dict) -> list[str]:
    found = proposal["holidays"]
    lines = ["proposed from the readings:"]
    if found:
        where = found["country"] + (f"-{found['subdivision']}" if found["subdivision"] else "")
        lines.append(f"  public holidays {where}: {found['evidence']}")
    lines += [f"  note: {note}" for note in proposal["notes"]]
    for period in proposal["periods"]:
        ahead = " (copied forward)" if period["projected"] else ""
        lines.append(
            f"    {period['first_day']} .. {period['last_day']}  {period['kind']:<8} "
            f"{period['name']}{ahead}"
        )
    evidence = dict.fromkeys(p["evidence"].split("; ")[-1] for p in proposal["periods"])
    lines += [f"  evidence: {words}" for words in evidence]
    return lines


def track_report(report: dict) -> str:
    """What ``track`` prints: per meter and roll-up, budget against actual month by month,
    the variance split, and the year-end outlook beside the adopted total."""
    levels = [str(level) for level in report["levels"]]
    lines = [
        f"budget '{report['budget']}' (adopted as of {report['adopted_as_of']}) tracked as of "
        f"{report['as_of']}: {report['months'][0]} .. {report['months'][-1]}",
        f"  {report['identity']}",
    ]
    groups = [*report["meters"], *report["utilities"]]
    if report.get("campus"):
        groups.append(report["campus"])
    for group in groups:
        label = utility_words(group.get("display_name") or group.get("name") or group.get("group"))
        lines.append(f"  {label} ({utility_words(group.get('utility', 'roll-up'))}, kWh)")
        lines.append(
            f"    {'month':<8} {'status':<10} {'budget P50':>12} {'actual':>12} {'variance':>12}"
            f" {'weather':>12} {'usage':>12}  P{levels[0]}–P{levels[-1]}"
        )
        for month in group["months"]:
            if month["status"] == "not begun":
                continue
            inside = {None: "-", True: "outside", False: "inside"}[month["outside_range"]]
            lines.append(
                f"    {month['month']:<8} {month['status']:<10} "
                f"{_num(month['budget_to_date']):>12} {_num(month['actual']):>12} "
                f"{_num(month['variance_kwh']):>12} {_num(month['weather_kwh']):>12} "
                f"{_num(month['usage_kwh']):>12}  {inside}"
            )
        lines.append(_outlook_line(group, levels, report.get("currency") or ""))
    return _with_closing_lines(lines, report)


def _outlook_line(group: dict, levels: list[str], currency: str) -> str:
    adopted = group["adopted_total"]["quantiles"]
    outlook = group.get("outlook")
    if not outlook:
        return f"    year-end outlook: none; adopted P50 {_num(adopted['50'])}"
    spread = " / ".join(f"P{level} {_num(outlook['quantiles'][level])}" for level in levels)
    line = f"    year-end outlook {spread} kWh; adopted P50 {_num(adopted['50'])} kWh"
    if "cost" in outlook and "cost" in group["adopted_total"]:
        line += (
            f"; cost P50 {currency} {_num(outlook['cost']['quantiles']['50'])} (adopted "
            f"{_num(group['adopted_total']['cost']['quantiles']['50'])})"
        )
    return line


def _with_closing_lines(lines: list[str], report: dict) -> str:
    """``lines`` and what a budget or tracking report ends with: the calendar it assumed,
    its cautions and the workbook written, as one text."""
    calendar = report.get("assumptions", {}).get("calendar")
    if calendar:
        lines.append(f"  calendar: {calendar['source']}")
        lines += [f"    {part}: {calendar[part]}" for part in ("public holidays", "periods")]
    lines += [f"  note: {caution}" for caution in report["cautions"]]
    if "workbook" in report:
        lines.append(f"wrote {report['workbook']}")
    return "\n".join(lines) + "\n"
