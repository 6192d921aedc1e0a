"""A campus calendar proposed from the readings, for sites that never entered one.

Each meter's complete daily totals are divided by what an *ordinary term weekday* of that
meter would use on that day: a trimmed least-squares fit (days more than 2.5 robust standard
deviations from the fit are left out, again and again until the set settles) of a level per
day of the week, a slow trend and, where the site has weather, heating and cooling degree-days
integrated from the hours (CIBSE TM41) at the balance points that fit best (slopes never
negative), the weather response first learnt on the weekends; without weather, two yearly
harmonics stand in for the seasons. The low periods found are then fitted as levels of their
own on their weekdays and the fit is made again (:data:`REFITS`), so that a summer session in
the hottest weeks does not pass for a smaller cooling slope. The meters' ratios are averaged on
weekdays with matched-filter weights (a meter's depth over its noise squared): 1 is an
ordinary term weekday (the half-sample mode), 0.35 a day at 35 % of one.

From that ratio the proposal takes

* **recurring periods**: weekdays outside the ordinary band are laid out by position in the
  year; positions where most years' weekdays nearby (±3 days) are outside on the same side,
  in at least two years, make the typical year's stretches, split where their typical level
  changes. Each year's own dates are then read around each stretch (runs of at least
  :data:`MIN_RUN` weekdays, within :data:`DATE_TOLERANCE` days of it, split where that year's
  level changes most), and the latest is copied forward by whole weeks for the years after
  the readings, so that budgets have them;
* **public holidays**: the country the site's time zone lies in (the IANA tz database's
  ``zone.tab``, which the ``tzdata`` package ships), kept when at least half of its public
  holidays on ordinary weekdays outside the periods ran low.

Each proposal carries its evidence in words. :meth:`CalendarProposal.calendar` gives the
:class:`~engine.calendar.CampusCalendar` a user would have entered, so accepting it stores it
exactly as one.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field, replace
from datetime import date, timedelta
from importlib import resources
from typing import Any

import holidays
import numpy as np
import pandas as pd

from engine.calendar import CampusCalendar, CampusPeriod
from engine.ready_meters import PreparedSite

#: Fewest weekdays in a row that make a period (a single low day is a holiday's business).
MIN_RUN = 3
#: Fewest days on each side of a split of a typical stretch into two levels, and fewest days
#: in a typical stretch.
MIN_PART_DAYS = 7
MIN_STRETCH_DAYS = 5
#: Days either side of a position of the year whose weekdays, in every year, judge it.
_NEARBY = 3
#: How far apart (days) the first and last days of a period may lie in different years and
#: still be the same period (academic calendars move by weekdays, so by up to a week or two).
DATE_TOLERANCE = 14
#: A day is outside the ordinary band when its ratio departs from 1 by this many robust
#: standard deviations of ordinary days, and by at least :data:`MIN_DEPARTURE`.
BAND_SIGMAS = 3.0
MIN_DEPARTURE = 0.08
#: Share of a country's weekday holidays that must run low for the country to be proposed.
HOLIDAY_SHARE = 0.5
#: How far past the readings recurring periods are copied forward, in days.
HORIZON_DAYS = 760
#: How many times the ordinary use is fitted again with the periods found so far as their own
#: levels (once frees the weather response of them; more passes were seen to wander on the
#: invented sites, so once it is).
REFITS = 1
#: The largest share of the weight one meter may carry in the site's ratio.
MAX_WEIGHT = 0.3
#: How far (as a share of a term weekday) a meter's ratio may stray from the median of the
#: meters that follow the calendar, over :data:`ASTRAY_WEEKDAYS` weekdays, and still count
#: towards the site's ratio (meters dip by different amounts in a break: 0.2 took a lecture
#: building out of the sample's summer; the sample's faulty meter strays by 0.5).
AGREEMENT = 0.3
ASTRAY_WEEKDAYS = 40
#: Below this share of a term weekday a low period is a closure (nobody in).
CLOSURE_LEVEL = 0.2
#: Heating and cooling balance points tried for the term-weekday level, °C.
_HEATING_BASES = tuple(float(base) for base in range(4, 19, 2))
_COOLING_BASES = tuple(float(base) for base in range(10, 25, 2))
_TRIM_SIGMAS = 2.5
#: The heating and cooling degree-day columns of :func:`_design` (after 7 day levels and the
#: trend).
_SLOPES = (8, 9)
#: The normal distribution's 10th percentile in standard deviations below the mean.
_TENTH_QUANTILE_SD = 1.2816
_MAD_TO_SD = 1.4826
_YEAR_DAYS = 365.2425
_SEASONS_NORTH = {12: "Winter", 1: "Winter", 2: "Winter", 3: "Spring", 4: "Spring",
                  5: "Summer", 6: "Summer", 7: "Summer", 8: "Summer",
                  9: "Autumn", 10: "Autumn", 11: "Autumn"}  # fmt: skip
_OPPOSITE = {"Winter": "Summer", "Summer": "Winter", "Spring": "Autumn", "Autumn": "Spring"}


@dataclass(frozen=True)
class ProposedPeriod:
    """A campus period the readings suggest, with why."""

    period: CampusPeriod
    evidence: str
    level: float  # the period's use as a share of a term weekday
    projected: bool = False  # copied forward from an earlier year, not seen in the readings

    def to_dict(self) -> dict[str, Any]:
        return {
            **self.period.to_dict(),
            "evidence": self.evidence,
            "level": round(self.level, 3),
            "projected": self.projected,
        }


@dataclass(frozen=True)
class ProposedHolidays:
    """The public holidays the readings confirm: a country's, with the share that ran low."""

    country: str
    subdivision: str | None
    low: int
    tested: int
    evidence: str

    @property
    def code(self) -> str:
        """ "US" or "US-IL", as ``--holidays`` takes it."""
        return f"{self.country}-{self.subdivision}" if self.subdivision else self.country

    def to_dict(self) -> dict[str, Any]:
        return {"country": self.country, "subdivision": self.subdivision, "low": self.low,
                "tested": self.tested, "evidence": self.evidence}  # fmt: skip


@dataclass(frozen=True)
class CalendarProposal:
    """Recurring periods and public holidays found in the readings, each with its evidence."""

    periods: tuple[ProposedPeriod, ...] = ()
    holidays: ProposedHolidays | None = None
    notes: tuple[str, ...] = field(default_factory=tuple)

    def calendar(
        self, periods: Iterable[ProposedPeriod] | None = None, *, with_holidays: bool = True
    ) -> CampusCalendar:
        """The campus calendar of the accepted ``periods`` (default: all) and holidays."""
        chosen = self.periods if periods is None else tuple(periods)
        country = self.holidays if with_holidays else None
        return CampusCalendar(
            country.country if country else None,
            country.subdivision if country else None,
            tuple(p.period for p in chosen),
        )

    def to_dict(self) -> dict[str, Any]:
        return {
            "periods": [p.to_dict() for p in self.periods],
            "holidays": self.holidays.to_dict() if self.holidays else None,
            "notes": list(self.notes),
        }

    def summary(self) -> dict[str, str]:
        """What a budget assumes when it uses this proposal, in words (one line per part)."""
        seen = [p for p in self.periods if not p.projected]
        ahead = len(self.periods) - len(seen)
        words = "; ".join(f"{p.period.name} {_span(p.period)}" for p in self.periods)
        periods = (
            f"{len(seen)} seen in the readings and {ahead} copied forward: {words}"
            if self.periods
            else "none: no period ran low or high on the same dates in two years"
        )
        found = self.holidays.evidence if self.holidays else "none confirmed by the readings"
        return {
            "source": "proposed from the readings (no campus calendar or holidays were given)",
            "public holidays": found,
            "periods": periods,
        }


# --- the site's daily ratio to a term weekday -----------------------------------------------


def site_days(
    site: PreparedSite, cut: pd.Timestamp | None = None
) -> tuple[pd.DataFrame, pd.Series | None]:
    """Each meter's complete local-day totals before ``cut`` (UTC; None: all), days × meters,
    and the hourly °C before it (None without weather)."""
    totals = {name: _day_totals(ready.inputs.energy, site.timezone, cut)
              for name, ready in site.meters.items()}  # fmt: skip
    daily = pd.DataFrame(totals).sort_index()
    hourly = site.hourly_before(cut)
    if hourly is not None and cut is not None:
        hourly = hourly[hourly.index < cut]
    return daily, hourly


def _day_totals(energy: pd.Series, timezone: str, cut: pd.Timestamp | None) -> pd.Series:
    """Local-day sums of the days whose every interval is known (daily readings as they are)."""
    if cut is not None:
        energy = energy[energy.index < cut]
    days = energy.index.tz_convert(timezone).tz_localize(None).normalize()
    grouped = energy.groupby(days)
    complete = grouped.count() == grouped.size()
    return grouped.sum()[complete]


def degree_days(hourly: pd.Series, timezone: str) -> pd.DataFrame:
    """Heating and cooling degree-days of each local day at every balance point tried, by
    integrating the hours (CIBSE TM41's preferred method): columns ``("heating", base)`` and
    ``("cooling", base)``; a day with fewer than 20 known hours is left out."""
    hourly = hourly.dropna()
    days = hourly.index.tz_convert(timezone).tz_localize(None).normalize()
    temps = hourly.to_numpy(float)
    columns = {}
    for base in _HEATING_BASES:
        columns["heating", base] = np.maximum(base - temps, 0.0)
    for base in _COOLING_BASES:
        columns["cooling", base] = np.maximum(temps - base, 0.0)
    grouped = pd.DataFrame(columns, index=days).groupby(level=0)
    return grouped.mean()[grouped.size() >= 20]


def meter_ratios(
    daily: pd.DataFrame,
    degrees: pd.DataFrame | None = None,
    marks: pd.DataFrame | None = None,
) -> pd.DataFrame:
    """Each meter's use on each weekday as a share of its ordinary term weekday (weekdays ×
    meters; meters with under 90 days or no positive use are left out)."""
    ratios = {}
    for name in daily.columns:
        values = daily[name].dropna()
        if len(values) < 90 or values.mean() <= 0:
            continue
        level = term_level(values, degrees, marks)
        # a meter near zero (a boiler house in summer) says nothing of the calendar there
        level = level.where(level >= 0.2 * level.median())
        ratio = (values / level)[values.index.day_of_week < 5].dropna()
        ratios[name] = ratio / ordinary_band(ratio)[0]
    return pd.DataFrame(ratios)


def site_ratio(ratios: pd.DataFrame) -> pd.Series:
    """The site's use on each weekday as a share of an ordinary term weekday's.

    The meters' ratios (:func:`meter_ratios`) are averaged with weights that favour the meters
    where the calendar shows: each meter's depth (how far its lowest tenth of weekdays lies
    below ordinary, beyond what its noise gives) over the square of its ordinary spread (a
    matched filter), no meter above :data:`MAX_WEIGHT` of the whole. A boiler house that
    ignores the term thus adds nothing to the lecture buildings' breaks. A meter is left out
    where it strays from the meters' median for weeks on end (:func:`_astray`): one whose
    readings halve for months (a fault, a building closed) is not taken for a campus break.
    """
    if ratios.empty:
        return pd.Series(dtype=float)
    ratios = ratios.where(~_astray(ratios, _weights(ratios) > 0))
    weights = _weights(ratios)
    present = ratios.notna().to_numpy() * weights
    combined = np.nan_to_num(ratios.to_numpy(float)) @ weights / np.maximum(present.sum(1), 1e-12)
    combined = pd.Series(combined, index=ratios.index)[present.sum(axis=1) > 0]
    return combined / ordinary_band(combined)[0]


def _weights(ratios: pd.DataFrame) -> np.ndarray:
    """Each meter's share of the site's ratio (:func:`_calendar_weight`, capped)."""
    weights = np.array([_calendar_weight(ratios[name].dropna()) for name in ratios.columns])
    weights = weights if weights.sum() > 0 else np.ones(len(weights))
    return np.minimum(weights / weights.sum(), MAX_WEIGHT)


def _astray(ratios: pd.DataFrame, responsive: np.ndarray) -> pd.DataFrame:
    """Where a meter's ratio, in the median over :data:`ASTRAY_WEEKDAYS` weekdays around each,
    lies more than :data:`AGREEMENT` from the median of the meters that follow the calendar: a
    stretch of its own, not a holiday (one day) nor a break (those meters dip together). With
    fewer than three such meters none can be told astray."""
    if responsive.sum() < 3:
        return pd.DataFrame(False, index=ratios.index, columns=ratios.columns)
    departure = ratios.sub(ratios.loc[:, responsive].median(axis=1), axis=0)
    rolling = departure.rolling(ASTRAY_WEEKDAYS, center=True, min_periods=ASTRAY_WEEKDAYS // 4)
    return rolling.median().abs() > AGREEMENT


def _calendar_weight(ratio: pd.Series) -> float:
    spread = ordinary_band(ratio)[1] / BAND_SIGMAS
    depth = 1.0 - float(np.quantile(ratio, 0.1)) - _TENTH_QUANTILE_SD * spread
    return max(depth, 0.0) / spread**2


def term_level(
    values: pd.Series, degrees: pd.DataFrame | None = None, marks: pd.DataFrame | None = None
) -> pd.Series:
    """A meter's ordinary (term weekday) use on each of its days.

    Trimmed least-squares fits (:func:`_trimmed_fit`) of a level per day of the week, a trend
    and the day's heating and cooling degree-days at the balance points that fit best (without
    weather, yearly harmonics). Before any period is known (``marks`` None) the weather
    response is learnt on the weekends, which most campuses keep alike in and out of term, and
    the weekdays get their levels with it, scaled by one factor (offices heat and cool more
    when occupied): so a summer break in the hottest weeks cannot pass for a smaller cooling
    slope. ``marks`` are 0/1 columns of the periods found since, fitted on all days as their
    own levels and left out of the ordinary use returned.
    """
    weather = _weather_on(values.index, degrees)
    weekend = values.index.day_of_week.to_numpy() >= 5
    if weather is not None and marks is None and weekend.sum() >= 52:
        fitted = _weekend_weather(values, weather, weekend)
    else:
        extra = None if marks is None else marks.reindex(values.index).fillna(0.0)
        fitted = _joint(values, weather, None if extra is None else extra.to_numpy(float))
    return pd.Series(np.maximum(fitted, 1e-9 * np.abs(values.to_numpy()).mean()),
                     index=values.index, name=values.name)  # fmt: skip


def _best_balance(fit) -> tuple[float, float]:
    """The heating balance point first (cooling in the middle of its range), then the cooling
    one, each the one whose ``fit(pair)`` leaves the smallest spread."""
    heating = min(_HEATING_BASES, key=lambda base: fit((base, _COOLING_BASES[3]))[0])
    return heating, min(_COOLING_BASES, key=lambda base: fit((heating, base))[0])


def _joint(values: pd.Series, weather: pd.DataFrame | None, extra: np.ndarray | None):
    """One fit of all days, with ``extra`` columns fitted and left out of what it returns."""
    y = values.to_numpy(float)

    def fit(pair: tuple[float, float] | None) -> tuple[float, np.ndarray]:
        design = _design(values.index, weather, pair)
        full = design if extra is None else np.column_stack([design, extra])
        _, spread, coef = _trimmed_fit(full, y, slopes=() if weather is None else _SLOPES)
        return spread, design @ coef[: design.shape[1]]

    return fit(None if weather is None else _best_balance(fit))[1]


def _weekend_weather(values: pd.Series, weather: pd.DataFrame, weekend: np.ndarray):
    """Weather response from the weekends, then weekday levels and trend with it, scaled."""
    y = values.to_numpy(float)

    def fit(pair: tuple[float, float]) -> tuple[float, np.ndarray, np.ndarray]:
        design = _design(values.index, weather, pair)
        _, spread, coef = _trimmed_fit(design[weekend], y[weekend], slopes=_SLOPES)
        return spread, design, coef

    _, design, coef = fit(_best_balance(fit))
    fitted = design @ coef
    response = design[:, -2:] @ coef[-2:]
    rows = ~weekend
    levels = np.column_stack([design[rows, :5], design[rows, 7]])
    # first with the weekends' response as it is, to find the ordinary weekdays; then those
    # learn how much more (or less) the weekdays respond
    plain = levels @ _trimmed_fit(levels, y[rows] - response[rows])[2] + response[rows]
    ratio = y[rows] / np.where(plain > 0, plain, np.nan)
    ordinary = np.abs(ratio - 1.0) <= _TRIM_SIGMAS * _robust_sd(ratio - 1.0)
    scaled = np.column_stack([levels, response[rows]])
    fitted[rows] = _trimmed_fit(scaled, y[rows], keep=ordinary, slopes=(scaled.shape[1] - 1,))[0]
    return fitted


def _weather_on(days: pd.DatetimeIndex, degrees: pd.DataFrame | None) -> pd.DataFrame | None:
    """The degree-days on ``days``; None without weather or with under 80 % of the days."""
    if degrees is None:
        return None
    weather = degrees.reindex(days)
    return weather if weather.notna().all(axis=1).mean() >= 0.8 else None


def _design(
    days: pd.DatetimeIndex, weather: pd.DataFrame | None, balance: tuple[float, float] | None
) -> np.ndarray:
    """Columns: one level per day of the week, a trend in years, then the day's heating and
    cooling degree-days or, without weather, two yearly harmonics."""
    weekday = np.eye(7)[days.day_of_week.to_numpy()]
    years = ((days - days[0]) / pd.Timedelta(days=_YEAR_DAYS)).to_numpy(float)[:, None]
    if weather is None:
        angle = 2 * np.pi * days.day_of_year.to_numpy(float) / _YEAR_DAYS
        season = np.column_stack([f(k * angle) for k in (1, 2) for f in (np.sin, np.cos)])
    else:
        heating, cooling = balance
        chosen = weather[[("heating", heating), ("cooling", cooling)]]
        season = chosen.interpolate(limit_direction="both").to_numpy(float)
    return np.column_stack([weekday, years, season])


def _trimmed_fit(
    design: np.ndarray,
    y: np.ndarray,
    keep: np.ndarray | None = None,
    slopes: tuple[int, ...] = (),
) -> tuple[np.ndarray, float, np.ndarray]:
    """Least squares on the days whose ratio to the fit stays within :data:`_TRIM_SIGMAS`
    robust standard deviations, refitted until that set settles (from ``keep``, default every
    day). The columns ``slopes`` (degree-days) may not take a negative coefficient: a building
    does not use less the colder or the hotter it gets, and a heating hinge minus a cooling one
    would otherwise pass for a ramp. Returns the fit on every day, the kept days' spread and
    the coefficients."""
    keep = np.ones(len(y), dtype=bool) if keep is None else keep
    spread = np.inf
    for _ in range(12):
        coef = _solve(design[keep], y[keep], slopes)
        fitted = design @ coef
        ratio = y / np.where(fitted > 0, fitted, np.nan)
        spread = _robust_sd(ratio[keep] - 1.0)
        settled = np.abs(ratio - 1.0) <= _TRIM_SIGMAS * spread
        if np.array_equal(settled, keep) or settled.sum() < design.shape[1] * 3:
            break
        keep = settled
    return fitted, spread, coef


def _solve(design: np.ndarray, y: np.ndarray, slopes: tuple[int, ...] = ()) -> np.ndarray:
    """Least-squares coefficients by the normal equations (a dozen columns; a tiny ridge keeps
    a column without data solvable), solved again without any of the ``slopes`` columns that
    came out negative (their coefficient is then 0)."""
    used = np.ones(design.shape[1], dtype=bool)
    coef = np.zeros(design.shape[1])
    for _ in range(len(slopes) + 1):
        part = design[:, used]
        gram = part.T @ part + 1e-9 * np.eye(part.shape[1])
        coef[:] = 0.0
        coef[used] = np.linalg.solve(gram, part.T @ y)
        negative = [column for column in slopes if used[column] and coef[column] < 0]
        if not negative:
            break
        used[negative] = False
    return np.where(used, coef, 0.0)


def _robust_sd(values: np.ndarray) -> float:
    """Standard deviation from the median absolute value (about 0), for normal errors."""
    values = values[np.isfinite(values)]
    return float(_MAD_TO_SD * np.median(np.abs(values))) if len(values) else np.inf


def ordinary_band(ratio: pd.Series) -> tuple[float, float]:
    """The ordinary weekday's ratio and how far from it (as a share) an ordinary weekday may
    lie.

    Ordinary weekdays are the largest group of alike days, but breaks can be a third of the
    weekdays and more: their centre is the half-sample mode (Bickel & Frühwirth 2006), and
    their spread is read above it only, where breaks do not reach (1.4826 × the median
    distance of the days above the mode, the normal distribution's standard deviation).
    """
    values = np.sort(ratio.to_numpy()[np.isfinite(ratio.to_numpy())])
    centre = _half_sample_mode(values)
    above = values[values >= centre] - centre
    spread = _MAD_TO_SD * float(np.median(above)) if len(above) else 0.0
    return centre, max(BAND_SIGMAS * spread / centre, MIN_DEPARTURE)


def _half_sample_mode(values: np.ndarray) -> float:
    """The half-sample mode of sorted values: the shortest half of them, again and again,
    until three or fewer are left; their mean."""
    while len(values) > 3:
        half = (len(values) + 1) // 2
        widths = values[half - 1 :] - values[: len(values) - half + 1]
        start = int(np.argmin(widths))
        values = values[start : start + half]
    return float(values.mean())


# --- periods --------------------------------------------------------------------------------


@dataclass(frozen=True)
class _Piece:
    """A stretch of the typical year: days ``first`` to ``last`` after the year's origin."""

    first: int
    last: int
    high: bool


@dataclass(frozen=True)
class _Seasons:
    """The weekday ratios laid out by season (a year starting at the origin) and position."""

    origin: int  # days after 1 January where each season starts
    years: np.ndarray  # the calendar year each season starts in
    ratio: np.ndarray  # seasons × 366 positions; NaN on weekends and unknown days
    flags: np.ndarray  # -1 below the band, +1 above, 0 inside, NaN unknown

    def date(self, season: int, position: int) -> date:
        start = date(int(self.years[season]), 1, 1) + timedelta(days=self.origin)
        return start + timedelta(days=int(position))


def _layout(ratio: pd.Series, width: float, origin: int) -> _Seasons:
    days = ratio.index
    day_number = days.to_numpy().astype("datetime64[D]")
    year = days.year.to_numpy() - (days.day_of_year.to_numpy() - 1 < origin)
    starts = (year - 1970).astype("datetime64[Y]").astype("datetime64[D]") + origin
    position = (day_number - starts).astype(np.int64)
    years = np.unique(year)
    row = np.searchsorted(years, year)
    grid = np.full((len(years), 366), np.nan)
    grid[row, position] = ratio.to_numpy()
    flags = np.where(grid < 1 - width, -1.0, np.where(grid > 1 + width, 1.0, 0.0))
    return _Seasons(origin, years, grid, np.where(np.isnan(grid), np.nan, flags))


def _window_sum(values: np.ndarray, half: int) -> np.ndarray:
    """Sum over positions ``p - half … p + half`` of each row (NaN counts as 0)."""
    padded = np.pad(np.nan_to_num(values), ((0, 0), (half + 1, half)))
    total = np.cumsum(padded, axis=1)
    return total[:, 2 * half + 1 :] - total[:, : -2 * half - 1]


def _typical(seasons: _Seasons, high: bool) -> np.ndarray:
    """Positions where most years' weekdays nearby (±3 days) lie outside the band on the same
    side, and at least two years do so."""
    known = ~np.isnan(seasons.flags)
    hits = _window_sum(known & (seasons.flags == (1.0 if high else -1.0)), _NEARBY)
    count = _window_sum(known, _NEARBY)
    share = hits.sum(axis=0) / np.maximum(count.sum(axis=0), 1)
    return (share >= 0.5) & ((hits > 0).sum(axis=0) >= 2)


def _quiet_origin(ratio: pd.Series, width: float) -> int:
    """The day of the year (0 = 1 January) where unusual days are rarest (±15 days), so that
    no recurring period is cut in two where one season ends and the next begins."""
    seasons = _layout(ratio, width, 0)
    unusual = _window_sum(np.abs(np.nan_to_num(seasons.flags)), 15).sum(axis=0)
    known = _window_sum(~np.isnan(seasons.flags), 15).sum(axis=0)
    return int(np.argmin(unusual / np.maximum(known, 1)))


def _pieces(seasons: _Seasons, width: float) -> list[list[_Piece]]:
    """The typical year's recurring stretches, each split where its level changes."""
    stretches = []
    for high in (False, True):
        typical = _typical(seasons, high)
        edges = np.flatnonzero(np.diff(np.r_[0, typical.astype(int), 0]))
        for first, stop in zip(edges[::2], edges[1::2], strict=True):
            if stop - first >= MIN_STRETCH_DAYS:
                level = _typical_level(seasons, first, stop)
                stretches.append(_split(level, first, width, high))
    return stretches


def _typical_level(seasons: _Seasons, first: int, stop: int) -> np.ndarray:
    """The median ratio of all years' weekdays within ±3 days of each position."""
    levels = []
    for position in range(first, stop):
        nearby = seasons.ratio[:, max(position - _NEARBY, 0) : position + _NEARBY + 1]
        known = nearby[~np.isnan(nearby)]
        levels.append(np.median(known) if len(known) else 1.0)
    return np.asarray(levels)


def _split(level: np.ndarray, first: int, width: float, high: bool) -> list[_Piece]:
    """Binary segmentation of a stretch's typical level: split where two parts of a week or
    more differ by more than the ordinary band (a closure inside a break, a summer session
    between two breaks), recursively."""
    best, where = 0.0, None
    for cut in range(MIN_PART_DAYS, len(level) - MIN_PART_DAYS + 1):
        left, right = level[:cut].mean(), level[cut:].mean()
        gain = cut * (len(level) - cut) * (left - right) ** 2
        if abs(left - right) > width and gain > best:
            best, where = gain, cut
    if where is None:
        return [_Piece(first, first + len(level) - 1, high)]
    return _split(level[:where], first, width, high) + _split(
        level[where:], first + where, width, high
    )


@dataclass(frozen=True)
class _Seen:
    """One year's dates of a typical piece and its level there."""

    first: date
    last: date
    level: float


def _season_dates(
    seasons: _Seasons, row: int, stretch: list[_Piece]
) -> list[tuple[int, int] | None]:
    """Each piece's positions in one season: the flagged weekdays overlapping the stretch
    (one weekday's gap bridged, no further than :data:`DATE_TOLERANCE` outside it), split
    between the pieces where the season's own level changes most near the typical boundary.
    None for a piece the season does not show."""
    sign = 1.0 if stretch[0].high else -1.0
    low, high = stretch[0].first, stretch[-1].last
    window = np.arange(max(low - DATE_TOLERANCE, 0), min(high + DATE_TOLERANCE, 365) + 1)
    flags = seasons.flags[row, window]
    weekday = ~np.isnan(flags)
    days, hit = window[weekday], flags[weekday] == sign
    bridged = hit.copy()
    bridged[1:-1] |= hit[:-2] & hit[2:]
    runs = _runs_overlapping(days, bridged, low, high)
    if runs is None:
        return [None] * len(stretch)
    start, end = runs
    cuts = [_best_cut(seasons.ratio[row], start, end, piece.first) for piece in stretch[1:]]
    bounds = [start, *cuts, end + 1]
    return [
        (bounds[i], bounds[i + 1] - 1) if bounds[i + 1] - bounds[i] >= 3 else None
        for i in range(len(stretch))
    ]


def _runs_overlapping(
    days: np.ndarray, bridged: np.ndarray, low: int, high: int
) -> tuple[int, int] | None:
    """First and last position of the bridged runs of at least :data:`MIN_RUN` weekdays that
    reach into ``low … high``."""
    edges = np.flatnonzero(np.diff(np.r_[0, bridged.astype(int), 0]))
    spans = [
        (days[a], days[b - 1])
        for a, b in zip(edges[::2], edges[1::2], strict=True)
        if b - a >= MIN_RUN and days[b - 1] >= low and days[a] <= high
    ]
    if not spans:
        return None
    return int(spans[0][0]), int(spans[-1][1])


def _best_cut(row: np.ndarray, start: int, end: int, typical: int) -> int:
    """The position within ±7 days of ``typical`` that best splits ``start … end`` in two
    levels (least squares); the typical boundary where the season gives no better one."""
    best, chosen = np.inf, min(max(typical, start + 1), end)
    for cut in range(max(typical - 7, start + 1), min(typical + 7, end) + 1):
        left, right = row[start:cut], row[cut : end + 1]
        left, right = left[~np.isnan(left)], right[~np.isnan(right)]
        if len(left) < 2 or len(right) < 2:
            continue
        cost = ((left - left.mean()) ** 2).sum() + ((right - right.mean()) ** 2).sum()
        if cost < best:
            best, chosen = cost, cut
    return chosen


def _widened(seasons: _Seasons, row: int, first: int, last: int, outer: tuple[bool, bool]):
    """The piece's dates, widened over the weekend it starts after (Monday) or ends before
    (Friday) where it is the stretch's first or last piece."""
    start, end = seasons.date(row, first), seasons.date(row, last)
    if outer[0] and start.weekday() == 0:
        start -= timedelta(days=2)
    if outer[1] and end.weekday() == 4:
        end += timedelta(days=2)
    return start, end


def _found(ratio: pd.Series, width: float) -> list[tuple[_Piece, list[_Seen], int]]:
    """Each recurring piece seen in at least two years: the piece, where and at what level
    each year shows it, and how many years the readings cover it."""
    seasons = _layout(ratio, width, _quiet_origin(ratio, width))
    found = []
    for stretch in _pieces(seasons, width):
        dates = [_season_dates(seasons, row, stretch) for row in range(len(seasons.years))]
        for index, piece in enumerate(stretch):
            outer = (index == 0, index == len(stretch) - 1)
            seen = [_seen(seasons, row, spans[index], outer)
                    for row, spans in enumerate(dates) if spans[index] is not None]  # fmt: skip
            seen = [one for one in seen if (one.level > 1 + width) == piece.high]
            if len(seen) >= 2:
                seen[-1] = _under_way(seen, ratio.index[-1].date())
                found.append((piece, seen, _covering(seasons, piece)))
    return found


def _under_way(seen: list[_Seen], last_reading: date) -> _Seen:
    """The latest showing of a period, when the readings end inside it, run to where the one
    before ended, whole weeks a year later (a break under way on the as-of date goes on into
    the budget months, on the weekday it ended on before)."""
    latest, before = seen[-1], seen[-2]
    if latest.last < last_reading - timedelta(days=2):
        return latest
    years = max(round((latest.first - before.first).days / _YEAR_DAYS), 1)
    usual = before.last + timedelta(weeks=round(years * _YEAR_DAYS / 7))
    return replace(latest, last=max(latest.last, usual))


def period_marks(ratio: pd.Series, width: float, days: pd.DatetimeIndex) -> pd.DataFrame | None:
    """0/1 columns on ``days``, one per recurring low piece, 1 on the weekdays inside the
    years' dates of it; None when nothing recurs. Weekends stay unmarked: they keep tying the
    weather response down inside the periods, so a meter that ignores the term (a boiler house)
    is not left to extrapolate its summer from the heating season. Busy pieces stay unmarked
    too: before the refit they are most often the other face of a low one (a summer session
    taken for a smaller cooling slope makes the warm term days look busy)."""
    weekday = days.day_of_week < 5
    columns = {}
    for number, (piece, seen, _covering) in enumerate(_found(ratio, width)):
        if piece.high:
            continue
        inside = np.zeros(len(days))
        for one in seen:
            within = (days >= pd.Timestamp(one.first)) & (days <= pd.Timestamp(one.last))
            inside[within & weekday] = 1.0
        columns[number] = inside
    return pd.DataFrame(columns, index=days) if columns else None


def proposed_periods(
    ratio: pd.Series, width: float, *, southern: bool = False, until: date | None = None
) -> list[ProposedPeriod]:
    """Recurring periods with their evidence: each year's dates where the readings show the
    period, and the latest copied forward by whole weeks each year up to ``until``."""
    proposed: list[ProposedPeriod] = []
    for piece, seen, covering in _found(ratio, width):
        proposed += _piece_periods(
            piece, seen, covering, southern, after=ratio.index[-1].date(), until=until
        )
    return _named_apart(sorted(proposed, key=lambda p: p.period.first_day))


def _named_apart(proposed: list[ProposedPeriod]) -> list[ProposedPeriod]:
    """Periods sharing a name ("Summer break 2025" in May and in August) get their first day."""
    names = pd.Series([p.period.name for p in proposed])
    shared = names.duplicated(keep=False).to_numpy()
    return [
        replace(
            p, period=replace(p.period, name=f"{p.period.name} ({_day_words(p.period.first_day)})")
        )
        if twin
        else p
        for p, twin in zip(proposed, shared, strict=True)
    ]


def _seen(seasons: _Seasons, row: int, span: tuple[int, int], outer) -> _Seen:
    values = seasons.ratio[row, span[0] : span[1] + 1]
    first, last = _widened(seasons, row, *span, outer)
    return _Seen(first, last, float(np.nanmedian(values)))


def _covering(seasons: _Seasons, piece: _Piece) -> int:
    """In how many seasons the readings hold at least half the piece's weekdays."""
    known = ~np.isnan(seasons.ratio[:, piece.first : piece.last + 1])
    most = known.sum(axis=1).max()
    return int((known.sum(axis=1) >= 0.5 * most).sum())


def _piece_periods(
    piece: _Piece,
    seen: list[_Seen],
    covering: int,
    southern: bool,
    *,
    after: date,
    until: date | None,
) -> list[ProposedPeriod]:
    """The piece's periods: each year it showed, then copies of the latest by whole weeks,
    one a year, from the first that starts after the readings (``after``) up to ``until``."""
    latest = seen[-1]
    season = _season(latest.first, latest.last, southern)
    level = float(np.median([one.level for one in seen]))
    kind = _kind(level, piece.high, (latest.last - latest.first).days + 1, season)
    evidence = _seen_in_words(seen, level, max(covering, len(seen)))
    periods = [
        ProposedPeriod(_period(kind, season, piece.high, one.first, one.last), evidence, one.level)
        for one in seen
    ]
    step = 1
    while until is not None:
        weeks = round(step * _YEAR_DAYS / 7)
        start, end = latest.first + timedelta(weeks=weeks), latest.last + timedelta(weeks=weeks)
        step += 1
        if start <= after:  # a year the readings hold, where the period did not show
            continue
        if start > until:
            break
        words = f"copied forward by {weeks} weeks from {_span_short(latest.first, latest.last)}"
        period = _period(kind, season, piece.high, start, end)
        periods.append(ProposedPeriod(period, f"{words}; {evidence}", level, projected=True))
    return periods


def _kind(level: float, high: bool, days: int, season: str) -> str:
    if high:
        return "other"
    if level < CLOSURE_LEVEL:
        return "closure"
    return "summer" if season == "Summer" and days >= 35 else "break"


def _period(kind: str, season: str, high: bool, first: date, last: date) -> CampusPeriod:
    years = f"{first.year}" if first.year == last.year else f"{first.year}-{last.year % 100:02d}"
    if high:
        return CampusPeriod(f"Busy period {first:%b} {years}", first, last, kind)
    word = {"closure": "closure", "summer": "session", "break": "break"}[kind]
    return CampusPeriod(f"{season} {word} {years}", first, last, kind)


def _season(first: date, last: date, southern: bool) -> str:
    middle = first + (last - first) / 2
    season = _SEASONS_NORTH[middle.month]
    return _OPPOSITE[season] if southern else season


def _seen_in_words(seen: list[_Seen], level: float, covering: int) -> str:
    """ "Dec 14 – Jan 19 runs at 62 % of a term weekday in all 3 years (…)"."""
    latest = seen[-1]
    years = (
        f"all {len(seen)} years"
        if len(seen) >= covering
        else f"{len(seen)} of the {covering} years the readings cover"
    )
    each = ", ".join(f"{_span_short(one.first, one.last)}: {one.level:.0%}" for one in seen)
    return (
        f"{latest.first:%b} {latest.first.day} – {latest.last:%b} {latest.last.day} runs at "
        f"{level:.0%} of a term weekday in {years} ({each})"
    ).replace("%", " %")


def _day_words(day: date) -> str:
    return f"{day:%b} {day.day}"


def _span(period: CampusPeriod) -> str:
    return f"{period.first_day.isoformat()} – {period.last_day.isoformat()}"


def _span_short(first: date, last: date) -> str:
    return f"{first.isoformat()} – {last.isoformat()}"


# --- public holidays ------------------------------------------------------------------------


def zone_country(timezone: str) -> tuple[str | None, bool]:
    """The ISO 3166 country a time zone lies in and whether it is south of the equator, from
    the IANA tz database's ``zone.tab`` as the ``tzdata`` package ships it ((None, False) for
    a zone it does not list, such as UTC)."""
    try:
        table = resources.files("tzdata").joinpath("zoneinfo", "zone.tab").read_text("utf-8")
    except (ModuleNotFoundError, FileNotFoundError):
        return None, False
    for line in table.splitlines():
        parts = line.split("\t")
        if not line.startswith("#") and len(parts) >= 3 and parts[2] == timezone:
            return parts[0], parts[1].startswith("-")
    return None, False


def _testable(
    ratio: pd.Series, named: Iterable[date], periods: Sequence[ProposedPeriod]
) -> pd.Series:
    """The ratio on the ``named`` days the readings hold as weekdays, outside the periods."""
    days = pd.DatetimeIndex(sorted(named)).intersection(ratio.index)
    inside = np.zeros(len(days), dtype=bool)
    for proposed in periods:
        first, last = proposed.period.first_day, proposed.period.last_day
        inside |= (days >= pd.Timestamp(first)) & (days <= pd.Timestamp(last))
    return ratio.loc[days[~inside]]


def _years(ratio: pd.Series) -> list[int]:
    return list(range(ratio.index[0].year, ratio.index[-1].year + 1))


def holiday_check(
    ratio: pd.Series, width: float, country: str, periods: Sequence[ProposedPeriod] = ()
) -> ProposedHolidays | None:
    """The country's public holidays (observed days included) on weekdays the readings hold,
    outside the proposed periods: how many ran low. None when fewer than three are testable."""
    if country not in holidays.list_supported_countries():
        return None
    named = holidays.country_holidays(country, years=_years(ratio), observed=True)
    values = _testable(ratio, named, periods)
    if len(values) < 3:
        return None
    low = values < 1 - width
    return ProposedHolidays(
        country, None, int(low.sum()), len(values), _holiday_words(country, values, low, named)
    )


def own_holidays_note(
    ratio: pd.Series,
    width: float,
    country: str,
    subdivision: str,
    periods: Sequence[ProposedPeriod] = (),
) -> str | None:
    """Words when the subdivision's own public holidays (those the country lacks) mostly ran
    like ordinary weekdays: the site seems to keep only the country's, and a model told they
    are days off forecasts them low. None when they ran low or none are testable."""
    years = _years(ratio)
    regional = holidays.country_holidays(country, subdiv=subdivision, years=years, observed=True)
    national = holidays.country_holidays(country, years=years, observed=True)
    own = {day: name for day, name in regional.items() if day not in national}
    values = _testable(ratio, own, periods)
    low = values < 1 - width
    if values.empty or low.mean() >= HOLIDAY_SHARE:
        return None
    ordinary = [f"{own[day.date()]} {day.date().isoformat()} ({value:.0%})"
                for day, value in values[~low].items()]  # fmt: skip
    listed = ", ".join(ordinary[:4]) + (" …" if len(ordinary) > 4 else "")
    words = (
        f"{country}-{subdivision}'s own public holidays ran like ordinary weekdays: "
        f"{len(ordinary)} of {len(values)} ({listed}). The site seems to keep only the public "
        f"holidays of {country}: choose those unless the campus closes on these days too."
    )
    return words.replace("%", " %")


def _holiday_words(country: str, values: pd.Series, low: pd.Series, named) -> str:
    share = low.mean()
    missed = [f"{named[day.date()]} {day.date().isoformat()} ({value:.0%})"
              for day, value in values[~low].items()]  # fmt: skip
    words = (
        f"{country} public holidays: {low.sum()} of {len(values)} on ordinary weekdays ran low "
        f"({share:.0%}; at {values[low].median():.0%} of a term weekday in the median)"
        if low.any()
        else f"{country} public holidays: none of {len(values)} on ordinary weekdays ran low"
    )
    if missed:
        words += f"; not low: {', '.join(missed[:6])}{' …' if len(missed) > 6 else ''}"
    return words.replace("%", " %")


# --- the proposal ---------------------------------------------------------------------------


def propose_calendar(
    daily: pd.DataFrame,
    timezone: str,
    hourly: pd.Series | None = None,
    *,
    horizon_days: int = HORIZON_DAYS,
    given: CampusCalendar | None = None,
) -> CalendarProposal:
    """Recurring periods and public holidays of a site from its meters' daily totals.

    ``daily`` holds complete local-day totals (naive midnights) per meter; ``hourly`` the
    site's hourly °C (tz-aware, or None); periods are copied forward ``horizon_days`` past the
    last day. ``given`` is the calendar the site has: when its public holidays name a
    subdivision, the notes say if the subdivision's own holidays ran like ordinary weekdays.
    """
    degrees = None if hourly is None or hourly.dropna().empty else degree_days(hourly, timezone)
    ratio = site_ratio(meter_ratios(daily, degrees))
    if len(ratio) < 2 * 5 * 52:
        return CalendarProposal(notes=(
            "Fewer than two years of complete weekdays: a calendar cannot be told from the "
            "readings (periods must come back in two years).",))  # fmt: skip
    width = ordinary_band(ratio)[1]
    for _ in range(REFITS):  # again, with the periods found as their own levels
        marks = period_marks(ratio, width, daily.index)
        if marks is None:
            break
        ratio = site_ratio(meter_ratios(daily, degrees, marks))
        width = ordinary_band(ratio)[1]
    country, southern = zone_country(timezone)
    until = ratio.index[-1].date() + timedelta(days=horizon_days)
    periods = tuple(proposed_periods(ratio, width, southern=southern, until=until))
    notes = [f"Ordinary weekdays lie within ±{width:.0%} of a term weekday.".replace("%", " %")]
    found = None
    if country is None:
        notes.append(f"The time zone {timezone} names no country: choose the public holidays.")
    else:
        checked = holiday_check(ratio, width, country, periods)
        if checked is None:
            notes.append(f"Too few {country} public holidays on weekdays in the readings.")
        elif checked.low < HOLIDAY_SHARE * checked.tested:
            notes.append(f"Not proposed: {checked.evidence}.")
        else:
            found = checked
    if given is not None and given.subdivision is not None:
        note = own_holidays_note(ratio, width, given.country, given.subdivision, periods)
        notes += [note] if note else []
    return CalendarProposal(periods, found, tuple(notes))


def propose_for_site(site: PreparedSite, cut: pd.Timestamp | None = None) -> CalendarProposal:
    """The proposal from a prepared site's readings before ``cut`` (UTC; None: all)."""
    daily, hourly = site_days(site, cut)
    return propose_calendar(daily, site.timezone, hourly, given=site.calendar)


def with_proposal(calendar: CampusCalendar, proposal: CalendarProposal) -> CampusCalendar:
    """``calendar`` with what it lacks taken from the proposal: its periods when it has none,
    the public holidays when it names no country."""
    proposed = proposal.calendar()
    periods = calendar.periods or proposed.periods
    if calendar.country is not None:
        return replace(calendar, periods=periods)
    return CampusCalendar(proposed.country, proposed.subdivision, periods)
