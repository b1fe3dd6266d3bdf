"""Refine one assignment until the model reproduces the measured lines.

Parameters: every site's shift (within its window), every coupling that shapes a multiplet
(within its bounds, sign kept), one line width per fitted region, the Gaussian share of the line
shape, the amounts (>= 0) and the free baseline and phase columns. The objective is the maximum
a posteriori one: squared residual plus, in the same units (the variance ``scale**2``), the
Gaussian priors of the shifts (predicted sd), the couplings (predicted sd) and the widths (50 %
of the measured width). The priors keep every parameter defined: a site of a molecule with no
amount stays at its prediction instead of wandering with rounding.

Within a round every line moves with its site's shift and with each refined coupling by its exact
first-order derivative (from the spin simulation); between rounds the spin systems are simulated
again, so strongly coupled patterns (and line intensities) stay exact. The last step simulates the
final parameters exactly and solves the linear part again: the residual reported is that of the
exact model.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import sparse

from confirm.fitting.linear import solve_amounts
from confirm.fitting.lineshape import draw_lines, line_reach
from confirm.fitting.models import model_lines, model_lines_with_derivatives
from confirm.fitting.solver import least_squares_box, power_of_two_below

__all__ = ["Layout", "Priors", "Refined", "Refinement", "blurred_view", "exact_columns", "line_regions",
           "parameter_map", "resolve_linear"]

#: Prior sd of a region's line width, relative to the measured width.
_WIDTH_PRIOR_REL = 0.5
#: Most iterations of one round (the next round starts from a fresh simulation anyway). A round
#: stopped far from its optimum ends where its path happens to be, and that depends on rounding;
#: from the solver's cautious start most rounds converge within 40.
_MAX_ITERATIONS = 40
#: A round's iterations stop when a step lowers the objective by less than this (chi-square units).
_CHI2_TOL = 0.05
#: ... or by less than this share of it (a large misfit need not be polished to 0.05).
_REL_TOL = 1e-4
#: Grid of the refined parameters (each step a power of two at or below these; see
#: ``least_squares_box``): shifts, widths and couplings 1e-4 Hz; the Gaussian share 2**-20; amounts
#: 1e-6 of the largest starting amount and baseline columns 1e-6 of the data's scale. Far below
#: anything a spectrum resolves; it makes the iterates, and so the answer, a function of the data
#: rather than of the rounding of the machine's arithmetic.
_QUANTUM_HZ = 1e-4
_QUANTUM_GAUSS = 2.0**-20
_QUANTUM_REL = 1e-6
#: Rounds stop when no shift moved more than this share of the line width and no coupling more than
#: this many Hz in the last round (the linearised couplings are then exact enough).
_SETTLED = 0.1


@dataclass(frozen=True)
class Layout:
    """Positions of the parameter groups in the vector ``theta``:
    [shifts..., couplings..., widths (ppm: one per region, then one per line with a width of its
    own), Gaussian share, amounts..., baseline...]."""

    n_sites: tuple
    n_j: tuple
    n_regions: int
    n_base: int
    own: tuple = ()  # per model: index of its own width among the extra widths, or -1

    @classmethod
    def of(cls, models, n_regions: int, n_base: int) -> Layout:
        own, count = [], 0
        for m in models:
            own.append(count if m.own_width is not None else -1)
            count += m.own_width is not None
        return cls(tuple(m.n_sites for m in models), tuple(len(m.j_pairs) for m in models), n_regions, n_base,
                   tuple(own))

    @property
    def n_widths(self) -> int:
        return self.n_regions + sum(1 for i in self.own if i >= 0)

    def width_index(self, grid, k: int, ppm: np.ndarray) -> np.ndarray:
        """Width parameter of each line of model ``k``: its own, else its region's."""
        if self.own and self.own[k] >= 0:
            return np.full(np.asarray(ppm).size, self.n_regions + self.own[k])
        return line_regions(grid, np.asarray(ppm))

    @property
    def k(self) -> int:
        return len(self.n_sites)

    @property
    def shift_slice(self) -> slice:
        return slice(0, sum(self.n_sites))

    @property
    def j_slice(self) -> slice:
        start = sum(self.n_sites)
        return slice(start, start + sum(self.n_j))

    @property
    def width_slice(self) -> slice:
        start = self.j_slice.stop
        return slice(start, start + self.n_widths)

    @property
    def gauss_index(self) -> int:
        return self.width_slice.stop

    @property
    def amount_slice(self) -> slice:
        start = self.gauss_index + 1
        return slice(start, start + self.k)

    @property
    def base_slice(self) -> slice:
        start = self.amount_slice.stop
        return slice(start, start + self.n_base)

    @property
    def size(self) -> int:
        return self.base_slice.stop

    def split(self, flat: np.ndarray, counts) -> list:
        out, pos = [], 0
        for n in counts:
            out.append(flat[pos : pos + n])
            pos += n
        return out

    def shifts(self, theta) -> list:
        return self.split(theta[self.shift_slice], self.n_sites)

    def jvals(self, theta) -> list:
        return self.split(theta[self.j_slice], self.n_j)

    def shifts_of(self, k: int) -> slice:
        """Where molecule ``k``'s shifts sit in the parameter vector."""
        start = self.shift_slice.start + int(np.sum(self.n_sites[:k]))
        return slice(start, start + self.n_sites[k])

    def jvals_of(self, k: int) -> slice:
        """Where molecule ``k``'s couplings sit in the parameter vector."""
        start = self.j_slice.start + int(np.sum(self.n_j[:k]))
        return slice(start, start + self.n_j[k])


@dataclass(frozen=True, eq=False)
class Refined:
    """One refined assignment.

    Attributes
    ----------
    theta : ndarray
        Final parameters (see :class:`Layout`); amounts and baseline solved exactly for the exact
        model.
    layout : Layout
    per_site : ndarray, shape (n_sites, n)
        Unit-amount column of every site at the final parameters (exact simulation).
    cols : ndarray, shape (k, n)
        Unit-amount column of every candidate.
    model : ndarray, shape (n,)
        Fitted spectrum (candidates plus baseline and phase columns).
    cost : float
        Squared weighted residual of the exact model.
    prior : float
        Prior part of the objective (dimensionless).
    objective : float
        ``cost / scale**2 + prior``.
    jacobian : ndarray, shape (n + n_prior, size)
        Jacobian of the last round at the final parameters (covariance of the amounts).
    scale : float
        Noise scale of the objective.
    width0_ppm : float
        Centre of the width prior (the measured line width).
    excluded : tuple of int
        Candidates left out of the model by a refit (their amount stays 0).
    """

    theta: np.ndarray
    layout: Layout
    per_site: np.ndarray
    cols: np.ndarray
    model: np.ndarray
    cost: float
    prior: float
    objective: float
    jacobian: np.ndarray
    scale: float
    width0_ppm: float
    excluded: tuple = ()  # candidates refitted out of the model (amount 0)

    @property
    def amounts(self) -> np.ndarray:
        return self.theta[self.layout.amount_slice]

    @property
    def widths_ppm(self) -> np.ndarray:
        """The line width of each region (the widths of the nuisance lines left out)."""
        return self.theta[self.layout.width_slice][: self.layout.n_regions]

    @property
    def gauss(self) -> float:
        return float(self.theta[self.layout.gauss_index])


def line_regions(grid, ppm: np.ndarray) -> np.ndarray:
    """Region of each line position: the region whose span holds it, else the nearest one."""
    spans = grid.region_spans()
    below = np.clip(spans[None, :, 0] - ppm[:, None], 0, None)
    above = np.clip(ppm[:, None] - spans[None, :, 1], 0, None)
    return np.argmin(below + above, axis=1)


class _Round:
    """Residual and Jacobian of the full model around one simulation of the lines."""

    def __init__(self, grid, basis, models, layout: Layout, field_mhz: float, theta0: np.ndarray, priors):
        self.grid, self.basis, self.models, self.layout = grid, basis, models, layout
        self.field = field_mhz
        self.priors, self.scale = priors, 1.0
        self.base_shifts = [s.copy() for s in layout.shifts(theta0)]
        self.base_j = [j.copy() for j in layout.jvals(theta0)]
        simulated = [model_lines_with_derivatives(m, s, j, field_mhz)
                     for m, s, j in zip(models, self.base_shifts, self.base_j, strict=True)]
        self.lines = [out[:4] for out in simulated]
        offsets = np.cumsum([0] + list(layout.n_sites))[:-1]
        self.site = np.concatenate([ln[2] + o for ln, o in zip(self.lines, offsets, strict=True)])
        self.molecule = np.concatenate([np.full(ln[0].size, k) for k, ln in enumerate(self.lines)])
        self.near = np.concatenate([ln[3] for ln in self.lines])
        self.inten = np.concatenate([ln[1] for ln in self.lines])
        self.ppm0 = np.concatenate([ln[0] for ln in self.lines])
        self.region = np.concatenate([layout.width_index(grid, k, ln[0]) for k, ln in enumerate(self.lines)])
        amounts0 = theta0[layout.amount_slice]
        amounts0 = np.maximum(amounts0, 1e-3 * max(float(amounts0.max()), 1e-300))
        self.reach = line_reach(self.inten * amounts0[self.molecule], self.near)
        # how far each line moves (ppm) per Hz of each refined coupling, (n_pairs, n_lines)
        self.moves = np.zeros((sum(layout.n_j), self.ppm0.size))
        self.pair_molecule = np.zeros(sum(layout.n_j), int)
        row, col = 0, 0
        for k, out in enumerate(simulated):
            n_lines, n_pairs = out[0].size, out[4].shape[1]
            # satellites do not move by themselves: their parents do
            self.moves[row : row + n_pairs, col : col + n_lines] = out[4].T * ~out[3]
            self.pair_molecule[row : row + n_pairs] = k
            row, col = row + n_pairs, col + n_lines
        self.moves_sparse = sparse.csr_matrix(self.moves)  # each coupling moves one molecule's lines
        self._cache = (None, None)

    def _draw(self, theta, derivs: bool = True, complete: bool = True):
        """Lines drawn at ``theta``: per-site values (and derivatives) and molecule columns.

        A molecule with no amount adds nothing to the model and its derivatives are zero (they are
        scaled by its amount): ``derivs`` draws derivatives of the molecules with an amount only,
        and ``complete=False`` (a residual) leaves the columns of the others at zero. Solving the
        amounts and the amount columns of the Jacobian need every column (``complete``)."""
        key = theta.tobytes()
        if self._cache[0] == key:
            drawn, cols, whole = self._cache[1]
            if (drawn.dpos is not None or not derivs) and (whole or not complete):
                return drawn, cols
        lay = self.layout
        delta = theta[lay.shift_slice] - np.concatenate(self.base_shifts)
        dj = theta[lay.j_slice] - np.concatenate(self.base_j)
        amounts = theta[lay.amount_slice]
        widths = theta[lay.width_slice]
        live = amounts[self.molecule] != 0
        drawn = draw_lines(
            self.grid, self.ppm0 + delta[self.site] + dj @ self.moves, self.inten, self.site,
            sum(lay.n_sites), widths[self.region], gauss=float(theta[lay.gauss_index]), near=self.near,
            derivs=derivs, width_group=self.region, n_width_groups=lay.n_widths,
            weight=amounts[self.molecule], reach=self.reach,
            pos_weights=self.moves_sparse if derivs else None, deriv_mask=live,
            value_mask=None if complete else live,
        )
        cols = self._molecule_columns(drawn.values)
        self._cache = (key, (drawn, cols, complete or live.all()))
        return drawn, cols

    def _molecule_columns(self, per_site: np.ndarray) -> np.ndarray:
        out, pos = [], 0
        for n in self.layout.n_sites:
            out.append(per_site[pos : pos + n].sum(0))
            pos += n
        return np.array(out)

    def solve_linear(self, theta: np.ndarray) -> np.ndarray:
        """``theta`` with amounts and baseline solved for its other parameters (this round's lines)."""
        _, cols = self._draw(theta, derivs=False)
        amounts, base = solve_amounts(cols, self.basis, self.grid.y, self.grid.weight)
        out = theta.copy()
        out[self.layout.amount_slice] = amounts
        out[self.layout.base_slice] = base
        return out

    def set_scale(self, theta: np.ndarray, noise_sd: float) -> float:
        """Fix the noise sd that weighs the data against the priors (the noise itself: weighing
        them against a large misfit would let the priors hold a poor model where it is)."""
        self.scale = float(noise_sd)
        return self.scale

    def residual(self, theta):
        # a trial point's residual needs the lines only; their derivatives are drawn for the
        # Jacobian, at the points the solver accepts
        _, cols = self._draw(theta, derivs=False, complete=False)
        lay = self.layout
        model = theta[lay.amount_slice] @ cols + self.basis @ theta[lay.base_slice]
        data = (model - self.grid.y) * self.grid.weight
        return np.concatenate([data, self.scale * self.priors.rows(theta)])

    def jacobian(self, theta):
        drawn, cols = self._draw(theta)
        lay = self.layout
        n = self.grid.x.size
        out = np.zeros((n + self.priors.stop, lay.size))
        amounts = theta[lay.amount_slice]
        site_amount = np.concatenate([np.full(m, a) for m, a in zip(lay.n_sites, amounts, strict=True)])
        out[:n, lay.shift_slice] = (drawn.dpos * site_amount[:, None]).T
        if drawn.dextra is not None and drawn.dextra.shape[0]:
            out[:n, lay.j_slice] = (drawn.dextra * amounts[self.pair_molecule][:, None]).T
        out[:n, lay.width_slice] = drawn.dwidth.T
        out[:n, lay.gauss_index] = drawn.dgauss
        out[:n, lay.amount_slice] = cols.T
        out[:n, lay.base_slice] = self.basis
        out[:n] *= self.grid.weight[:, None]
        out[n:] = self.scale * self.priors.jacobian()
        return out


class Priors:
    """Gaussian priors as residual rows: shifts, couplings and widths."""

    def __init__(self, models, layout: Layout, width0_ppm: float, field_mhz: float):
        self.layout = layout
        own = [m.own_width[2] / field_mhz for m in models if m.own_width is not None]
        self.centre = np.concatenate(
            [np.concatenate([m.shift0 for m in models]), np.concatenate([m.j_values0 for m in models]),
             np.full(layout.n_regions, width0_ppm), own]
        )
        self.sd = np.concatenate(
            [np.concatenate([m.window / 3.0 for m in models]), np.concatenate([m.j_sd for m in models]),
             np.full(layout.n_regions, _WIDTH_PRIOR_REL * width0_ppm), 2.0 * np.array(own)]
        )
        self.stop = layout.width_slice.stop

    def rows(self, theta) -> np.ndarray:
        return (theta[: self.stop] - self.centre) / self.sd

    def value(self, theta) -> float:
        r = self.rows(theta)
        return float(np.dot(r, r))

    def jacobian(self) -> np.ndarray:
        out = np.zeros((self.stop, self.layout.size))
        out[np.arange(self.stop), np.arange(self.stop)] = 1.0 / self.sd
        return out


def _bounds(models, layout: Layout, field_mhz: float, grid, max_width_hz: float):
    lo = np.full(layout.size, -np.inf)
    hi = np.full(layout.size, np.inf)
    lo[layout.shift_slice] = np.concatenate([m.shift0 - m.window for m in models])
    hi[layout.shift_slice] = np.concatenate([m.shift0 + m.window for m in models])
    lo[layout.j_slice] = np.concatenate([m.j_lo for m in models])
    hi[layout.j_slice] = np.concatenate([m.j_hi for m in models])
    region = slice(layout.width_slice.start, layout.width_slice.start + layout.n_regions)
    lo[region] = max(0.05 / field_mhz, 1.5 * grid.dx_ppm)
    hi[region] = max_width_hz / field_mhz
    own = [m.own_width for m in models if m.own_width is not None]
    if own:
        extra = slice(region.stop, layout.width_slice.stop)
        lo[extra] = np.maximum([w[0] / field_mhz for w in own], 1.5 * grid.dx_ppm)
        hi[extra] = [w[1] / field_mhz for w in own]
    lo[layout.gauss_index], hi[layout.gauss_index] = 0.0, 1.0
    lo[layout.amount_slice] = 0.0
    return lo, hi


class Refinement:
    """Refines assignments of one fit: the grid, free columns, models and priors they share.

    Parameters
    ----------
    grid : Grid
        Fine fitting grid (bin means of the measured data).
    basis : ndarray
        Free columns (baseline per region, phase).
    models : sequence of CandidateModel
    field_mhz : float
    width_ppm : float
        Measured line width (start and centre of the width prior).
    noise_sd : float
        Noise sd of a bin.
    max_width_hz : float
    """

    def __init__(self, grid, basis, models, *, field_mhz: float, width_ppm: float, noise_sd: float,
                 max_width_hz: float):
        self.grid, self.basis, self.models = grid, basis, list(models)
        self.field, self.width0, self.noise = field_mhz, width_ppm, noise_sd
        self.max_width_hz = max_width_hz
        self.layout = Layout.of(models, grid.n_regions, basis.shape[1])
        self.priors = Priors(models, self.layout, width_ppm, field_mhz)
        self.lo, self.hi = _bounds(models, self.layout, field_mhz, grid, max_width_hz)

    def start(self, shifts, *, jvals=None, widths=None, gauss: float | None = None) -> np.ndarray:
        """Parameters at ``shifts`` with the given (else predicted) couplings and line shape."""
        lay = self.layout
        theta = np.zeros(lay.size)
        theta[lay.shift_slice] = np.concatenate(shifts)
        theta[lay.j_slice] = np.concatenate([m.j_values0 for m in self.models] if jvals is None else jvals)
        theta[lay.width_slice] = self._start_widths() if widths is None else widths
        theta[lay.gauss_index] = 0.1 if gauss is None else gauss
        return np.clip(theta, self.lo, self.hi)

    def _start_widths(self) -> np.ndarray:
        own = [m.own_width[2] / self.field for m in self.models if m.own_width is not None]
        return np.concatenate([np.full(self.layout.n_regions, self.width0), own])

    def run(self, theta: np.ndarray, *, rounds: int, fix_shape: bool = False, free=None) -> Refined:
        """Refine from ``theta`` for at most ``rounds`` simulation rounds (fewer once the parameters
        settle); ``fix_shape`` keeps the widths and the Gaussian share; ``free`` (a boolean mask over
        the shifts, couplings, widths and Gaussian share) keeps every other of them where it is
        (amounts and baseline are always solved)."""
        lay, field = self.layout, self.field
        lo, hi = self.lo.copy(), self.hi.copy()
        theta = np.clip(theta, lo, hi)
        if fix_shape:
            shape = slice(lay.width_slice.start, lay.gauss_index + 1)
            lo[shape] = hi[shape] = theta[shape]
        if free is not None:
            pinned = np.flatnonzero(~np.asarray(free, bool))
            lo[pinned] = hi[pinned] = theta[pinned]
        rows = _active_rows(self.grid, self.models, lay, theta, field, self.width0)
        grid, basis = self.grid.rows(rows), self.basis[rows]
        # the refinement is local: a line may not leave the rows it is fitted on (large moves are the
        # search's); half the active margin either side of each starting shift
        reach = 0.5 * (_ACTIVE_WIDTHS * self.width0 + _ACTIVE_HZ / field)
        at = theta[lay.shift_slice]
        lo[lay.shift_slice] = np.maximum(lo[lay.shift_slice], at - reach)
        hi[lay.shift_slice] = np.minimum(hi[lay.shift_slice], at + reach)
        jac, scale, quantum = None, self.noise, None
        for round_ in range(max(1, rounds)):
            step = _Round(grid, basis, self.models, lay, field, theta, self.priors)
            theta = step.solve_linear(theta)
            scale = step.set_scale(theta, self.noise)
            if quantum is None:
                quantum = _quantum(lay, field, theta, grid.y, basis, step)
            result = least_squares_box(step.residual, step.jacobian, theta, lo, hi,
                                       max_iterations=_MAX_ITERATIONS, atol=_CHI2_TOL * scale**2,
                                       ftol=_REL_TOL, quantum=quantum)
            moved = _largest_move(lay, theta, result.x, self.width0)
            theta, jac = result.x, result.jac
            if round_ >= 1 and moved < _SETTLED:
                break
        theta, per_site, cols, model = _solve_linear_part(self.grid, self.basis, self.models, lay,
                                                          field, theta)
        r = (self.grid.y - model) * self.grid.weight
        cost = float(np.dot(r, r))
        prior = self.priors.value(theta)
        return Refined(theta=theta, layout=lay, per_site=per_site, cols=cols, model=model, cost=cost,
                       prior=prior, objective=cost / scale**2 + prior, jacobian=jac, scale=scale,
                       width0_ppm=self.width0)

    def objective(self, theta: np.ndarray, scale: float) -> tuple[float, np.ndarray]:
        """Objective of the exact model at ``theta`` on the scale ``scale`` (amounts and baseline
        solved again), and those parameters."""
        theta, _, _, model = _solve_linear_part(self.grid, self.basis, self.models, self.layout, self.field,
                                                np.clip(theta, self.lo, self.hi))
        r = (self.grid.y - model) * self.grid.weight
        return float(np.dot(r, r)) / scale**2 + self.priors.value(theta), theta


#: Rows within this many line widths (plus _ACTIVE_HZ) of a line take part in the refinement; the
#: rest of the grid only holds baseline and noise, and the refinement moves lines by a few Hz.
_ACTIVE_WIDTHS = 15.0
_ACTIVE_HZ = 6.0


def _active_rows(grid, models, layout: Layout, theta, field_mhz: float, width_ppm: float) -> np.ndarray:
    """Grid rows near some line of some candidate at the starting parameters (satellites left out)."""
    reach = _ACTIVE_WIDTHS * width_ppm + _ACTIVE_HZ / field_mhz
    keep = np.zeros(grid.x.size, bool)
    for m, s, j in zip(models, layout.shifts(theta), layout.jvals(theta), strict=True):
        ppm, inten, _, sat = model_lines(m, s, j, field_mhz)
        ppm = np.sort(ppm[~sat & (inten > 1e-3 * inten.max())])
        lo = np.searchsorted(grid.x, ppm - reach)
        hi = np.searchsorted(grid.x, ppm + reach)
        marks = np.zeros(grid.x.size + 1, int)
        np.add.at(marks, lo, 1)
        np.add.at(marks, hi, -1)
        keep |= np.cumsum(marks)[:-1] > 0
    return keep


def _quantum(layout: Layout, field_mhz: float, theta: np.ndarray, y: np.ndarray, basis: np.ndarray,
             step: _Round) -> np.ndarray:
    """Grid step of each parameter for ``least_squares_box`` (powers of two, see ``_QUANTUM_HZ``)."""
    tiny = 1e-300
    q = np.empty(layout.size)
    q[layout.shift_slice] = power_of_two_below(_QUANTUM_HZ / field_mhz)
    q[layout.j_slice] = power_of_two_below(_QUANTUM_HZ)
    q[layout.width_slice] = power_of_two_below(_QUANTUM_HZ / field_mhz)
    q[layout.gauss_index] = _QUANTUM_GAUSS
    data = max(float(np.max(np.abs(y), initial=0.0)), tiny)
    top = float(np.max(theta[layout.amount_slice], initial=0.0))
    if top <= 0:  # no amount yet: the amount that would reach the data's scale
        _, cols = step._draw(theta, derivs=False)
        top = data / max(float(np.max(np.abs(cols), initial=0.0)), tiny)
    q[layout.amount_slice] = power_of_two_below(max(_QUANTUM_REL * top, tiny))
    if layout.n_base:
        column = np.maximum(np.max(np.abs(basis), axis=0), tiny)
        q[layout.base_slice] = power_of_two_below(np.maximum(_QUANTUM_REL * data / column, tiny))
    return q


def _largest_move(layout: Layout, before: np.ndarray, after: np.ndarray, width_ppm: float) -> float:
    """Largest change of a shift (in line widths) or a coupling (in Hz) between two rounds."""
    shift = np.max(np.abs(after[layout.shift_slice] - before[layout.shift_slice]), initial=0.0) / width_ppm
    coupling = np.max(np.abs(after[layout.j_slice] - before[layout.j_slice]), initial=0.0)
    return float(max(shift, coupling))


def parameter_map(full: Layout, sub: Layout, keep) -> np.ndarray:
    """Index in ``full``'s parameter vector of each parameter of ``sub``, the layout of the models
    ``keep`` (indices into ``full``'s models, in order) on the same grid and free columns."""
    def indexes(where) -> np.ndarray:
        return np.concatenate([np.arange(where(k).start, where(k).stop) for k in keep] or [np.zeros(0, int)])

    own = [full.n_regions + full.own[k] for k in keep if full.own and full.own[k] >= 0]
    widths = np.concatenate([np.arange(full.n_regions), np.array(own, int)])
    return np.concatenate([
        indexes(full.shifts_of),
        indexes(full.jvals_of),
        full.width_slice.start + widths,
        [full.gauss_index],
        full.amount_slice.start + np.asarray(keep, int),
        np.arange(full.base_slice.start, full.base_slice.stop),
    ]).astype(int)


def resolve_linear(refined: Refined, grid, basis) -> Refined:
    """``refined`` with its amounts and baseline solved again for other data on the same axis
    (candidates left out of the fit keep no amount)."""
    from dataclasses import replace

    use = np.ones(refined.cols.shape[0], bool)
    use[list(refined.excluded)] = False
    amounts = np.zeros(use.size)
    amounts[use], base = solve_amounts(refined.cols[use], basis, grid.y, grid.weight)
    theta = refined.theta.copy()
    theta[refined.layout.amount_slice] = amounts
    theta[refined.layout.base_slice] = base
    model = amounts @ refined.cols + basis @ base
    r = (grid.y - model) * grid.weight
    cost = float(np.dot(r, r))
    return replace(refined, theta=theta, model=model, cost=cost,
                   objective=cost / refined.scale**2 + refined.prior)


def blurred_view(refined: Refined, grid, basis, models, field_mhz: float, blur_hz: float) -> Refined:
    """``refined`` seen on a copy of the data blurred by ``blur_hz`` (``grid``, same axis): every
    line drawn ``blur_hz`` wider (exact for the Lorentzian part), amounts and baseline solved
    again. On such a copy a multiplet whose couplings are still a little off is read by its area,
    not by its peak heights."""
    from dataclasses import replace

    theta = refined.theta.copy()
    theta[refined.layout.width_slice] += blur_hz / field_mhz
    per_site, cols = exact_columns(grid, models, refined.layout, field_mhz, theta)
    view = replace(refined, per_site=per_site, cols=cols)
    return resolve_linear(view, grid, basis)


def exact_columns(grid, models, layout: Layout, field_mhz: float, theta: np.ndarray):
    """Per-site and per-candidate unit columns of the exact simulation at ``theta``."""
    widths = theta[layout.width_slice]
    gauss = float(theta[layout.gauss_index])
    amounts = theta[layout.amount_slice]
    floor = 1e-3 * max(float(amounts.max()), 1e-300)
    amounts = np.maximum(amounts, floor) if amounts.max() > 0 else np.ones(len(models))
    lines = [model_lines(m, s, j, field_mhz)
             for m, s, j in zip(models, layout.shifts(theta), layout.jvals(theta), strict=True)]
    reach = line_reach(np.concatenate([ln[1] * a for ln, a in zip(lines, amounts, strict=True)]),
                       np.concatenate([ln[3] for ln in lines]))
    rows, pos = [], 0
    for k, (m, (ppm, inten, site, sat)) in enumerate(zip(models, lines, strict=True)):
        drawn = draw_lines(grid, ppm, inten, site, m.n_sites, widths[layout.width_index(grid, k, ppm)],
                           gauss=gauss, near=sat, reach=reach[pos : pos + ppm.size])
        pos += ppm.size
        rows.append(drawn.values)
    per_site = np.concatenate(rows)
    cols = np.array([r.sum(0) for r in rows])
    return per_site, cols


def _solve_linear_part(grid, basis, models, layout, field_mhz, theta):
    """Amounts and baseline solved exactly for the exact model at ``theta``'s other parameters."""
    per_site, cols = exact_columns(grid, models, layout, field_mhz, theta)
    amounts, base = solve_amounts(cols, basis, grid.y, grid.weight)
    theta = theta.copy()
    theta[layout.amount_slice] = amounts
    theta[layout.base_slice] = base
    return theta, per_site, cols, amounts @ cols + basis @ base
