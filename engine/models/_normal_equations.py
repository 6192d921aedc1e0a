"""Penalised least squares through the normal equations, with a fast search over one column.

The calendar regression solves ``min ‖y − Xβ‖² + βᵀ diag(p) β`` many times while one column
(a degree-hour column at different balance points) changes. Keeping ``XᵀX`` and ``Xᵀy`` and
updating one row and column of them when a column is replaced makes each step cost one pass
over the data for that column instead of a new ``XᵀX``.

Rows can carry weights: with 0/1 weights one matrix of a whole history serves the fit of any
window of it, and the block of ``XᵀX`` of columns that every window shares can be summed month
by block once (:func:`prefix_grams`) instead of once per window; :func:`prefix_bincounts`
does the same for sums per key (a day shape's slots).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np


def _solve(gram: np.ndarray, moment: np.ndarray) -> np.ndarray:
    # lstsq on the small Gram matrix: exact when regular, least-norm when columns are collinear.
    return np.linalg.lstsq(gram, moment, rcond=None)[0]


class NormalEquations:
    """``XᵀWX``, ``XᵀWy`` and ``yᵀWy`` of a design with row weights ``W`` (identity when none),
    kept current as columns are replaced.

    ``data`` holds ``[X y]`` side by side (column-major), so one product ``dataᵀ(w·h)`` gives
    both ``XᵀWh`` and ``yᵀWh`` of a candidate column ``h``. ``leading``, when given, is the
    already summed ``XᵀWX`` block of the first columns of ``X`` (those of ``blocks[0]``): only
    the products that involve the other columns and ``y`` are computed.
    """

    def __init__(
        self,
        blocks: Sequence[np.ndarray],
        y: np.ndarray,
        *,
        weights: np.ndarray | None = None,
        leading: np.ndarray | None = None,
    ) -> None:
        n = len(y)
        p = sum(block.shape[1] for block in blocks)
        self.weights = weights
        self.rows = float(n if weights is None else weights.sum())
        self.data = np.empty((n, p + 1), order="F")
        at = 0
        for block in blocks:
            self.data[:, at : at + block.shape[1]] = block
            at += block.shape[1]
        self.data[:, p] = y
        known = 0 if leading is None else len(leading)
        products = self.data.T @ self._weighted(self.data[:, known:])
        self.gram = np.empty((p, p))
        self.gram[:, known:] = products[:p, :-1]
        self.gram[known:, :] = products[:p, :-1].T
        if leading is not None:
            self.gram[:known, :known] = leading
        self.moment = products[:p, -1].copy()
        self.total = float(products[p, -1])

    def _weighted(self, values: np.ndarray) -> np.ndarray:
        if self.weights is None:
            return values
        return values * (self.weights if values.ndim == 1 else self.weights[:, None])

    def solve(self, penalty: np.ndarray) -> np.ndarray:
        """Coefficients minimising ``‖y − Xβ‖² + Σ penaltyᵢ βᵢ²``."""
        return _solve(self.gram + np.diag(penalty), self.moment)

    def solve_without(self, dropped: np.ndarray, penalty: np.ndarray) -> np.ndarray:
        """:meth:`solve` with the ``dropped`` columns (a mask) left out: their coefficients 0."""
        kept = ~dropped
        coefficients = np.zeros(len(self.moment))
        gram = self.gram[np.ix_(kept, kept)] + np.diag(penalty[kept])
        coefficients[kept] = _solve(gram, self.moment[kept])
        return coefficients

    def residual_variance(self) -> float:
        """``SSE / (n − p)`` of the unpenalised fit."""
        beta = self.solve(np.zeros(len(self.moment)))
        sse = self.total - 2 * beta @ self.moment + beta @ self.gram @ beta
        return float(max(sse, 0.0) / max(self.rows - len(self.moment), 1))

    def best_replacement(
        self, column: int, products: np.ndarray, norms: np.ndarray, penalty: np.ndarray
    ) -> int | None:
        """The candidate for ``column`` with the lowest penalised error and a positive coefficient.

        Candidates ``h`` come as ``products`` (``dataᵀh``, one column each) and ``norms``
        (``hᵀh``). With ``X`` the other columns and ``v`` their fit (unpenalised for ``h``),
        the error drops by ``g² / s`` with ``g = hᵀ(y − Xv)`` and
        ``s = hᵀh − hᵀX (XᵀX + P)⁻¹ Xᵀh``; every candidate is scored from one solve with
        many right-hand sides. Returns None when no candidate gets a positive coefficient.
        """
        keep = np.arange(len(self.moment)) != column
        gram = self.gram[np.ix_(keep, keep)] + np.diag(penalty[keep])
        cross = products[:-1][keep]
        solved = _solve(gram, np.column_stack([self.moment[keep], cross]))
        without, projected = solved[:, 0], solved[:, 1:]
        spread = norms - np.einsum("ij,ij->j", cross, projected)
        gain = products[-1] - cross.T @ without
        useful = (gain > 0) & (spread > 1e-9 * norms)
        if not useful.any():
            return None
        score = np.where(useful, gain**2 / np.where(useful, spread, 1.0), -np.inf)
        return int(np.argmax(score))

    def replace(self, column: int, values: np.ndarray) -> None:
        """Put ``values`` in ``column`` and update the normal equations."""
        self.data[:, column] = values
        products = self.data.T @ self._weighted(values)
        self.gram[:, column] = products[:-1]
        self.gram[column, :] = products[:-1]
        self.moment[column] = products[-1]


def prefix_grams(matrix: np.ndarray, ends: Sequence[int]) -> dict[int, np.ndarray]:
    """``XᵀX`` of the first ``end`` rows of ``matrix``, for each of ``ends``.

    The rows between two consecutive ends are multiplied once and the blocks summed, so all
    the windows of a history cost one ``XᵀX`` of it.
    """
    grams: dict[int, np.ndarray] = {}
    total = np.zeros((matrix.shape[1], matrix.shape[1]))
    start = 0
    for end in sorted(set(ends)):
        block = matrix[start:end]
        total = total + block.T @ block
        grams[end], start = total, end
    return grams


def prefix_bincounts(
    keys: np.ndarray, weights: np.ndarray, size: int, ends: Sequence[int]
) -> dict[int, np.ndarray]:
    """Sums of ``weights`` per key over the first ``end`` rows, for each of ``ends``.

    Like :func:`prefix_grams`, the rows between two consecutive ends are counted once and
    the blocks added up.
    """
    sums: dict[int, np.ndarray] = {}
    total = np.zeros(size)
    start = 0
    for end in sorted(set(ends)):
        total = total + np.bincount(keys[start:end], weights=weights[start:end], minlength=size)
        sums[end], start = total, end
    return sums
