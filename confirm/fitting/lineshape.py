"""Lines drawn on the fitting grid: pseudo-Voigt bin means with their derivatives.

A line of full width w at half height is ``(1 - g) L + g G`` (Lorentzian L and Gaussian G of
the same width, Gaussian share g: shimming and apodization make real lines part Gaussian). A
grid bin holds the mean of several samples; the mean is drawn as the value at the bin centre
plus ``curvature * f''`` (see :class:`confirm.fitting.grid.Grid`), so binned data and model agree
to fourth order in the sample spacing. Each line is drawn over +-40 half-widths (its tails
beyond hold ~1.6 % of its area), smaller lines over +-20 or +-10 (:func:`line_reach`), 13C
satellites over +-10. Lines that nearly coincide are drawn as one (``MERGE_SHARE``).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import sparse

__all__ = ["Drawn", "draw_lines", "line_reach"]

_FAR_HALF_WIDTHS = 40
#: Line-parameter pairs whose motion (times the line's size) is below this share of the
#: parameter's largest are left out of its derivative.
_EXTRA_TRIM = 1e-3
_NEAR_HALF_WIDTHS = 10
_SIGMA_PER_FWHM = 1.0 / (2.0 * np.sqrt(2.0 * np.log(2.0)))


@dataclass(frozen=True)
class Drawn:
    """Rendered lines.

    Attributes
    ----------
    values : ndarray, shape (n_groups, n)
        Sum of each group's lines.
    dpos : ndarray or None, shape (n_groups, n)
        Derivative of ``values`` with respect to a common shift of the group's lines (per ppm).
    dwidth : ndarray or None, shape (n_width_groups, n)
        Derivative of ``sum(weight * line)`` with respect to the width of the lines of each width
        group (per ppm of full width).
    dgauss : ndarray or None, shape (n,)
        Derivative of ``sum(weight * line)`` with respect to the Gaussian share.
    dextra : ndarray or None, shape (n_extra, n)
        ``sum over lines of pos_weights[r, line] * d(line)/d(its position)`` for each row r of
        ``pos_weights`` (parameters that move lines by different amounts, such as couplings).
    """

    values: np.ndarray
    dpos: np.ndarray | None = None
    dwidth: np.ndarray | None = None
    dgauss: np.ndarray | None = None
    dextra: np.ndarray | None = None


def draw_lines(grid, ppm, inten, group, n_groups: int, fwhm_ppm, *, gauss: float = 0.0,
               near=None, derivs: bool = False, width_group=None, n_width_groups: int = 0,
               weight=None, reach=None, pos_weights=None, deriv_mask=None, value_mask=None) -> Drawn:
    """Draw lines on a grid.

    Parameters
    ----------
    grid : Grid
    ppm, inten : ndarray, shape (n_lines,)
        Positions and areas.
    group : ndarray of int, shape (n_lines,)
        Row of ``values`` each line adds to.
    n_groups : int
    fwhm_ppm : float or ndarray, shape (n_lines,)
        Full width at half height of each line.
    gauss : float
        Gaussian share of the line shape, 0-1.
    near : ndarray of bool, optional
        Lines drawn over the short span (13C satellites).
    derivs : bool
        Also return the derivatives.
    width_group : ndarray of int, optional
        Width parameter each line's width belongs to (for ``dwidth``).
    n_width_groups : int
    weight : ndarray, optional
        Per-line factor on the width and shape derivatives (the amount of the line's molecule).
    reach : ndarray, optional
        Half-widths either side over which each line is drawn (default 40, 10 for ``near``
        lines); see :func:`line_reach`.
    pos_weights : ndarray or scipy sparse matrix, optional, shape (n_extra, n_lines)
        With ``derivs``: how far each line moves per unit of each extra parameter (``dextra``).
    deriv_mask : ndarray of bool, optional
        With ``derivs``: the lines whose derivatives are drawn (default all). The others add their
        values only; the caller knows their derivatives are not needed (a molecule with no amount).
        Lines of one group must share the flag.
    value_mask : ndarray of bool, optional
        The lines drawn at all (default all); the others are left out as if their area were 0.
        Lines of one group must share the flag. Either mask leaves every drawn value exactly as
        without it: how far a line is drawn depends on all the lines given, not on the masks.
    """
    ppm = np.asarray(ppm, dtype=float)
    inten = np.asarray(inten, dtype=float)
    group = np.asarray(group, dtype=int)
    n = grid.x.size
    fwhm = np.broadcast_to(np.asarray(fwhm_ppm, dtype=float), ppm.shape)
    near = np.zeros(ppm.size, bool) if near is None else np.asarray(near, bool)
    if ppm.size == 0:
        return _empty(n_groups, n, n_width_groups, derivs)
    if reach is None:
        reach = np.where(near, _NEAR_HALF_WIDTHS, _FAR_HALF_WIDTHS)
    reach = np.broadcast_to(np.asarray(reach), ppm.shape)
    wgroup = np.zeros(ppm.size, int) if width_group is None else np.asarray(width_group, int)
    wt = np.ones(ppm.size) if weight is None else np.asarray(weight, dtype=float)
    dmask = np.ones(ppm.size, bool) if deriv_mask is None else np.asarray(deriv_mask, bool)
    vmask = np.ones(ppm.size, bool) if value_mask is None else np.asarray(value_mask, bool)
    ppm, inten, group, fwhm, near, reach, wgroup, wt, pos_weights, spread, masks = _merge_close(
        ppm, inten, group, fwhm, near, reach, wgroup, wt, pos_weights, np.stack([dmask, vmask]))
    dmask, vmask = masks
    if sparse.issparse(pos_weights):
        pos_weights = pos_weights.toarray()
    curvature = grid.curvature_ppm2 + spread[:, None]
    gamma_max = float(fwhm.max()) / 2
    span = int(np.ceil(float(reach.max()) * gamma_max / grid.dx_ppm)) + 1
    step = grid.dx_ppm
    x = np.concatenate([grid.x[0] - step * np.arange(span, 0, -1), grid.x,
                        grid.x[-1] + step * np.arange(1, span + 2)])
    width_total = n + 2 * span + 1
    centre = np.searchsorted(grid.x, ppm) + span
    parts = []
    # lines are drawn in classes of reach and width (within a factor 2), each over the points its
    # own widest line needs: one broad line (water) must not widen the table of every narrow one
    width_class = np.floor(np.log2(np.maximum(fwhm, 1e-300) / float(fwhm.min()))).astype(int)
    for half_widths, wclass in sorted(set(zip(reach.tolist(), width_class.tolist(), strict=True))):
        in_class = (reach == half_widths) & (width_class == wclass)
        widest = float(fwhm[in_class].max())
        points = int(np.ceil(float(half_widths) * widest / 2 / grid.dx_ppm)) + 1
        for with_derivs in ((True, False) if derivs else (False,)):
            sel = in_class & vmask & (dmask == with_derivs) if derivs else in_class & vmask
            if not sel.any():
                continue
            table = _line_table(x, centre[sel], ppm[sel], inten[sel], fwhm[sel], gauss, points,
                                curvature[sel], with_derivs, wt[sel], widest)
            table.update(group=group[sel], wgroup=wgroup[sel], shape=np.zeros(int(sel.sum()), int),
                         lines=np.flatnonzero(sel))
            parts.append(table)

    def _accumulate(item: str, rows: str, n_rows: int) -> np.ndarray:
        key = "idx" if item == "val" else "didx"
        have = [p for p in parts if item in p]
        if not have:
            return np.zeros((n_rows, n))
        flat = np.concatenate([(p[key] + width_total * p[rows][:, None]).ravel() for p in have])
        weights = np.concatenate([p[item].ravel() for p in have])
        table = np.bincount(flat, weights=weights, minlength=width_total * n_rows)
        return np.ascontiguousarray(table.reshape(n_rows, width_total)[:, span : span + n])

    values = _accumulate("val", "group", n_groups)
    if not derivs:
        return Drawn(values)
    dpos = _accumulate("dpos", "group", n_groups)
    dwidth = _accumulate("dwidth", "wgroup", max(1, n_width_groups))
    dgauss = _accumulate("dgauss", "shape", 1)[0]
    dextra = None
    if pos_weights is not None:
        weights = np.asarray(pos_weights, dtype=float)
        # a line's position derivative falls off as 1/u**3: +-10 half-widths hold it; pairs
        # (parameter, line) whose motion is negligible against the parameter's largest are left out
        size = np.abs(weights) * np.abs(inten)[None, :]
        keep = size >= _EXTRA_TRIM * size.max(axis=1, initial=0.0)[:, None]
        core = int(np.ceil(_NEAR_HALF_WIDTHS * gamma_max / grid.dx_ppm)) + 1
        flat, vals = [np.zeros(0, int)], [np.zeros(0)]
        for p in parts:
            if "dpos" not in p:
                continue
            rows, i = np.nonzero(keep[:, p["lines"]] & (weights[:, p["lines"]] != 0))
            if rows.size:
                mid = p["didx"].shape[1] // 2
                cols = slice(max(0, mid - core), mid + core + 1)
                flat.append((p["didx"][i, cols] + width_total * rows[:, None]).ravel())
                vals.append((p["dpos"][i, cols] * weights[rows, p["lines"][i]][:, None]).ravel())
        n_extra = weights.shape[0]
        table = np.bincount(np.concatenate(flat), weights=np.concatenate(vals),
                            minlength=width_total * n_extra)
        dextra = np.ascontiguousarray(table.reshape(n_extra, width_total)[:, span : span + n])
    return Drawn(values, dpos, dwidth, dgauss, dextra)


#: Lines of one group, width and reach closer than this share of their width are drawn as one line at
#: their centroid, with their spread drawn as a second-derivative term (as a bin's spread is): the
#: error left is of third order in the spread, below 1e-4 of the line's height. An exactly
#: simulated chain has hundreds of such near-coincident combination lines.
MERGE_SHARE = 0.05


def _merge_close(ppm, inten, group, fwhm, near, reach, wgroup, wt, pos_weights, masks):
    """Lines merged on a lattice of ``MERGE_SHARE`` widths (same group, width, reach, kind and sign);
    returns the merged arrays and each merged line's half second moment (ppm^2)."""
    cell = np.floor(ppm / (MERGE_SHARE * fwhm)).astype(np.int64)
    if fwhm.min() == fwhm.max():
        width_id = np.zeros(ppm.size, int)
    else:
        width_id = np.unique(fwhm, return_inverse=True)[1].ravel()
    key = _packed_key([group, wgroup, width_id, reach, near, inten > 0, cell])
    order = np.argsort(key, kind="stable")
    first = np.r_[True, key[order][1:] != key[order][:-1]]
    if first.all():
        return ppm, inten, group, fwhm, near, reach, wgroup, wt, pos_weights, np.zeros(ppm.size), masks
    # sums over each merged line's members: they are consecutive in ``order``
    starts = np.flatnonzero(first)
    lead = order[starts]
    p, a = ppm[order], inten[order]
    area = np.add.reduceat(a, starts)
    safe = np.where(area == 0, 1.0, area)
    centre = np.where(area == 0, ppm[lead], np.add.reduceat(a * p, starts) / safe)
    offset = p - np.repeat(centre, np.diff(np.r_[starts, p.size]))
    spread = np.add.reduceat(a * offset * offset, starts) / safe / 2
    mean_wt = np.where(area == 0, wt[lead], np.add.reduceat(a * wt[order], starts) / safe)
    if pos_weights is not None:
        # intensity-weighted mean of the members' motions (the motion of their centroid)
        label = np.repeat(np.arange(starts.size), np.diff(np.r_[starts, p.size]))
        mean = sparse.csr_matrix((a / safe[label], (order, label)), shape=(ppm.size, starts.size))
        pos_weights = pos_weights @ mean
        pos_weights = pos_weights.toarray() if sparse.issparse(pos_weights) else np.asarray(pos_weights)
    return (centre, area, group[lead], fwhm[lead], near[lead], reach[lead], wgroup[lead], mean_wt,
            pos_weights, np.maximum(spread, 0.0), masks[:, lead])


def _packed_key(columns) -> np.ndarray:
    """One int64 per row that orders rows as the columns do (first column most significant)."""
    key = np.zeros(np.asarray(columns[0]).size, np.int64)
    capacity = 1
    for col in columns:
        col = np.asarray(col).astype(np.int64)
        low = int(col.min())
        size = int(col.max()) - low + 1
        capacity *= size
        if capacity >= 2**62:  # too many distinct values for one word: order by all columns
            stacked = np.stack([np.asarray(c).astype(np.int64) for c in columns])
            _, inverse = np.unique(stacked, axis=1, return_inverse=True)
            return inverse.ravel().astype(np.int64)
        key = key * size + (col - low)
    return key


def line_reach(size: np.ndarray, near=None) -> np.ndarray:
    """Half-widths over which to draw lines of the given sizes (intensity times amount): the
    tallest (at least 10 % of the largest) over +-40, the smaller over +-20, those under 1 % and
    13C satellites over +-10. A line's tail beyond holds under 2 %, 3 % and 6 % of its area."""
    size = np.abs(np.asarray(size, dtype=float))
    top = float(size.max()) if size.size else 0.0
    out = np.where(size >= 0.1 * top, _FAR_HALF_WIDTHS, np.where(size >= 0.01 * top, 20, _NEAR_HALF_WIDTHS))
    if near is not None:
        out = np.where(np.asarray(near, bool), _NEAR_HALF_WIDTHS, out)
    return out


def _empty(n_groups: int, n: int, n_width_groups: int, derivs: bool) -> Drawn:
    zero = np.zeros((n_groups, n))
    if not derivs:
        return Drawn(zero)
    return Drawn(zero, zero.copy(), np.zeros((max(1, n_width_groups), n)), np.zeros(n))


def _line_table(x, centre, ppm, inten, fwhm, gauss: float, reach: int, curvature, derivs: bool, wt,
                widest: float):
    """Table positions and values (and derivatives) of lines within +-reach points; ``widest`` is
    the largest width of the lines' class (it sets the Gaussian and derivative spans)."""
    # the arithmetic is written out in place (each array is one pass, no temporaries) in the order
    # of the formulas in the comments, so every value is bitwise the same as theirs
    step = float(x[1] - x[0])
    idx = centre[:, None] + np.arange(-reach, reach + 1)[None, :]
    u = x[idx]
    u -= ppm[:, None]  # u = x[idx] - ppm
    amp = inten[:, None]
    gamma = fwhm[:, None] / 2
    u2 = u * u
    den = u2 + gamma * gamma
    lor = np.divide(gamma / np.pi, den)  # lor = gamma / pi / den
    # val = (1 - gauss) * (lor + curvature * gamma / pi * (6 u2 - 2 gamma gamma) / (den den den))
    val = np.multiply(u2, 6)
    val -= 2 * gamma * gamma
    val *= curvature * gamma / np.pi
    cube = den * den
    cube *= den
    val /= cube
    del cube
    val += lor
    val *= 1 - gauss
    # the Gaussian part is drawn over its own short reach (+-5 sd): beyond it is below 4e-6 of its peak
    sigma = fwhm[:, None] * _SIGMA_PER_FWHM
    core_half = int(np.ceil(5 * (widest * _SIGMA_PER_FWHM) / step))
    core = slice(max(0, reach - core_half), reach + core_half + 1)
    if gauss <= 0 and not derivs:
        val *= amp
        return {"idx": idx, "val": val}
    uc, u2c, sig = u[:, core], u2[:, core], sigma
    gau = np.exp(-u2c / (2 * sig * sig)) / (sig * np.sqrt(2 * np.pi))
    if gauss > 0:
        val[:, core] += gauss * (gau + curvature * gau * (u2c - sig * sig) / sig**4)
    val *= amp
    if not derivs:
        return {"idx": idx, "val": val}
    # the derivatives steer the refinement (the residual itself is always exact): they are drawn
    # over +-10 half-widths of the widest line, where they hold all but a few % of their weight
    half = int(np.ceil(_NEAR_HALF_WIDTHS * (widest / 2) / step)) + 1
    dcore = slice(max(0, reach - half), reach + half + 1)
    u, u2, den, lor = u[:, dcore], u2[:, dcore], den[:, dcore], lor[:, dcore]
    square = den * den
    # dpos = (1 - gauss) * 2 * gamma / pi * u / (den den)
    dpos = np.multiply((1 - gauss) * 2 * gamma / np.pi, u)
    dpos /= square
    # dwidth = (1 - gauss) * 0.5 * (u2 - gamma gamma) / pi / (den den)
    dwidth = u2 - gamma * gamma
    dwidth *= (1 - gauss) * 0.5
    dwidth /= np.pi
    dwidth /= square
    del square
    dgauss = np.negative(lor)
    # the Gaussian core in the derivative window's coordinates
    g0 = max(core.start, dcore.start)
    g1 = min(core.stop, dcore.stop)
    if g1 > g0:
        in_d = slice(g0 - dcore.start, g1 - dcore.start)
        in_c = slice(g0 - core.start, g1 - core.start)
        gd, ucd, u2cd = gau[:, in_c], uc[:, in_c], u2c[:, in_c]
        dgauss[:, in_d] += gd
        if gauss > 0:
            dpos[:, in_d] += gauss * gd * ucd / (sig * sig)
            dwidth[:, in_d] += gauss * gd * (u2cd / sig**3 - 1 / sig) * _SIGMA_PER_FWHM
    w = amp * wt[:, None]
    dpos *= amp
    dwidth *= w
    dgauss *= w
    return {"idx": idx, "didx": idx[:, dcore], "val": val, "dpos": dpos, "dwidth": dwidth, "dgauss": dgauss}
