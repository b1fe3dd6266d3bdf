"""Where is each candidate's multiplet? The assignment search on a blurred copy of the data.

Predicted shifts are a few tenths of a ppm off, so the first job is to put every site on the
multiplet that belongs to it. On a copy of the data blurred by a few Hz (so couplings that are a
little off still match) the search minimises one objective throughout: the squared residual of a
non-negative mixture plus baseline, over a fixed variance, plus the Gaussian shift prior
``sum(((shift - predicted) / sd) ** 2)``. From several starting points (the predicted shifts,
each site at its own best match, a matching pursuit over molecules and draws from the prior with a
fixed seed) it alternates

- coordinate moves: each site, with its molecule's amount, jumps to its best position in its
  window (closed form from cross-correlations);
- pairwise swaps of two sites' positions, and block swaps of the like sites of two molecules
  (two molecules with one skeleton can take each other's multiplets as a block);
- whole-molecule re-placement on what the others leave unexplained.

Every comparison is made with a tolerance and ties go to a fixed order, so rounding differences
between machines cannot change a decision. The distinct optima, best first, go to the refinement.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from confirm.fitting.linear import Projected, linear_cost, solve_amounts
from confirm.fitting.lineshape import draw_lines, line_reach
from confirm.fitting.models import model_lines

__all__ = ["SearchState", "simulate_state", "site_columns", "search_assignments", "near_swaps", "resweep",
           "stable_argmax"]

#: Relative tolerance of every comparison of costs and scores in the search.
_RTOL = 1e-9


def stable_argmax(score: np.ndarray, *, rtol: float = _RTOL) -> int:
    """Index of the first element within a relative tolerance of the maximum (ties and near-ties
    go to the lowest index, so rounding differences cannot change the choice)."""
    finite = np.isfinite(score)
    if not finite.any():
        return 0
    top = float(np.max(score[finite]))
    tol = rtol * max(abs(top), 1e-300) + 1e-300
    return int(np.flatnonzero(finite & (score >= top - tol))[0])


def _better(new: float, old: float) -> bool:
    """``new`` is clearly lower than ``old`` (beyond rounding)."""
    return new < old - _RTOL * max(abs(old), abs(new), 1e-300)


@dataclass
class SearchState:
    """Lines of every candidate simulated at some shifts (predicted couplings)."""

    base_shift: list  # per candidate: the shifts the lines were simulated at
    lines: list  # per candidate: (ppm, intensity, site, satellite)


def simulate_state(models, shifts, field_mhz: float, jvals=None, *, satellites: bool = True) -> SearchState:
    """Lines of every candidate at ``shifts`` with the predicted couplings (or ``jvals``)."""
    jvals = [m.j_values0 for m in models] if jvals is None else jvals
    lines = [model_lines(m, s, j, field_mhz, satellites=satellites)
             for m, s, j in zip(models, shifts, jvals, strict=True)]
    return SearchState(base_shift=[np.asarray(s, float).copy() for s in shifts], lines=lines)


def _offsets(models) -> tuple[list, int]:
    offsets, total = [], 0
    for m in models:
        offsets.append(total)
        total += m.n_sites
    return offsets, total


def site_columns(grid, models, state: SearchState, shifts, lw_ppm: float) -> np.ndarray:
    """Unit-amount column of every site (rows in model order), lines translated to ``shifts``."""
    offsets, n_sites = _offsets(models)
    ppm, inten, group, near = [], [], [], []
    for k in range(len(models)):
        p, i, s, sat = state.lines[k]
        ppm.append(p + (np.asarray(shifts[k]) - state.base_shift[k])[s])
        inten.append(i)
        group.append(s + offsets[k])
        near.append(sat)
    inten = np.concatenate(inten)
    near = np.concatenate(near)
    return draw_lines(grid, np.concatenate(ppm), inten, np.concatenate(group), n_sites, lw_ppm, near=near,
                      reach=line_reach(inten, near)).values


def _molecule_columns(models, per_site: np.ndarray) -> np.ndarray:
    offsets, _ = _offsets(models)
    return np.array([per_site[o : o + m.n_sites].sum(0) for o, m in zip(offsets, models, strict=True)])


def _translate_column(grid, column: np.ndarray, delta_ppm: float, span=None) -> np.ndarray:
    """Column moved by delta along the grid (interpolated; exact for whole grid steps).

    Only the points that the column's non-zero stretch lands on are interpolated: elsewhere the
    interpolation is between zeros, which is exactly zero, so the result is the same as over the
    whole grid. ``span``: the first and last non-zero index of the column when known."""
    x = grid.x
    out = np.zeros(x.size)
    first, last = _nonzero_span(column) if span is None else span
    if last < first:
        return out
    lo = x[max(int(first) - 1, 0)] + delta_ppm
    hi = x[min(int(last) + 1, x.size - 1)] + delta_ppm
    i0, i1 = int(np.searchsorted(x, lo, "left")), int(np.searchsorted(x, hi, "right"))
    out[i0:i1] = np.interp(x[i0:i1] - delta_ppm, x, column, left=0.0, right=0.0)
    return out


def _nonzero_span(column: np.ndarray) -> np.ndarray:
    """First and last index where the column is not zero ((0, -1) when it is zero everywhere)."""
    return _nonzero_spans(column[None, :])[0]


def _nonzero_spans(columns: np.ndarray) -> np.ndarray:
    """First and last non-zero index of every row ((0, -1) for a zero row), shape (n_rows, 2)."""
    nz = columns != 0
    n = columns.shape[1]
    first = np.argmax(nz, axis=1)
    last = n - 1 - np.argmax(nz[:, ::-1], axis=1)
    empty = ~nz.any(axis=1)
    first[empty], last[empty] = 0, -1
    return np.stack([first, last], axis=1)


def _prior(models, shifts) -> float:
    return float(sum(np.sum(((s - m.shift0) / _prior_sd(m)) ** 2)
                     for s, m in zip(shifts, models, strict=True)))


def _prior_sd(model) -> np.ndarray:
    return model.window / 3.0


def _support(unit: np.ndarray, rel: float = 1e-3) -> tuple[int, int] | None:
    """First and one-past-last index where a column exceeds ``rel`` of its maximum (None if empty)."""
    top = float(unit.max()) if unit.size else 0.0
    if not top > 0:
        return None
    nz = np.flatnonzero(unit > rel * top)
    return int(nz[0]), int(nz[-1]) + 1


# --------------------------------------------------------------------------------------------
# Objective
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class _Problem:
    """What every search task shares: the blurred grid, the free columns and the line width."""

    grid: object
    basis: np.ndarray
    lw_ppm: float
    field_mhz: float
    noise_sd: float


def _cost(problem: _Problem, models, state, shifts) -> float:
    cols = _molecule_columns(models, site_columns(problem.grid, models, state, shifts, problem.lw_ppm))
    return linear_cost(cols, problem.basis, problem.grid.y, problem.grid.weight)


# --------------------------------------------------------------------------------------------
# Coordinate moves
# --------------------------------------------------------------------------------------------


def _best_joint_move(grid, r_k, rest, unit, current, centre, window, var, prior_sd):
    """Best (shift, amount) of one site within centre +- window, or None when undefined.

    With the rest of its molecule fixed, placing the site at offset d and re-solving the
    molecule's amount a explains ``A(d)**2 / B(d)`` of the squared residual, ``A = <r_k, rest +
    u(d)>``, ``B = ||rest + u(d)||**2``; both follow from cross-correlations. The score adds the
    Gaussian prior on the shift.
    """
    support = _support(unit)
    if support is None:
        return None
    j0, j1 = support
    lo_ppm, hi_ppm = centre - window - current, centre + window - current  # allowed moves
    i0 = max(0, j0 + int(np.floor(lo_ppm / grid.dx_ppm)))
    i1 = min(grid.x.size, j1 + int(np.ceil(hi_ppm / grid.dx_ppm)))
    if i1 - i0 <= j1 - j0:
        return None
    u = unit[j0:j1]
    w = grid.weight
    rest_w = rest * w
    a_num = np.dot(r_k, rest_w) + np.correlate(r_k[i0:i1] * w[i0:i1], u, mode="valid")
    b_den = (
        np.dot(rest_w, rest_w)
        + 2 * np.correlate(rest_w[i0:i1] * w[i0:i1], u, mode="valid")
        + np.correlate(w[i0:i1] ** 2, u * u, mode="valid")
    )
    moves = grid.x[i0 : i0 + a_num.size] - grid.x[j0]
    gain = np.where(a_num > 0, a_num**2 / np.maximum(b_den, 1e-300), 0.0)
    score = gain / var - ((current + moves - centre) / prior_sd) ** 2
    score[(moves < lo_ppm - 1e-12) | (moves > hi_ppm + 1e-12)] = -np.inf
    if not np.isfinite(score).any():
        return None
    i = stable_argmax(score)
    return float(current + moves[i]), float(max(0.0, a_num[i] / max(b_den[i], 1e-300)))


def _sweep_sites(problem: _Problem, models, state, shifts, *, n_sweeps: int = 8, swaps: bool = True):
    """Coordinate moves of every site (in a fixed order), then swaps, until nothing moves.

    The variance that weighs the squared residual against the prior is fixed at the start of
    each sweep (the mean squared residual then), so moves and swaps of one sweep minimise the same
    objective. A sweep that brings back the shifts of an earlier sweep ends the loop.
    """
    grid = problem.grid
    shifts = [np.asarray(s, float).copy() for s in shifts]
    offsets, _ = _offsets(models)
    w = grid.weight
    seen = set()
    for sweep in range(n_sweeps):
        key = np.round(np.concatenate(shifts) / grid.dx_ppm).astype(np.int64).tobytes()
        if key in seen:
            break
        seen.add(key)
        per_site = site_columns(grid, models, state, shifts, problem.lw_ppm)
        cols = _molecule_columns(models, per_site)
        amounts, base = solve_amounts(cols, problem.basis, grid.y, w)
        resid = (grid.y - amounts @ cols - problem.basis @ base) * w
        var = max(float(np.mean(resid[w > 0] ** 2)), problem.noise_sd**2, 1e-300)
        moved = 0.0
        for k, m in enumerate(models):
            for s in range(m.n_sites):
                unit = per_site[offsets[k] + s]
                col = cols[k]
                rest = col - unit
                r_k = resid + amounts[k] * col * w
                best = _best_joint_move(grid, r_k, rest, unit, shifts[k][s], m.shift0[s], m.window[s], var,
                                        _prior_sd(m)[s])
                if best is None:
                    continue
                new_shift, new_amount = best
                shifted = _translate_column(grid, unit, new_shift - shifts[k][s])
                moved = max(moved, abs(new_shift - shifts[k][s]))
                cols[k] = rest + shifted
                per_site[offsets[k] + s] = shifted
                resid = r_k - new_amount * cols[k] * w
                shifts[k][s], amounts[k] = new_shift, new_amount
        swapped = swaps and _SwapPass(problem, models, per_site, shifts, var).run()
        if moved < 0.5 * grid.dx_ppm and sweep > 0 and not swapped:
            break
    return shifts


# --------------------------------------------------------------------------------------------
# Swaps
# --------------------------------------------------------------------------------------------


class _SwapPass:
    """One pass of pairwise swaps over every pair of sites (same molecule or two molecules), and
    block swaps of the like sites of two molecules, on the MAP objective (squared residual over
    ``var`` plus the shift prior).

    Pairs are walked in a fixed order; each swap that lowers the objective is taken at once and the
    walk goes on after it. Trials are costed in small batches against the current state: the
    projections are linear, so a trial's projected column is the current one plus the projected
    moved site minus the projected old site.
    """

    def __init__(self, problem: _Problem, models, per_site, shifts, var: float):
        self.grid, self.models, self.per_site, self.shifts = problem.grid, models, per_site, shifts
        self.var = var
        self.proj = Projected(problem.grid, problem.basis)
        self.offsets, _ = _offsets(models)
        self.blocks = [(k, k2) for k in range(len(models)) for k2 in range(k, len(models))]
        self.pairs = _pair_table(models, self.blocks, self.offsets)
        self.shift0 = np.concatenate([m.shift0 for m in models])
        self.window = np.concatenate([m.window for m in models])
        self.prior_sd = self.window / 3.0
        self.flat = np.concatenate(shifts)
        self.cols = _molecule_columns(models, per_site)
        self._set_columns(self.proj.project(self.cols))
        self.p_site = self.proj.project(per_site)
        self.spans = _nonzero_spans(per_site)
        self.moved: dict = {}
        self.version = np.zeros(len(per_site), dtype=int)

    def _set_columns(self, projected) -> None:
        self.projected = projected
        self.gram, self.rhs = projected @ projected.T, projected @ self.proj.y
        costs, amounts = self.proj.cost_many(self.gram[None], self.rhs[None])
        self.cost, self.zero = float(costs[0]), amounts[0] == 0

    def _prior_change(self, i: np.ndarray, i2: np.ndarray) -> np.ndarray:
        a, c = self.flat[i], self.flat[i2]
        sd, sd2 = self.prior_sd[i], self.prior_sd[i2]
        s0, s02 = self.shift0[i], self.shift0[i2]
        return (((c - s0) / sd) ** 2 + ((a - s02) / sd2) ** 2 - ((a - s0) / sd) ** 2 - ((c - s02) / sd2) ** 2)

    def _open(self, start: int) -> np.ndarray:
        """Rows of the pair table from ``start`` on whose two sites may swap now."""
        _, _, _, i, i2 = self.pairs[start:].T
        a, c = self.flat[i], self.flat[i2]
        ok = (
            (np.abs(a - c) >= 2 * self.grid.dx_ppm)
            & (np.abs(c - self.shift0[i]) <= self.window[i])
            & (np.abs(a - self.shift0[i2]) <= self.window[i2])
        )
        return start + np.flatnonzero(ok)

    def run(self) -> bool:
        any_swap, row, block, size = False, 0, 0, 8
        while True:
            open_rows = self._open(row)
            if open_rows.size == 0:
                grouped = self._swap_blocks(block, len(self.blocks))
                if grouped is None:
                    return any_swap
                any_swap, block = True, grouped + 1
                row, size = int(np.searchsorted(self.pairs[:, 0], block)), 8
                continue
            chunk = open_rows[:size]
            objective, parts = self._evaluate(chunk)
            current = self.cost / self.var
            better = np.flatnonzero(objective < current - _RTOL * max(abs(current), 1e-300))
            last = int(better[0]) if better.size else len(chunk) - 1
            grouped = self._swap_blocks(block, int(self.pairs[chunk[last], 0]))
            if grouped is not None:  # a block swap came first: go on after that block
                any_swap, block = True, grouped + 1
                row, size = int(np.searchsorted(self.pairs[:, 0], block)), 8
                continue
            block, row = int(self.pairs[chunk[last], 0]), int(chunk[last]) + 1
            if better.size:
                self._accept(chunk[last], [part[last] for part in parts])
                any_swap, size = True, 8
            else:
                size = min(2 * size, 64)

    def _swap_blocks(self, start: int, stop: int):
        """Block swaps of blocks start..stop-1 in order; the first one taken, or None."""
        return next((b for b in range(start, stop) if self._swap_block(b)), None)

    def _moved(self, rows):
        """Moved site columns and their projections for each pair, (u, u2, pu, pu2)."""
        keys, missing = [], []
        for i, i2 in self.pairs[rows, 3:]:
            key = (i, i2, self.version[i], self.version[i2])
            if key not in self.moved:
                missing.append(key)
            keys.append(key)
        if missing:
            cols = [
                _translate_column(self.grid, self.per_site[j], d, self.spans[j])
                for i, i2, _, _ in missing
                for j, d in ((i, self.flat[i2] - self.flat[i]), (i2, self.flat[i] - self.flat[i2]))
            ]
            projected = self.proj.project(np.array(cols))
            for j, key in enumerate(missing):
                self.moved[key] = (cols[2 * j], cols[2 * j + 1], projected[2 * j], projected[2 * j + 1])
        return [self.moved[key] for key in keys]

    def _evaluate(self, rows):
        moved = self._moved(rows)
        _, k, k2, i, i2 = self.pairs[rows].T
        pu, pu2 = np.array([m[2] for m in moved]), np.array([m[3] for m in moved])
        same = (k == k2)[:, None]
        p_new = self.projected[k] + pu - self.p_site[i]
        p_new = np.where(same, p_new + pu2 - self.p_site[i2], p_new)
        p_new2 = np.where(same, p_new, self.projected[k2] + pu2 - self.p_site[i2])
        t = np.arange(len(rows))
        grams = np.repeat(self.gram[None], len(rows), axis=0)
        rhs = np.repeat(self.rhs[None], len(rows), axis=0)
        for kk, pk in ((k, p_new), (k2, p_new2)):
            cross = pk @ self.projected.T
            grams[t, kk, :] = cross
            grams[t, :, kk] = cross
            rhs[t, kk] = pk @ self.proj.y
        grams[t, k, k] = np.einsum("ti,ti->t", p_new, p_new)
        grams[t, k2, k2] = np.einsum("ti,ti->t", p_new2, p_new2)
        grams[t, k, k2] = grams[t, k2, k] = np.einsum("ti,ti->t", p_new, p_new2)
        costs, amounts = self.proj.cost_many(grams, rhs, self.zero)
        objective = costs / self.var + self._prior_change(i, i2)
        return objective, (p_new, p_new2, grams, rhs, moved, amounts, costs)

    def _accept(self, row: int, part) -> None:
        _, k, k2, i, i2 = (int(v) for v in self.pairs[row])
        u, u2, _, _ = part[4]
        new = self.cols[k] + u - self.per_site[i]
        if k2 == k:
            new = new + u2 - self.per_site[i2]
        new2 = new if k2 == k else self.cols[k2] + u2 - self.per_site[i2]
        self.cols[k], self.cols[k2] = new, new2
        self.projected[k], self.projected[k2] = part[0], part[1]
        self.gram, self.rhs, self.zero = part[2], part[3], part[5] == 0
        self.cost = float(part[6])
        self.per_site[i], self.per_site[i2] = u, u2
        self.spans[i], self.spans[i2] = _nonzero_span(u), _nonzero_span(u2)
        self.p_site[i], self.p_site[i2] = part[4][2], part[4][3]
        self.version[[i, i2]] += 1
        s, s2 = i - self.offsets[k], i2 - self.offsets[k2]
        self.shifts[k][s], self.shifts[k2][s2] = self.shifts[k2][s2], self.shifts[k][s]
        self.flat[i], self.flat[i2] = self.flat[i2], self.flat[i]

    def _swap_block(self, block: int) -> bool:
        """Exchange the positions of every like site (same label and proton count) of two
        molecules at once, when that lowers the objective."""
        k, k2 = self.blocks[block]
        if k == k2:
            return False
        pairs = _like_pairs(self.models[k], self.models[k2], self.shifts[k], self.shifts[k2],
                            self.grid.dx_ppm)
        if len(pairs) < 2:
            return False
        trial, moved = self.cols.copy(), {}
        prior_change = 0.0
        for s, s2 in pairs:
            i, i2 = self.offsets[k] + s, self.offsets[k2] + s2
            a, b = self.shifts[k][s], self.shifts[k2][s2]
            moved[i] = _translate_column(self.grid, self.per_site[i], b - a, self.spans[i])
            moved[i2] = _translate_column(self.grid, self.per_site[i2], a - b, self.spans[i2])
            trial[k] += moved[i] - self.per_site[i]
            trial[k2] += moved[i2] - self.per_site[i2]
            prior_change += float(self._prior_change(np.array([i]), np.array([i2]))[0])
        trial_p = self.projected.copy()
        trial_p[k], trial_p[k2] = self.proj.project(trial[k]), self.proj.project(trial[k2])
        new_cost = self.proj.cost(trial_p)
        if not _better(new_cost / self.var + prior_change, self.cost / self.var):
            return False
        for i, column in moved.items():
            self.per_site[i] = column
        for s, s2 in pairs:
            self.shifts[k][s], self.shifts[k2][s2] = self.shifts[k2][s2], self.shifts[k][s]
        self.cols = trial
        self._set_columns(trial_p)
        self.p_site = self.proj.project(self.per_site)
        self.spans = _nonzero_spans(self.per_site)
        self.version += 1
        self.flat = np.concatenate(self.shifts)
        return True


def _pair_table(models, blocks, offsets) -> np.ndarray:
    """Every site pair in swap order: rows (block, k, k2, site index, other site index)."""
    rows = []
    for b, (k, k2) in enumerate(blocks):
        for s in range(models[k].n_sites):
            for s2 in range(s + 1 if k2 == k else 0, models[k2].n_sites):
                rows.append((b, k, k2, offsets[k] + s, offsets[k2] + s2))
    return np.array(rows, dtype=int).reshape(-1, 5)


def _like_pairs(m, m2, shifts, shifts2, dx_ppm: float) -> list:
    """Sites of two molecules with the same label and proton count that could swap positions."""
    pairs, used = [], set()
    for s in range(m.n_sites):
        for s2 in range(m2.n_sites):
            if (
                s2 not in used
                and m.labels[s] == m2.labels[s2]
                and m.n_h[s] == m2.n_h[s2]
                and abs(shifts[s] - shifts2[s2]) >= 2 * dx_ppm
                and abs(shifts2[s2] - m.shift0[s]) <= m.window[s]
                and abs(shifts[s] - m2.shift0[s2]) <= m2.window[s2]
            ):
                pairs.append((s, s2))
                used.add(s2)
                break
    return pairs


# --------------------------------------------------------------------------------------------
# Placement of a whole molecule (pursuit and re-placement)
# --------------------------------------------------------------------------------------------


def _best_offset_column(grid, target, unit, window, noise_sd) -> float:
    """Offset (ppm) where a unit column's shape best matches ``target``: normalised
    cross-correlation with a mild pull towards no move; 0 when nothing matches."""
    support = _support(unit, 0.02)
    if support is None:
        return 0.0
    j0, j1 = support
    steps = int(np.ceil(window / grid.dx_ppm))
    i0, i1 = max(0, j0 - steps), min(grid.x.size, j1 + steps)
    if i1 - i0 <= j1 - j0:
        return 0.0
    if np.dot(unit[j0:j1], grid.weight[j0:j1] > 0) < 0.5 * unit[j0:j1].sum():
        return 0.0  # the site sits mostly under a masked window: no evidence to move it
    p = unit[j0:j1] * (unit[j0:j1] > 0.02 * unit.max())
    t = target[i0:i1]
    num = np.correlate(t, p, mode="valid")
    energy = np.correlate(t * t, (p > 0).astype(float), mode="valid")
    offsets = grid.x[i0 : i0 + num.size] - grid.x[j0]
    norm_p = np.linalg.norm(p)
    ncc = num / (norm_p * np.sqrt(np.maximum(energy, 0.0)) + 1e-300)
    score = ncc - 0.15 * (offsets / max(window, 1e-9)) ** 2
    score[(num / (norm_p * noise_sd) < 5) | (np.abs(offsets) > window)] = -np.inf
    if not np.isfinite(score).any():
        return 0.0
    return float(offsets[stable_argmax(score)])


def _best_fixed_amount(grid, resid, unit, amount, centre, window, prior_sd, noise_sd) -> float:
    """Least-squares best position of a site whose amount is fixed (MAP with the shift prior)."""
    support = _support(unit)
    if support is None:
        return centre
    j0, j1 = support
    steps = int(np.ceil(window / grid.dx_ppm))
    i0, i1 = max(0, j0 - steps), min(grid.x.size, j1 + steps)
    if i1 - i0 <= j1 - j0:
        return centre
    u = unit[j0:j1] * amount
    w = grid.weight
    gain = 2 * np.correlate(resid[i0:i1] * w[i0:i1], u, mode="valid") - np.correlate(
        w[i0:i1] ** 2, u * u, mode="valid"
    )
    moves = grid.x[i0 : i0 + gain.size] - grid.x[j0]
    var = max(noise_sd**2, float(np.mean(resid[w > 0] ** 2)))
    score = gain / var - (moves / prior_sd) ** 2
    score[np.abs(moves) > window] = -np.inf
    if not np.isfinite(score).any():
        return centre
    return float(centre + moves[stable_argmax(score)])


def _place(grid, model, units, resid, noise_sd):
    """Best positions and one amount for a molecule against a residual: (shifts, amount, gain, column).

    Each site first goes where its multiplet shape matches best (normalised cross-correlation),
    which gives one amplitude per site; the molecule's amount is a low quantile of those (overlaps
    only inflate them); then each site is re-placed by least squares at that amount, so a
    multiplet cannot sit on a peak much larger or smaller than the molecule allows.
    """
    w = grid.weight
    shifts, alphas = model.shift0.copy(), []
    for s in range(model.n_sites):
        unit = units[s]
        if _support(unit) is None:
            continue
        offset = _best_offset_column(grid, resid, unit, model.window[s], noise_sd)
        shifts[s] = model.shift0[s] + offset
        u = _translate_column(grid, unit, offset) * w
        if np.dot(u, u) > 0.5 * np.dot(unit, unit):
            alphas.append(max(0.0, float(np.dot(u, resid) / np.dot(u, u))))
    amount = float(np.percentile(alphas, 25)) if alphas else 0.0
    moved = []
    for s in range(model.n_sites):
        unit = units[s]
        if amount > 0:
            shifts[s] = _best_fixed_amount(grid, resid, unit, amount, model.shift0[s], model.window[s],
                                           _prior_sd(model)[s], noise_sd)
        moved.append(_translate_column(grid, unit, shifts[s] - model.shift0[s]))
    col = np.sum(moved, axis=0)
    r = resid - amount * col * w
    gain = float(np.dot(resid, resid) - np.dot(r, r))
    return shifts, amount, gain, col


def _pursue(problem: _Problem, models, state):
    """Greedy start: the candidate that explains most of the still-unexplained signal is placed
    first (each site where its multiplet matches best, one amount for the molecule), its model is
    subtracted, and so on (a matching pursuit over molecules; ties go to the lower index)."""
    grid = problem.grid
    offsets, _ = _offsets(models)
    per_site = site_columns(grid, models, state, [m.shift0 for m in models], problem.lw_ppm)
    resid = (grid.y - np.median(grid.y)) * grid.weight
    shifts = [m.shift0.copy() for m in models]
    remaining = list(range(len(models)))
    while remaining:
        trials = {
            k: _place(grid, models[k], per_site[offsets[k] : offsets[k] + models[k].n_sites], resid,
                      problem.noise_sd)
            for k in remaining
        }
        best = remaining[stable_argmax(np.array([trials[k][2] for k in remaining]))]
        shifts[best], amount, _, col = trials[best]
        resid = resid - amount * col * grid.weight
        remaining.remove(best)
    return shifts


def _own_best(problem: _Problem, models, state):
    """Start with every site at its own best match against the whole spectrum."""
    grid = problem.grid
    offsets, _ = _offsets(models)
    per_site = site_columns(grid, models, state, [m.shift0 for m in models], problem.lw_ppm)
    target = (grid.y - np.median(grid.y)) * grid.weight
    return [
        m.shift0 + np.array([_best_offset_column(grid, target, per_site[offsets[k] + s], m.window[s],
                                                 problem.noise_sd) for s in range(m.n_sites)])
        for k, m in enumerate(models)
    ]


def _replace_molecules(problem: _Problem, models, state, shifts, *, passes: int = 2):
    """Take each molecule out in turn and place it again on what the others leave unexplained.

    Site moves shift one site at a time, so a molecule whose sites sit on another molecule's
    multiplets stays there: moving any single site away costs more than it gains; and a molecule
    with no amount cannot move at all. Removing the whole molecule and re-placing it against the
    residual of the rest, then sweeping, escapes such traps; the move is kept only when the MAP
    objective drops. A final sweep with swaps follows.
    """
    grid = problem.grid
    offsets, _ = _offsets(models)
    shifts = [s.copy() for s in shifts]
    var = max(_cost(problem, models, state, shifts) / max(1.0, float(np.sum(grid.weight > 0))),
              problem.noise_sd**2, 1e-300)
    best = _cost(problem, models, state, shifts) / var + _prior(models, shifts)
    units = site_columns(grid, models, state, [m.shift0 for m in models], problem.lw_ppm)
    for _ in range(passes):
        improved = False
        for k, m in enumerate(models):
            cols = _molecule_columns(models, site_columns(grid, models, state, shifts, problem.lw_ppm))
            amounts, base = solve_amounts(cols, problem.basis, grid.y, grid.weight)
            others = amounts @ cols - amounts[k] * cols[k] + problem.basis @ base
            resid = (grid.y - others) * grid.weight
            new_k, _, _, _ = _place(grid, m, units[offsets[k] : offsets[k] + m.n_sites], resid,
                                    problem.noise_sd)
            trial = [s.copy() for s in shifts]
            trial[k] = new_k
            trial = _sweep_sites(problem, models, state, trial, n_sweeps=3, swaps=False)
            value = _cost(problem, models, state, trial) / var + _prior(models, trial)
            if _better(value, best) and value < best * (1 - 1e-4):
                shifts, best, improved = trial, value, True
        if not improved:
            break
    return _sweep_sites(problem, models, state, shifts, n_sweeps=4)


# --------------------------------------------------------------------------------------------
# The search
# --------------------------------------------------------------------------------------------


def _sweep_task(shared, task):
    """One start swept to its local optimum (a task for ``TaskPool.map``; ``shared`` holds the
    candidates' models first)."""
    models = shared[0]
    problem, state, shifts = task
    return _sweep_sites(problem, models, state, shifts)


def _replace_task(shared, task):
    """Whole-molecule re-placement on one swept start (a task for ``TaskPool.map``)."""
    models = shared[0]
    problem, state, shifts = task
    return _replace_molecules(problem, models, state, shifts)


#: Swept starts (best first) that also get whole molecules re-placed (the step is slow).
_N_REPLACED = 2


def search_assignments(grid, basis, models, *, lw_ppm: float, field_mhz: float, noise_sd: float,
                       n_random: int, n_keep: int, n_swaps: int, seed: int, pool) -> tuple[list, list]:
    """Site positions worth refining, best first (at most ``n_keep``), and the swaps of the best
    one that the blurred data can hardly tell from it.

    The swaps (two sites exchanging positions, as (k, s, k2, s2), least costly first) are for the
    refinement to decide: on blurred data with predicted couplings a dd and a d of similar size
    look alike, with the couplings refined they do not.

    Parameters
    ----------
    grid : Grid
        The blurred fitting grid.
    basis : ndarray
        Free columns (baseline).
    models : sequence of CandidateModel
    lw_ppm : float
        Line width on the blurred grid.
    pool : TaskPool
        Runs the starts side by side (its shared data holds ``models`` first).

    Returns
    -------
    assignments : list of list of ndarray
        Per assignment, the shifts of each candidate.
    swaps : list of tuple
        Near swaps of the first assignment.
    """
    problem = _Problem(grid=grid, basis=basis, lw_ppm=lw_ppm, field_mhz=field_mhz, noise_sd=noise_sd)
    # 13C satellites (0.55 % each) do not decide an assignment on blurred data: parents only
    state = simulate_state(models, [m.shift0 for m in models], field_mhz, satellites=False)
    rng = np.random.default_rng(seed)
    starts = [[m.shift0.copy() for m in models], _pursue(problem, models, state),
              _own_best(problem, models, state)]
    for _ in range(n_random):
        starts.append([m.shift0 + rng.standard_normal(m.n_sites) * _prior_sd(m) for m in models])
    found = pool.map(_sweep_task, [(problem, state, s) for s in starts])
    ranked = _rank(problem, models, state, found, n_keep)
    n_replace = min(len(ranked), _N_REPLACED)
    replaced = pool.map(_replace_task, [(problem, state, found[i]) for i in ranked[:n_replace]])
    candidates = list(replaced) + [found[i] for i in ranked[n_replace:]]
    order = _rank(problem, models, state, candidates, n_keep)
    best = candidates[order[0]]
    near = near_swaps(problem, models, state, best, n_swaps)
    out = [best]
    for i in order[1:]:
        if len(out) >= n_keep:
            break
        if all(_distinct(candidates[i], other, grid.dx_ppm) for other in out):
            out.append(candidates[i])
    return out, near


def _distinct(a, b, dx_ppm: float) -> bool:
    return bool(np.max(np.abs(np.concatenate(a) - np.concatenate(b))) > 2 * dx_ppm)


def near_swaps(problem: _Problem, models, state, shifts, n: int) -> list:
    """The ``n`` pair swaps of an assignment that raise the objective least (fixed order on ties),
    as (k, s, k2, s2) tuples; swaps of two positions within two line widths are left out (they
    hardly change the assignment)."""
    per_site = site_columns(problem.grid, models, state, shifts, problem.lw_ppm)
    cols = _molecule_columns(models, per_site)
    amounts, base = solve_amounts(cols, problem.basis, problem.grid.y, problem.grid.weight)
    w = problem.grid.weight
    resid = (problem.grid.y - amounts @ cols - problem.basis @ base) * w
    var = max(float(np.mean(resid[w > 0] ** 2)), problem.noise_sd**2, 1e-300)
    swap = _SwapPass(problem, models, per_site, [s.copy() for s in shifts], var)
    rows = swap._open(0)
    if rows.size == 0:
        return []
    rows = rows[np.abs(swap.flat[swap.pairs[rows, 3]] - swap.flat[swap.pairs[rows, 4]]) > 2 * problem.lw_ppm]
    if rows.size == 0:
        return []
    values = np.concatenate([swap._evaluate(rows[i : i + 64])[0] for i in range(0, rows.size, 64)])
    scale = max(float(np.max(np.abs(values))), 1e-300)
    order = np.lexsort((np.arange(values.size), np.round(values / (scale * _RTOL))))
    offsets, _ = _offsets(models)
    out = []
    for r in rows[order[:n]]:
        _, k, k2, i, i2 = (int(v) for v in swap.pairs[r])
        out.append((k, i - offsets[k], k2, i2 - offsets[k2]))
    return out


def _rank(problem: _Problem, models, state, found, n_keep: int) -> list:
    """Indices of distinct starts, best MAP objective first (a common variance for all; ties and
    near-ties in a fixed order); starts within two grid steps of a better one count once."""
    costs = np.array([_cost(problem, models, state, s) for s in found])
    n_points = max(1.0, float(np.sum(problem.grid.weight > 0)))
    var = max(float(costs.min()) / n_points, problem.noise_sd**2, 1e-300)
    objective = costs / var + np.array([_prior(models, s) for s in found])
    scale = max(float(np.max(np.abs(objective))), 1e-300)
    order = np.lexsort((np.arange(objective.size), np.round(objective / (scale * 1e-9))))
    kept: list[int] = []
    for i in order:
        flat = np.concatenate(found[i])
        if all(np.max(np.abs(flat - np.concatenate(found[j]))) > 2 * problem.grid.dx_ppm for j in kept):
            kept.append(int(i))
        if len(kept) >= n_keep:
            break
    return kept


def resweep(grid, basis, models, shifts, jvals, *, lw_ppm: float, field_mhz: float, noise_sd: float):
    """Site moves and swaps again on the fine grid, with the refined couplings and width.

    On the blurred copy the misfit of the large components sets the variance, and a minor
    component's small multiplets gain too little against the shift prior to move. After the
    refinement the misfit is down to the noise, and the same moves see them. Returns the new
    shifts and whether any site moved by more than a line width.
    """
    problem = _Problem(grid=grid, basis=basis, lw_ppm=lw_ppm, field_mhz=field_mhz, noise_sd=noise_sd)
    state = simulate_state(models, shifts, field_mhz, jvals)
    # a molecule with no amount cannot move one site at a time (its other sites, on nothing, keep
    # the joint amount at zero): each molecule is also taken out and placed again
    new = _replace_molecules(problem, models, state, shifts, passes=1)
    moved = max(float(np.max(np.abs(a - b))) for a, b in zip(new, shifts, strict=True)) > lw_ppm
    return new, moved
