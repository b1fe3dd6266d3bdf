"""Non-negative amounts with a free baseline: the linear part of every fit.

For fixed line positions the spectrum is linear in the candidates' amounts (>= 0) and the
baseline coefficients (free). :func:`solve_amounts` solves one such problem; :class:`Projected`
costs many trial column sets on one grid (the search's swaps) after projecting the baseline out
once.
"""

from __future__ import annotations

import numpy as np

__all__ = ["solve_amounts", "linear_cost", "Projected"]


def solve_amounts(cols: np.ndarray, basis: np.ndarray, y: np.ndarray, weight: np.ndarray):
    """Non-negative amounts and free baseline coefficients for fixed columns.

    Parameters
    ----------
    cols : ndarray, shape (k, n)
        One column per candidate (unit amount).
    basis : ndarray, shape (n, b)
        Free columns (baseline, phase).
    y, weight : ndarray, shape (n,)

    Returns
    -------
    amounts : ndarray, shape (k,)
    base : ndarray, shape (b,)
    """
    a_mat, b_mat, yw = cols.T * weight[:, None], basis * weight[:, None], y * weight
    bb = b_mat.T @ b_mat
    bb_inv = np.linalg.pinv(bb, hermitian=True)
    ab = a_mat.T @ b_mat
    gram = a_mat.T @ a_mat - ab @ bb_inv @ ab.T
    rhs = a_mat.T @ yw - ab @ bb_inv @ (b_mat.T @ yw)
    amounts = _nnls_gram_scaled(gram, rhs)
    base = bb_inv @ (b_mat.T @ yw - ab.T @ amounts)
    return amounts, base


def linear_cost(cols: np.ndarray, basis: np.ndarray, y: np.ndarray, weight: np.ndarray) -> float:
    """Squared weighted residual after :func:`solve_amounts`."""
    amounts, base = solve_amounts(cols, basis, y, weight)
    r = (y - amounts @ cols - basis @ base) * weight
    return float(np.dot(r, r))


def _nnls_gram_scaled(gram: np.ndarray, rhs: np.ndarray) -> np.ndarray:
    """Non-negative amounts from the normal equations; a column with (almost) nothing left once
    the baseline is projected out (all zero, or inside the baseline's span) gets amount 0."""
    diag = np.diag(gram)
    live = diag > 1e-12 * max(float(diag.max(initial=0.0)), 1e-300)
    out = np.zeros(gram.shape[0])
    if not live.any():
        return out
    g, r = gram[np.ix_(live, live)], rhs[live]
    scale = np.sqrt(np.diag(g))
    g = g / np.outer(scale, scale) + 1e-12 * np.eye(g.shape[0])
    out[live] = _nnls_gram(g, r / scale) / scale
    return out


def _nnls_gram(g: np.ndarray, rhs: np.ndarray) -> np.ndarray:
    """Non-negative solution of ``g a = rhs`` in the least-squares sense (g symmetric, positive
    semi-definite; a factor from its eigenvalues when rounding leaves it not quite definite)."""
    from scipy.optimize import nnls

    try:
        chol = np.linalg.cholesky(g)
        a, _ = nnls(chol.T, np.linalg.solve(chol, rhs))
        return a
    except np.linalg.LinAlgError:
        val, vec = np.linalg.eigh(g)
        keep = val > 1e-10 * max(float(val.max()), 1e-300)
        root = vec[:, keep] * np.sqrt(val[keep])  # g ~= root @ root.T
        target = (vec[:, keep].T @ rhs) / np.sqrt(val[keep])
        a, _ = nnls(root.T, target)
        return a


def _solve_batch(g: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Solutions of the systems g[t] a = b[t] (-b where the batch cannot be solved)."""
    try:
        return np.linalg.solve(g, b[..., None])[..., 0]
    except np.linalg.LinAlgError:
        return -b


class Projected:
    """Least-squares cost of non-negative amounts plus a free baseline, for many trial column
    sets on one grid: the (weighted) baseline is projected out once, so a trial that changes
    two columns costs two projections and a tiny non-negative solve."""

    def __init__(self, grid, basis: np.ndarray):
        self.w = grid.weight
        self.q, _ = np.linalg.qr(basis * self.w[:, None])
        self.y = self.project(grid.y)
        self.yy = float(np.dot(self.y, self.y))

    def project(self, columns: np.ndarray) -> np.ndarray:
        """Weighted columns (one, or one per row) minus their baseline part."""
        c = columns * self.w
        return c - (c @ self.q) @ self.q.T

    def cost(self, projected: np.ndarray) -> float:
        """Cost of one set of projected columns."""
        gram, rhs = projected @ projected.T, projected @ self.y
        return float(self.cost_many(gram[None], rhs[None])[0][0])

    def cost_many(self, grams: np.ndarray, rhs: np.ndarray, zero=None) -> tuple[np.ndarray, np.ndarray]:
        """Costs and amounts of a batch of trials: Gram matrices (T, K, K), right-hand sides (T, K).

        The unconstrained solution is the non-negative one whenever it has no negative amount.
        ``zero`` (bool, K) guesses which amounts are 0 at the optimum; a trial whose reduced
        solution is non-negative and meets the optimality conditions on those amounts skips the
        active-set solver too (the solution is unique)."""
        _, k = rhs.shape
        scale = np.sqrt(np.clip(np.einsum("tii->ti", grams), 0, None))
        scale[scale == 0] = 1.0
        g = grams / (scale[:, :, None] * scale[:, None, :])
        g[:, np.arange(k), np.arange(k)] += 1e-12
        b = rhs / scale
        a = _solve_batch(g, b)
        todo = np.flatnonzero(~(a.min(axis=1) >= 0))
        if todo.size and zero is not None and zero.any() and not zero.all():
            keep = ~zero
            reduced = np.zeros((todo.size, k))
            reduced[:, keep] = _solve_batch(g[np.ix_(todo, keep, keep)], b[todo][:, keep])
            grad = np.einsum("tij,tj->ti", g[todo], reduced) - b[todo]
            fine = (reduced.min(axis=1) >= 0) & (grad[:, zero].min(axis=1) >= 0)
            a[todo[fine]] = reduced[fine]
            todo = todo[~fine]
        for t in todo:
            a[t] = _nnls_gram(g[t], b[t])
        a = a / scale
        costs = self.yy - 2 * np.einsum("ti,ti->t", a, rhs) + np.einsum("ti,tij,tj->t", a, grams, a)
        return costs, a
