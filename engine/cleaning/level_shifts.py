"""Level shifts: a step change in daily energy that lasts (new equipment, changed use, a unit).

Daily energy is compared by its median over ``level_window`` before and after each day; days
where the ratio peaks beyond ``level_ratio`` are candidates, kept unless a change of the same
sign and at least half the size (in logs) shows a year before or after (then it is a season or
a calendar break, not a shift; a shift on top of a smaller seasonal change still shows). With a
campus calendar, holidays, breaks and closures are left out of the daily series, so that term
days are compared with term days. Medians make the peak a plateau, so the day of change is then
placed by CUSUM on log daily energy (weekday effects removed) around the candidate: the split
where the cumulative departure from the mean is largest, the single change-point estimate that
binary segmentation repeats. The change is reported when the new level still holds over
``level_persist``. Shifts are never fixed automatically.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
from scipy.signal import find_peaks

from engine.cleaning.findings import Finding
from engine.cleaning.prepared import PreparedMeter
from engine.cleaning.wording import energy_text, local_text, ratio_text

#: A local day counts when at least this share of its intervals has a reading.
DAY_COVERAGE = 0.9
#: Offsets (days) at which a recurring change is looked for: 52 weeks, so weekdays line up, give
#: or take two weeks for a calendar that moves.
YEAR_DAYS = 364
YEAR_SLACK_DAYS = 14


def find_level_shifts(meter: PreparedMeter, claimed: np.ndarray) -> list[Finding]:
    """Lasting step changes in daily energy; ``claimed`` is left alone (shifts overlap others)."""
    settings = meter.settings
    daily, day_first, first_weekday = _daily_energy(meter)
    window = max(2, round(settings.level_window / pd.Timedelta(days=1)))
    persist = max(window, round(settings.level_persist / pd.Timedelta(days=1)))
    if daily.size < 2 * window:
        return []
    series = pd.Series(daily)
    reverse = series[::-1].reset_index(drop=True)
    before = series.rolling(window, min_periods=window // 2).median().shift(1).to_numpy()
    after = reverse.rolling(window, min_periods=window // 2).median().to_numpy()[::-1]
    lasting = reverse.rolling(persist, min_periods=window).median().to_numpy()[::-1]
    with np.errstate(divide="ignore", invalid="ignore"):
        change = np.log(after / before)
        held = np.log(lasting / before)
    threshold = math.log(settings.level_ratio)
    peaks, _ = find_peaks(
        np.nan_to_num(np.abs(change), posinf=0.0), height=threshold, distance=window
    )
    shifts = []
    for peak in peaks:
        if _recurs(change, peak):
            continue
        day = _change_day(daily, peak, window, first_weekday)
        if np.sign(change[peak]) * held[day] >= threshold and day not in shifts:
            shifts.append(day)
    shifts.sort()
    found = []
    for number, day in enumerate(shifts):
        first = int(day_first[day])
        stop = int(day_first[shifts[number + 1]]) if number + 1 < len(shifts) else len(meter)
        found.append(_shift(meter, first, stop, before[day], lasting[day], window, persist))
    return found


def _daily_energy(meter: PreparedMeter) -> tuple[np.ndarray, np.ndarray, int]:
    """Daily energy, each day's first grid position, and the first day's weekday (Monday = 0).

    Days are local calendar days; a day short of readings (or a partial first or last day) is
    NaN, and a day with a few missing intervals is scaled up to its full count. Days the campus
    calendar makes quiet are NaN too.
    """
    # 1970-01-01 was a Thursday.
    first_weekday = int((meter.local_day[0] + 3) % 7)
    day = meter.local_day - meter.local_day[0]
    days = int(day[-1]) + 1
    present = np.isfinite(meter.values)
    slots = np.bincount(day, minlength=days)
    readings = np.bincount(day, weights=present, minlength=days)
    energy = np.bincount(day, weights=np.where(present, meter.values, 0.0), minlength=days)
    whole_day = slots * meter.interval >= pd.Timedelta(hours=23)
    counted = whole_day & (readings >= DAY_COVERAGE * slots)
    if meter.calendar_days is not None:
        counted &= np.bincount(day, weights=meter.calendar_days.quiet, minlength=days) == 0
    with np.errstate(invalid="ignore", divide="ignore"):
        daily = np.where(counted, energy * slots / readings, np.nan)
    return daily, np.searchsorted(day, np.arange(days)), first_weekday


def _change_day(daily: np.ndarray, peak: int, window: int, first_weekday: int) -> int:
    """The first day of the new level near ``peak``, by CUSUM of log daily energy."""
    low, high = max(0, peak - window), min(daily.size, peak + window)
    days = np.arange(low, high)
    with np.errstate(divide="ignore", invalid="ignore"):
        logs = np.log(daily[low:high])
    usable = np.isfinite(logs)
    days, logs = days[usable], logs[usable]
    if days.size < 3:
        return peak
    weekday = (days + first_weekday) % 7
    weekday_mean = np.bincount(weekday, weights=logs, minlength=7) / np.maximum(
        np.bincount(weekday, minlength=7), 1
    )
    residual = logs - weekday_mean[weekday]
    departure = np.cumsum(residual - residual.mean())
    return int(days[int(np.argmax(np.abs(departure[:-1]))) + 1])


def _recurs(change: np.ndarray, day: int) -> bool:
    """Whether a change of the same sign and at least half the size (in logs) shows a year away."""
    size = abs(change[day])
    sign = np.sign(change[day])
    for offset in (-YEAR_DAYS, YEAR_DAYS):
        low = max(0, day + offset - YEAR_SLACK_DAYS)
        high = min(change.size, day + offset + YEAR_SLACK_DAYS + 1)
        if high <= low:
            continue
        nearby = sign * change[low:high]
        nearby = nearby[np.isfinite(nearby)]
        if nearby.size and nearby.max() >= size / 2:
            return True
    return False


def _shift(
    meter: PreparedMeter,
    first: int,
    stop: int,
    level_before: float,
    level_after: float,
    window: int,
    persist: int,
) -> Finding:
    settings = meter.settings
    ratio = level_after / level_before
    unit = (
        " A change close to a factor of 1,000 usually means the unit changed (Wh and kWh, or kWh "
        "and MWh)."
        if abs(abs(math.log10(ratio)) - 3) < 0.05
        else ""
    )
    explanation = (
        f"Daily energy changed from a typical {energy_text(level_before)} a day in the "
        f"{window} days before {local_text(meter.index[first], meter.timezone)} site time to "
        f"{energy_text(level_after)} a day after it ({ratio_text(ratio)}), and the new level "
        f"held over the following {persist} days (or as many as there are readings). Changes of "
        f"{ratio_text(settings.level_ratio)} or more, up or down, that last are reported; the "
        "same change a year earlier or later would mark a season or a calendar break instead. "
        "If equipment or the building's use changed, fit models on the readings after this "
        f"date; if the meter, its multiplier or its unit changed, correct the import.{unit} "
        "Nothing is changed automatically."
    )
    fix = (
        meter.step("exclude", 0, first, "leave readings before a level shift out of fitting")
        if first > 0
        else None
    )
    return meter.finding(
        "level_shift",
        first,
        stop,
        "warning",
        explanation,
        fix,
        ratio=ratio,
        before_kwh_per_day=level_before,
        after_kwh_per_day=level_after,
        threshold_ratio=settings.level_ratio,
        window_days=window,
        persist_days=persist,
    )
