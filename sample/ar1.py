"""Autocorrelated noise: the stationary AR(1) process behind weather swings and meter noise."""

from __future__ import annotations

import numpy as np
from scipy.signal import lfilter


def unit_ar1(size: int, phi: float, rng: np.random.Generator) -> np.ndarray:
    """A stationary AR(1) path with zero mean and unit variance.

    ``x[t] = phi * x[t-1] + sqrt(1 - phi**2) * e[t]`` with standard normal ``e``; the first
    value is drawn from the stationary distribution, so there is no warm-up transient.

    Parameters
    ----------
    size : int
        Number of steps.
    phi : float
        Lag-one autocorrelation per step, ``0 <= phi < 1``.
    rng : numpy.random.Generator
        Source of the shocks.
    """
    if not 0.0 <= phi < 1.0:
        raise ValueError(f"phi must be in [0, 1), got {phi}")
    shocks = rng.standard_normal(size)
    shocks[1:] *= np.sqrt(1.0 - phi**2)
    return lfilter([1.0], [1.0, -phi], shocks)


def lognormal_multiplier(size: int, cv: float, phi: float, rng: np.random.Generator) -> np.ndarray:
    """Multiplicative noise with mean 1 and coefficient of variation ``cv``, AR(1) in the log.

    The log of the multiplier is ``s * x - s**2 / 2`` with ``x`` from :func:`unit_ar1` and
    ``s = sqrt(log(1 + cv**2))``, which makes the multiplier lognormal with exactly that mean
    and CV.
    """
    sigma = np.sqrt(np.log1p(cv**2))
    return np.exp(sigma * unit_ar1(size, phi, rng) - 0.5 * sigma**2)
