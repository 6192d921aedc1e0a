"""Detectors on an invented campus meter with faults injected at known places.

Scenario (invented): the Kestrel Library at Tollbridge Polytechnic, a 15-minute electricity
meter on a site in the America/Denver zone. Base load about 120 kW, weekday 07:00–19:00 use
about 200 kW more, weekends a little more, a winter-peaking season of ±15 % and 3 % noise. The
clean year has no faults, so every finding is one we injected.
"""

from __future__ import annotations

import json
import re

import numpy as np
import pandas as pd
import pytest

from engine.cleaning import (
    CleaningSettings,
    apply_steps,
    find_all,
    quality_summary,
    recommended_steps,
)
from engine.errors import InputError
from engine.meters import MeterSeries
from engine.progress import Cancelled, Progress

SITE_ZONE = "America/Denver"
QUARTER_HOUR = pd.Timedelta(minutes=15)
METER = "Kestrel Library main"


def campus_readings(weeks: int = 52) -> pd.Series:
    """A year of clean 15-minute kWh for the invented library, starting Monday 2023-01-02."""
    generator = np.random.default_rng(41)
    start = pd.Timestamp("2023-01-02", tz=SITE_ZONE).tz_convert("UTC")
    index = pd.date_range(start, periods=weeks * 7 * 96, freq="15min")
    local = index.tz_convert(SITE_ZONE)
    hour = local.hour.to_numpy() + local.minute.to_numpy() / 60
    open_hours = (hour >= 7) & (hour < 19)
    weekday = local.day_of_week.to_numpy() < 5
    load = 30.0 + np.where(open_hours, np.where(weekday, 50.0, 15.0), 0.0)
    season = 1 + 0.15 * np.cos(2 * np.pi * (local.day_of_year.to_numpy() - 15) / 365)
    noise = 1 + 0.03 * generator.standard_normal(index.size)
    return pd.Series(load * season * noise, index=index, name=METER)


@pytest.fixture(scope="module")
def clean() -> pd.Series:
    return campus_readings()


def meter_of(readings: pd.Series) -> MeterSeries:
    return MeterSeries(METER, "electricity", readings, QUARTER_HOUR, SITE_ZONE)


def at(readings: pd.Series, local_time: str) -> int:
    """Position of the interval that starts at ``local_time`` on the site's clock."""
    stamp = pd.Timestamp(local_time, tz=SITE_ZONE).tz_convert("UTC")
    return int(readings.index.get_loc(stamp))


def only(findings, kind):
    chosen = [f for f in findings if f.kind == kind]
    assert len(chosen) == 1, [(f.kind, f.start) for f in findings]
    return chosen[0]


def test_a_clean_year_raises_nothing(clean):
    assert find_all(meter_of(clean)) == []


def test_short_gap_is_info_with_a_straight_line(clean):
    first = at(clean, "2023-03-08 10:00")
    faulty = clean.drop(clean.index[first : first + 4])
    finding = only(find_all(meter_of(faulty)), "gap")
    assert (finding.start, finding.end) == (clean.index[first], clean.index[first + 4])
    assert finding.severity == "info" and finding.intervals == 4
    assert finding.fix.kind == "interpolate"
    assert "Gaps up to 2 h" in finding.explanation
    assert "Wed 2023-03-08 10:00 to Wed 2023-03-08 11:00 site time" in finding.explanation
    # The energy a gap is missing is the typical week's estimate: four weekday-morning
    # quarter hours of about 80 kWh times the March season factor.
    assert finding.energy_kwh == 0
    assert finding.expected_kwh == pytest.approx(clean.iloc[first : first + 4].sum(), rel=0.05)


@pytest.mark.parametrize(("days", "severity"), [(2, "warning"), (8, "serious")])
def test_long_gap_is_filled_from_the_typical_week(clean, days, severity):
    first = at(clean, "2023-05-10 00:00")
    stop = first + days * 96
    raw = clean.copy()
    raw.iloc[first:stop] = np.nan  # missing as NaN rather than absent: both are gaps
    finding = only(find_all(meter_of(raw)), "gap")
    assert (finding.start, finding.intervals, finding.severity) == (
        raw.index[first],
        stop - first,
        severity,
    )
    assert finding.fix.kind == "profile_fill"
    assert finding.fix.params["timezone"] == SITE_ZONE


def test_settings_change_the_threshold_and_say_so(clean):
    first = at(clean, "2023-03-08 10:00")
    faulty = clean.drop(clean.index[first : first + 4])
    settings = CleaningSettings(short_gap_hours=0.5)
    finding = only(find_all(meter_of(faulty), settings), "gap")
    assert finding.severity == "warning" and finding.fix.kind == "profile_fill"
    assert "Gaps up to 30 min" in finding.explanation


def test_catch_up_after_a_gap_is_spread_over_it(clean):
    first = at(clean, "2023-04-05 16:00")
    stop = first + 24
    raw = clean.copy()
    raw.iloc[stop] = clean.iloc[first : stop + 1].sum()
    raw.iloc[first:stop] = np.nan
    finding = only(find_all(meter_of(raw)), "catch_up")
    assert (finding.start, finding.end) == (raw.index[first], raw.index[stop + 1])
    assert finding.fix.kind == "spread"
    assert finding.energy_kwh == pytest.approx(clean.iloc[first : stop + 1].sum())
    assert "threshold 6" in finding.explanation and "factor of 2" in finding.explanation


def test_honest_energy_accounting_and_bit_for_bit_undo(clean):
    # Energy conservation: a catch-up reading holds energy that was used during the gap, so
    # after spreading, the meter's total must equal what it recorded.
    first = at(clean, "2023-09-12 20:00")
    stop = first + 40
    raw = clean.copy()
    raw.iloc[stop] = clean.iloc[first : stop + 1].sum() * 0.97
    raw.iloc[first:stop] = np.nan
    before = raw.copy()
    steps = recommended_steps(find_all(meter_of(raw)))
    assert [step.kind for step in steps] == ["spread"]
    cleaned = apply_steps(raw, steps, interval=QUARTER_HOUR)
    recorded = np.nansum(raw.to_numpy())
    assert cleaned.values.sum() == pytest.approx(recorded, rel=1e-9)
    assert not cleaned.values.isna().any()
    assert cleaned.estimated.sum() == stop + 1 - first
    summary = quality_summary(raw, cleaned)
    assert summary["energy_after_kwh"] == pytest.approx(summary["energy_before_kwh"], rel=1e-9)
    assert summary["energy_added_kwh"] == pytest.approx(summary["energy_removed_kwh"], rel=1e-9)

    undone = apply_steps(raw, [], interval=QUARTER_HOUR)
    assert np.array_equal(undone.values.to_numpy(), raw.to_numpy(), equal_nan=True)
    assert not undone.estimated.any()
    pd.testing.assert_series_equal(raw, before)  # the raw readings were never touched


def test_flat_line_uses_a_limit_learned_from_the_meter(clean):
    first = at(clean, "2023-05-20 09:00")
    raw = clean.copy()
    raw.iloc[first : first + 48] = raw.iloc[first]
    finding = only(find_all(meter_of(raw)), "flat_line")
    assert (finding.start, finding.intervals) == (raw.index[first], 48)
    assert finding.severity == "warning"
    assert "longer than 3 h is implausible" in finding.explanation
    assert finding.measures["limit_intervals"] == 12
    # Half a day of one reading may be a quiet building: a person checks before it goes.
    assert "after checking" in finding.explanation
    assert "whole units" not in finding.explanation  # this meter's readings seldom repeat
    assert recommended_steps([finding]) == []


def test_a_day_of_one_reading_is_replaced_with_the_recommended_fixes(clean):
    # A logger repeating its last value for a day and a half: no building uses exactly the
    # same for a day, so "apply recommended" fills it from the meter's own typical week.
    first = at(clean, "2023-05-16 09:00")
    stop = first + 36 * 4
    raw = clean.copy()
    raw.iloc[first:stop] = raw.iloc[first]
    finding = only(find_all(meter_of(raw)), "flat_line")
    assert finding.severity == "serious"
    assert "applied with the other recommended fixes" in finding.explanation
    steps = recommended_steps([finding])
    assert [step.note for step in steps] == ["replace a stuck reading"]
    cleaned = apply_steps(raw, steps, interval=QUARTER_HOUR)
    filled = cleaned.values.iloc[first:stop]
    assert cleaned.estimated.iloc[first:stop].all() and filled.nunique() > 1
    # the fill's energy is the clean meter's within 5 % (the stuck readings were 26 % off)
    truth = clean.iloc[first:stop].sum()
    assert abs(raw.iloc[first:stop].sum() / truth - 1) > 0.25
    assert filled.sum() == pytest.approx(truth, rel=0.05)


def test_a_week_of_one_daily_reading_waits_for_a_person():
    # A daily gas meter read off a whole-ccf register: a quiet summer week can read the same
    # 19 ccf day after day. Ten days of one reading are a flat line to check, not to replace:
    # a day-long repeat is serious only with a day of hourly readings (24) behind it.
    days = pd.date_range("2023-01-01", "2024-12-31", freq="D", tz=SITE_ZONE).tz_convert("UTC")
    rng = np.random.default_rng(3)
    season = 20 + 60 * np.clip(np.cos(2 * np.pi * (days.day_of_year.to_numpy() - 15) / 365), 0, 1)
    readings = pd.Series((season * rng.lognormal(0, 0.05, len(days))).round(), index=days)
    first = int(days.get_loc(pd.Timestamp("2024-06-10", tz=SITE_ZONE).tz_convert("UTC")))
    readings.iloc[first : first + 10] = 19.0
    daily = MeterSeries("Boilerhouse gas", "natural_gas", readings, pd.Timedelta(days=1), SITE_ZONE)
    finding = only(find_all(daily), "flat_line")
    assert (finding.start, finding.intervals) == (days[first], 10)
    assert finding.severity == "warning" and "after checking" in finding.explanation
    assert recommended_steps([finding]) == []
    # its whole-unit readings repeat for days in summer, and the finding says what that means
    assert finding.measures["usual_repeat_intervals"] > 1
    assert "as a register read in whole units does on a steady load" in finding.explanation


def test_a_meter_that_often_repeats_gets_a_longer_flat_limit(clean):
    # A coarse register (40 kWh steps) repeats its reading for hours on end, nights and
    # weekends; the limit follows that history instead of the 3 h floor.
    coarse = (clean / 40).round() * 40
    values = coarse.to_numpy()
    starts = np.flatnonzero(np.r_[True, values[1:] != values[:-1]])
    lengths = np.diff(np.r_[starts, values.size])
    assert lengths.max() > 12 * 10  # repeats of more than 30 h are normal here
    assert [f for f in find_all(meter_of(coarse)) if f.kind == "flat_line"] == []

    first = at(coarse, "2023-04-03 00:00")
    stuck = coarse.copy()
    stuck.iloc[first : first + 7 * 96] = 200.0
    finding = only(find_all(meter_of(stuck)), "flat_line")
    assert (finding.start, finding.intervals) == (stuck.index[first], 7 * 96)
    learned = int(np.ceil(2 * np.quantile(lengths, 0.99)))
    assert finding.measures["limit_intervals"] == pytest.approx(learned, abs=2)


def test_zero_run_in_busy_hours(clean):
    first = at(clean, "2023-06-07 10:00")
    raw = clean.copy()
    raw.iloc[first : first + 16] = 0.0
    finding = only(find_all(meter_of(raw)), "zero_run")
    assert (finding.start, finding.intervals, finding.severity) == (raw.index[first], 16, "warning")
    assert "at most 10% of typical" in finding.explanation


def test_zero_run_then_catch_up_is_a_catch_up(clean):
    first = at(clean, "2023-06-14 10:00")
    stop = first + 16
    raw = clean.copy()
    raw.iloc[stop] = clean.iloc[first : stop + 1].sum()
    raw.iloc[first:stop] = 0.0
    finding = only(find_all(meter_of(raw)), "catch_up")
    assert (finding.start, finding.intervals) == (raw.index[first], 17)
    cleaned = apply_steps(raw, [finding.fix], interval=QUARTER_HOUR)
    assert cleaned.values.sum() == pytest.approx(raw.sum(), rel=1e-12)


def test_spikes_serious_when_beyond_what_the_meter_uses(clean):
    big = at(clean, "2023-08-09 11:00")
    small = at(clean, "2023-08-16 02:00")
    raw = clean.copy()
    raw.iloc[big] *= 10
    raw.iloc[small] += 40  # about 20 robust deviations at night, yet below daytime readings
    findings = [f for f in find_all(meter_of(raw)) if f.kind == "spike"]
    assert [(f.start, f.severity) for f in findings] == [
        (raw.index[big], "serious"),
        (raw.index[small], "warning"),
    ]
    serious = findings[0]
    assert serious.fix.kind == "cap"
    assert serious.fix.params["high"] < raw.iloc[big] / 5
    assert "threshold 6" in serious.explanation
    # Only the serious spike is applied without asking.
    assert [step.kind for step in recommended_steps(findings)] == ["cap"]


def test_dip(clean):
    first = at(clean, "2023-10-11 13:00")
    raw = clean.copy()
    raw.iloc[first : first + 2] = 30.0
    finding = only(find_all(meter_of(raw)), "dip")
    assert (finding.start, finding.intervals) == (raw.index[first], 2)
    assert finding.fix.params["low"] > 30.0


def test_negative_readings_and_a_register_reset(clean):
    negative = at(clean, "2023-02-15 12:00")
    reset = at(clean, "2023-02-22 12:00")
    raw = clean.copy()
    raw.iloc[negative : negative + 3] = -2.0
    raw.iloc[reset] = -99_990.0
    findings = find_all(meter_of(raw))
    negative_finding = only(findings, "negative")
    assert (negative_finding.start, negative_finding.intervals) == (raw.index[negative], 3)
    assert negative_finding.fix.kind == "interpolate"
    reset_finding = only(findings, "register_reset")
    assert reset_finding.start == raw.index[reset]
    assert reset_finding.severity == "serious"
    assert "100,000" in reset_finding.explanation


@pytest.mark.parametrize("ratio", [1.6, 0.6])
def test_level_shift_reported_with_its_ratio_not_fixed(clean, ratio):
    first = at(clean, "2023-07-17 00:00")
    raw = clean.copy()
    raw.iloc[first:] *= ratio
    findings = find_all(meter_of(raw))
    shift = only(findings, "level_shift")
    assert abs(shift.start - raw.index[first]) <= pd.Timedelta(days=1)
    assert shift.measures["ratio"] == pytest.approx(ratio, rel=0.1)
    assert re.search(r"×1\.4 or more", shift.explanation)
    assert shift.fix.kind == "exclude"
    assert recommended_steps(findings) == []


def test_a_term_break_that_recurs_each_year_is_not_a_level_shift():
    readings = campus_readings(weeks=104)
    local = readings.index.tz_convert(SITE_ZONE)
    summer = (local.month == 7) | ((local.month == 8) & (local.day <= 20))
    quiet = readings.where(~summer, readings * 0.55)
    assert [f.kind for f in find_all(meter_of(quiet))] == []


def test_a_shift_on_top_of_a_recurring_break_is_still_a_level_shift():
    # A halved meter multiplier from the first day of the second quiet summer: the summer drop
    # (×0.55) recurs a year earlier, but it accounts for less than half of the change (in logs).
    readings = campus_readings(weeks=104)
    local = readings.index.tz_convert(SITE_ZONE)
    summer = (local.month == 7) | ((local.month == 8) & (local.day <= 20))
    quiet = readings.where(~summer, readings * 0.55)
    change = pd.Timestamp("2024-07-01", tz=SITE_ZONE)
    halved = quiet.where(quiet.index < change, quiet * 0.5)
    shift = only(find_all(meter_of(halved)), "level_shift")
    assert abs(shift.start - change) <= pd.Timedelta(days=1)
    assert shift.measures["ratio"] == pytest.approx(0.55 * 0.5, rel=0.1)


def test_off_grid_readings_are_refused_by_name(clean):
    shifted = clean.copy()
    shifted.index = shifted.index.where(
        np.arange(shifted.size) != 10, shifted.index[10] + pd.Timedelta(minutes=7)
    )
    with pytest.raises(InputError, match=r"Kestrel Library main.*not on the 15 min grid"):
        find_all(meter_of(shifted))


def test_repeated_stamps_are_reported_and_the_rest_still_checked(clean):
    doubled = pd.concat([clean, clean.iloc[500:504]]).sort_index(kind="stable")
    findings = find_all(meter_of(doubled))
    duplicate = only(findings, "duplicate")
    assert (duplicate.start, duplicate.intervals) == (clean.index[500], 4)


def test_findings_are_json_safe_with_ids_stable_from_content(clean):
    first = at(clean, "2023-03-08 10:00")
    faulty = clean.drop(clean.index[first : first + 4])
    one = find_all(meter_of(faulty))
    again = find_all(meter_of(faulty), CleaningSettings(spike_z=7))
    assert [f.id for f in one] == [f.id for f in again]
    text = json.dumps([f.to_dict() for f in one], allow_nan=False)
    assert json.loads(text)[0]["fix"]["kind"] == "interpolate"
    other = find_all(meter_of(faulty.drop(faulty.index[first])))
    assert other[0].id != one[0].id


def test_progress_is_reported_and_cancel_stops(clean):
    seen: list[float] = []
    find_all(meter_of(clean), progress=Progress(lambda fraction, _: seen.append(fraction)))
    assert seen[0] == 0.0 and seen[-1] == 1.0 and seen == sorted(seen)
    progress = Progress()
    progress.cancel()
    with pytest.raises(Cancelled):
        find_all(meter_of(clean), progress=progress)


def test_bad_settings_are_refused():
    with pytest.raises(InputError, match="near_zero_share"):
        CleaningSettings(near_zero_share=1.5)
    with pytest.raises(InputError, match="spike_z"):
        CleaningSettings(spike_z=0)
    with pytest.raises(InputError, match="level_persist_days"):
        CleaningSettings(level_window_days=60)
