"""Which candidates are there, and how sure is each amount? Evidence read multiplet by multiplet.

After the refinement every candidate's multiplets sit where the data put them. Each is then read
on its own, against the data with every other contribution taken away:

- its **amount** (least squares on its own window) with a standard deviation from the noise and
  from the model error of whatever overlaps it (each point's variance is ``noise**2 +
  (model_error * model)**2``), widened by the local misfit (the residual in its own window, not
  the misfit of some large signal elsewhere);
- its **envelope**: the largest amount that every main line of the multiplet can carry (a line
  that is not in the data caps it near zero), the test a chemist makes by eye;
- its shape match and how much of its window other components fill.

A candidate counts as present only when its amount, combined over its multiplets, stands clear of
its uncertainty and none of its multiplets that should stand out is missing (envelope well below
the amount). A decoy that borrows the lines of another compound lacks the multiplets that
compound does not have, so it is not claimed; the reading says which multiplet is missing.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from confirm.fitting.linear import solve_amounts

__all__ = ["SiteReading", "Presence", "point_variance", "weighted_fit", "read_sites", "decide_presence"]

#: Main lines of a multiplet: points above this share of its tallest point.
_MAIN_LINE_SHARE = 0.3
#: Points of a multiplet's window: above this share of its tallest point.
_WINDOW_SHARE = 0.02
#: Noise margin (sd) of the envelope: a line counts as there up to this many sd below expectation.
_ENVELOPE_MARGIN_SD = 3.0
#: A multiplet is missing when its envelope is below this share of the amount most of the
#: candidate's multiplets carry ...
_MISSING_SHARE = 0.5
#: ... provided that amount stands this many sd clear of zero.
_MISSING_SD = 3.0
#: A multiplet counts as seen on its own above this many sd. Its position was searched over a
#: window of a few hundred line widths, and the best of that many noise positions reaches about
#: 3-4 sd by chance (the look-elsewhere effect); 5 sd by chance is rare (~1e-4 per site).
SEEN_SIGMA = 5.0
#: One-sided 95 % normal quantile (upper bounds).
Z_UPPER_95 = 1.6448536269514722


@dataclass(frozen=True)
class SiteReading:
    """One multiplet read on its own.

    Attributes
    ----------
    ppm : float
        Refined shift of the site.
    amount, amount_sd : float
        Least-squares amount (molecules, the unit of the fit's amounts) and its sd.
    envelope : float
        Largest amount every main line supports (inf when the multiplet has no usable line).
    shape : float
        Normalised match of the multiplet with the data left for it (1 = identical shape).
    overlap : float
        Share of the window's modelled signal that belongs to other components.
    misfit : float
        Reduced chi-square of the window after the multiplet is fitted.
    usable : bool
        Enough unmasked points to read it.
    """

    ppm: float
    amount: float
    amount_sd: float
    envelope: float
    shape: float
    overlap: float
    misfit: float
    usable: bool

    @property
    def sigma(self) -> float:
        """Amount over its sd."""
        return self.amount / self.amount_sd if self.amount_sd > 0 else 0.0


@dataclass(frozen=True)
class Presence:
    """A candidate's combined evidence.

    Attributes
    ----------
    amount, amount_sd : float
        Inverse-variance combination of its multiplets' amounts (sd widened when they disagree).
    present : bool
    missing : tuple of int
        Model sites whose multiplet should stand out at ``amount`` but is not in the data.
    seen : tuple of int
        Model sites seen on their own (amount > detection threshold).
    upper : float
        95 % upper bound of the amount (for a candidate not present).
    """

    amount: float
    amount_sd: float
    present: bool
    missing: tuple
    seen: tuple
    upper: float


def point_variance(noise_sd: float, signal: np.ndarray, model_error: float) -> np.ndarray:
    """Variance of each point: noise plus the model error of the modelled signal there."""
    return noise_sd**2 + (model_error * signal) ** 2


def weighted_fit(cols: np.ndarray, basis: np.ndarray, grid, var: np.ndarray, use: np.ndarray):
    """Non-negative amounts of the candidates in ``use`` (others 0) and the free columns, each
    point weighted by 1/var; returns (amounts, base, amount covariance of the used candidates).
    """
    k = cols.shape[0]
    w = grid.weight / np.sqrt(var)
    amounts = np.zeros(k)
    idx = np.flatnonzero(use)
    if idx.size == 0:
        _, base = solve_amounts(np.zeros((1, grid.x.size)), basis, grid.y, w)
        return amounts, base, np.zeros((0, 0))
    sub, base = solve_amounts(cols[idx], basis, grid.y, w)
    amounts[idx] = sub
    design = np.hstack([cols[idx].T, basis]) * w[:, None]
    cov = np.linalg.pinv(design.T @ design, hermitian=True)[: idx.size, : idx.size]
    return amounts, base, cov


def read_sites(grid, per_site, cols, amounts, base, basis, offsets, n_sites, var, lw_ppm) -> list:
    """Every site of every candidate read on its own (see the module docstring).

    Parameters
    ----------
    per_site : ndarray, shape (total sites, n)
        Unit-amount columns of the sites.
    cols : ndarray, shape (k, n)
        Unit-amount columns of the candidates.
    amounts, base : ndarray
        The fit whose other contributions are taken away.
    offsets, n_sites : sequence of int
        First row of each candidate in ``per_site`` and its number of sites.
    var : ndarray, shape (n,)
        Variance of each point (:func:`point_variance`).
    lw_ppm : float
        Line width: a line counts as there within half a width of its place.
    """
    model = amounts @ cols + basis @ base
    signal = amounts @ cols
    reach = max(1, int(round(0.5 * lw_ppm / grid.dx_ppm)))
    out = []
    for k, (o, n) in enumerate(zip(offsets, n_sites, strict=True)):
        rows = []
        for s in range(n):
            u = per_site[o + s]
            own = amounts[k] * u
            rows.append(_read_one(grid, u, grid.y - (model - own), signal - own, var, reach))
        out.append(rows)
    return out


def _read_one(grid, u, d, others, var, reach: int) -> SiteReading:
    top = float(u.max()) if u.size else 0.0
    window = (u > _WINDOW_SHARE * top) & (grid.weight > 0) if top > 0 else np.zeros(u.size, bool)
    ppm = float(np.sum(grid.x * u) / np.sum(u)) if top > 0 else float("nan")
    if window.sum() < 3:
        return SiteReading(ppm, 0.0, np.inf, np.inf, 0.0, 0.0, 1.0, False)
    uw, dw, vw, ow = u[window], d[window], var[window], others[window]
    info = float(np.sum(uw * uw / vw))
    alpha = float(np.sum(uw * dw / vw)) / info
    resid = dw - alpha * uw
    misfit = float(np.sum(resid * resid / vw)) / max(1, uw.size - 1)
    sd = np.sqrt(max(1.0, misfit) / info)
    norm = float(np.linalg.norm(uw) * np.linalg.norm(dw))
    shape = float(np.dot(uw, dw) / norm) if norm > 0 else 0.0
    overlap = float(np.dot(uw, np.abs(ow)) / max(np.dot(uw, np.abs(ow)) + abs(alpha) * np.dot(uw, uw), 1e-300))
    envelope = _envelope(u, d, var, others, window, reach, misfit)
    return SiteReading(ppm, alpha, sd, envelope, shape, overlap, misfit, True)


def _envelope(u, d, var, others, window, reach: int, misfit: float) -> float:
    """Largest amount every main line supports: min over the main lines' points of
    (best nearby data + margin) / line height."""
    main = window & (u >= _MAIN_LINE_SHARE * float(u.max()))
    if not main.any():
        return np.inf
    padded = np.concatenate([np.full(reach, -np.inf), d, np.full(reach, -np.inf)])
    near = np.max(np.lib.stride_tricks.sliding_window_view(padded, 2 * reach + 1), axis=1)
    margin = _ENVELOPE_MARGIN_SD * np.sqrt(var * max(1.0, misfit))
    return float(np.min((near[main] + margin[main]) / u[main]))


def decide_presence(readings, *, detection_sigma: float, diagnostic) -> Presence:
    """Combine a candidate's multiplet readings into its evidence of presence.

    Parameters
    ----------
    readings : sequence of SiteReading
    detection_sigma : float
    diagnostic : sequence of int
        Sites that identify the candidate (one of them must be seen on its own).
    """
    use = [i for i, r in enumerate(readings) if r.usable and np.isfinite(r.amount_sd) and r.amount_sd > 0]
    if not use:
        return Presence(0.0, np.inf, False, (), (), np.inf)
    a = np.array([readings[i].amount for i in use])
    sd = np.array([readings[i].amount_sd for i in use])
    w = 1.0 / sd**2
    mean = float(np.sum(w * a) / np.sum(w))
    plain_sd = float(1.0 / np.sqrt(np.sum(w)))
    mean_sd = plain_sd
    if len(use) > 1:  # disagreement beyond the stated uncertainties widens the combined one
        birge = float(np.sum(w * (a - mean) ** 2) / (len(use) - 1))
        mean_sd *= np.sqrt(max(1.0, birge))
    # the amount most multiplets carry (a weighted median: a few multiplets on borrowed lines do
    # not move it); a multiplet whose lines cannot carry half of it is missing
    reference = _weighted_median(a, w)
    seen = tuple(i for i in use if readings[i].sigma > max(detection_sigma, SEEN_SIGMA))
    missing = ()
    if reference > _MISSING_SD * plain_sd:
        missing = tuple(i for i in use if readings[i].envelope < _MISSING_SHARE * reference)
    present = (
        mean > detection_sigma * mean_sd
        and not missing
        and any(i in seen for i in diagnostic)
    )
    envelopes = [readings[i].envelope for i in use if np.isfinite(readings[i].envelope)]
    upper = max(mean, 0.0) + Z_UPPER_95 * mean_sd
    if envelopes:
        upper = min(upper, max(min(envelopes), 0.0))
    return Presence(mean, mean_sd, bool(present), missing, seen, float(upper))


def _weighted_median(values: np.ndarray, weights: np.ndarray) -> float:
    """Value at which the cumulative weight of the sorted values reaches half (ties: fixed order)."""
    order = np.lexsort((np.arange(values.size), values))
    cum = np.cumsum(weights[order])
    return float(values[order][int(np.searchsorted(cum, 0.5 * cum[-1]))])
