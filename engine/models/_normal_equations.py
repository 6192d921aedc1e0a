"""Penalised least squares through the normal equations, with a fast search over one column.

The calendar regression solves ``min ‖y − Xβ‖² + βᵀ diag(p) β`` many times while one column
(a degree-hour column at different balance points) changes. Keeping ``XᵀX`` and ``Xᵀy`` and
updating one row and column of them when a column is replaced makes each step cost one pass
over the data for that column instead of a new ``XᵀX``.
"""

from __future__ import annotations

import numpy as np


def _solve(gram: np.ndarray, moment: np.ndarray) -> np.ndarray:
    # lstsq on the small Gram matrix: exact when regular, least-norm when columns are collinear.
    return np.linalg.lstsq(gram, moment, rcond=None)[0]


class NormalEquations:
    """``XᵀX``, ``Xᵀy`` and ``yᵀy`` of a design, kept current as columns are replaced."""

    def __init__(self, matrix: np.ndarray, y: np.ndarray) -> None:
        self.matrix = matrix.copy()
        self.y = y
        self.gram = matrix.T @ matrix
        self.moment = matrix.T @ y
        self.total = float(y @ y)

    def solve(self, penalty: np.ndarray) -> np.ndarray:
        """Coefficients minimising ``‖y − Xβ‖² + Σ penaltyᵢ βᵢ²``."""
        return _solve(self.gram + np.diag(penalty), self.moment)

    def residual_variance(self) -> float:
        """``SSE / (n − p)`` of the unpenalised fit."""
        beta = self.solve(np.zeros(len(self.moment)))
        sse = self.total - 2 * beta @ self.moment + beta @ self.gram @ beta
        n, p = self.matrix.shape
        return float(max(sse, 0.0) / max(n - p, 1))

    def best_replacement(
        self, column: int, candidates: np.ndarray, penalty: np.ndarray
    ) -> int | None:
        """The candidate for ``column`` with the lowest penalised error and a positive coefficient.

        With ``X`` the other columns, ``v`` their fit and ``h`` a candidate (unpenalised), the
        error drops by ``g² / s`` with ``g = hᵀ(y − Xv)`` and ``s = hᵀh − hᵀX (XᵀX + P)⁻¹ Xᵀh``;
        every candidate is scored from one solve with many right-hand sides. Returns None when
        no candidate gets a positive coefficient.
        """
        keep = np.arange(len(self.moment)) != column
        gram = self.gram[np.ix_(keep, keep)] + np.diag(penalty[keep])
        cross = (self.matrix.T @ candidates)[keep]
        solved = _solve(gram, np.column_stack([self.moment[keep], cross]))
        without, projected = solved[:, 0], solved[:, 1:]
        norms = np.einsum("ij,ij->j", candidates, candidates)
        spread = norms - np.einsum("ij,ij->j", cross, projected)
        gain = candidates.T @ self.y - cross.T @ without
        useful = (gain > 0) & (spread > 1e-9 * norms)
        if not useful.any():
            return None
        score = np.where(useful, gain**2 / np.where(useful, spread, 1.0), -np.inf)
        return int(np.argmax(score))

    def replace(self, column: int, values: np.ndarray) -> None:
        """Put ``values`` in ``column`` and update the normal equations."""
        self.matrix[:, column] = values
        products = self.matrix.T @ values
        self.gram[:, column] = products
        self.gram[column, :] = products
        self.moment[column] = values @ self.y
