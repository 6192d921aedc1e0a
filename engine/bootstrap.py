"""Block bootstrap: resample a series in blocks so that its autocorrelation survives.

Budgets simulate futures by adding resampled model residuals to a forecast. Energy residuals
are autocorrelated (a warm week stays warm), so drawing them one at a time (the i.i.d.
bootstrap) understates the spread of monthly totals; drawing blocks of consecutive residuals
keeps the dependence within each block.

* Stationary bootstrap (Politis & Romano 1994): blocks of geometric length with mean ``m``
  that start at uniform positions and wrap circularly past the end; every position starts a
  new block with probability ``1/m``. The resampled series is stationary and every drawn
  index is uniform over the source.
* The mean block length that suits a series: Politis & White (2004), see
  :func:`stationary_block_length`.

Budgets draw whole local days with it (:mod:`engine.budget.residuals` and
:mod:`engine.budget.weather_paths` lay days out and keep their clock times).

Every generator returns integer positions into the source, shape ``(n_paths, n_target)``;
apply them with ``residuals[indices]``. All work is vectorised over paths and positions.
"""

from __future__ import annotations

import numpy as np

from engine.errors import InputError


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
