"""Level shifts: a step change in daily energy that lasts (new equipment, changed use, a unit).

Daily energy is compared by its median over ``level_window`` before and after each day; days
where the ratio peaks beyond ``level_ratio`` are candidates, kept unless a change of the same
sign and at least half the size (in logs) shows a year before or after (then it is a season or
a calendar break, not a shift; a shift on top of a smaller seasonal change still shows). Only
whole days count (:mod:`engine.cleaning.days`); with a campus calendar, holidays, breaks and
closures are left out, so that term days are compared with term days. For a weather-driven
meter (:mod:`engine.cleaning.weather_response`) the daily energy is first normalised to the
average weather, so a warm summer or a cold winter is not a shift while a step in the load the
weather does not explain still is. Medians make the peak a plateau, so the day of change is then
placed by CUSUM on log daily energy (weekday effects removed) around the candidate: the split
where the cumulative departure from the mean is largest, the single change-point estimate that
binary segmentation repeats. The change is reported when the new level still holds over
``level_persist``. Shifts are never fixed automatically.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy.signal import find_peaks

from engine.cleaning.findings import Finding
from engine.cleaning.prepared import PreparedMeter
from engine.cleaning.weather_response import WeatherResponse
from engine.cleaning.wording import energy_text, local_text, ratio_text

#: Offsets (days) at which a recurring change is looked for: 52 weeks, so weekdays line up, give
#: or take two weeks for a calendar that moves.
YEAR_DAYS = 364
YEAR_SLACK_DAYS = 14


def find_level_shifts(meter: PreparedMeter, claimed: np.ndarray) -> list[Finding]:
    """Lasting step changes in daily energy; ``claimed`` is left alone (shifts overlap others).

    For a weather-driven meter whose weather covers the record (:meth:`WeatherResponse.covers`;
    otherwise daily energy as it is) a shift must show on daily energy normalised to the
    average weather both ways (:meth:`WeatherResponse.normalised`): with the weather's effect
    taken out as an amount and in proportion. A step in the load the weather does not drive
    shows both ways; what one way leaves behind when the meter's response to the weather itself
    changed (more or less energy per degree, as after a multiplier change) shows only one way,
    in the season the weather matters most.
    """
    settings = meter.settings
    window = max(2, round(settings.level_window / pd.Timedelta(days=1)))
    persist = max(window, round(settings.level_persist / pd.Timedelta(days=1)))
    days = meter.days
    daily = days.energy(meter.values)
    if daily.size < 2 * window:
        return []
    threshold = math.log(settings.level_ratio)
    weather = meter.weather if meter.weather is not None and meter.weather.covers(days) else None
    if weather is not None:
        confirmed = _shifts(
            weather.normalised(days, daily, proportional=True),
            window,
            persist,
            threshold,
            days.first_weekday,
        ).days
        daily = weather.normalised(days, daily)
    levels = _shifts(daily, window, persist, threshold, days.first_weekday)
    shifts = levels.days
    if weather is not None:
        shifts = [d for d in shifts if any(abs(d - c) <= window for c in confirmed)]
    found = []
    for number, day in enumerate(shifts):
        first = int(days.first[day])
        stop = int(days.first[shifts[number + 1]]) if number + 1 < len(shifts) else len(meter)
        levels_of_day = (levels.before[day], levels.lasting[day])
        found.append(_shift(meter, first, stop, levels_of_day, window, persist, weather))
    return found


@dataclass(frozen=True)
class _Shifts:
    """The first days of the lasting shifts found, and per day the median daily energy of the
    window before it and of the ``persist`` days from it."""

    days: list[int]
    before: np.ndarray
    lasting: np.ndarray


def _shifts(
    daily: np.ndarray, window: int, persist: int, threshold: float, first_weekday: int
) -> _Shifts:
    """Days where the median level of ``daily`` changes by ``threshold`` (in logs) and holds."""
    series = pd.Series(daily)
    reverse = series[::-1].reset_index(drop=True)
    before = series.rolling(window, min_periods=window // 2).median().shift(1).to_numpy()
    after = reverse.rolling(window, min_periods=window // 2).median().to_numpy()[::-1]
    lasting = reverse.rolling(persist, min_periods=window).median().to_numpy()[::-1]
    with np.errstate(divide="ignore", invalid="ignore"):
        change = np.log(after / before)
        held = np.log(lasting / before)
    peaks, _ = find_peaks(
        np.nan_to_num(np.abs(change), posinf=0.0), height=threshold, distance=window
    )
    shifts: list[int] = []
    for peak in peaks:
        if _recurs(change, peak):
            continue
        day = _change_day(daily, peak, window, first_weekday)
        if np.sign(change[peak]) * held[day] >= threshold and day not in shifts:
            shifts.append(day)
    return _Shifts(sorted(shifts), before, lasting)


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
    levels: tuple[float, float],
    window: int,
    persist: int,
    weather: WeatherResponse | None,
) -> Finding:
    """The finding of a shift from ``levels`` (median daily energy before, after), measured on
    daily energy normalised to the average weather when ``weather`` is given."""
    settings = meter.settings
    level_before, level_after = levels
    ratio = level_after / level_before
    unit = (
        " A change close to a factor of 1,000 usually means the unit changed (Wh and kWh, or kWh "
        "and MWh)."
        if abs(abs(math.log10(ratio)) - 3) < 0.05
        else ""
    )
    explanation = (
        f"{_daily_words(weather)} changed from a typical {energy_text(level_before)} a day in the "
        f"{window} days before {local_text(meter.index[first], meter.timezone)} site time to "
        f"{energy_text(level_after)} a day after it ({ratio_text(ratio)}), and the new level "
        f"held over the following {persist} days (or as many as there are readings). Changes of "
        f"{ratio_text(settings.level_ratio)} or more, up or down, that last are reported; the "
        "same change a year earlier or later would mark a season or a calendar break instead. "
        "If equipment or the building's use changed, fit models on the readings after this "
        "date; if the meter, its multiplier or its unit changed, rescale the readings from "
        f"the change on by the factor in the meter's records.{unit} "
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
        weather_normalised=float(weather is not None),
    )


def _daily_words(weather: WeatherResponse | None) -> str:
    """What the shift was measured on: daily energy, normalised to the average weather when
    ``weather`` is given."""
    if weather is None:
        return "Daily energy"
    return (
        "Judged against the weather, daily energy (normalised to the average weather by the "
        "meter's own temperature response, so a warm or cold spell is not a shift)"
    )
