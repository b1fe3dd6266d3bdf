"""Which candidates are there, and how sure is each amount? Evidence read multiplet by multiplet.

After the refinement every candidate's multiplets sit where the data put them. Each is then read
on its own, against the data with every other contribution taken away:

- its **amount** (least squares on its own window) with a standard deviation from the noise,
  widened by the local misfit (the residual in its own window, not the misfit of some large signal
  elsewhere), and from the model error of whatever overlaps it (``model_error`` times the
  overlapping signal: one coherent error over the line);
- its **envelope**: the largest amount that every main line of the multiplet can carry (a line
  that is not in the data caps it near zero), the test a chemist makes by eye;
- its shape match and how much of its window other components fill.

A candidate counts as present only when its amount, combined over its multiplets, stands clear of
its uncertainty, one of its diagnostic multiplets (those that tell it from the other candidates)
stands clear with its own shape, and none of its multiplets that should stand out is missing:
envelope well below the amount at every place of its shift window (a multiplet the fit left beside
its lines is misplaced, not missing), a multiplet seen on its own that carries less than half the
amount, one under other components' lines that reads below zero beyond its noise once their share
is taken away, a clear lone multiplet of the wrong shape, a clear methyl multiplet whose splitting
the data stretch to a bound of its range, or a diagnostic vinyl multiplet the data pull to the
edge of its shift window. A vinyl multiplet that reads ten times the molecule's amount and more is
swamped: the lines at its place are another compound's, far stronger, and show nothing of the
molecule (an acrylate impurity's vinyl lines under a decoy acrylate that holds a trace of the
sample's OCH2 and CH3 lines). A decoy that borrows the lines of another compound lacks the
multiplets that compound does not have, so it is not claimed; the reading says which multiplet is
missing.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
from scipy.special import gammaincc

from confirm.fitting.linear import solve_amounts

__all__ = ["SiteReading", "Presence", "point_variance", "weighted_fit", "read_sites", "decide_presence",
           "placement_p", "PLACEMENT_P"]

#: Main lines of a multiplet: points above this share of its tallest point.
_MAIN_LINE_SHARE = 0.3
#: Points of a multiplet's window: above this share of its tallest point.
_WINDOW_SHARE = 0.02
#: Noise margin (sd) of the envelope: a line counts as there up to this many sd below expectation.
_ENVELOPE_MARGIN_SD = 3.0
#: A multiplet is missing when its envelope is below this share of the candidate's amount ...
_MISSING_SHARE = 0.5
#: ... provided that amount stands this many sd clear of zero.
_MISSING_SD = 3.0
#: A multiplet counts as seen on its own above this many sd. Its position was searched over a
#: window of a few hundred line widths, and the best of that many noise positions reaches about
#: 3-4 sd by chance (the look-elsewhere effect); 5 sd by chance is rare (~1e-4 per site).
SEEN_SIGMA = 5.0
#: ... and only where at most this share of its window's modelled signal belongs to others: a
#: multiplet sitting on another component's line is not seen on its own.
_SEEN_OVERLAP = 0.5
#: Error of a multiplet's own refined pattern the shape test allows (relative, point by point).
_PATTERN_ERROR = 0.10
#: A multiplet standing alone, seen clearly, whose window misfits beyond this (in units of what
#: noise and pattern error allow) is the wrong multiplet for its place.
_MISSHAPEN = 4.0
#: ... and whose pattern correlates with the data below this: on a real spectrum at high SNR a
#: right multiplet misfits too (unmodelled small couplings, imperfect shims), but its lines still
#: sit on the measured ones; a triplet on a doublet's place correlates far less.
_MISSHAPEN_MATCH = 0.8
#: ... judged only where it is nearly alone (others' share of its window below this): elsewhere a
#: neighbour's misfit is not its own.
_ALONE = 0.2
#: A vinyl multiplet reading more than this many times its molecule's amount (beyond 3 of its sd)
#: is swamped by another compound's lines. True detections on the tuning half of the benchmark
#: corpus read their vinyl multiplets at most 4.7 times the amount (sp3 multiplets, often under a
#: larger neighbour's misfit, up to 32.6 times: only vinyl H are judged).
_SWAMPED = 10.0
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
    shape_misfit : float
        The window's residual over what the noise and a 10 % error of the multiplet's own pattern
        allow (about 1 when the pattern fits, far above when it is the wrong multiplet: a triplet
        on a doublet).
    envelope_all : float
        Largest amount every main line supports against the data themselves, the other components'
        signal included: the bound of a candidate whose multiplets all sit on others' lines.
    envelope_window : float
        The envelope at the best place within the site's shift window (the multiplet moved as a
        whole): a multiplet the fit left beside its signal is misplaced, not missing (NaN: not
        read; ``envelope`` stands for it).
    overlap_all : float
        Share of the window's modelled signal that belongs to anything else, the molecule's own other
        multiplets included (NaN: not read; ``overlap`` stands for it).
    shape_group : float
        Match of the molecule's multiplets in this window, taken together, with the data left for
        them (NaN: not read; ``shape`` stands for it). For a multiplet that does not stand clear on
        its own, the group leaves out the molecule's multiplets that do.
    amount_group : float
        What the data left for that group of multiplets read as a share of the group's own signal
        there (1: all of it; NaN: not read).
    """

    ppm: float
    amount: float
    amount_sd: float
    envelope: float
    shape: float
    overlap: float
    misfit: float
    usable: bool
    shape_misfit: float = 0.0
    envelope_all: float = np.inf
    envelope_window: float = np.nan
    overlap_all: float = np.nan
    shape_group: float = np.nan
    amount_group: float = np.nan

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
        Model sites whose multiplet should stand out at ``amount`` but is not in the data, or that
        sit on a line of the wrong shape (misshapen).
    seen : tuple of int
        Model sites seen on their own (amount > detection threshold).
    upper : float
        95 % upper bound of the amount (for a candidate not present).
    outside : tuple of int
        Diagnostic sites at the edge of their shift window, and sites seen on their own whose main
        coupling sits at a bound of its range (also in ``missing``).
    swamped : tuple of int
        Vinyl sites whose lines read far more than the molecule's amount (:data:`_SWAMPED` times):
        another compound's lines; the molecule is then not present.
    placement_p : float
        Probability of multiplets lying at least as far from their predicted shifts, jointly, as
        the fit placed them (see :func:`placement_p`).
    displaced : bool
        Present on its readings, but not present because ``placement_p`` is below
        :data:`PLACEMENT_P`.
    """

    amount: float
    amount_sd: float
    present: bool
    missing: tuple
    seen: tuple
    upper: float
    outside: tuple = ()
    swamped: tuple = ()
    placement_p: float = 1.0
    displaced: bool = False


#: Least probability (chi-square over the sites, see :func:`placement_p`) of a candidate's refined
#: shifts given its predictions for it to be present. The shift sds are calibrated so that 95 % of
#: errors lie within 2 sd; a molecule whose multiplets sit 2-3 sd off at nearly every site together
#: is sitting on lines that are not its own (an absent diester's ethyl groups moved 0.4-0.5 ppm onto
#: an ether impurity's quartet and triplet and its CH2 onto 13C satellites: p 3e-5). Set below the
#: lowest value of any component truly present and detected in the tuning half's runs (4e-4).
PLACEMENT_P = 1e-4


def placement_p(shifts, predicted, sd) -> tuple[float, float, int]:
    """Chi-square of refined shifts against their predictions, sum(((shift - predicted) / sd)**2)
    over the sites with a finite positive sd, its number of sites, and its upper-tail probability
    (the prediction errors taken as independent normal, as their calibration treats them)."""
    shifts, predicted, sd = (np.asarray(a, dtype=float) for a in (shifts, predicted, sd))
    use = np.isfinite(sd) & (sd > 0) & np.isfinite(shifts)
    n = int(np.sum(use))
    if n == 0:
        return 1.0, 0.0, 0
    value = float(np.sum(((shifts[use] - predicted[use]) / sd[use]) ** 2))
    return float(gammaincc(n / 2.0, value / 2.0)), value, n  # the chi-square tail (scipy.stats loads slowly)


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


def read_sites(grid, per_site, cols, amounts, base, basis, offsets, n_sites, lw_ppm, *,
               noise_sd: float, model_error: float, moves=None, likely=None) -> list:
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
    lw_ppm : float
        Line width: a line counts as there within half a width of its place.
    noise_sd : float
        Noise sd of a point.
    model_error : float
        Relative error of a modelled profile. An error in how much of a shared line belongs to
        each component is one coherent error over the line, not independent point by point, so
        it enters a multiplet's amount sd as ``model_error`` times the overlapping signal (in
        amount units), not through the point weights.
    moves : sequence of ndarray, optional
        Per candidate, per site, the (lowest, highest) move in ppm that keeps the site inside its
        shift window, shape (n_sites, 2); without it ``envelope_window`` equals ``envelope``.
    likely : sequence of ndarray, optional
        The same for the range of likely places (the prediction +-2 sd): a site the fit left
        outside it has its ``envelope_all`` read at the best likely place instead (see
        :func:`_read_one`).
    """
    model = amounts @ cols + basis @ base
    signal = amounts @ cols
    reach = max(1, int(round(0.5 * lw_ppm / grid.dx_ppm)))
    out = []
    for k, (o, n) in enumerate(zip(offsets, n_sites, strict=True)):
        whole = amounts[k] * cols[k]
        rows = []
        for s in range(n):
            u = per_site[o + s]
            own = amounts[k] * u
            span = None if moves is None else moves[k][s]
            rows.append(_read_one(grid, u, grid.y - (model - own), signal - own, reach, noise_sd,
                                  model_error, span, whole=whole, model=model, foreign=signal - whole,
                                  likely=None if likely is None else likely[k][s]))
        # the group of a multiplet that does not stand clear is the molecule's other multiplets that
        # do not either: one seen on its own vouches for itself, and where its lines reach into the
        # window (a clean CH3 doublet at the edge of a wide 80 MHz CH2 multiplet) it must not carry
        # a group whose own multiplets read below zero (a homologue's CH2 on a water line); only the
        # group's two figures depend on it
        clear = [s for s, r in enumerate(rows) if r.usable and _stands_clear(r, SEEN_SIGMA)]
        if clear and len(clear) < n:
            rest = amounts[k] * (cols[k] - per_site[[o + s for s in clear]].sum(0))
            rows = [r if s in clear or not r.usable else
                    replace(r, **_group_figures(grid, _window(grid, per_site[o + s]), rest, model))
                    for s, r in enumerate(rows)]
        out.append(rows)
    return out


def _read_one(grid, u, d, others, reach: int, noise_sd: float, model_error: float, span=None,
              whole=None, model=None, foreign=None, likely=None) -> SiteReading:
    """One site's reading; ``others`` is every other modelled signal (the molecule's own other
    multiplets included), ``foreign`` that of the other components only, ``whole`` the molecule's
    own signal and ``model`` the whole model. Without ``foreign`` the overlap counts ``others``;
    without ``whole`` and ``model`` the group shape is the site's own.

    ``envelope_all`` bounds a candidate whose multiplets all sit on others' lines by the data
    themselves. Where the fit left the multiplet outside ``likely`` (the moves, in ppm, that reach
    its prediction +-2 sd), the place it sits is not one it is likely to have (an absent isomer's
    singlet parked on its partner's singlet 2.8 sd from its own prediction): the bound is read at
    the best place within the likely range instead, where the data may hold nothing."""
    top = float(u.max()) if u.size else 0.0
    window = _window(grid, u)
    ppm = float(np.sum(grid.x * u) / np.sum(u)) if top > 0 else float("nan")
    if window.sum() < 3:
        return SiteReading(ppm, 0.0, np.inf, np.inf, 0.0, 0.0, 1.0, False)
    uw, dw, ow = u[window], d[window], others[window]
    uu = float(np.dot(uw, uw))
    alpha = float(np.dot(uw, dw)) / uu
    resid = dw - alpha * uw
    misfit = float(np.dot(resid, resid)) / noise_sd**2 / max(1, uw.size - 1)
    shared = float(np.dot(uw, np.abs(ow))) / uu  # the other components' signal here, in amount units
    sd = np.sqrt(max(1.0, misfit) * noise_sd**2 / uu + (model_error * shared) ** 2)
    norm = float(np.linalg.norm(uw) * np.linalg.norm(dw))
    shape = float(np.dot(uw, dw) / norm) if norm > 0 else 0.0
    # the share of the window filled by other components (a molecule's own neighbouring multiplet,
    # the other proton of its =CH2, is its own evidence, not another compound's line)
    alien = shared if foreign is None else float(np.dot(uw, np.abs(foreign[window]))) / uu
    overlap = alien / max(alien + abs(alpha), 1e-300)
    overlap_all = shared / max(shared + abs(alpha), 1e-300)
    shape_group = shape
    amount_group = float("nan")
    if whole is not None and model is not None:
        group = _group_figures(grid, window, whole, model)
        shape_group, amount_group = group["shape_group"], group["amount_group"]
    allowed = noise_sd**2 + (_PATTERN_ERROR * alpha * uw) ** 2 + (model_error * ow) ** 2
    shape_misfit = float(np.sum(resid * resid) / np.sum(allowed))
    # the margin comes from the noise and the model error of the others, never from the local
    # misfit: a candidate whose multiplet is absent makes its own window misfit, and that must not
    # widen the test that finds the absence
    margin_var = point_variance(noise_sd, others, model_error)
    steps = (0, 0) if span is None else _grid_steps(span, grid.dx_ppm)
    envelope, envelope_window = _envelope(u, d, margin_var, window, reach, max(1.0, misfit), steps)
    steps_likely = None if likely is None else _grid_steps(likely, grid.dx_ppm)
    if steps_likely is not None and steps_likely[0] <= steps_likely[1] and not (
            steps_likely[0] <= 0 <= steps_likely[1]):
        envelope_all = _best_envelope(u, d + others, margin_var, window, reach, max(1.0, misfit),
                                      steps_likely)
    else:
        envelope_all, _ = _envelope(u, d + others, margin_var, window, reach, max(1.0, misfit))
    return SiteReading(ppm, alpha, sd, envelope, shape, overlap, misfit, True, shape_misfit, envelope_all,
                       envelope_window, overlap_all, shape_group, amount_group)


def _window(grid, u) -> np.ndarray:
    """A site's window: where its unit column exceeds :data:`_WINDOW_SHARE` of its peak (fitted
    points only)."""
    top = float(u.max()) if u.size else 0.0
    return (u > _WINDOW_SHARE * top) & (grid.weight > 0) if top > 0 else np.zeros(u.size, bool)


def _group_figures(grid, window, whole, model) -> dict:
    """``shape_group`` and ``amount_group`` of a reading: the molecule's multiplets in ``whole``,
    taken together, against the data left for them in the window (the two protons of a =CH2 a few
    Hz apart, read one by one, match poorly; together they are the multiplet a chemist sees)."""
    wg, dg = whole[window], (grid.y - (model - whole))[window]
    norm_g = float(np.linalg.norm(wg) * np.linalg.norm(dg))
    wgwg = float(np.dot(wg, wg))
    return {"shape_group": float(np.dot(wg, dg) / norm_g) if norm_g > 0 else 0.0,
            "amount_group": float(np.dot(wg, dg)) / wgwg if wgwg > 0 else float("nan")}


def _grid_steps(span, dx_ppm: float) -> tuple[int, int]:
    """The whole grid steps within a (lowest, highest) move in ppm."""
    return int(np.ceil(span[0] / dx_ppm)), int(np.floor(span[1] / dx_ppm))


def _main_lines(u, d, var, window, reach: int, misfit: float) -> tuple:
    """The main lines' points of a multiplet (at least :data:`_MAIN_LINE_SHARE` of its peak, in its
    window), the best data within ``reach`` points of every point, and the margin on every point."""
    main = np.flatnonzero(window & (u >= _MAIN_LINE_SHARE * float(u.max())))
    padded = np.concatenate([np.full(reach, -np.inf), d, np.full(reach, -np.inf)])
    near = np.max(np.lib.stride_tricks.sliding_window_view(padded, 2 * reach + 1), axis=1)
    margin = _ENVELOPE_MARGIN_SD * np.sqrt(var * max(1.0, misfit))
    return main, near, margin


def _best_envelope(u, d, var, window, reach: int, misfit: float, steps) -> float:
    """Largest :func:`_envelope` over the moves from ``steps[0]`` to ``steps[1]`` grid steps (the
    multiplet's own place left out when outside them), the margin read at each place tried (the
    others' model error where the lines would sit)."""
    main, near, margin = _main_lines(u, d, var, window, reach, misfit)
    if main.size == 0:
        return np.inf
    shifted = main[None, :] + np.arange(steps[0], steps[1] + 1)[:, None]
    inside = np.all((shifted >= 0) & (shifted < d.size), axis=1)
    if not inside.any():
        return np.inf
    at = shifted[inside]
    return float(np.max(np.min((near[at] + margin[at]) / u[main][None, :], axis=1)))


def _envelope(u, d, var, window, reach: int, misfit: float, steps=(0, 0)) -> tuple[float, float]:
    """Largest amount every main line supports: min over the main lines' points of (best nearby
    data + margin) / line height, at the multiplet's place and at its best place when moved by a
    whole number of grid steps within ``steps`` (lowest, highest; the margin stays that of the
    fitted place, the others' model error there)."""
    main, near, margin = _main_lines(u, d, var, window, reach, misfit)
    if main.size == 0:
        return np.inf, np.inf
    moves = np.arange(min(steps[0], 0), max(steps[1], 0) + 1)
    shifted = main[None, :] + moves[:, None]
    inside = np.all((shifted >= 0) & (shifted < d.size), axis=1)  # the place itself always is
    values = np.min((near[shifted[inside]] + margin[main][None, :]) / u[main][None, :], axis=1)
    return float(values[np.flatnonzero(moves[inside] == 0)[0]]), float(values.max())


def decide_presence(readings, *, detection_sigma: float, diagnostic, at_edge=(), stretched=(),
                    vinyl=(), place_p: float = 1.0) -> Presence:
    """Combine a candidate's multiplet readings into its evidence of presence.

    The multiplets seen on their own (amount above 5 sd, at most half their window filled by
    others) carry the amount: a multiplet misplaced in a crowded region, or sitting on another
    component's line, reads something else with a deceptively small sd. Without any such
    multiplet every readable multiplet counts. The candidate is present when that amount stands
    clear of its uncertainty, one of its diagnostic multiplets reads 5 sd clear in its own shape (on
    its own or with the others' share taken away), and none of its multiplets is missing (an
    envelope below half the amount). A candidate none of whose multiplets stands apart from other
    components' lines, and whose identifying multiplet does not stand clear in its shape, is not
    detected: its readings are the others' lines split between them (a homologue on the true
    compound's multiplets), and its bound is the data's.

    Parameters
    ----------
    readings : sequence of SiteReading
    detection_sigma : float
    diagnostic : sequence of int
        Sites that identify the candidate.
    at_edge : sequence of int
        Sites the fit left at the edge of their shift window, or whose cis/trans coupling it left at
        a bound of its range: the data want them further from the prediction than its uncertainty
        allows; :func:`confirm.fitting.assemble.evaluate` passes vinyl sites only.
        A diagnostic one counts as missing: the molecule's identifying
        multiplet is not where it can be, and a decoy that reaches for another compound's line ends
        there.
    stretched : sequence of int
        Sites whose main coupling the fit left at a bound of its refined range. One seen on its own
        counts as missing: the clear lines it sits on have another splitting than the molecule's
        (a decoy's CH3 doublet, 6.1 Hz predicted, stretched to 7.7 Hz on an impurity's doublet).
    vinyl : sequence of int
        The molecule's vinyl H. One that reads more than :data:`_SWAMPED` times the molecule's amount,
        beyond 3 of its sd, is swamped by another compound's lines and the molecule is not present:
        an alkene is known by its vinyl H, and these are not its own.
    place_p : float
        :func:`placement_p` of the candidate's refined shifts: below :data:`PLACEMENT_P` the
        multiplets, taken together, are not where the molecule's can be, and it is not present
        whatever they read.
    """
    use = [i for i, r in enumerate(readings) if r.usable and np.isfinite(r.amount_sd) and r.amount_sd > 0]
    if not use:
        return Presence(0.0, np.inf, False, (), (), np.inf, placement_p=place_p)
    seen = tuple(i for i in use if _stands_clear(readings[i], max(detection_sigma, SEEN_SIGMA)))
    carriers = list(seen) or use
    mean, mean_sd, plain_sd = _combine([readings[i] for i in carriers])
    missing = ()
    swamped = ()
    if mean > _MISSING_SD * plain_sd:
        missing = tuple(i for i in use if _anywhere(readings[i]) < _MISSING_SHARE * mean)
        # a multiplet seen on its own, and not crowded by its own molecule's other multiplets either
        # (their one-by-one readings trade amount between them), that carries less than half the
        # molecule's amount (beyond its noise): its lines stand where they should, but too weak for
        # the molecule (a homologue's CH2 where the data's are weaker); its part is missing
        missing += tuple(i for i in seen if _crowding(readings[i]) < _SEEN_OVERLAP
                         and readings[i].amount + _MISSING_SD * readings[i].amount_sd < _MISSING_SHARE * mean)
        # a multiplet under other components' lines that reads below zero by more than its noise
        # once their share is taken away: the others' lines already hold all the signal there and
        # more, so the data contradict the molecule at that place (a decoy's CH3 singlets on the
        # true compound's while an impurity line carries the decoy elsewhere)
        # (unless the molecule's multiplets in that window, taken together, match the data left for
        # them and hold at least half its signal there: the protons of one strongly coupled cluster,
        # read one by one, trade amount between them, a 90 MHz CH2 chain's down to below zero)
        missing += tuple(i for i in use if readings[i].overlap >= _SEEN_OVERLAP
                         and readings[i].amount + _MISSING_SD * readings[i].amount_sd < 0.0
                         and not _group_holds(readings[i]))
        vinyl = set(vinyl)
        swamped = tuple(i for i in use if i in vinyl
                        and readings[i].amount - _MISSING_SD * readings[i].amount_sd > _SWAMPED * mean)
    misshapen = tuple(i for i in use if _crowding(readings[i]) < _ALONE and readings[i].sigma > SEEN_SIGMA
                      and readings[i].shape_misfit > _MISSHAPEN and readings[i].shape < _MISSHAPEN_MATCH)
    # one misshapen multiplet from a wrong predicted coupling (a ring CH2 deep in a second-order
    # pattern) does not veto a molecule whose other multiplets stand; a misshapen diagnostic one
    # (the vinyl H of an alkene) does, and so do misshapen multiplets making up half of them
    specific = set(diagnostic) if len(diagnostic) < len(readings) else set()
    veto = set(misshapen) if 2 * len(misshapen) >= len(use) else set(misshapen) & specific
    outside = tuple(sorted((set(at_edge) & specific) | (set(stretched) & set(seen))))
    missing = tuple(sorted(set(missing) | veto | set(outside)))
    strong = max(detection_sigma, SEEN_SIGMA)
    # the evidence: a diagnostic multiplet stands 5 sd clear, on its own or with the others' share
    # taken away (its sd then carries their model error), and has its own shape (at high SNR any
    # small line stands 5 sd clear, a multiplet of the wrong shape is no evidence of the molecule).
    # Nothing else is: a multiplet that stood alone would show the candidate; where every multiplet
    # shares its window with others, their combined reading is the others' lines split between
    # the components (a homologue on the true compound's multiplets), however many sd it reads
    evidence = any(i in use and readings[i].sigma > strong and _own_shape(readings[i]) >= _MISSHAPEN_MATCH
                   for i in diagnostic)
    read_present = mean > detection_sigma * mean_sd and evidence and not missing and not swamped
    displaced = read_present and place_p < PLACEMENT_P
    present = read_present and not displaced
    all_mean, all_sd, _ = _combine([readings[i] for i in use])
    upper = max(all_mean, 0.0) + Z_UPPER_95 * all_sd
    envelopes = [readings[i].envelope for i in use if np.isfinite(readings[i].envelope)]
    if envelopes:
        upper = min(upper, max(min(envelopes), 0.0))
    if all(readings[i].overlap >= _SEEN_OVERLAP for i in use):
        # every multiplet sits on other components' lines: its reading is conditional on their
        # amounts (an E isomer read under its Z isomer's lines), so only the data themselves bound it
        shared = [readings[i].envelope_all for i in use if np.isfinite(readings[i].envelope_all)]
        if shared:
            upper = max(upper, min(shared))
    return Presence(mean, mean_sd, bool(present), missing, seen, float(upper), outside, swamped, place_p,
                    bool(displaced))


def _stands_clear(reading: SiteReading, sigma: float) -> bool:
    """A multiplet seen on its own: it reads more than ``sigma`` sd and others fill less than
    :data:`_SEEN_OVERLAP` of its window."""
    return bool(reading.sigma > sigma and reading.overlap < _SEEN_OVERLAP)


def _group_holds(reading: SiteReading) -> bool:
    """Whether the molecule's multiplets in a site's window, taken together, are there: their
    group matches the data left for them in shape and reads at least half the molecule's signal
    (false when the group was not read)."""
    return (not np.isnan(reading.amount_group) and reading.shape_group >= _MISSHAPEN_MATCH
            and reading.amount_group >= _MISSING_SHARE)


def _own_shape(reading: SiteReading) -> float:
    """Shape match of a multiplet, or of its molecule's multiplets in its window together when that
    is better (a multiplet overlapped by its own molecule's other lines)."""
    return reading.shape if np.isnan(reading.shape_group) else max(reading.shape, reading.shape_group)


def _crowding(reading: SiteReading) -> float:
    """Share of a multiplet's window that others fill, its own molecule's other multiplets included."""
    return reading.overlap if np.isnan(reading.overlap_all) else reading.overlap_all


def _anywhere(reading: SiteReading) -> float:
    """The envelope of a multiplet at its best place in its window (at its place when not read)."""
    return reading.envelope if np.isnan(reading.envelope_window) else reading.envelope_window


def _combine(readings) -> tuple[float, float, float]:
    """Inverse-variance mean of the readings' amounts, its sd widened when they disagree beyond
    their uncertainties (Birge ratio), and the plain sd."""
    a = np.array([r.amount for r in readings])
    w = 1.0 / np.array([r.amount_sd for r in readings]) ** 2
    mean = float(np.sum(w * a) / np.sum(w))
    plain = float(1.0 / np.sqrt(np.sum(w)))
    if len(readings) < 2:
        return mean, plain, plain
    birge = float(np.sum(w * (a - mean) ** 2) / (len(readings) - 1))
    return mean, plain * float(np.sqrt(max(1.0, birge))), plain
