"""Settle the assignments the blurred data cannot: swap two multiplets and refit their molecules.

On the blurred copy the search works on, a doublet of one molecule and a doublet of doublets of
another, of similar size, look alike; with predicted couplings a little off, even the full
resolution cannot tell which is which. The couplings can: once they are refined, each molecule's
pattern fits its own multiplet to the noise and the other one's only roughly. So the swaps the
search found nearly as good are tested here: the two sites exchange positions, the two molecules
involved are refitted (shifts and couplings, from their predictions; every other molecule kept as
refined), and the swap is kept, and the whole fit refined again from it, when the full objective
drops.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from confirm.fitting.refine import Refined, Refinement

__all__ = ["settle_swaps", "settle_exchanges", "stereo_partners"]

#: Relative tolerance of the comparison of objectives.
_RTOL = 1e-9


#: A site whose own amount differs from its molecule's by more than this many sd is suspect.
_SUSPECT_Z = 3.0
#: Partners tried for each suspect site.
_PARTNERS_PER_SITE = 2
#: Most swaps tested in one fit (each costs a refit of two molecules).
_MAX_TESTS = 3


def settle_swaps(refinement: Refinement, refined: Refined, swaps, *, model_error: float) -> Refined:
    """Test swaps of ``refined``: first those of the sites whose own amount disagrees with their
    molecule's (see :func:`_suspect_swaps`), then ``swaps`` (k, s, k2, s2) from the search; return
    the fit with every swap that lowered the objective taken (each followed by one more round of
    the whole fit)."""
    grid, basis, models = refinement.grid, refinement.basis, refinement.models
    suspects = _suspect_swaps(grid, basis, models, refined, refinement.noise, model_error)
    for tested, (k, s, k2, s2) in enumerate(suspects + [sw for sw in swaps if sw not in suspects]):
        if tested >= _MAX_TESTS:
            break
        shifts = [x.copy() for x in refined.layout.shifts(refined.theta)]
        shifts[k][s], shifts[k2][s2] = shifts[k2][s2], shifts[k][s]
        refined = _taken_if_better(refinement, refined, shifts, sorted({k, k2}))
    return refined


def stereo_partners(systems, models) -> list:
    """Pairs of candidates that differ only in their stereochemistry (an E/Z pair, epimers), as
    (k, k2, mapping) with ``mapping[s]`` the site of ``k2`` that stands for site ``s`` of ``k``
    (same label and proton count, nearest predicted shifts)."""
    from rdkit import Chem
    from scipy.optimize import linear_sum_assignment

    keys = []
    for system in systems:
        mol = Chem.MolFromSmiles(system.smiles)
        keys.append(Chem.MolToSmiles(mol, isomericSmiles=False) if mol is not None else None)
    out = []
    for k in range(len(systems)):
        for k2 in range(k + 1, len(systems)):
            a, b = models[k], models[k2]
            if keys[k] is None or keys[k] != keys[k2] or a.n_sites != b.n_sites:
                continue
            labels_a, labels_b = np.array(a.labels), np.array(b.labels)
            unlike = (a.n_h[:, None] != b.n_h[None, :]) | (labels_a[:, None] != labels_b[None, :])
            cost = np.abs(a.shift0[:, None] - b.shift0[None, :]) + 1e3 * unlike
            rows, cols = linear_sum_assignment(cost)
            if np.any(unlike[rows, cols]):
                continue
            mapping = np.empty(a.n_sites, int)
            mapping[rows] = cols
            out.append((k, k2, mapping))
    return out


def settle_exchanges(refinement: Refinement, refined: Refined, partners) -> Refined:
    """Test, for each pair of stereoisomers, the fit with their places exchanged.

    The search places multiplets on blurred data with predicted couplings, where an E and a Z
    isomer (same multiplets, a few Hz apart in their couplings) look alike, and the refinement
    only moves lines locally: one isomer can end up on the other's signals. Each pair is refitted
    with the two isomers' sites exchanged (couplings from their own predictions) and the exchange
    kept, followed by one more round of the whole fit, when the full objective drops."""
    for k, k2, mapping in partners:
        shifts = [x.copy() for x in refined.layout.shifts(refined.theta)]
        mine, theirs = shifts[k].copy(), shifts[k2].copy()
        shifts[k] = theirs[mapping]
        shifts[k2][mapping] = mine
        refined = _taken_if_better(refinement, refined, shifts, [k, k2])
    return refined


def _taken_if_better(refinement: Refinement, refined: Refined, shifts, subset) -> Refined:
    """The fit with the molecules in ``subset`` refitted at ``shifts`` (see :func:`_refit_pair`)
    and one more round of the whole fit, when both lower the objective; else ``refined``."""
    theta = _refit_pair(refinement, refined, shifts, subset)
    value, theta = refinement.objective(theta, refined.scale)
    if not value < refined.objective - _RTOL * abs(refined.objective):
        return refined
    again = refinement.run(theta, rounds=1)
    return again if again.cost / refined.scale**2 + again.prior < refined.objective else refined


def _refit_pair(refinement: Refinement, refined: Refined, shifts, subset) -> np.ndarray:
    """Parameters of the whole fit with the molecules in ``subset`` refitted at ``shifts``
    (couplings from their predictions, one round), every other contribution held as in
    ``refined``."""
    lay = refined.layout
    background = refined.model - sum(refined.amounts[j] * refined.cols[j] for j in subset)
    sub_grid = replace(refinement.grid, y=refinement.grid.y - background)
    sub = Refinement(sub_grid, refinement.basis, [refinement.models[j] for j in subset],
                     field_mhz=refinement.field, width_ppm=refinement.width0, noise_sd=refinement.noise,
                     max_width_hz=refinement.hi[lay.width_slice][0] * refinement.field)
    fit = sub.run(sub.start([shifts[j] for j in subset], widths=refined.widths_ppm, gauss=refined.gauss),
                  rounds=1, fix_shape=True)
    theta = refined.theta.copy()
    for pos, j in enumerate(subset):
        theta[lay.shifts_of(j)] = sub.layout.shifts(fit.theta)[pos]
        theta[lay.jvals_of(j)] = sub.layout.jvals(fit.theta)[pos]
    return theta


def _suspect_swaps(grid, basis, models, refined: Refined, noise_sd: float, model_error: float) -> list:
    """Swaps (k, s, k2, s2) worth testing: sites whose own amount disagrees with their molecule's
    (a multiplet of the wrong size for its molecule is the mark of a crossed assignment), worst
    first, each with the sites it could exchange places with, those whose exchange brings both
    multiplets closest to their molecules' amounts first."""
    from confirm.fitting.evidence import read_sites

    lay = refined.layout
    shifts = lay.shifts(refined.theta)
    amounts = refined.amounts
    offsets = np.cumsum([0] + [m.n_sites for m in models])[:-1]
    base = refined.theta[lay.base_slice]
    readings = read_sites(grid, refined.per_site, refined.cols, amounts, base, basis, offsets,
                          [m.n_sites for m in models], float(np.median(refined.widths_ppm)),
                          noise_sd=noise_sd, model_error=model_error)
    sites = [(k, s) for k, m in enumerate(models) for s in range(m.n_sites)]  # nuisance lines left out below
    a = np.array([readings[k][s].amount for k, s in sites])
    sd = np.array([readings[k][s].amount_sd if readings[k][s].usable else np.inf for k, s in sites])
    own = np.array([amounts[k] for k, _ in sites])
    with np.errstate(invalid="ignore", divide="ignore"):
        z = np.where(np.isfinite(sd) & (sd > 0), (a - own) / sd, 0.0)
    width = float(np.median(refined.widths_ppm))
    order = np.lexsort((np.arange(z.size), -np.round(np.abs(z), 6)))
    out = []
    nuisance = np.array([models[k].nuisance for k, _ in sites])
    for i in order:
        if abs(z[i]) <= _SUSPECT_Z:
            break
        if nuisance[i]:
            continue
        k, s = sites[i]
        partners = []
        for j, (k2, s2) in enumerate(sites):
            pa, pb = shifts[k][s], shifts[k2][s2]
            if j == i or nuisance[j] or abs(pa - pb) <= 2 * width or not np.isfinite(sd[j]):
                continue
            if (abs(pb - models[k].shift0[s]) > models[k].window[s]
                    or abs(pa - models[k2].shift0[s2]) > models[k2].window[s2]):
                continue
            before = ((a[i] - own[i]) / sd[i]) ** 2 + ((a[j] - own[j]) / sd[j]) ** 2
            after = ((a[i] - own[j]) / sd[i]) ** 2 + ((a[j] - own[i]) / sd[j]) ** 2
            partners.append((-round(before - after, 6), abs(pa - pb), j))
        for _, _, j in sorted(partners)[:_PARTNERS_PER_SITE]:
            k2, s2 = sites[j]
            pair = (k, s, k2, s2) if (k, s) < (k2, s2) else (k2, s2, k, s)
            if pair not in out:
                out.append(pair)
    return out
