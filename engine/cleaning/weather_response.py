"""Weather-driven meters: readings judged against the typical week *and* the weather.

A chilled-water, heating or air-conditioned building meter uses more on a hot (or cold) day.
Against a typical week that ignores the weather every hot afternoon looks like a spike, a cool
spell like a run of low days, and a warm year like a level shift. With the site's temperatures
a meter is therefore first tested:

* **Weather-driven?** Daily energy (whole days; quiet campus days left out), each weekday's
  mean taken out, is fitted on the day's mean temperature by the change-point shapes of
  :mod:`engine.changepoint` (ASHRAE RP-1050), the shape chosen by BIC. The meter is
  weather-driven when that fit explains at least :data:`MIN_SHARE` of the daily variance (R²).
* **Its response per interval.** The fitted shape's temperature terms (``(T − c)⁺`` for cooling,
  ``(c − T)⁺`` for heating, at the fitted change points) are evaluated at each interval's
  temperature. The change in a reading from the same hour a week earlier (on a day of the same
  kind) is regressed, per local hour of the day, on the change in its terms: the schedule and
  nearly the season are the same a week apart, so the slopes come from the weather that
  differs, not from the seasons. One pass leaves out pairs the first fit leaves far off
  (faults do not teach the slope); a slope that would make hotter (colder) weather use less is
  set to zero.
* **The expectation.** The typical week is taken of the readings with the weather's effect
  removed, and the effect at each interval's own temperature is added back:
  ``expected = typical week of (reading − effect) + effect``.
* **The spread.** The robust spread of the readings with the effect removed, grown in
  proportion where the weather lifts the expectation above what the hour usually uses
  (metered noise grows with the load: a hot afternoon scatters more in kWh than a mild one),
  and never below the spread of the readings' relative departures from their expectation,
  pooled over every day of nearby weeks at that hour and scaled to the expectation: a slot's
  own spread rests on a few readings (nine at hourly readings), which now and then are close
  together by chance. Intervals without a temperature keep the plain typical week and spread.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from engine.changepoint import ChangePointFit, select_best
from engine.cleaning.days import DAY_COVERAGE, WholeDays
from engine.cleaning.like_days import LikeDays
from engine.cleaning.pattern import HOURS_PER_DAY, Pattern, weekly_pattern
from engine.errors import InputError

#: Share of the daily variance (R², weekday effects removed) a change-point fit on the day's
#: mean temperature must explain before a meter is judged against the weather.
MIN_SHARE = 0.3
#: Fewest whole days with energy and temperature before the test is tried (eight weeks).
MIN_DAYS = 56
#: Candidate change points per grid of the daily fit's search (it zooms in three times, so
#: 20 places them to hundredths of a degree, at a fraction of the default grid's cost).
SEARCH_GRID = 20
_NS_PER_HOUR = 3_600 * 10**9


@dataclass(frozen=True)
class WeatherResponse:
    """A weather-driven meter's response to outdoor temperature, per interval of its grid.

    ``model`` is the daily change-point fit that made the meter weather-driven (its shape and
    change points) and ``share`` the share of the daily variance it explains (its R²);
    ``temperature`` is each interval's °C (NaN where the
    weather has none) and ``effect`` the energy the weather adds there, relative to the
    change-point state (NaN where there is no temperature). ``slopes`` holds the energy per
    interval per °C of each temperature term, per local hour of the day.
    """

    model: ChangePointFit
    share: float
    temperature: np.ndarray
    effect: np.ndarray
    slopes: np.ndarray

    def covers(self, days: WholeDays) -> bool:
        """Whether the weather is known on at least :data:`DAY_COVERAGE` of the counted days, so
        that daily energy can be normalised to it over the record."""
        effect = days.total(self.effect)[days.counted]
        return effect.size > 0 and np.isfinite(effect).mean() >= DAY_COVERAGE

    def normalised(
        self, days: WholeDays, energy: np.ndarray, *, proportional: bool = False
    ) -> np.ndarray:
        """Daily energy at the average weather (NaN for days that do not count).

        Each day's own weather effect is replaced by the mean effect over the counted days:
        as an amount (``energy − effect + mean effect``), or with ``proportional`` in
        proportion (``energy × (base + mean effect) / (base + effect)``, where ``base`` is the
        mean daily energy the weather does not explain), which a change that scales the whole
        load, the weather's share included, leaves a plain step.
        """
        effect = days.total(self.effect)
        usual = np.nanmean(effect)
        if not proportional:
            return energy - effect + usual
        base = np.nanmean(energy - effect)
        with np.errstate(invalid="ignore", divide="ignore"):
            expected = base + effect
            return np.where(expected > 0, energy * (base + usual) / expected, np.nan)


def interval_temperatures(
    hourly: pd.Series, index: pd.DatetimeIndex, interval: pd.Timedelta
) -> np.ndarray:
    """Each interval's outdoor temperature from hourly °C on the hour (UTC).

    Intervals of an hour or less take the temperature at their midpoint, interpolated between
    the hourly readings; longer ones (days) the mean of the hours they hold, NaN when fewer
    than nine in ten of those hours have a temperature.
    """
    stamps = hourly.index.as_unit("ns").asi8
    values = hourly.to_numpy(dtype="float64")
    starts = index.as_unit("ns").asi8
    if interval <= pd.Timedelta(hours=1):
        middle = starts + interval.value // 2
        return np.interp(middle, stamps, values, left=np.nan, right=np.nan)
    ends = np.append(starts[1:], starts[-1] + interval.value)
    position = np.searchsorted(starts, stamps, side="right") - 1
    inside = (position >= 0) & (stamps < ends[np.maximum(position, 0)]) & np.isfinite(values)
    total = np.bincount(position[inside], weights=values[inside], minlength=starts.size)
    count = np.bincount(position[inside], minlength=starts.size)
    expected_hours = (ends - starts) / _NS_PER_HOUR
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(count >= 0.9 * expected_hours, total / count, np.nan)


def judged_with_weather(
    values: np.ndarray,
    like: LikeDays,
    plain: Pattern,
    days: WholeDays,
    temperature: np.ndarray,
    limit: float,
) -> tuple[Pattern, WeatherResponse | None]:
    """The typical value and spread of each interval with the weather in, and the response
    behind them; ``plain`` and None when the meter is not weather-driven.

    ``plain`` is the meter's typical week without the weather (its spread floored);
    ``temperature`` is each interval's °C (:func:`interval_temperatures`); ``limit`` is how
    many robust spreads off the first fit a reading may lie and still teach the slopes (the
    detectors' ``spike_z``).
    """
    fitted = _daily_fit(values, temperature, days)
    if fitted is None:
        return plain, None
    model, share = fitted
    terms = model.weather_terms(temperature)
    hour = like.by_week.slot % HOURS_PER_DAY
    slopes = _hourly_slopes(values, terms, hour, _week_apart(like), plain.spread, limit)
    effect = np.einsum("ij,ij->i", terms, slopes[hour])
    response = WeatherResponse(model, share, temperature, effect, slopes)
    adjusted = like.pattern(values - effect)
    expected = adjusted.typical + effect
    spread = _spread(values, expected, plain, adjusted, like)
    known = np.isfinite(expected) & np.isfinite(spread)
    typical = np.where(known, expected, plain.typical)
    spread = np.where(known, spread, plain.spread)
    return Pattern(typical=typical, spread=spread), response


def _spread(
    values: np.ndarray, expected: np.ndarray, plain: Pattern, adjusted: Pattern, like: LikeDays
) -> np.ndarray:
    """The robust spread around ``expected`` (see the module's notes): the adjusted readings'
    own, grown with the weather's lift, and at least the pooled relative spread."""
    with np.errstate(invalid="ignore", divide="ignore"):
        growth = np.fmax(1.0, expected / np.fmax(plain.typical, adjusted.typical))
        relative = np.where(expected > 0, (values - expected) / expected, np.nan)
    pooled = weekly_pattern(relative, like.by_day, like.weeks).spread * expected
    return np.fmax(adjusted.spread * growth, pooled)


def _daily_fit(
    values: np.ndarray, temperature: np.ndarray, days: WholeDays
) -> tuple[ChangePointFit, float] | None:
    """The best change-point fit of weekday-adjusted daily energy on daily mean temperature,
    with its R², when it explains at least :data:`MIN_SHARE`; else None."""
    energy = days.energy(values)
    mean_temperature = days.mean(temperature)
    usable = np.isfinite(energy) & np.isfinite(mean_temperature)
    if usable.sum() < MIN_DAYS:
        return None
    weekday = days.weekday[usable]
    energy = energy[usable]
    weekday_mean = np.bincount(weekday, weights=energy, minlength=7) / np.maximum(
        np.bincount(weekday, minlength=7), 1
    )
    adjusted = energy - weekday_mean[weekday] + energy.mean()
    try:
        model = select_best(mean_temperature[usable], adjusted, grid_size=SEARCH_GRID)
    except InputError:  # temperatures too alike to place a change point
        return None
    share = float(model.r2_)
    return (model, share) if share >= MIN_SHARE else None


def _week_apart(like: LikeDays) -> tuple[np.ndarray, np.ndarray]:
    """Pairs of grid positions a week apart on the site's clock (later, earlier), on days of
    the same kind.

    The same hour a week earlier shares the schedule and nearly the season, so what differs
    between the two readings beyond noise is mostly the weather. With a calendar, pairs must
    be of the same day class and neither on a public holiday.
    """
    places = like.by_week
    kept = places.rank < places.per_slot
    table = np.full((places.n_weeks, places.n_slots, places.per_slot), -1)
    table[places.week[kept], places.slot[kept], places.rank[kept]] = np.flatnonzero(kept)
    later, earlier = table[1:].ravel(), table[:-1].ravel()
    both = (later >= 0) & (earlier >= 0)
    later, earlier = later[both], earlier[both]
    if like.days is not None:
        kind, holiday = like.days.day_class, like.days.holiday
        same = (kind[later] == kind[earlier]) & ~holiday[later] & ~holiday[earlier]
        later, earlier = later[same], earlier[same]
    return later, earlier


def _hourly_slopes(
    values: np.ndarray,
    terms: np.ndarray,
    hour: np.ndarray,
    pairs: tuple[np.ndarray, np.ndarray],
    spread: np.ndarray,
    limit: float,
) -> np.ndarray:
    """Per local hour of the day (hours × terms), the least-squares slopes of the change in a
    reading from a week earlier on the change in its temperature terms, refitted once without
    pairs the first fit leaves beyond ``limit`` spreads (of a difference of two readings) and
    held at zero or above."""
    later, earlier = pairs
    change = values[later] - values[earlier]
    term_change = terms[later] - terms[earlier]
    hour = hour[later]
    usable = np.isfinite(change) & np.isfinite(term_change).all(axis=1)
    slopes = _solve_per_hour(change, term_change, hour, usable)
    residual = change - np.einsum("ij,ij->i", term_change, slopes[hour])
    with np.errstate(invalid="ignore"):
        usable &= np.abs(residual) <= limit * np.sqrt(2.0) * spread[later]
    return np.maximum(_solve_per_hour(change, term_change, hour, usable), 0.0)


def _solve_per_hour(
    y: np.ndarray, x: np.ndarray, hour: np.ndarray, usable: np.ndarray
) -> np.ndarray:
    """Per hour of the day, the least-squares (least-norm where singular) ``β`` of ``y ≈ x β``."""
    terms = x.shape[1]
    hour, y, x = hour[usable], y[usable], x[usable]
    gram = np.empty((HOURS_PER_DAY, terms, terms))
    moment = np.empty((HOURS_PER_DAY, terms))
    for i in range(terms):
        moment[:, i] = np.bincount(hour, weights=x[:, i] * y, minlength=HOURS_PER_DAY)
        for j in range(i, terms):
            gram[:, i, j] = gram[:, j, i] = np.bincount(
                hour, weights=x[:, i] * x[:, j], minlength=HOURS_PER_DAY
            )
    return np.einsum("hij,hj->hi", np.linalg.pinv(gram), moment)
