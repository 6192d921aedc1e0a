"""Heating and cooling degree-days by three published methods, and the balance-point search.

Every function works in the unit of the temperatures it is given: pass the base temperature
in the same unit (18.3 °C or 65 °F), and the degree-days come out in °C·day or °F·day.
Daily frames are those of :func:`engine.weather.daily_stats` (``tmean``, ``tmax``, ``tmin``).

Methods
-------
* mean temperature: ``max(base − Tmean, 0)`` per day, with Tmean the mean of the hourly
  temperatures or ``(Tmax + Tmin) / 2``;
* the UK Met Office min/max equations, which estimate the part of a day spent below the base
  from the day's extremes alone;
* integration: the mean over the day's readings of ``max(base − T, 0)``, i.e. degree-hours / 24.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass
from typing import Any

import numpy as np
import pandas as pd

from engine.errors import InputError
from engine.timestamps import day_lengths

KINDS: tuple[str, ...] = ("heating", "cooling")
#: Daily methods for :func:`daily_degree_days`.
DAILY_METHODS: tuple[str, ...] = ("mean_of_hours", "mean_of_max_min", "met_office")


def _check_kind(kind: str) -> None:
    if kind not in KINDS:
        raise ValueError(f"kind must be one of {KINDS}, not {kind!r}")


def mean_temperature_degree_days(tmean: Any, base: Any, kind: str = "heating") -> Any:
    """``max(base − Tmean, 0)`` (heating) or ``max(Tmean − base, 0)`` (cooling).

    Broadcasts like numpy, so a column of days against a row of candidate bases gives a
    days × bases table.
    """
    _check_kind(kind)
    difference = base - tmean if kind == "heating" else tmean - base
    return np.maximum(difference, 0.0)


def _met_office_heating(tmax: Any, tmin: Any, base: Any) -> Any:
    tmean = (tmax + tmin) / 2
    return np.select(
        [tmax <= base, tmean <= base, tmin < base],
        [base - tmean, (base - tmin) / 2 - (tmax - base) / 4, (base - tmin) / 4],
        default=0.0,
    )


def met_office_degree_days(tmax: Any, tmin: Any, base: Any, kind: str = "heating") -> Any:
    """Degree-days from daily extremes by the UK Met Office equations.

    Heating, with Tmean = (Tmax + Tmin) / 2 (CIBSE TM41, 2006; written from memory):

    ====================== ===================================
    Tmax ≤ base            base − Tmean
    Tmean ≤ base < Tmax    (base − Tmin)/2 − (Tmax − base)/4
    Tmin < base < Tmean    (base − Tmin)/4
    base ≤ Tmin            0
    ====================== ===================================

    Cooling is the mirror image (temperatures and base negated, Tmax and Tmin swapped).
    Broadcasts like numpy.
    """
    _check_kind(kind)
    tmax, tmin = np.asarray(tmax, dtype=float), np.asarray(tmin, dtype=float)
    base = np.asarray(base, dtype=float)
    if kind == "heating":
        return _met_office_heating(tmax, tmin, base)
    return _met_office_heating(-tmin, -tmax, -base)


def daily_degree_days(
    daily: pd.DataFrame, base: float, kind: str = "heating", method: str = "mean_of_hours"
) -> pd.Series:
    """Degree-days for each day of a daily temperature frame.

    ``method`` is ``"mean_of_hours"`` (uses ``tmean``), ``"mean_of_max_min"`` (uses
    ``(tmax + tmin) / 2``) or ``"met_office"`` (uses ``tmax`` and ``tmin``).
    """
    values = _degree_day_table(daily, np.array([base], dtype=float), kind, method)[:, 0]
    return pd.Series(values, index=daily.index, name=f"{kind}_degree_days")


def _degree_day_table(daily: pd.DataFrame, bases: np.ndarray, kind: str, method: str) -> np.ndarray:
    """Days × bases table of degree-days."""
    if method == "mean_of_hours":
        tmean = daily["tmean"].to_numpy(dtype=float)[:, None]
        return mean_temperature_degree_days(tmean, bases[None, :], kind)
    tmax = daily["tmax"].to_numpy(dtype=float)[:, None]
    tmin = daily["tmin"].to_numpy(dtype=float)[:, None]
    if method == "mean_of_max_min":
        return mean_temperature_degree_days((tmax + tmin) / 2, bases[None, :], kind)
    if method == "met_office":
        return met_office_degree_days(tmax, tmin, bases[None, :], kind)
    raise ValueError(f"method must be one of {DAILY_METHODS}, not {method!r}")


def integrated_degree_days(
    temps: pd.Series,
    base: float,
    kind: str = "heating",
    *,
    timezone: str = "UTC",
    min_coverage: float = 0.8,
) -> pd.Series:
    """Degree-days per local day by integrating regularly spaced temperatures.

    Each day gets the mean of ``max(base − T, 0)`` over its readings times the day's clock
    length in days (23 or 25 hours on daylight-saving changes); for a complete hourly day
    that is the sum of degree-hours divided by 24. Readings are taken as representative of
    equal spans, so the series must be regular (hourly, 15-minute …). Days with fewer than
    ``min_coverage`` of their expected readings are NaN rather than guessed.
    """
    _check_kind(kind)
    readings = temps.astype("float64")
    if not isinstance(readings.index, pd.DatetimeIndex) or readings.index.tz is None:
        raise ValueError("temperatures need a tz-aware DatetimeIndex")
    step = pd.Series(readings.index).diff().median()
    local = readings.index.tz_convert(timezone)
    day = local.tz_localize(None).normalize()
    deficit = pd.Series(mean_temperature_degree_days(readings.to_numpy(), base, kind), index=day)
    by_day = deficit.groupby(level=0)
    mean_deficit, present = by_day.mean(), by_day.count()
    day_length = pd.Series(day_lengths(mean_deficit.index, timezone), index=mean_deficit.index)
    expected = day_length / step
    result = (mean_deficit * (day_length / pd.Timedelta(days=1))).where(
        present >= min_coverage * expected
    )
    return result.rename(f"{kind}_degree_days").rename_axis("day")


@dataclass(frozen=True)
class BalancePointFit:
    """Daily energy explained by degree-days at the best base temperature(s).

    ``energy ≈ intercept + heating_slope · HDD(heating_base) + cooling_slope · CDD(cooling_base)``
    per day; the terms of a kind not fitted are None. ``intercept`` is the weather-independent
    base load per day; slopes are energy per degree-day. ``cv_rmse`` is a fraction, with
    n − p degrees of freedom as ASHRAE Guideline 14 defines it.
    """

    kind: str
    heating_base: float | None
    heating_slope: float | None
    cooling_base: float | None
    cooling_slope: float | None
    intercept: float
    r_squared: float
    cv_rmse: float
    days: int

    def to_dict(self) -> dict[str, Any]:
        return asdict(self)


def _centred(values: np.ndarray, groups: np.ndarray | None) -> np.ndarray:
    """``values`` (days, or days × columns) less their mean over the days of the same group
    (over all days when there are no groups)."""
    if groups is None:
        return values - values.mean(axis=0)
    counts = np.bincount(groups)
    sums = np.zeros((len(counts), *values.shape[1:]))
    np.add.at(sums, groups, values)
    means = sums / counts.reshape(-1, *([1] * (values.ndim - 1)))
    return values - means[groups]


@dataclass(frozen=True)
class _Candidates:
    """Degree-days of one kind at each candidate base: their means and, days × bases, their
    departures from their day group's mean."""

    bases: np.ndarray
    means: np.ndarray
    centred: np.ndarray

    @classmethod
    def of(
        cls,
        daily: pd.DataFrame,
        bases: np.ndarray,
        kind: str,
        method: str,
        groups: np.ndarray | None = None,
    ) -> _Candidates:
        table = _degree_day_table(daily, bases, kind, method)
        return cls(bases, table.mean(axis=0), _centred(table, groups))


def _single_fits(yc: np.ndarray, x: _Candidates) -> tuple[np.ndarray, np.ndarray]:
    """Slopes (bases × 1) and SSE of centred ``yc`` on each candidate's centred degree-days."""
    spread = np.einsum("ij,ij->j", x.centred, x.centred)
    moment = yc @ x.centred
    singular = spread <= 0.0  # the same degree-days every day: no slope can be fitted
    slope = moment / np.where(singular, 1.0, spread)
    sse = np.where(singular, np.inf, yc @ yc - slope * moment)
    return slope[:, None], sse


def _pair_fits(
    yc: np.ndarray, heating: _Candidates, cooling: _Candidates
) -> tuple[np.ndarray, np.ndarray]:
    """Slopes (heating bases × cooling bases × 2) and SSE of ``yc`` on each pair of columns.

    The 2 × 2 normal equations of every pair are solved in closed form (Cramer's rule); pairs
    whose Gram determinant is negligible against its diagonal are singular and get SSE ∞.
    """
    hh = np.einsum("ij,ij->j", heating.centred, heating.centred)[:, None]
    cc = np.einsum("ij,ij->j", cooling.centred, cooling.centred)[None, :]
    hc = heating.centred.T @ cooling.centred
    mh = (yc @ heating.centred)[:, None]
    mc = (yc @ cooling.centred)[None, :]
    det = hh * cc - hc * hc
    singular = det <= 1e-9 * hh * cc
    det = np.where(singular, 1.0, det)
    slopes = np.stack([(cc * mh - hc * mc) / det, (hh * mc - hc * mh) / det], axis=-1)
    sse = yc @ yc - slopes[..., 0] * mh - slopes[..., 1] * mc
    return slopes, np.where(singular, np.inf, sse)


def _search(
    y: np.ndarray,
    daily: pd.DataFrame,
    kind: str,
    method: str,
    heating: np.ndarray,
    cooling: np.ndarray,
    groups: np.ndarray | None = None,
) -> tuple[np.ndarray, float, float | None, float | None]:
    """Best (coefficients, sse, heating base, cooling base) over the candidate grid.

    Each candidate is a least-squares fit of ``y`` on an intercept (one per day group) and
    degree-days, solved in centred form; for ``"both"`` every pair with heating base ≤
    cooling base is a candidate. The intercept returned is that of an average day.
    """
    yc = _centred(y, groups)
    if kind == "both":
        found = [
            _Candidates.of(daily, bases, side, method, groups)
            for bases, side in ((heating, "heating"), (cooling, "cooling"))
        ]
        slopes, sse = _pair_fits(yc, *found)
        sse[heating[:, None] > cooling[None, :]] = np.inf
    else:
        bases = heating if kind == "heating" else cooling
        found = [_Candidates.of(daily, bases, kind, method, groups)]
        slopes, sse = _single_fits(yc, found[0])
    sse[(slopes <= 0).any(axis=-1)] = np.inf
    if not np.isfinite(sse).any():
        raise InputError(
            f"daily energy does not rise with {kind} degree-days at any base temperature.",
            hint="The meter may not depend on the weather, or try another kind.",
        )
    best = np.unravel_index(np.argmin(sse), sse.shape)
    slope = slopes[best]
    intercept = y.mean() - sum(s * x.means[at] for s, x, at in zip(slope, found, best, strict=True))
    bases = [float(x.bases[at]) for x, at in zip(found, best, strict=True)]
    return (
        np.concatenate(([intercept], slope)),
        float(sse[best]),
        bases[0] if kind != "cooling" else None,
        bases[-1] if kind != "heating" else None,
    )


def _refined(grid: np.ndarray, best: float | None, points: int) -> np.ndarray:
    """A fine grid spanning the coarse grid points either side of ``best``."""
    if best is None:
        return grid
    at = int(np.searchsorted(grid, best))
    return np.linspace(grid[max(at - 1, 0)], grid[min(at + 1, len(grid) - 1)], points)


def balance_point(
    daily_energy: pd.Series,
    daily_temps: pd.DataFrame | pd.Series,
    kind: str = "heating",
    candidates: np.ndarray | None = None,
    *,
    method: str = "mean_of_hours",
    min_days: int = 14,
    groups: pd.Series | None = None,
) -> BalancePointFit:
    """Search the base temperature(s) whose degree-days best explain daily energy.

    For every candidate base the daily energy is regressed on degree-days (for ``"both"``,
    on heating and cooling degree-days with heating base ≤ cooling base); the fit with the
    least squared error (highest R²) and positive slopes wins, and the search is then
    repeated on a fine grid around it.

    With ``groups`` each group of days (a day type in a campus period, say) has its own
    intercept, so the slopes come from the weather's changes within a group: a summer
    session that runs at half the term's occupancy in the hottest weeks would otherwise hide
    the cooling, as a winter break hides heating.

    Parameters
    ----------
    daily_energy : pandas.Series
        Energy per day, indexed by day.
    daily_temps : pandas.DataFrame or pandas.Series
        A :func:`engine.weather.daily_stats` frame, or a Series of daily mean temperatures.
    kind : {"heating", "cooling", "both"}
    candidates : array-like, optional
        Coarse grid of bases, in the temperatures' unit; by default 41 points from the 5th to
        the 95th percentile of the daily mean temperature.
    method : str
        Degree-day method, see :data:`DAILY_METHODS`.
    min_days : int
        Fewest days with both energy and temperature to attempt a fit.
    """
    if kind not in (*KINDS, "both"):
        raise ValueError(f"kind must be heating, cooling or both, not {kind!r}")
    if isinstance(daily_temps, pd.Series):
        daily_temps = daily_temps.to_frame("tmean")
    needed = ["tmean"] if method == "mean_of_hours" else ["tmax", "tmin"]
    if not set(needed) <= set(daily_temps.columns):
        raise ValueError(f"method {method!r} needs daily columns {needed}")
    joined = daily_temps.join(daily_energy.rename("energy"), how="inner")
    if groups is not None:
        joined = joined.join(groups.rename("group"), how="inner")
    joined = joined.dropna()
    if len(joined) < min_days:
        raise InputError(
            f"only {len(joined)} days have both energy and temperature; "
            f"a balance-point search needs at least {min_days}.",
            hint="Check that the meter and weather data cover the same days.",
        )
    y = joined["energy"].to_numpy(dtype=float)
    codes = None if groups is None else pd.factorize(joined["group"])[0]
    if candidates is None:
        daily_mean = joined[needed].mean(axis=1)
        low, high = np.percentile(daily_mean, [5, 95])
        candidates = np.linspace(low, high, 41)
    grid = np.sort(np.asarray(candidates, dtype=float))

    coarse = _search(y, joined, kind, method, grid, grid, codes)
    coefficients, sse, heating_base, cooling_base = _search(
        y,
        joined,
        kind,
        method,
        _refined(grid, coarse[2], 41),
        _refined(grid, coarse[3], 41),
        codes,
    )
    slopes = list(coefficients[1:])
    parameters = len(coefficients) + (0 if codes is None else int(codes.max()))
    return BalancePointFit(
        kind=kind,
        heating_base=heating_base,
        heating_slope=float(slopes.pop(0)) if heating_base is not None else None,
        cooling_base=cooling_base,
        cooling_slope=float(slopes.pop(0)) if cooling_base is not None else None,
        intercept=float(coefficients[0]),
        r_squared=float(1 - sse / ((y - y.mean()) ** 2).sum()),
        cv_rmse=float(np.sqrt(sse / (len(y) - parameters)) / y.mean()),
        days=len(y),
    )
