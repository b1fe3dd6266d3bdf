"""From refined fits to one coherent result: amounts, fractions, bounds, evidence and warnings.

Several assignments are refined. Each is scored on one common scale (squared residual over a
common variance plus its prior); the best one decides which candidates are present, and the
fractions are averaged over the fits with weights ``exp(-(objective - best) / 2)``, so that near
equal fits share the answer (and their spread enters the uncertainty) instead of one of them
winning by a rounding difference.

Numbers are coherent by construction: a detected component has a mole fraction and its sd and the
detected fractions sum to 1; an undetected one has no value, only a 95 % upper bound.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from confirm.fitting.evidence import decide_presence, placement_p, point_variance, read_sites, weighted_fit
from confirm.fitting.models import vinyl_sites
from predictors.core import ComponentFit, SiteEvidence

__all__ = ["Evaluation", "evaluate", "rank_fits", "fit_weights", "fraction_covariance",
           "refined_amount_covariance", "with_undetected_spread"]

#: Fits whose weight falls below this are left out of the average.
_MIN_WEIGHT = 1e-3
#: Relative tolerance of the comparison of objectives (ties go to the earlier fit).
_RTOL = 1e-9
#: Couplings at least this large (Hz) are quoted in the evidence.
_QUOTED_J_HZ = 4.0


@dataclass(frozen=True, eq=False)
class Evaluation:
    """The evidence and amounts of one refined fit."""

    amounts: np.ndarray  # final amounts (0 for candidates not present)
    cov: np.ndarray  # covariance of the amounts (k, k)
    base: np.ndarray
    detected: np.ndarray
    presence: tuple
    readings: list
    var: np.ndarray
    model: np.ndarray
    #: candidate -> its integral readings (:class:`confirm.fitting.integrals.IntegralReading`)
    integrals: dict = field(default_factory=dict)


def rank_fits(objectives: np.ndarray) -> np.ndarray:
    """Order of the fits, best first; objectives equal within a relative 1e-9 keep their order."""
    scale = max(float(np.max(np.abs(objectives))), 1e-300)
    return np.lexsort((np.arange(objectives.size), np.round(objectives / (scale * _RTOL))))


def fit_weights(objectives: np.ndarray) -> np.ndarray:
    """Model-averaging weights exp(-(objective - best) / 2), normalised, small ones set to 0."""
    w = np.exp(-(objectives - objectives.min()) / 2.0)
    w[w < _MIN_WEIGHT * w.max()] = 0.0
    return w / w.sum()


#: Two predicted multiplets are told apart when their shifts differ by more than this many sd of
#: the difference (sqrt(sd1**2 + sd2**2), the errors taken as independent): about 95 % of the time
#: the two lines then fall in the order and places predicted.
_APART_SD = 2.0


def diagnostic_sites(model, others=()) -> list:
    """Sites that identify the molecule among the other candidates (``others``: their models).

    A site is specific when its predicted shift stands apart from every multiplet of every other
    candidate (:data:`_APART_SD`): the line that tells them apart (the CH(OH) of an alcohol beside
    alkenes that share its aryl H, the vinyl H of one geometric isomer). Of the specific sites, the
    vinyl H when there are any; without a specific site, the vinyl H, else every site.
    """
    vinyl = vinyl_sites(model)
    shifts = [np.asarray(o.shift0, dtype=float) for o in others if not o.nuisance]
    sds = [np.asarray(o.sd, dtype=float) for o in others if not o.nuisance]
    specific = []
    for s in range(model.n_sites):
        if all(np.all(np.abs(model.shift0[s] - x) > _APART_SD * np.hypot(model.sd[s], sd))
               for x, sd in zip(shifts, sds, strict=True)):
            specific.append(s)
    if specific:
        return [s for s in specific if s in vinyl] or specific
    return vinyl or list(range(model.n_sites))


def evaluate(refined, models, grid, basis, *, noise_sd: float, model_error: float, detection_sigma: float,
             lw_ppm: float, uncertainty_scale: float, amount_cov=None, reject=(),
             other_geometry=()) -> Evaluation:
    """Read the evidence of one refined fit and solve the amounts of the candidates present.

    Each point's variance is the noise, widened by the local misfit of the refined fit around it
    (a region the model cannot reproduce closely, such as several overlapping aromatic patterns,
    has little say in the amounts), plus the model error of the signal there. ``amount_cov``, the
    covariance of the amounts with every other parameter of the refinement free (shifts, couplings,
    widths), is a floor on their uncertainty: a weak multiplet whose couplings the data barely fix
    is uncertain in amount too. The candidates in ``reject`` (indexes) are not present whatever
    their multiplets read (their own integrals contradict the reading, see
    :func:`confirm.fitting._contradicted_by_integrals`). ``other_geometry`` (per model, vinyl sites;
    see :func:`confirm.fitting.profiles.other_geometry_sites`) are vinyl H whose geometry coupling
    the data place in the other geometry's range: they count as outside, like a coupling left at a
    bound of its range."""
    signal = refined.amounts @ refined.cols
    var = point_variance(noise_sd, signal, model_error) * _local_misfit(grid, refined.model, noise_sd, lw_ppm)
    offsets = np.cumsum([0] + [m.n_sites for m in models])[:-1]
    n_sites = [m.n_sites for m in models]
    shifts = refined.layout.shifts(refined.theta)
    moves = [np.stack([m.shift0 - m.window - s, m.shift0 + m.window - s], axis=1)
             for m, s in zip(models, shifts, strict=False)]
    likely = [np.stack([m.shift0 - _LIKELY_SD * m.sd - s, m.shift0 + _LIKELY_SD * m.sd - s], axis=1)
              for m, s in zip(models, shifts, strict=False)]
    diagnostic = [diagnostic_sites(m, [o for o in models if o is not m]) for m in models]
    jvals = refined.layout.jvals(refined.theta)
    contradicted = other_geometry or [()] * len(models)
    edges = [tuple(sorted(set(_at_window_edge(m, move)) | set(_coupling_at_edge(m, j)) | set(c)))
             for m, move, j, c in zip(models, moves, jvals, contradicted, strict=False)]
    # solvent, water and TMS lines stay in the model whatever their size; they are no components
    nuisance = np.array([m.nuisance for m in models])
    amounts_all, base_all, _ = weighted_fit(refined.cols, basis, grid, var, np.ones(len(models), bool))
    readings = read_sites(grid, refined.per_site, refined.cols, amounts_all, base_all, basis, offsets,
                          n_sites, lw_ppm, noise_sd=noise_sd, model_error=model_error, moves=moves,
                          likely=likely)
    stretched = [_main_coupling_at_bound(m, j) for m, j in zip(models, jvals, strict=False)]
    # where the multiplets sit, all together, against the predictions (see evidence.placement_p)
    places = [1.0 if m.nuisance else placement_p(s, m.shift0, m.sd)[0]
              for m, s in zip(models, shifts, strict=False)]
    presence = tuple(decide_presence(r, detection_sigma=detection_sigma, diagnostic=d, at_edge=e, stretched=t,
                                     vinyl=vinyl_sites(m), place_p=p)
                     for r, d, e, t, m, p in zip(readings, diagnostic, edges, stretched, models, places,
                                                 strict=True))
    detected = np.array([p.present for p in presence]) & ~nuisance
    detected[list(reject)] = False
    amounts, base, cov_sub = weighted_fit(refined.cols, basis, grid, var, detected | nuisance)
    used = np.flatnonzero(detected | nuisance)
    cov = np.zeros((len(models), len(models)))
    keep = np.flatnonzero(detected[used])  # rows of cov_sub that belong to candidates present
    if keep.size:
        idx = used[keep]
        sub = cov_sub[np.ix_(keep, keep)] if amount_cov is None else amount_cov[np.ix_(idx, idx)]
        sd = np.sqrt(np.clip(np.diag(sub), 0, None))
        fit_sd = np.sqrt(np.clip(np.diag(cov_sub[np.ix_(keep, keep)]), 0, None))
        wanted = np.maximum(np.maximum(sd, fit_sd), [presence[k].amount_sd for k in idx]) * uncertainty_scale
        with np.errstate(invalid="ignore", divide="ignore"):
            corr = sub / np.outer(np.where(sd > 0, sd, 1.0), np.where(sd > 0, sd, 1.0))
        cov[np.ix_(idx, idx)] = corr * np.outer(wanted, wanted)
    model = amounts @ refined.cols + basis @ base
    amounts = np.where(nuisance, 0.0, amounts)  # the components' amounts; the model keeps the rest
    return Evaluation(amounts, cov, base, detected, presence, readings, var, model)


#: A multiplet's likely places: its predicted shift +- this many sd (about 95 % of them).
_LIKELY_SD = 2.0

#: A site counts as at the edge of its shift window within this share of the window.
_EDGE_SHARE = 0.02


def _at_window_edge(model, move: np.ndarray) -> tuple:
    """Vinyl sites whose refined shift sits at the edge of their shift window (``move``: per site
    the lowest and highest move that keeps it inside).

    Only vinyl H: they identify an alkene among its isomers, and a decoy alkene reaching for another
    compound's line ends at its window's edge. An sp3 multiplet at its edge is more often a minor
    component's site pulled onto a large neighbour's misfit (the second proton of a diastereotopic
    CH2 beside a strong CH3 singlet) than a missing one."""
    tol = _EDGE_SHARE * model.window
    edge = (move[:, 0] > -tol) | (move[:, 1] < tol)
    return tuple(int(s) for s in vinyl_sites(model) if edge[s])


def _coupling_at_edge(model, jvals) -> tuple:
    """Vinyl sites whose 3J across the double bond sits at a bound of its refined range.

    The cis or trans coupling tells an alkene's geometry (6-12 against 12-18 Hz); it is refined
    within a few Hz of the prediction (two sd, at least 1 Hz). When the data pull it to a bound,
    the measured doublet is the other geometry's: a (E) decoy stretched over a (Z) isomer's
    vinyl lines, or the reverse."""
    out = set()
    for i in model.geometry_couplings():
        if _at_bound(jvals[i], model.j_lo[i], model.j_hi[i]):
            out.update(int(s) for s in model.j_pairs[i])
    return tuple(sorted(out))


def _at_bound(value: float, lo: float, hi: float) -> bool:
    """A refined coupling within :data:`_EDGE_SHARE` of its range of either bound."""
    tol = _EDGE_SHARE * (hi - lo)
    return bool(value < lo + tol or value > hi - tol)


#: A coupling this large (Hz) splits a multiplet visibly at the line widths of solution spectra
#: (0.5-2 Hz); smaller ones may go to zero where the lines are too broad to show them.
_RESOLVED_J_HZ = 3.0  # common practice


def _main_coupling_at_bound(model, jvals) -> tuple:
    """CH3 sites whose largest refined coupling sits at a bound of its refined range (couplings are
    refined within two sd of the prediction, at least 1 Hz): the data want the multiplet split
    otherwise than the molecule can be. Only CH3: a freely rotating methyl's 3J (6-8 Hz) is the
    best predicted coupling there is, so its doublet or triplet stretched to a bound sits on some
    other compound's lines; a ring's or an aryl pattern's couplings reach their bounds on the true
    compound too (diastereotopic CH2, second-order aromatic multiplets)."""
    methyls = {s for s, lab in enumerate(model.labels) if lab.upper().startswith("CH3")}
    largest: dict = {}  # methyl site -> (size, index of the refined pair)
    for k, (a, b) in enumerate(model.j_pairs):
        size = abs(model.j0[a, b])
        if size < _RESOLVED_J_HZ:
            continue
        for site in {int(a), int(b)} & methyls:
            if site not in largest or size > largest[site][0]:
                largest[site] = (size, k)
    return tuple(sorted(site for site, (_, k) in largest.items()
                        if _at_bound(jvals[k], model.j_lo[k], model.j_hi[k])))


#: Half-width (line widths) of the window over which the local misfit of a point is averaged.
_MISFIT_WINDOW_WIDTHS = 3.0


def _local_misfit(grid, model: np.ndarray, noise_sd: float, lw_ppm: float) -> np.ndarray:
    """Reduced chi-square of the residual around each point (at least 1)."""
    z = ((grid.y - model) / noise_sd) ** 2 * (grid.weight > 0)
    half = max(1, int(round(_MISFIT_WINDOW_WIDTHS * lw_ppm / grid.dx_ppm)))
    kernel = np.ones(2 * half + 1)
    count = np.convolve((grid.weight > 0).astype(float), kernel, mode="same")
    mean = np.convolve(z, kernel, mode="same") / np.maximum(count, 1.0)
    return np.maximum(mean, 1.0)


def fraction_covariance(amounts: np.ndarray, cov: np.ndarray) -> np.ndarray:
    """Covariance of the fractions amounts / sum(amounts) (first-order propagation)."""
    total = amounts.sum()
    if total <= 0:
        return np.zeros_like(cov)
    grad = (np.eye(amounts.size) * total - amounts[:, None]) / total**2  # d x_i / d a_j
    return grad @ cov @ grad.T


def fractions_of(ev: Evaluation) -> tuple[np.ndarray, np.ndarray]:
    """Mole fractions of the detected candidates (0 elsewhere) and their covariance (the amounts of
    solvent and reference lines are 0 in an evaluation)."""
    total = ev.amounts.sum()
    frac = ev.amounts / total if total > 0 else np.zeros_like(ev.amounts)
    return frac, fraction_covariance(ev.amounts, ev.cov)


def averaged_fractions(evaluations, weights, detected):
    """Weighted mean fractions over the fits, their covariance (within plus between fits), and each
    fit's fractions. Every fit is read with the best fit's set of detected candidates."""
    fracs, covs = zip(*(fractions_of(ev) for ev in evaluations), strict=True)
    fracs = np.array([np.where(detected, f, 0.0) for f in fracs])
    mean = weights @ fracs
    dev = fracs - mean
    within = sum(w * c for w, c in zip(weights, covs, strict=True))
    between = (dev * weights[:, None]).T @ dev
    return mean, within + between, fracs


def with_undetected_spread(frac: np.ndarray, frac_cov: np.ndarray, ev: Evaluation,
                           n_candidates: int) -> np.ndarray:
    """``frac_cov`` with the uncertainty the undetected candidates leave in the detected fractions.

    An undetected candidate is reported with no amount and a 95 % upper bound; the detected
    fractions are shares of what was found. But the candidate may be there below its bound, and
    then every detected fraction is smaller by its share of the whole: that share is at most
    ``bound / (total + bound)`` (the candidate's reported upper limit) and is taken as 0 with half
    that as its sd (a one-sided 95 % bound lies about 2 sd out); each pair adds ``f_i f_j sd**2``
    (f_i becomes f_i (1 - share)). Without it a component found alone reads 100 % +- 0 while a
    minor isomer may lie just below its bound; reading the share against the found amount alone
    (bound / total, its first-order form) would let a large bound give a component found alone an
    sd above its own value."""
    total = float(ev.amounts[:n_candidates].sum())
    if total <= 0:
        return frac_cov
    spread = 0.0
    for k in range(n_candidates):
        p = ev.presence[k]
        if not ev.detected[k] and np.isfinite(p.upper) and p.upper > 0:
            spread += (0.5 * float(p.upper) / (total + float(p.upper))) ** 2
    return frac_cov + spread * np.outer(frac, frac)


def component_fits(candidates, systems, models, refined, ev: Evaluation, frac, frac_cov, field_mhz: float,
                   detection_sigma: float, lookalikes=None) -> tuple:
    """One :class:`ComponentFit` per candidate (same order); ``lookalikes`` maps a candidate's
    index to those of the candidates the spectrum cannot tell from it (see
    :mod:`confirm.fitting.lookalikes`)."""
    total = float(ev.amounts.sum())
    lay = refined.layout
    lookalikes = lookalikes or {}
    out = []
    for k, (cand, system, model) in enumerate(zip(candidates, systems, models, strict=True)):
        p = ev.presence[k]
        detected = bool(ev.detected[k])
        upper = None
        if not detected:
            bound = p.upper if np.isfinite(p.upper) else np.inf
            upper = 1.0 if not np.isfinite(bound) or total + bound <= 0 else float(bound / (total + bound))
        lod_amount = detection_sigma * p.amount_sd if np.isfinite(p.amount_sd) else np.inf
        lod = (1.0 if not np.isfinite(lod_amount) or total + lod_amount <= 0
               else lod_amount / (total + lod_amount))
        shifts, jvals = lay.shifts(refined.theta)[k], lay.jvals(refined.theta)[k]
        sites = _site_evidence(system, model, ev.readings[k], p, shifts, jvals, total,
                               ev.integrals.get(k, ()))
        out.append(ComponentFit(
            candidate=cand,
            mole_fraction=float(np.clip(frac[k], 0.0, 1.0)) if detected else None,
            mole_fraction_sd=float(np.sqrt(max(frac_cov[k, k], 0.0))) if detected else 0.0,
            detection_limit=float(np.clip(lod, 0.0, 1.0)),
            detected=detected,
            upper_limit=None if detected else float(np.clip(upper, 0.0, 1.0)),
            refined_shifts_ppm=_refined_shifts(system, model, shifts),
            evidence=tuple(_evidence_text(e, detected) for e in sites),
            site_evidence=sites,
            lookalikes=tuple(candidates[i].smiles for i in lookalikes.get(k, ())),
        ))
    return tuple(out)


def _refined_shifts(system, model, shifts) -> tuple:
    out = [s.shift_ppm for s in system.sites]
    for group, value in zip(model.groups, shifts, strict=True):
        for idx in group:
            out[idx] = float(value)
    return tuple(out)


def _quoted_couplings(model, j: np.ndarray, s: int) -> tuple:
    big = [abs(j[s, t]) for t in range(j.shape[0]) if t != s and abs(j[s, t]) >= _QUOTED_J_HZ]
    return tuple(round(v, 1) for v in sorted(big, reverse=True))


def _site_evidence(system, model, readings, presence, shifts, jvals, total: float, integrals=()) -> tuple:
    from confirm.fitting.models import coupling_matrix

    j_fit = coupling_matrix(model, jvals)
    # a share of the detected components' total; with none detected there is no total to share, and
    # the readings are not expressed (NaN) rather than 0 +- 0 %
    scale = 1.0 / total if total > 0 else np.nan
    window = {s: w for w in integrals for s in w.sites}
    out = []
    for s, r in enumerate(readings):
        w = window.get(s)
        site_index = model.groups[s][0]
        site = system.sites[site_index]
        out.append(SiteEvidence(
            site=int(site_index),
            label=site.label or "H",
            n_h=int(model.n_h[s]),
            ppm=float(shifts[s]),
            predicted_ppm=float(site.shift_ppm),
            predicted_sd_ppm=float(site.shift_sd_ppm),
            amount=float(r.amount * scale) if r.usable else float("nan"),
            amount_sd=float(r.amount_sd * scale) if r.usable else float("inf"),
            seen=s in presence.seen,
            missing=s in presence.missing,
            shape_match=float(r.shape),
            overlap=float(r.overlap),
            j_hz=_quoted_couplings(model, j_fit, s),
            j_predicted_hz=_quoted_couplings(model, model.j0, s),
            outside_range=s in presence.outside,
            swamped=s in presence.swamped,
            integral_amount=float(w.amount * scale) if w is not None else float("nan"),
            integral_amount_sd=float(w.sd * scale) if w is not None else float("nan"),
        ))
    return tuple(out)


def _evidence_text(e: SiteEvidence, detected: bool = True) -> str:
    j_part = ""
    if e.j_hz:
        j_part = (f"; J = {', '.join(f'{v:.1f}' for v in e.j_hz)} Hz "
                  f"(predicted {', '.join(f'{v:.1f}' for v in e.j_predicted_hz)})")
    if e.outside_range:
        state = "missing (the data pull its shift or its coupling to the edge of its predicted range)"
    elif e.missing:
        state = "missing"
    elif e.swamped:
        state = "swamped (its place holds another compound's lines, far stronger than the molecule)"
    elif e.seen and detected:
        state = "observed"
    elif e.seen:  # a line stands where it belongs, but the molecule as a whole is not shown
        state = "has a line (candidate not detected)"
    else:
        state = "not clearly seen"
    if np.isnan(e.amount_sd):
        amount = "not expressed (no component detected to take a share of)"
    elif np.isfinite(e.amount_sd):
        amount = f"{100 * e.amount:.1f} +- {100 * e.amount_sd:.1f} %"
    else:
        amount = "not readable (masked)"
    return (f"{e.label} ({e.n_h}H) {state} at {e.ppm:.3f} ppm (predicted {e.predicted_ppm:.2f} +- "
            f"{e.predicted_sd_ppm:.2f}){j_part}; amount from this multiplet {amount}, shape match "
            f"{e.shape_match:.2f}, overlap {100 * e.overlap:.0f}%")


def refined_amount_covariance(refined) -> np.ndarray:
    """Covariance of the amounts from the refinement's last Jacobian (prior rows included), every
    other parameter marginalised: scale**2 (J^T J)^-1, amount block."""
    jac = refined.jacobian
    norms = np.linalg.norm(jac, axis=0)
    live = norms > 1e-12 * max(float(norms.max()), 1e-300)
    scaled = jac[:, live] / norms[live]
    inv = np.linalg.pinv(scaled.T @ scaled, rcond=1e-12, hermitian=True) / np.outer(norms[live], norms[live])
    full = np.zeros((jac.shape[1], jac.shape[1]))
    full[np.ix_(live, live)] = inv
    lay = refined.layout
    return full[lay.amount_slice, lay.amount_slice] * refined.scale**2
