"""Block bootstrap: resample a series in blocks so that its autocorrelation survives.

Budgets simulate futures by adding resampled model residuals to a forecast. Energy residuals
are autocorrelated (a warm week stays warm), so drawing them one at a time (the i.i.d.
bootstrap) understates the spread of monthly totals; drawing blocks of consecutive residuals
keeps the dependence within each block.

* Stationary bootstrap (Politis & Romano 1994): blocks of geometric length with mean ``m``
  that start at uniform positions and wrap circularly past the end; every position starts a
  new block with probability ``1/m``. The resampled series is stationary and every drawn
  index is uniform over the source.
* Circular block bootstrap (Politis & Romano 1992): blocks of fixed length ``b`` with uniform
  starts, wrapping circularly.
* Day blocks: either scheme over whole local days; each target interval takes the source
  interval at the same local clock time on its drawn day, so the daily shape is kept.

Every generator returns integer positions into the source, shape ``(n_paths, n_target)``;
apply them with ``residuals[indices]``. All work is vectorised over paths and positions.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
import pandas as pd

from engine.errors import InputError

_DAY = pd.Timedelta(days=1)
_SECOND = pd.Timedelta(seconds=1)


def stationary_indices(
    n_source: int, n_target: int, mean_block: float, n_paths: int, rng: np.random.Generator
) -> np.ndarray:
    """Positions drawn by the stationary bootstrap (geometric block lengths, circular).

    Parameters
    ----------
    n_source : int
        Length of the series resampled.
    n_target : int
        Length of each resampled path.
    mean_block : float
        Mean block length ``m`` ≥ 1; a new block starts at each position with probability
        ``1/m`` (``m = 1`` is the i.i.d. bootstrap).
    n_paths : int
        Number of paths.
    rng : numpy.random.Generator
        Source of randomness.

    Returns
    -------
    numpy.ndarray
        ``(n_paths, n_target)`` int64 positions in ``0 .. n_source - 1``.

    Examples
    --------
    >>> rng = np.random.default_rng(7)
    >>> stationary_indices(100, 5, 10.0, 2, rng).shape
    (2, 5)
    """
    _check_sizes(n_source, n_target, n_paths)
    if not mean_block >= 1:
        raise InputError(
            f"the mean block length is {mean_block}; it must be at least 1.",
            hint="Use 1 for independent draws, or the length over which errors stay alike.",
        )
    steps = np.arange(n_target)
    new_block = rng.random((n_paths, n_target)) < 1.0 / mean_block
    new_block[:, 0] = True
    block_first = np.maximum.accumulate(np.where(new_block, steps, 0), axis=1)
    origins = np.zeros((n_paths, n_target), dtype=np.int64)
    origins[new_block] = rng.integers(0, n_source, size=int(new_block.sum()))
    positions = np.take_along_axis(origins, block_first, axis=1) + (steps - block_first)
    return _wrap(positions, n_source, n_target)


def stationary_block_length(series: np.ndarray) -> float:
    """The mean block length that suits the stationary bootstrap of ``series``.

    Politis & White (2004), "Automatic block-length selection for the dependent bootstrap",
    with the correction of Patton, Politis & White (2009), from memory: with the sample
    autocovariances ``R(k)`` and the flat-top lag window ``λ`` (1 up to half the bandwidth
    ``M``, falling linearly to 0 at ``M``),

        G = Σ λ(k/M) |k| R(k),   g = Σ λ(k/M) R(k),   b = (2 G² / (2 g²))^(1/3) · n^(1/3),

    sums over ``-M ≤ k ≤ M``. ``M`` is twice the smallest lag after which the next
    ``max(5, √log10 n)`` autocorrelations all lie within ``±2 √(log10 n / n)``. The length is
    kept between 1 and ``min(3 √n, n / 3)``. A series with no dependence gets 1.
    """
    values = np.asarray(series, dtype=np.float64)
    values = values[np.isfinite(values)]
    n = len(values)
    if n < 8:
        return 1.0
    centred = values - values.mean()
    longest = min(int(np.ceil(np.sqrt(n))) + max(5, int(np.sqrt(np.log10(n)))), n - 1)
    spectrum = np.fft.rfft(centred, 2 * n)
    autocovariance = np.fft.irfft(spectrum * np.conj(spectrum))[: longest + 1] / n
    if autocovariance[0] <= 0:
        return 1.0
    correlation = np.abs(autocovariance / autocovariance[0])
    run = max(5, int(np.ceil(np.sqrt(np.log10(n)))))
    quiet = correlation[1:] < 2.0 * np.sqrt(np.log10(n) / n)
    # smallest m with lags m+1 .. m+run all quiet (m = 0 when the series has no dependence)
    windows = np.lib.stride_tricks.sliding_window_view(quiet, run).all(axis=1)
    first = int(np.argmax(windows)) if windows.any() else longest - run
    bandwidth = min(2 * max(first, 1), longest)
    lags = np.arange(1, bandwidth + 1)
    ratio = lags / bandwidth
    window = np.where(ratio <= 0.5, 1.0, 2.0 * (1.0 - ratio))
    g = autocovariance[0] + 2.0 * np.sum(window * autocovariance[lags])
    big_g = 2.0 * np.sum(window * lags * autocovariance[lags])
    if g <= 0:
        return 1.0
    length = (big_g**2 / g**2) ** (1.0 / 3.0) * n ** (1.0 / 3.0)
    return float(np.clip(length, 1.0, min(3.0 * np.sqrt(n), n / 3.0)))


def circular_indices(
    n_source: int, n_target: int, block: int, n_paths: int, rng: np.random.Generator
) -> np.ndarray:
    """Positions drawn by the circular block bootstrap (fixed block length, circular).

    Parameters are those of :func:`stationary_indices`, with ``block`` the whole block
    length (≥ 1) in place of the mean.
    """
    _check_sizes(n_source, n_target, n_paths)
    if isinstance(block, bool) or not isinstance(block, int | np.integer) or block < 1:
        raise InputError(
            f"the block length is {block!r}; it must be a whole number of at least 1.",
            hint="Use a whole number of intervals (or of days for day blocks).",
        )
    steps = np.arange(n_target)
    origins = rng.integers(0, n_source, size=(n_paths, -(-n_target // block)))
    return _wrap(origins[:, steps // block] + steps % block, n_source, n_target)


#: The block schemes :func:`day_block_indices` can use over days.
SCHEMES: dict[str, Callable[..., np.ndarray]] = {
    "stationary": stationary_indices,
    "circular": circular_indices,
}


def day_block_indices(
    source_index: pd.DatetimeIndex,
    target_index: pd.DatetimeIndex,
    timezone: str,
    block_days: float,
    n_paths: int,
    rng: np.random.Generator,
    scheme: str = "stationary",
) -> np.ndarray:
    """Positions into the source for each target interval, drawn in blocks of whole days.

    The source's whole local days are resampled with ``scheme`` (block length in days: the
    mean for ``"stationary"``, fixed for ``"circular"``); each target interval then takes
    the source interval at the same local clock time on the day drawn for its own local
    day, so morning stays morning. Clock times missing on a drawn day (the hour skipped when
    clocks go forward) take the next interval of that day; on the day clocks go back, the
    repeated hour takes the first of the drawn day's two. Partial days at the source's
    ends are not drawn.

    Parameters
    ----------
    source_index : pandas.DatetimeIndex
        Regular UTC interval starts of the series resampled (e.g. model residuals).
    target_index : pandas.DatetimeIndex
        Regular UTC interval starts, at the same interval, of the paths to fill.
    timezone : str
        The site's IANA zone whose days and clock times are kept.
    block_days : float
        Block length in days.
    n_paths : int
        Number of paths.
    rng : numpy.random.Generator
        Source of randomness.
    scheme : {"stationary", "circular"}
        How days are drawn.

    Returns
    -------
    numpy.ndarray
        ``(n_paths, len(target_index))`` int64 positions into ``source_index``.
    """
    if scheme not in SCHEMES:
        raise ValueError(f"scheme must be one of {sorted(SCHEMES)}, not {scheme!r}")
    interval = _regular_step(source_index, "source")
    if _DAY % interval:
        raise ValueError(f"day blocks need an interval that divides a day, not {interval}")
    if len(target_index) > 1 and _regular_step(target_index, "target") != interval:
        raise ValueError("the target index needs the source's interval")
    table = _day_table(source_index, timezone, interval)
    days, slots = _day_and_slot(target_index, timezone, interval)
    days -= days.min()
    drawn = SCHEMES[scheme](len(table), int(days.max()) + 1, block_days, n_paths, rng)
    return table[drawn[:, days], slots]


def _check_sizes(n_source: int, n_target: int, n_paths: int) -> None:
    if n_source < 1 or n_target < 1 or n_paths < 1:
        raise ValueError(
            f"sizes must be at least 1 (source {n_source}, target {n_target}, paths {n_paths})"
        )


def _wrap(positions: np.ndarray, n_source: int, n_target: int) -> np.ndarray:
    """Positions (a start below ``n_source`` plus an offset below ``n_target``) wrapped round."""
    if n_target > n_source:
        return positions % n_source
    positions[positions >= n_source] -= n_source  # a single wrap; much faster than modulo
    return positions


def _regular_step(index: pd.DatetimeIndex, what: str) -> pd.Timedelta:
    if not isinstance(index, pd.DatetimeIndex) or str(index.tz) != "UTC" or len(index) < 2:
        raise ValueError(f"the {what} needs a UTC DatetimeIndex of two or more interval starts")
    steps = index[1:] - index[:-1]
    if not (steps == steps[0]).all() or steps[0] <= pd.Timedelta(0):
        raise ValueError(f"the {what} index must be regular and increasing")
    return steps[0]


def _day_and_slot(
    index: pd.DatetimeIndex, timezone: str, interval: pd.Timedelta
) -> tuple[np.ndarray, np.ndarray]:
    """Local day number (days since 1970-01-01) and clock slot of each interval start."""
    wall = index.tz_convert(timezone).tz_localize(None)
    days = wall.normalize().to_numpy().astype("datetime64[D]").astype(np.int64)
    seconds = (wall.hour * 3600 + wall.minute * 60 + wall.second).to_numpy()
    return days, seconds // int(interval / _SECOND)


def _day_table(index: pd.DatetimeIndex, timezone: str, interval: pd.Timedelta) -> np.ndarray:
    """``(whole days, slots per day)`` source positions, one row per whole local day."""
    days, slots = _day_and_slot(index, timezone, interval)
    found, counts = np.unique(days, return_counts=True)
    bounds = [
        pd.DatetimeIndex(numbers.astype("datetime64[D]")).tz_localize(
            timezone, ambiguous=True, nonexistent="shift_forward"
        )
        for numbers in (found, found + 1)
    ]
    whole = found[counts == (bounds[1] - bounds[0]) // interval]
    if not whole.size:
        raise InputError(
            "the series to resample holds no whole local day.",
            hint="Fit the model on at least a few whole days of readings.",
        )
    per_day = _DAY // interval
    positions = np.flatnonzero(np.isin(days, whole))
    cells = np.searchsorted(whole, days[positions]) * per_day + slots[positions]
    cells, first = np.unique(cells, return_index=True)
    table = np.full(whole.size * per_day, -1, dtype=np.int64)
    table[cells] = positions[first]
    return _fill_missing_slots(table.reshape(whole.size, per_day))


def _fill_missing_slots(table: np.ndarray) -> np.ndarray:
    """Give clock slots a day lacks the day's next interval (else its previous one)."""
    missing = table < 0
    if not missing.any():
        return table
    none = np.iinfo(np.int64).max
    after = np.minimum.accumulate(np.where(missing, none, table)[:, ::-1], axis=1)[:, ::-1]
    before = np.maximum.accumulate(table, axis=1)
    return np.where(after == none, before, after)
