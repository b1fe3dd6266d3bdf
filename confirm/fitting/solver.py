"""Bounded nonlinear least squares (projected Levenberg-Marquardt on the normal equations).

The refinement has tens of parameters and thousands of residuals: forming ``J.T @ J`` costs a
fraction of a full factorisation of ``J`` (which a general trust-region solver repeats every
iteration), and the small damped system is solved exactly. Parameters at a bound whose gradient
pushes outwards are held there; a step that would leave the box is clipped to it. The damping
starts large (short first steps) and follows the gain ratio of each accepted step (Nielsen's update,
Madsen, Nielsen and Tingleff 2004, section 3.2). The sequence of iterates depends only on the inputs
(no random or timing-dependent choices).

With a ``quantum`` per parameter (powers of two, so that rounding to it is exact), every iterate is
rounded to that grid and a step counts only when it lowers the cost by more than ``_GAIN_FLOOR`` of
it. Two runs whose arithmetic differs by rounding (another BLAS kernel, data changed at 1e-9)
compute steps that differ by far less than a grid step, so their iterates land on the same grid
points and the runs stay identical, instead of drifting apart until an acceptance, stopping or
iteration-cap decision parts them.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["BoxResult", "least_squares_box", "power_of_two_below"]


@dataclass(frozen=True)
class BoxResult:
    """Outcome of :func:`least_squares_box`."""

    x: np.ndarray
    cost: float  # sum of squared residuals
    jac: np.ndarray
    n_iterations: int
    n_evaluations: int


#: Starting damping in the scaled variables (unit diagonal), tau = 1 of Madsen, Nielsen and Tingleff
#: (Methods for non-linear least squares problems, 2nd ed., 2004, section 3.2): the recommended value
#: when the start may be far from the optimum, as an assignment placed on blurred data is. Near
#: Gauss-Newton first steps (tau 1e-3) leap across the multimodal landscape of overlapping multiplets,
#: so that which optimum the refinement ends in depended on the rounding of the first step: the
#: answer changed with the BLAS kernel. Short first steps follow the slope into the nearest optimum.
_START_DAMPING = 1.0
#: With a grid, a step gains only when it lowers the cost by more than this share of it: sums of
#: squares of the same point under different kernels differ by about 1e-15 of their value.
_GAIN_FLOOR = 1e-12


def least_squares_box(residual, jacobian, x0, lower, upper, *, max_iterations: int = 60,
                      ftol: float = 1e-10, xtol: float = 1e-10, atol: float = 0.0,
                      quantum=None) -> BoxResult:
    """Minimise ``sum(residual(x)**2)`` with ``lower <= x <= upper``.

    Parameters
    ----------
    residual : callable
        ``residual(x) -> ndarray (m,)``.
    jacobian : callable
        ``jacobian(x) -> ndarray (m, n)``, called only at accepted points.
    x0, lower, upper : ndarray, shape (n,)
    max_iterations : int
        Most accepted or rejected steps.
    ftol, xtol, atol : float
        Stop when an accepted step lowers the cost by less than ``ftol`` of it or by less than
        ``atol``, or moves every parameter by less than ``xtol`` of its scale (its size, at most the
        width of its box).
    quantum : ndarray, shape (n,), optional
        Grid step of each parameter (positive powers of two; see :func:`power_of_two_below`): the
        start and every iterate are rounded to it (then clipped to the box), and a step that rounds
        away ends the iterations.
    """
    lower, upper = np.asarray(lower, float), np.asarray(upper, float)
    q = None if quantum is None else np.asarray(quantum, float)
    floor = 0.0 if q is None else _GAIN_FLOOR
    x = _on_grid(np.asarray(x0, float), q, lower, upper)
    r = residual(x)
    cost = float(np.dot(r, r))
    jac = jacobian(x)
    damping, grow, n_eval, it = _START_DAMPING, 2.0, 1, 0
    while it < max_iterations:
        it += 1
        grad = jac.T @ r
        normal = jac.T @ jac
        diag = np.diag(normal).copy()
        free = ~(((x <= lower) & (grad > 0)) | ((x >= upper) & (grad < 0))) & (diag > 0)
        if not free.any():
            break
        step = np.zeros_like(x)
        step[free] = _damped_step(normal[np.ix_(free, free)], grad[free], diag[free], damping)
        x_new = _on_grid(x + step, q, lower, upper)
        if q is not None and np.array_equal(x_new, x):
            break  # no move the grid can represent: a larger damping would only shorten the step
        r_new = residual(x_new)
        n_eval += 1
        cost_new = float(np.dot(r_new, r_new))
        if np.isfinite(cost_new) and cost_new < cost - floor * cost:
            h = x_new - x
            predicted = -(2.0 * float(h @ grad) + float(h @ normal @ h))
            rho = (cost - cost_new) / predicted if predicted > 0 else 0.0
            done = (cost - cost_new) <= max(ftol * cost, atol) or np.all(
                np.abs(h) <= xtol * _scale(x, lower, upper))
            x, r, cost = x_new, r_new, cost_new
            jac = jacobian(x)
            damping = max(damping * max(1.0 / 3.0, 1.0 - (2.0 * rho - 1.0) ** 3), 1e-12)
            grow = 2.0
            if done:
                break
        else:
            damping *= grow
            grow *= 2.0
            if damping > 1e10:
                break
    return BoxResult(x=x, cost=cost, jac=jac, n_iterations=it, n_evaluations=n_eval)


def power_of_two_below(value) -> np.ndarray:
    """The largest power of two not above each (positive, finite) ``value`` (exact: from the
    binary exponent, not a logarithm, whose last bit may differ between math libraries)."""
    _, exponent = np.frexp(np.asarray(value, float))
    return np.ldexp(1.0, exponent - 1)


def _on_grid(x: np.ndarray, quantum, lower: np.ndarray, upper: np.ndarray) -> np.ndarray:
    """``x`` rounded to the grid (exact: the steps are powers of two), then clipped to the box."""
    if quantum is not None:
        x = np.round(x / quantum) * quantum
    return np.clip(x, lower, upper)


def _damped_step(normal: np.ndarray, grad: np.ndarray, diag: np.ndarray, damping: float) -> np.ndarray:
    """Solution of (N + damping * diag(N)) s = -g, computed in the scaled variables."""
    s = 1.0 / np.sqrt(diag)
    scaled = normal * np.outer(s, s)
    scaled[np.diag_indices_from(scaled)] += damping + 1e-12
    try:
        chol = np.linalg.cholesky(scaled)
        z = np.linalg.solve(chol.T, np.linalg.solve(chol, -grad * s))
    except np.linalg.LinAlgError:
        z = np.linalg.lstsq(scaled, -grad * s, rcond=None)[0]
    return z * s


def _scale(x: np.ndarray, lower: np.ndarray, upper: np.ndarray) -> np.ndarray:
    width = np.where(np.isfinite(upper - lower), upper - lower, np.inf)
    return np.minimum(np.maximum(np.abs(x), 1e-12), np.where(np.isfinite(width), width, np.inf)) + 1e-300
