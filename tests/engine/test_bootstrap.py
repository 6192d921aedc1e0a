"""The stationary block bootstrap: uniform draws, block lengths, kept dependence, and the
automatic mean block length."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import signal, stats
from statsmodels.tsa.stattools import acf

from engine.bootstrap import stationary_block_length, stationary_indices
from engine.errors import InputError

ZONE = "America/Chicago"
#: Significance level of every goodness-of-fit test below.
ALPHA = 0.001


def ar1(phi: float, n: int, generator: np.random.Generator) -> np.ndarray:
    """An AR(1) series x[t] = φ x[t−1] + e[t] with unit-variance normal innovations."""
    burn_in = 500
    innovations = generator.standard_normal(n + burn_in)
    return signal.lfilter([1.0], [1.0, -phi], innovations)[burn_in:]


def block_starts(indices: np.ndarray, n_source: int) -> np.ndarray:
    """True where a position does not continue the previous one's block."""
    starts = np.ones(indices.shape, dtype=bool)
    starts[:, 1:] = indices[:, 1:] != (indices[:, :-1] + 1) % n_source
    return starts


# --- the draws --------------------------------------------------------------------------------


def test_each_position_draws_uniformly_from_the_source() -> None:
    generator = np.random.default_rng(4101)
    indices = stationary_indices(40, 300, 8, 4000, generator)
    assert indices.shape == (4000, 300)
    # Across independent paths, the index drawn at any one position is uniform over the
    # source (Politis & Romano 1994, from memory); Pearson's chi-square test, scipy.stats.
    for position in (0, 137, 299):
        counts = np.bincount(indices[:, position], minlength=40)
        assert stats.chisquare(counts).pvalue > ALPHA


def test_stationary_blocks_have_geometric_lengths() -> None:
    mean_block = 12.5
    n_source = 1_000_000  # so a new block almost never happens to continue the last one
    indices = stationary_indices(n_source, 2000, mean_block, 500, np.random.default_rng(4102))
    starts = block_starts(indices, n_source)
    # Politis & Romano (1994), from memory: each position after the first starts a new block
    # with probability p = 1/mean, so block lengths are geometric with mean 1/p.
    p = 1.0 / mean_block
    drawn = starts[:, 1:]
    share = drawn.mean()
    assert abs(share - p) < 4 * np.sqrt(p * (1 - p) / drawn.size)
    rows, columns = np.nonzero(starts)
    same_path = np.diff(rows) == 0
    lengths = np.diff(columns)[same_path]  # whole blocks only (the last of a path is cut)
    assert lengths.mean() == pytest.approx(mean_block, rel=0.02)
    top = 40
    observed = np.r_[np.bincount(lengths, minlength=top + 1)[1 : top + 1], (lengths > top).sum()]
    expected = lengths.size * np.r_[stats.geom.pmf(np.arange(1, top + 1), p), stats.geom.sf(top, p)]
    assert stats.chisquare(observed, expected).pvalue > ALPHA


def test_blocks_wrap_round_the_end_of_the_source() -> None:
    indices = stationary_indices(5, 400, 50.0, 20, np.random.default_rng(4104))
    after_last = indices[:, 1:][(indices[:, :-1] == 4)]
    assert (after_last == 0).mean() > 0.9  # long blocks carry on from 4 to 0
    longer_than_source = stationary_indices(7, 60, 20.0, 3, np.random.default_rng(4105))
    assert longer_than_source.max() < 7


@settings(max_examples=60, deadline=None)
@given(
    n_source=st.integers(1, 50),
    n_target=st.integers(1, 120),
    mean_block=st.floats(1.0, 80.0),
    n_paths=st.integers(1, 5),
)
def test_indices_stay_inside_the_source(
    n_source: int, n_target: int, mean_block: float, n_paths: int
) -> None:
    generator = np.random.default_rng(4106)
    indices = stationary_indices(n_source, n_target, mean_block, n_paths, generator)
    assert indices.shape == (n_paths, n_target)
    assert indices.min() >= 0
    assert indices.max() < n_source


# --- what the blocks keep ---------------------------------------------------------------------


def test_long_blocks_keep_lag_one_autocorrelation_and_single_draws_lose_it() -> None:
    generator = np.random.default_rng(4107)
    series = ar1(0.8, 4000, generator)
    original = acf(series, nlags=1)[1]  # statsmodels' sample autocorrelation
    assert original == pytest.approx(0.8, abs=0.05)
    kept = stationary_indices(series.size, series.size, 100.0, 150, generator)
    lost = stationary_indices(series.size, series.size, 1.0, 150, generator)
    kept_lag1 = np.mean([acf(series[row], nlags=1)[1] for row in kept])
    lost_lag1 = np.mean([acf(series[row], nlags=1)[1] for row in lost])
    # One pair in a hundred straddles a block joint, where the correlation is ~0.
    assert kept_lag1 == pytest.approx(original, abs=0.03)
    assert abs(lost_lag1) < 0.01


def test_bootstrap_standard_error_of_the_mean_matches_the_long_run_formula() -> None:
    phi, n = 0.5, 20_000
    generator = np.random.default_rng(4108)
    series = ar1(phi, n, generator)
    # Long-run variance of the mean of an AR(1) with innovation variance σ² (from memory,
    # e.g. Hamilton 1994, ch. 7): Var(x̄) ≈ σ² / (1 − φ)² / n, here σ² = 1.
    long_run = np.sqrt(1.0 / (1.0 - phi) ** 2 / n)
    means = np.concatenate(
        [series[stationary_indices(n, n, 40.0, 100, generator)].mean(axis=1) for _ in range(8)]
    )
    assert means.std(ddof=1) == pytest.approx(long_run, rel=0.15)
    # Single draws ignore the dependence: about sqrt((1 − φ)/(1 + φ)) = 0.58 of the truth.
    single = series[stationary_indices(n, n, 1.0, 300, generator)].mean(axis=1)
    assert single.std(ddof=1) < 0.75 * long_run


def test_block_lengths_below_one_are_refused() -> None:
    generator = np.random.default_rng(4113)
    with pytest.raises(InputError, match="mean block length"):
        stationary_indices(10, 10, 0.5, 1, generator)


def test_the_automatic_block_length_follows_politis_and_white() -> None:
    """The stationary bootstrap's automatic mean block length (Politis & White 2004, with the
    2009 correction) against the ``arch`` package's implementation of the same paper, and,
    on a long AR(1), against the rule's own large-sample value.

    For an AR(1) with lag-one correlation φ, R(k) ∝ φ^|k|, so Σ|k|R(k) / ΣR(k) = 2φ/(1 − φ²)
    and the rule b = (2G² / D)^(1/3) n^(1/3) with D = 2g² becomes (2φ/(1 − φ²))^(2/3) n^(1/3)
    (worked out from the paper's formula). ``arch`` chooses the bandwidth from the
    autocorrelations a little differently (its documentation says its lengths do not match
    the authors' own program exactly), so the two agree within a third, not to the digit.
    """
    from arch.bootstrap import optimal_block_length

    generator = np.random.default_rng(41)
    for phi in (0.3, 0.5, 0.8):
        for n in (730, 5000):
            series = ar1(phi, n, generator)
            ours = stationary_block_length(series)
            theirs = float(optimal_block_length(series)["stationary"].iloc[0])
            assert ours == pytest.approx(theirs, rel=0.35)
    long = ar1(0.5, 20_000, generator)
    assert stationary_block_length(long) == pytest.approx(
        (2 * 0.5 / (1 - 0.25)) ** (2 / 3) * 20_000 ** (1 / 3), rel=0.15
    )
    assert stationary_block_length(generator.standard_normal(5000)) < 3
    assert stationary_block_length(np.ones(100)) == 1.0
