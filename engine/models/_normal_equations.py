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
    """``XᵀX``, ``Xᵀy`` and ``yᵀy`` of a design, kept current as columns are replaced.

    ``data`` holds ``[X y]`` side by side (column-major), so one product ``dataᵀh`` gives both
    ``Xᵀh`` and ``yᵀh`` of a candidate column ``h``.
    """

    def __init__(self, matrix: np.ndarray, y: np.ndarray) -> None:
        n, p = matrix.shape
        self.data = np.empty((n, p + 1), order="F")
        self.data[:, :p] = matrix
        self.data[:, p] = y
        products = self.data.T @ self.data
        self.gram = products[:p, :p].copy()
        self.moment = products[:p, p].copy()
        self.total = float(products[p, p])

    def solve(self, penalty: np.ndarray) -> np.ndarray:
        """Coefficients minimising ``‖y − Xβ‖² + Σ penaltyᵢ βᵢ²``."""
        return _solve(self.gram + np.diag(penalty), self.moment)

    def residual_variance(self) -> float:
        """``SSE / (n − p)`` of the unpenalised fit."""
        beta = self.solve(np.zeros(len(self.moment)))
        sse = self.total - 2 * beta @ self.moment + beta @ self.gram @ beta
        n, p = len(self.data), len(self.moment)
        return float(max(sse, 0.0) / max(n - p, 1))

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
        products = self.data.T @ values
        self.gram[:, column] = products[:-1]
        self.gram[column, :] = products[:-1]
        self.moment[column] = products[-1]
