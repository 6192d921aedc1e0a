"""The weather a budget assumes: typical, the spread of past years, a given series, or none.

Every assumption becomes one or more *weather scenarios*: hourly °C on the budget window's
hours. A path of the simulation uses one scenario, and every meter of that path uses the same
one, so meters that all respond to a cold winter are cold together.

* ``"typical"`` — one scenario: :func:`engine.weather.typical_year` learned from the
  temperatures before the cut (a smooth year; the range then holds model error only).
* ``"past_years"`` — many scenarios, each typical weather plus *departures* (observed − typical,
  hour by hour) of past days, drawn in blocks of whole local days by a stationary bootstrap
  (Politis & Romano 1994) whose blocks start on a past day within ``season_days`` of the same
  day of the year, in any past year. Optionally only the most recent ``years`` are drawn from
  (climates drift; 10–30 recent years is common practice). Two or three years of history thus
  give a continuous spread of month temperatures instead of two or three whole past years.
* ``"given"`` — one scenario: the user's series, which must cover every hour from the cut on
  (short gaps up to 6 hours are interpolated, as in :func:`engine.weather.fill_hourly`).
* ``"none"`` — no temperatures, for calendar-only models.

How the departures are drawn. Past local days with a temperature in every hour (after short
gaps are interpolated) form the pool; each gets its 24 hourly departures (on the day clocks go
forward the skipped hour takes the next hour's, on the day they go back the repeated hour keeps
the first). For each budget day a new block starts with probability ``1 / block_days`` (always
on the first day); its first past day is drawn uniformly from the pool days whose day of the
year lies within ``± season_days`` of the budget day's, and the block then walks on day by day.
A block that would step onto a day missing from the pool (a gap, or the as-of cut) starts anew
there. Inside a block the past day stays as far from the budget day in the year as it started,
so departures keep their season (winter's are larger than summer's) and their day-to-day
persistence; joins between blocks lose the persistence beyond them, which keeps the spread of
month means a little under that of the past (for a daily AR(1) with lag-one correlation φ the
bootstrap keeps lag ``k`` correlation ``(φ (1 − 1/block_days))^k``). Unless set, the mean
block length is chosen from the persistence of the past days' mean departures (the automatic
stationary-bootstrap length of Politis & White 2004), so weather whose anomalies last weeks
gets blocks weeks long and a month's mean keeps its spread.

The departures give the spread, not the centre: each pool day's departures are taken less the
mean daily departure of the pool days within ``season_days`` of its day of the year
(:func:`seasonal_mean_departure`). With a few years of history a season's mean departure is
those years' own anomaly, which the smooth typical year (fitted to every day of every year)
already weighs against the rest of the year; left in, it would move every path's month by the
few past years' average instead of the typical year's estimate (on the sample campus, with
1–3 years of weather at the past budgets' as-of dates, taking it off cut the chilled-water
meters' month-ahead error by a tenth).

The typical weather is learned from the same ``n`` years the departures come from, so a new
year departs from it more than the past years did: by ``√(1 + 1/n)`` in standard deviation,
as a new value departs from the mean of ``n`` earlier ones (the factor of a prediction
interval; 1.15 for three years, 1.02 for twenty-four). The drawn departures are widened by
that factor, ``n`` counted as the pool's whole days over 365.25.

Weather that remembers: unless switched off, the past-years paths add the expected departure
given the anomaly the site is in at the as-of date, decaying into the budget at the rate the
site's history shows, where the history shows that this forecasts past months better than the
typical year (:mod:`engine.budget.weather_memory`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from engine.bootstrap import stationary_block_length
from engine.budget.meter_grid import HOUR, MeterGrid
from engine.budget.periods import BudgetWindow
from engine.budget.residuals import error_table
from engine.budget.scenarios import TYPICAL, WeatherScenarios
from engine.budget.weather_memory import AnomalyMemory, anomaly_memory
from engine.errors import InputError
from engine.weather import fill_hourly, typical_year

#: The weather assumptions, with what each means in words.
WEATHER_KINDS: dict[str, str] = {
    "typical": "typical weather",
    "past_years": "typical weather plus past days' departures from it, drawn in blocks of days",
    "given": "a given temperature series",
    "none": "no weather (calendar-only models)",
}
#: Mean length of a year in days: the period of the day-of-year distance.
YEAR_DAYS = 365.25


@dataclass(frozen=True, eq=False)
class WeatherAssumption:
    """Which weather the budget assumes, with the temperatures it draws on (°C).

    Use the constructors: :meth:`typical`, :meth:`past_years`, :meth:`given`, :meth:`none`.
    For the first two ``temperatures`` is the site's history (hourly or finer); readings
    from the cut on are ignored. ``draws``, ``block_days`` and ``season_days`` set how past
    years' departures are drawn (see the module notes); the other kinds ignore them.
    """

    kind: str
    temperatures: pd.Series | None = None
    years: int | None = None
    draws: int = 50
    block_days: float | None = None
    season_days: int = 15
    memory: bool = True

    def __post_init__(self) -> None:
        if self.kind not in WEATHER_KINDS:
            raise ValueError(f"weather kind must be one of {sorted(WEATHER_KINDS)}")
        if (self.kind == "none") != (self.temperatures is None):
            raise ValueError("temperatures go with every weather kind except 'none'")
        if self.years is not None and (self.kind != "past_years" or self.years < 1):
            raise ValueError("a number of years (at least 1) goes with past years only")
        block_ok = self.block_days is None or self.block_days >= 1
        if self.draws < 1 or not block_ok or not 0 <= self.season_days <= 182:
            raise ValueError("draws and block_days must be at least 1, season_days 0 to 182")

    @classmethod
    def typical(cls, history_c: pd.Series) -> WeatherAssumption:
        return cls("typical", history_c)

    @classmethod
    def past_years(
        cls,
        history_c: pd.Series,
        years: int | None = None,
        *,
        draws: int = 50,
        block_days: float | None = None,
        season_days: int = 15,
        memory: bool = True,
    ) -> WeatherAssumption:
        """Typical weather plus past days' departures from it (see the module notes).

        Parameters
        ----------
        history_c : pandas.Series
            The site's temperature history, °C on a tz-aware index.
        years : int, optional
            Draw only from the most recent ``years`` before the budget.
        draws : int, default 50
            Weather scenarios drawn (at most one per path); each costs one model prediction
            per meter whose model uses temperature.
        block_days : float, optional
            Mean length in days of the blocks of past days; by default chosen from the
            persistence of the daily mean departures (Politis & White 2004, see
            :func:`engine.bootstrap.stationary_block_length`).
        season_days : int, default 15
            How many days either side of the same day of the year a block may start.
        memory : bool, default True
            Start the paths from the recent weather anomaly where the history shows skill
            (:mod:`engine.budget.weather_memory`); False draws from the typical year alone.
        """
        return cls("past_years", history_c, years, draws, block_days, season_days, memory)

    @classmethod
    def given(cls, temperatures_c: pd.Series) -> WeatherAssumption:
        return cls("given", temperatures_c)

    @classmethod
    def none(cls) -> WeatherAssumption:
        return cls("none")


def _before(temperatures: pd.Series, cut: pd.Timestamp) -> pd.Series:
    if not isinstance(temperatures.index, pd.DatetimeIndex) or temperatures.index.tz is None:
        raise InputError(
            "the temperatures have no time zone on their time stamps.",
            hint="Use the project's stored weather (UTC time stamps).",
        )
    return temperatures[temperatures.index < cut]


def season_of(days: pd.DatetimeIndex) -> np.ndarray:
    """Where each (naive, local) day falls in its year, in days from 0 to ``YEAR_DAYS``.

    The day's midpoint as a share of its own year's length, so 31 December is next to
    1 January in leap years and others alike.
    """
    length = np.where(days.is_leap_year, 366.0, 365.0)
    return (days.day_of_year.to_numpy() - 0.5) / length * YEAR_DAYS


def season_windows(
    pool_seasons: np.ndarray, wanted: np.ndarray, season_days: float
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The pool days within ``season_days`` of each wanted day of the year, in any year.

    Returns ``members`` (pool positions ordered by season, the pool three times over a year
    apart, so a window around any day is one slice) and each wanted day's slice
    ``members[low:high]``.
    """
    by_season = np.argsort(pool_seasons, kind="stable")
    seasons = pool_seasons[by_season]
    around = np.concatenate([seasons - YEAR_DAYS, seasons, seasons + YEAR_DAYS])
    low = np.searchsorted(around, wanted - season_days, side="left")
    high = np.searchsorted(around, wanted + season_days, side="right")
    return np.tile(by_season, 3), low, high


def seasonal_mean_departure(
    pool_days: np.ndarray, daily: np.ndarray, season_days: float
) -> np.ndarray:
    """Each pool day's season mean: the mean of ``daily`` over the pool days within
    ``season_days`` of its day of the year, in any year.

    Taken off the drawn departures so they give the spread of the weather, not its centre:
    with a few years of history, a season's mean departure is those years' own anomaly, which
    the smooth typical year (fitted to every day) already weighs against the rest of the year.
    """
    seasons = season_of(pd.DatetimeIndex(np.asarray(pool_days, dtype="datetime64[D]")))
    members, low, high = season_windows(seasons, seasons, season_days)
    sums = np.concatenate([[0.0], np.cumsum(daily[members])])
    return (sums[high] - sums[low]) / (high - low)


def seasonal_block_days(
    pool_days: np.ndarray,
    target: pd.DatetimeIndex,
    mean_block: float,
    season_days: float,
    draws: int,
    rng: np.random.Generator,
) -> np.ndarray:
    """Positions into ``pool_days`` for every target day, drawn in season-aligned blocks.

    Parameters
    ----------
    pool_days : numpy.ndarray
        Sorted, distinct ``datetime64[D]`` days that may be drawn.
    target : pandas.DatetimeIndex
        Consecutive naive local days to fill.
    mean_block : float
        Mean block length ``m`` in days; a block starts on each day with probability ``1/m``.
    season_days : float
        A block starts on a pool day within this many days of the target day's day of year.
    draws : int
    rng : numpy.random.Generator

    Returns
    -------
    numpy.ndarray
        ``(draws, len(target))`` int64 positions: within a block, consecutive calendar days.
    """
    pool_days = np.asarray(pool_days, dtype="datetime64[D]")
    pool_number = pool_days.astype(np.int64)
    members, low, high = season_windows(
        season_of(pd.DatetimeIndex(pool_days)), season_of(target), season_days
    )
    if (high <= low).any():
        first = target[np.flatnonzero(high <= low)[0]]
        raise InputError(
            f"the weather history has no whole day within {season_days:g} days of the day "
            f"of the year of {first:%Y-%m-%d}.",
            hint="Import more weather history or fill its long gaps first.",
        )

    steps = np.arange(len(target))
    starts = rng.random((draws, len(target))) < 1.0 / mean_block
    starts[:, 0] = True
    origin = np.zeros((draws, len(target)), dtype=np.int64)
    pending = starts.copy()
    while pending.any():
        rows, days = np.nonzero(pending)
        span = high[days] - low[days]
        origin[rows, days] = members[low[days] + (rng.random(len(days)) * span).astype(np.int64)]
        block_first = np.maximum.accumulate(np.where(starts, steps, 0), axis=1)
        offset = steps - block_first
        first_position = np.take_along_axis(origin, block_first, axis=1)
        position = first_position + offset
        inside = position < len(pool_days)
        position = np.where(inside, position, len(pool_days) - 1)
        # Days are sorted and distinct, so the walk stays on consecutive days until it meets
        # a missing one, and from there on it never is again: restart the block at that day.
        broken = ~inside | (pool_number[position] != pool_number[first_position] + offset)
        pending = broken & ~np.pad(broken, ((0, 0), (1, 0)))[:, :-1]
        starts |= pending
    return position


def _departure_scenarios(
    assumption: WeatherAssumption,
    window: BudgetWindow,
    cut: pd.Timestamp,
    rng: np.random.Generator,
    count: int,
) -> WeatherScenarios:
    """Typical weather plus departures of past days drawn in blocks (see the module notes)."""
    history = _before(assumption.temperatures, cut)
    if assumption.years is not None:
        earliest = window.start - pd.DateOffset(years=assumption.years) - pd.Timedelta(days=1)
        history = history[history.index >= earliest]
    if history.dropna().empty:
        raise InputError(
            "there are no temperatures before the as-of date to draw past weather from.",
            hint="Import the weather station's history, or choose typical weather.",
        )
    hourly = fill_hourly(history).hourly
    zone = window.timezone
    typical = typical_year(hourly.dropna(), zone)
    local = hourly.index.tz_convert(zone)
    expected = typical.hourly(local[0].date(), local[-1].date()).reindex(hourly.index)
    table = error_table(hourly - expected, zone, HOUR)
    pool = table.index.to_numpy(dtype=np.int64).astype("datetime64[D]")
    block = assumption.block_days
    if block is None:
        block = stationary_block_length(table.mean(axis=1).to_numpy())
    centred = table.to_numpy(dtype=np.float64, copy=True)
    centred -= seasonal_mean_departure(pool, centred.mean(axis=1), assumption.season_days)[:, None]
    drawn = seasonal_block_days(pool, window.days, block, assumption.season_days, count, rng)
    hours = MeterGrid.on(window, HOUR)
    scenario = typical.hourly(window.first_day, window.last_day).to_numpy()
    widening = np.sqrt(1 + YEAR_DAYS / len(pool))
    departures = widening * centred[drawn[:, hours.day], hours.slot]
    memory = None
    if assumption.memory:
        remembered = _remembered(table, pool, window, cut)
        departures += remembered.shift(_days_ahead(window, cut))[hours.day]
        memory = remembered.sentence()
    years = f"{typical.years[0]}–{typical.years[-1]}"
    return WeatherScenarios(
        tuple(f"draw {number}" for number in range(1, count + 1)),
        scenario + departures,
        f"typical weather learned from {years} plus the hourly departures from it of past "
        f"days ({pool[0]} to {pool[-1]}, {len(pool)} whole days), less their season's mean "
        "(so they spread the weather around the typical year without moving it), drawn in "
        f"blocks of whole local days (stationary bootstrap, mean block {block:.1f} days) that "
        f"start within {assumption.season_days} days of the same day of the year in any "
        f"past year, and widened by {widening:.3f} = √(1 + 1/years) for a typical weather "
        f"learned from {len(pool) / YEAR_DAYS:.1f} years; {count} draws, shared out equally "
        "over the paths, the same for every meter of a path",
        pool[drawn],
        memory,
    )


def _first_budget_day(window: BudgetWindow, cut: pd.Timestamp) -> pd.Timestamp:
    """The local day (naive) that starts at the cut: the day after the as-of date."""
    return cut.tz_convert(window.timezone).tz_localize(None).normalize()


def _days_ahead(window: BudgetWindow, cut: pd.Timestamp) -> np.ndarray:
    """Per budget day, how many days after the as-of date it is (≤ 0 before the cut)."""
    first = _first_budget_day(window, cut)
    return ((window.days - first) / pd.Timedelta(days=1)).to_numpy() + 1


def _remembered(
    table: pd.DataFrame, pool: np.ndarray, window: BudgetWindow, cut: pd.Timestamp
) -> AnomalyMemory:
    """The anomaly memory of the pool's daily mean departures, read at the cut."""
    daily = pd.Series(table.mean(axis=1).to_numpy(), index=pd.DatetimeIndex(pool))
    return anomaly_memory(daily, _first_budget_day(window, cut))


def weather_scenarios(
    assumption: WeatherAssumption,
    window: BudgetWindow,
    cut: pd.Timestamp,
    *,
    rng: np.random.Generator | int | None = None,
    paths: int | None = None,
) -> WeatherScenarios:
    """The scenarios ``assumption`` gives on ``window``, knowing only weather before ``cut``.

    ``rng`` draws past years' departures (a fresh generator when None); with ``paths`` no
    more scenarios are drawn than there are paths to use them.
    """
    if assumption.kind == "none":
        return WeatherScenarios(("calendar only",), None, WEATHER_KINDS["none"])
    temps = assumption.temperatures
    if assumption.kind == "typical":
        typical = typical_year(_before(temps, cut), window.timezone)
        hourly = typical.hourly(window.first_day, window.last_day).to_numpy()
        years = f"{typical.years[0]}–{typical.years[-1]}"
        return WeatherScenarios(
            (TYPICAL,), hourly[np.newaxis, :], f"typical weather learned from {years}"
        )
    if assumption.kind == "past_years":
        generator = rng if isinstance(rng, np.random.Generator) else np.random.default_rng(rng)
        count = assumption.draws if paths is None else min(assumption.draws, paths)
        return _departure_scenarios(assumption, window, cut, generator, count)
    filled = fill_hourly(temps).hourly.reindex(window.hours)
    needed = window.hours >= cut
    missing = needed & filled.isna().to_numpy()
    if missing.any():
        first = window.hours[missing][0].tz_convert(window.timezone)
        raise InputError(
            f"the given temperatures have no value for {int(missing.sum())} budget hour(s), "
            f"the first at {first:%Y-%m-%d %H:%M %Z}.",
            hint="Give hourly temperatures for every day of the budget after the as-of date.",
        )
    return WeatherScenarios(
        ("given",), filled.to_numpy()[np.newaxis, :], "the given temperature series"
    )
