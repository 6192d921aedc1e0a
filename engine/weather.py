"""Outdoor temperature: hourly filling, daily statistics and typical or past-year weather.

Temperatures are Series indexed by tz-aware timestamps (stored in UTC, like meter data) in
degrees Celsius, except where a function says it works in whatever unit it is given. Days
are the site's local calendar days.
"""

from __future__ import annotations

import contextlib
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from datetime import date
from typing import Any

import numpy as np
import pandas as pd

from engine.errors import InputError

#: How each hour of a :class:`FilledWeather` got its value.
FILL_SOURCES: tuple[str, ...] = ("measured", "interpolated", "neighbour_days", "missing")


def fahrenheit_to_celsius(temps: Any) -> Any:
    """°F → °C for scalars, arrays or Series."""
    return (temps - 32.0) * 5.0 / 9.0


def celsius_to_fahrenheit(temps: Any) -> Any:
    """°C → °F for scalars, arrays or Series."""
    return temps * 9.0 / 5.0 + 32.0


def _utc_readings(temps: pd.Series) -> pd.Series:
    """Float readings with NaNs dropped, on a sorted UTC index."""
    if not isinstance(temps.index, pd.DatetimeIndex) or temps.index.tz is None:
        raise ValueError("temperatures need a tz-aware DatetimeIndex")
    readings = temps.astype("float64").dropna()
    readings.index = readings.index.tz_convert("UTC")
    return readings.sort_index()


def _local_clock(index: pd.DatetimeIndex, timezone: str) -> pd.DatetimeIndex:
    return index.tz_convert(timezone).tz_localize(None)


def _missing_runs(missing: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Start positions and lengths of the runs of True in ``missing``."""
    edges = np.diff(np.concatenate(([0], missing.astype(np.int8), [0])))
    starts = np.flatnonzero(edges == 1)
    return starts, np.flatnonzero(edges == -1) - starts


def _run_lengths(missing: np.ndarray) -> np.ndarray:
    """For every position, the length of the missing run it sits in (0 where present)."""
    _, lengths = _missing_runs(missing)
    per_position = np.zeros(len(missing), dtype=np.int64)
    per_position[missing] = np.repeat(lengths, lengths)
    return per_position


def _interpolate_short_gaps(hourly: pd.Series, max_gap_hours: int) -> pd.Series:
    """Fill runs of at most ``max_gap_hours`` missing hours linearly; leave longer runs."""
    run = _run_lengths(hourly.isna().to_numpy())
    short = (run > 0) & (run <= max_gap_hours)
    interpolated = hourly.interpolate(method="linear", limit_area="inside")
    return hourly.where(~short, interpolated)


@dataclass(frozen=True)
class WeatherGap:
    """A stretch of missing hours longer than the interpolation limit.

    ``start`` is the first missing hour and ``end`` the hour readings resume (UTC).
    """

    start: pd.Timestamp
    end: pd.Timestamp
    hours: int
    filled: bool


@dataclass(frozen=True)
class FilledWeather:
    """Hourly temperatures after filling, with where every value came from."""

    hourly: pd.Series
    source: pd.Series
    long_gaps: tuple[WeatherGap, ...]


def _borrow_from_neighbour_days(values: np.ndarray, days: int) -> np.ndarray:
    """Per hour, the mean of the nearest day before and after with a value at the same hour.

    Same hour means 24 h apart in UTC, which keeps solar time (the driver of the daily
    temperature cycle) across daylight-saving changes.
    """
    n = len(values)
    before = np.full(n, np.nan)
    after = np.full(n, np.nan)
    for k in range(1, days + 1):
        lag = 24 * k
        if lag >= n:
            break
        earlier = np.concatenate((np.full(lag, np.nan), values[:-lag]))
        later = np.concatenate((values[lag:], np.full(lag, np.nan)))
        before = np.where(np.isnan(before), earlier, before)
        after = np.where(np.isnan(after), later, after)
    both = ~np.isnan(before) & ~np.isnan(after)
    return np.where(both, (before + after) / 2, np.where(np.isnan(before), after, before))


def fill_hourly(
    temps_c: pd.Series,
    *,
    max_gap_hours: int = 6,
    fill_long_gaps: bool = False,
    neighbour_days: int = 7,
) -> FilledWeather:
    """Put temperature readings on a regular hourly grid and fill what can honestly be filled.

    Parameters
    ----------
    temps_c : pandas.Series
        Readings at any spacing on a tz-aware index; several readings in an hour are averaged.
    max_gap_hours : int, default 6
        Gaps up to this many hours are interpolated linearly.
    fill_long_gaps : bool, default False
        Fill longer gaps from the same hours of the nearest days before and after that have
        readings (at most ``neighbour_days`` away); those hours are flagged ``neighbour_days``.
    neighbour_days : int, default 7

    Returns
    -------
    FilledWeather
        ``hourly`` on a regular UTC grid from the first to the last reading, ``source``
        (see :data:`FILL_SOURCES`) per hour, and every gap longer than ``max_gap_hours``.
    """
    readings = _utc_readings(temps_c)
    if readings.empty:
        raise InputError(
            "there are no temperature readings.",
            hint="Check the weather file's temperature column.",
        )
    hourly = readings.resample("h").mean()
    measured = hourly.notna().to_numpy()
    hourly = _interpolate_short_gaps(hourly, max_gap_hours)
    values = hourly.to_numpy().copy()
    if fill_long_gaps:
        borrowed = _borrow_from_neighbour_days(values, neighbour_days)
        values = np.where(np.isnan(values), borrowed, values)
    missing_after_interpolation = np.isnan(hourly.to_numpy())
    source = np.select(
        [measured, ~missing_after_interpolation, ~np.isnan(values)],
        [0, 1, 2],
        default=3,
    )
    starts, lengths = _missing_runs(~measured)
    gaps = tuple(
        WeatherGap(
            start=hourly.index[start],
            end=hourly.index[start + length],
            hours=int(length),
            filled=bool(np.all(~np.isnan(values[start : start + length]))),
        )
        for start, length in zip(starts, lengths, strict=True)
        if length > max_gap_hours
    )
    return FilledWeather(
        hourly=pd.Series(values, index=hourly.index, name=temps_c.name),
        source=pd.Series(
            pd.Categorical.from_codes(source, categories=FILL_SOURCES), index=hourly.index
        ),
        long_gaps=gaps,
    )


def hourly_stations(stations: Mapping[str, pd.Series]) -> dict[str, pd.Series]:
    """Each station's readings averaged per UTC hour, the station with the most hours first:
    the order in which :func:`combined_hours` takes them."""
    hourly = {
        name: reading.groupby(reading.index.floor("h")).mean()
        for name, reading in ((n, _utc_readings(s).dropna()) for n, s in stations.items())
    }
    return dict(sorted(hourly.items(), key=lambda item: len(item[1]), reverse=True))


def combined_hours(hourly: Iterable[pd.Series]) -> pd.Series:
    """One hourly series of the site's temperatures from several stations made hourly and
    ordered by :func:`hourly_stations`.

    The station with the most hours is taken as it is and every hour it lacks comes from the
    next station that has it. The usual way to keep a site's record whole with a backup or a
    second file of the same station; two stations are never averaged, so a warmer rooftop
    sensor does not shift the main station's readings.
    """
    stations = list(hourly)
    if not stations:
        raise ValueError("no weather stations to combine")
    combined = stations[0]
    for other in stations[1:]:
        combined = combined.combine_first(other)
    return combined.rename("site")


def daily_stats(temps: pd.Series, timezone: str) -> pd.DataFrame:
    """Temperature statistics per local calendar day, in the unit of ``temps``.

    Returns
    -------
    pandas.DataFrame
        Indexed by local day (naive midnight, named ``day``) with ``tmean`` (mean of the hourly
        means, so uneven reading spacing does not bias it), ``tmax`` and ``tmin`` (extremes of
        the readings) and ``hours`` (clock hours with at least one reading).
    """
    readings = _utc_readings(temps)
    hourly = readings.resample("h").mean().dropna()
    reading_day = _local_clock(readings.index, timezone).normalize()
    hourly_day = _local_clock(hourly.index, timezone).normalize()
    by_hour = hourly.groupby(hourly_day)
    by_reading = readings.groupby(reading_day)
    daily = pd.DataFrame(
        {
            "tmean": by_hour.mean(),
            "tmax": by_reading.max(),
            "tmin": by_reading.min(),
            "hours": by_hour.count(),
        }
    )
    daily.index.name = "day"
    return daily


def local_hours(first_day: date, last_day: date, timezone: str) -> pd.DatetimeIndex:
    """UTC hour starts covering local days ``first_day`` to ``last_day`` inclusive."""
    if last_day < first_day:
        raise ValueError("the last day is before the first day")

    def midnight(day: date) -> pd.Timestamp:
        return pd.Timestamp(day).tz_localize(timezone, nonexistent="shift_forward", ambiguous=True)

    start = midnight(first_day)
    stop = midnight(pd.Timestamp(last_day) + pd.Timedelta(days=1))
    return pd.date_range(start, stop, freq="h", inclusive="left").tz_convert("UTC")


def _year_fraction(days: pd.DatetimeIndex) -> np.ndarray:
    """Position of each day's midpoint in its calendar year, 0..1 (leap years included)."""
    length = np.where(days.is_leap_year, 366.0, 365.0)
    return (days.day_of_year.to_numpy() - 0.5) / length


def _harmonic_columns(fraction: np.ndarray, harmonics: int) -> np.ndarray:
    angles = 2 * np.pi * np.outer(fraction, np.arange(1, harmonics + 1))
    return np.column_stack([np.ones(len(fraction)), np.cos(angles), np.sin(angles)])


@dataclass(frozen=True)
class TypicalWeather:
    """A typical year of hourly temperature for a site, learned from past years.

    The daily mean follows a smooth annual curve (a constant plus a few annual Fourier
    harmonics fitted to every past day, which amounts to averaging each day of the year over
    the years and smoothing circularly); each month has its own typical daily shape, the
    average offset of each local clock hour from its day's mean.
    """

    timezone: str
    coefficients: tuple[float, ...]
    diurnal: tuple[tuple[float, ...], ...]
    years: tuple[int, ...]

    def daily_mean(self, days: pd.DatetimeIndex) -> pd.Series:
        """Typical daily mean temperature for naive local days."""
        harmonics = (len(self.coefficients) - 1) // 2
        columns = _harmonic_columns(_year_fraction(days), harmonics)
        return pd.Series(columns @ np.asarray(self.coefficients), index=days, name="tmean")

    def hourly(self, first_day: date, last_day: date) -> pd.Series:
        """Typical hourly temperature on a UTC index for local days ``first_day``..``last_day``."""
        index = local_hours(first_day, last_day, self.timezone)
        local = _local_clock(index, self.timezone)
        daily = self.daily_mean(local.normalize()).to_numpy()
        shape = np.asarray(self.diurnal)[local.month - 1, local.hour]
        return pd.Series(daily + shape, index=index, name="typical_temperature")

    def to_dict(self) -> dict[str, Any]:
        return {
            "timezone": self.timezone,
            "coefficients": list(self.coefficients),
            "diurnal": [list(row) for row in self.diurnal],
            "years": list(self.years),
        }

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> TypicalWeather:
        return cls(
            timezone=data["timezone"],
            coefficients=tuple(float(value) for value in data["coefficients"]),
            diurnal=tuple(tuple(float(value) for value in row) for row in data["diurnal"]),
            years=tuple(int(year) for year in data["years"]),
        )


def typical_year(
    hourly_temps_c: pd.Series,
    timezone: str,
    *,
    harmonics: int = 3,
    min_day_hours: int = 20,
    min_days_per_month: int = 10,
) -> TypicalWeather:
    """Learn a typical year from hourly history.

    Days with fewer than ``min_day_hours`` hours are left out. Every calendar month needs
    ``min_days_per_month`` such days, otherwise an :class:`InputError` says which months lack
    data (a typical year needs at least one year of history).
    """
    readings = _utc_readings(hourly_temps_c)
    hourly = readings.resample("h").mean().dropna()
    daily = daily_stats(hourly, timezone)
    daily = daily[daily["hours"] >= min_day_hours]
    per_month = daily.groupby(daily.index.month).size().reindex(range(1, 13), fill_value=0)
    short = [month for month, count in per_month.items() if count < min_days_per_month]
    if short:
        names = ", ".join(pd.Timestamp(2001, month, 1).strftime("%B") for month in short)
        raise InputError(
            f"too few days with temperatures in {names} to learn a typical year.",
            hint="Import at least one full year of hourly temperatures.",
        )
    columns = _harmonic_columns(_year_fraction(daily.index), harmonics)
    coefficients = np.linalg.lstsq(columns, daily["tmean"].to_numpy(), rcond=None)[0]

    local = _local_clock(hourly.index, timezone)
    day_mean = daily["tmean"].reindex(local.normalize()).to_numpy()
    offset = pd.Series(hourly.to_numpy() - day_mean).dropna()
    keys = [local.month.to_numpy()[offset.index], local.hour.to_numpy()[offset.index]]
    table = offset.groupby(keys).mean().unstack().reindex(index=range(1, 13), columns=range(24))
    return TypicalWeather(
        timezone=timezone,
        coefficients=tuple(float(value) for value in coefficients),
        diurnal=tuple(tuple(float(v) for v in row) for row in table.fillna(0.0).to_numpy()),
        years=tuple(int(year) for year in sorted(set(daily.index.year))),
    )


def past_year_samples(
    hourly_temps_c: pd.Series,
    first_day: date,
    last_day: date,
    timezone: str,
    *,
    max_gap_hours: int = 6,
) -> pd.DataFrame:
    """The same calendar window's hourly temperatures in each past year of the history.

    Each past year is laid onto the target window's hours by local month, day and hour, so a
    budget can draw whole past years as weather scenarios. A target 29 February takes the
    28th where the past year has none; a past 29 February is skipped otherwise. Gaps of at
    most ``max_gap_hours`` (including the hour a daylight-saving change skips) are
    interpolated; a year with any longer gap in the window is left out.

    Returns
    -------
    pandas.DataFrame
        Indexed by the window's UTC hours, one column per past year, named by the year the
        past window starts in, most recent first.
    """
    target = local_hours(first_day, last_day, timezone)
    readings = _utc_readings(hourly_temps_c)
    hourly = readings.resample("h").mean()
    by_clock = hourly.groupby(_local_clock(hourly.index, timezone)).mean()
    clock = pd.date_range(by_clock.index[0], by_clock.index[-1], freq="h")
    history = _interpolate_short_gaps(by_clock.reindex(clock), max_gap_hours)

    local = _local_clock(target, timezone)
    month, day, hour = local.month.to_numpy(), local.day.to_numpy(), local.hour.to_numpy()
    samples: dict[int, np.ndarray] = {}
    offset = 1
    while local[0].year - offset >= history.index[0].year:
        years = local.year.to_numpy() - offset
        is_leap = (years % 4 == 0) & ((years % 100 != 0) | (years % 400 == 0))
        source_day = np.where((month == 2) & (day == 29) & ~is_leap, 28, day)
        source = pd.to_datetime(
            pd.DataFrame({"year": years, "month": month, "day": source_day, "hour": hour})
        )
        values = history.reindex(source).to_numpy()
        if not np.isnan(values).any():
            samples[int(local[0].year - offset)] = values
        offset += 1
    if not samples:
        raise InputError(
            f"no past year has complete temperatures for {first_day} to {last_day}.",
            hint="Import more weather history or fill its long gaps first.",
        )
    return pd.DataFrame(samples, index=target)


class TypicalYears:
    """Typical years learned from the readings before given moments, each learned once.

    A backtest learns one before each of its origins, and the fit wizard's tuning and main
    backtests, and every meter of a site, use the same weather: sharing one of these learns
    each typical year once. A moment whose history cannot give one raises the same
    :class:`~engine.errors.InputError` each time it is asked for.
    """

    def __init__(self, hourly_temps_c: pd.Series, timezone: str) -> None:
        self.hourly = hourly_temps_c
        self.timezone = timezone
        self._learned: dict[pd.Timestamp, TypicalWeather | tuple[str, str]] = {}

    def before(self, moment: pd.Timestamp) -> TypicalWeather:
        """The typical year of the readings before ``moment``."""
        if moment not in self._learned:
            try:
                found = typical_year(self.hourly[self.hourly.index < moment], self.timezone)
            except InputError as error:
                found = (error.message, error.hint)
            self._learned[moment] = found
        found = self._learned[moment]
        if isinstance(found, tuple):
            raise InputError(found[0], hint=found[1])
        return found

    def learn(self, moments: Iterable[pd.Timestamp]) -> TypicalYears:
        """Learn the typical years before ``moments`` now (before sending this elsewhere)."""
        for moment in moments:
            with contextlib.suppress(InputError):
                self.before(moment)
        return self
