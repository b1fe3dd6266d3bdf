"""Working models of the candidates: the sites the fit moves, their couplings and their lines.

A :class:`CandidateModel` holds one candidate's sites (exchangeable OH and NH only where they
couple, in slow exchange) with their predicted shifts, the window each may move in, the couplings
that are refined with their bounds, and the one-bond 13C-1H couplings that place the 13C
satellites. :func:`model_lines` simulates the
molecule (exact spin simulation of ``predictors.spin``; couplings to 19F or 31P, held at their
predicted values, by one simulation per X spin state or first-order splits, ``predictors.spin.plan_x``)
and adds the satellites.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from predictors.core import SpinSystem
from predictors.errors import FitError

__all__ = ["SATELLITE_SHARE", "DEFAULT_J_SD_HZ", "CandidateModel", "build_model", "coupling_reach",
           "model_lines", "model_lines_with_derivatives", "coupling_matrix", "fitted_sites", "unit_couplings",
           "x_half_width_hz"]

#: 13C natural abundance: each satellite is 0.55 % of its parent (references.md section 5).
SATELLITE_SHARE = 0.0055
#: One-bond C-H couplings (Hz) for satellite positions of hand-built systems: sp2 ~158, sp3 ~128.
# common practice (textbook ranges of 1J(C,H))
_J_CH_SP2_HZ = 158.0
_J_CH_SP3_HZ = 128.0
_SP2_LABELS = ("vinyl", "aryl", "aromatic", "alkene", "aldehyde", "cho", "olefinic")
#: Couplings smaller than this (Hz) are kept as predicted (a 4J of 0.9 Hz predicted for 1.7 Hz
#: measured still leaves a reduced chi-square of 1000 on a methyl doublet at SNR 1500: it is refined).
_MIN_REFINED_J_HZ = 0.3
#: Spread (ppm) of sites whose predicted shifts are exactly equal (see _spread_equal_shifts).
_TIE_SPREAD_PPM = 0.01
#: Prior sd (Hz) of a coupling whose spin system gives none.
DEFAULT_J_SD_HZ = 1.0


#: Couplings between two vinyl H of at least this size (Hz) are the 3J across the double bond (a
#: geminal =CH2 coupling is 0-3 Hz).
VICINAL_VINYL_HZ = 5.0


def vinyl_sites(model) -> list:
    """Sites of vinyl H (alkene CH) of a model (anything with per-site ``labels``)."""
    return [s for s, lab in enumerate(model.labels) if "vinyl" in lab.lower() or "olefin" in lab.lower()]


@dataclass
class CandidateModel:
    """Working copy of one candidate's spin system (exchangeable sites only where they couple)."""

    groups: tuple  # per model site: the index of the SpinSystem site it stands for, as a 1-tuple
    shift0: np.ndarray  # predicted shifts (ppm)
    sd: np.ndarray  # predicted shift sd (ppm)
    window: np.ndarray  # allowed half-window of each shift (ppm)
    n_h: np.ndarray
    j0: np.ndarray  # predicted couplings, shape (n, n) (AA'XX' pairs folded)
    j_pairs: tuple  # (a, b) pairs whose coupling is refined
    j_lo: np.ndarray  # bounds of each refined coupling (Hz)
    j_hi: np.ndarray
    j_sd: np.ndarray  # prior sd of each refined coupling (Hz)
    jch: np.ndarray  # one-bond 13C-1H coupling per site (Hz): where its satellites sit
    labels: tuple
    memo: dict = dataclasses.field(default_factory=dict)  # clusters already simulated
    #: a fixed line pattern (offsets in Hz, relative intensities) instead of a spin simulation
    pattern: tuple | None = None
    #: own line width (lowest, highest, starting FWHM in Hz) instead of its region's
    own_width: tuple | None = None
    #: a solvent, water or reference line: fitted, never reported as a component
    nuisance: bool = False
    #: the simulated spins when a site is simulated proton by proton (AA'BB' protons of a ring):
    #: the site of each spin, its protons and the predicted couplings between spins; None when
    #: every site is one composite spin
    unit_owner: np.ndarray | None = None
    unit_n: np.ndarray | None = None
    unit_j0: np.ndarray | None = None
    #: per model site, its couplings to 19F / 31P as (nucleus, n_equivalent, j_hz) (fixed in the fit)
    x_couplings: tuple = ()
    #: how they are applied (``predictors.spin.plan_x``): X spin states simulated one by one, the
    #: rest split first order; None without X couplings
    x_plan: object | None = None

    @property
    def n_sites(self) -> int:
        return int(self.shift0.size)

    def geometry_couplings(self) -> list:
        """Indexes (into ``j_pairs``) of the 3J across a double bond between two vinyl H: the
        coupling that tells an alkene's geometry (cis 6-12, trans 12-18 Hz)."""
        vinyl = set(vinyl_sites(self))
        return [i for i, (a, b) in enumerate(self.j_pairs)
                if a in vinyl and b in vinyl and abs(self.j0[a, b]) >= VICINAL_VINYL_HZ]

    @property
    def j_values0(self) -> np.ndarray:
        """Predicted values of the refined couplings."""
        return np.array([self.j0[a, b] for a, b in self.j_pairs], dtype=float)


def coupling_reach(sd_hz: float, j_window_hz: float, j_window_sd: float) -> float:
    """How far (Hz) the refinement may move a coupling of prior sd ``sd_hz`` from its prediction
    (``FitOptions.j_window_hz``, or ``j_window_sd`` times the sd when that is more)."""
    return max(j_window_hz, j_window_sd * sd_hz)


def build_model(system: SpinSystem, options) -> CandidateModel:
    """The fit's model of one candidate (raises FitError when it has nothing to fit)."""
    keep = fitted_sites(system)
    if not keep:
        raise FitError(f"systems: candidate {system.smiles} has no non-exchangeable protons to fit")
    j_full = np.asarray(system.j_hz, dtype=float)
    j_sd_full = None if system.j_sd_hz is None else np.asarray(system.j_sd_hz, dtype=float)
    groups = _merge_remote_pairs(system, keep, j_full)
    first = [g[0] for g in groups]
    sites = [system.sites[i] for i in first]
    sd = np.array([s.shift_sd_ppm for s in sites])
    window = np.clip(options.shift_window_sd * sd, options.min_shift_window_ppm, options.max_shift_window_ppm)
    n_h = np.array([sum(system.sites[i].n_h for i in g) for g in groups])
    j0 = j_full[np.ix_(first, first)].copy()
    units = _model_units(system, groups)
    split = set() if units is None else {g for g in range(len(groups)) if np.sum(units[0] == g) > 1}
    _fold_aa_xx(j0, sites, skip=split)
    if units is not None:  # the composite spins keep their sites' (folded) couplings
        single = {g: int(np.flatnonzero(units[0] == g)[0]) for g in range(len(groups)) if g not in split}
        for a, ua in single.items():
            for b, ub in single.items():
                if a != b:
                    units[2][ua, ub] = j0[a, b]
    j_sd = np.full(j0.shape, DEFAULT_J_SD_HZ) if j_sd_full is None else j_sd_full[np.ix_(first, first)]
    pairs, lo, hi, prior = [], [], [], []
    shift_first = np.array([s.shift_ppm for s in sites])
    affordable = (_affordable(j0, n_h, shift0=shift_first) if units is None
                  else _affordable(units[2], units[1], shift0=shift_first[units[0]]))
    if options.refine_couplings and affordable:
        for a in range(len(first)):
            for b in range(a + 1, len(first)):
                value = j0[a, b]
                if abs(value) < _MIN_REFINED_J_HZ:
                    continue
                sd_ab = max(float(j_sd[a, b]), 0.3)
                reach = coupling_reach(sd_ab, options.j_window_hz, options.j_window_sd)
                low, high = (max(0.0, value - reach), value + reach) if value > 0 else (
                    value - reach, min(0.0, value + reach))
                pairs.append((a, b))
                lo.append(low)
                hi.append(high)
                prior.append(sd_ab)
    model_x = tuple(system.x_couplings[g[0]] for g in groups) if any(system.x_couplings) else ()
    return CandidateModel(
        groups=tuple(tuple(g) for g in groups),
        shift0=_spread_equal_shifts(np.array([s.shift_ppm for s in sites])),
        sd=sd,
        window=window,
        n_h=n_h,
        j0=j0,
        j_pairs=tuple(pairs),
        j_lo=np.array(lo),
        j_hi=np.array(hi),
        j_sd=np.array(prior),
        jch=_one_bond_couplings(system, sites),
        labels=tuple(s.label for s in sites),
        unit_owner=None if units is None else units[0],
        unit_n=None if units is None else units[1],
        unit_j0=None if units is None else units[2],
        x_couplings=model_x,
        x_plan=_x_plan(model_x, system.smiles),
    )


def fitted_sites(system: SpinSystem) -> list:
    """Sites the fit models: all but the exchangeable ones, except those that couple to another
    site (an alcohol OH or amide NH in DMSO-d6, slow exchange: a sharp multiplet that also splits
    its neighbour's). In fast exchange an OH or NH is a broad line of uncertain place and area."""
    j = np.asarray(system.j_hz, dtype=float)
    plain = np.array([not s.exchangeable for s in system.sites])
    coupled = (np.abs(j[:, plain]) >= _MIN_REFINED_J_HZ).any(1) if plain.any() else np.zeros(plain.size, bool)
    return [i for i in range(plain.size) if plain[i] or coupled[i]]


def _x_plan(model_x: tuple, smiles: str):
    if not model_x:
        return None
    from predictors.spin import plan_x

    return plan_x(model_x, smiles)


def _model_units(system: SpinSystem, groups) -> tuple | None:
    """(owner, protons, couplings) of the spins simulated for the model's sites, or None when
    every site is one composite spin (``predictors.spin.spin_units``: a site whose protons are
    not magnetically equivalent is simulated proton by proton). A merged pair of sites is one
    spin with the couplings of its first site, as its site is."""
    from predictors.spin import spin_units

    units = spin_units(system)
    if not units.split:
        return None
    of_site = [np.flatnonzero(units.owner == k) for k in range(len(system.sites))]
    owner, lead, n_h = [], [], []
    for g, group in enumerate(groups):
        if len(group) == 1 and of_site[group[0]].size > 1:
            for u in of_site[group[0]]:
                owner.append(g)
                lead.append(int(u))
                n_h.append(int(units.n_h[u]))
        else:
            owner.append(g)
            lead.append(int(of_site[group[0]][0]))
            n_h.append(sum(system.sites[i].n_h for i in group))
    j = units.j_hz[np.ix_(lead, lead)].copy()
    return np.array(owner, dtype=int), np.array(n_h, dtype=int), j


def _merge_remote_pairs(system: SpinSystem, keep: list, j: np.ndarray) -> list:
    """Groups of kept sites: the two protons of a CH2 that the prediction gives the same shift and
    the same couplings to every other site (and to 19F / 31P) form one 2H site, unless their carbon
    is bonded to a stereocentre.

    Such a pair is magnetically equivalent as predicted, so one composite site simulates it exactly
    (and far faster in a long chain); next to a stereocentre the two protons usually differ in
    shift by 0.1-0.3 ppm (a diastereotopic CH2 beside CHX), so there they stay apart and the fit
    places each.
    """
    from rdkit import Chem

    mol = Chem.MolFromSmiles(system.smiles)
    if mol is None:
        return [(i,) for i in keep]
    mol_h = Chem.AddHs(mol)
    centres = {idx for idx, _ in Chem.FindMolChiralCenters(mol_h, includeUnassigned=True,
                                                             useLegacyImplementation=False)}
    carbon = {}
    for i in keep:
        atoms = system.sites[i].atoms
        if (len(atoms) == 1 and atoms[0] < mol_h.GetNumAtoms()
                and mol_h.GetAtomWithIdx(atoms[0]).GetAtomicNum() == 1):
            carbon[i] = mol_h.GetAtomWithIdx(atoms[0]).GetNeighbors()[0]
    groups, used = [], set()
    for i in keep:
        if i in used:
            continue
        group = [i]
        for k in keep:
            if k == i or k in used or i not in carbon or k not in carbon:
                continue
            same_carbon = carbon[i].GetIdx() == carbon[k].GetIdx()
            others = [m for m in range(len(system.sites)) if m not in (i, k)]
            if (same_carbon
                    and not any(nb.GetIdx() in centres for nb in carbon[i].GetNeighbors())
                    and system.sites[i].shift_ppm == system.sites[k].shift_ppm
                    and np.allclose(j[i, others], j[k, others], atol=1e-9)
                    and system.x_couplings[i] == system.x_couplings[k]):
                group.append(k)
        used.update(group)
        groups.append(tuple(group))
    return groups


#: Molecules whose largest strongly coupled cluster holds at least this many protons keep their
#: predicted couplings: every refined coupling costs one simulation of that cluster per round.
_MAX_REFINED_CLUSTER = 9


def _affordable(j0: np.ndarray, n_h: np.ndarray, *, shift0: np.ndarray) -> bool:
    """Whether refining the couplings is affordable (see _MAX_REFINED_CLUSTER), judged at 60 MHz
    where clusters are largest (a property of the molecule, the same at every field)."""
    from predictors.spin import plan_clusters

    plan = plan_clusters(shift0, j0, n_h, field_mhz=60.0)
    return max(int(sum(n_h[list(c)])) for c in plan.clusters) < _MAX_REFINED_CLUSTER


def _spread_equal_shifts(shift0: np.ndarray) -> np.ndarray:
    """Predicted shifts with exact ties spread by _TIE_SPREAD_PPM steps about their value.

    Sites predicted alike (the two protons of a diastereotopic CH2, the two =CH2 protons of a
    1,1-disubstituted alkene) are distinct all the same; at exactly equal shifts the simulation
    gives every line to one of them, and the other could never be placed. A small spread gives
    each its own lines; the fit moves them where the data put them (together again if need be).
    """
    out = shift0.astype(float).copy()
    for value in np.unique(shift0):
        tied = np.flatnonzero(shift0 == value)
        if tied.size > 1:
            out[tied] = value + (np.arange(tied.size) - (tied.size - 1) / 2.0) * _TIE_SPREAD_PPM
    return out


def _one_bond_couplings(system: SpinSystem, sites) -> np.ndarray:
    """1J(C,H) of each site from its carbon's environment (the 13C satellite positions).

    The satellites of a large singlet (a methoxy group, 0.55 % each) are as tall as the lines of a
    minor component's multiplet, so they must sit where the data has them: an O-CH3 couples with
    about 143 Hz, an alkyl CH3 with 125 Hz.
    """
    from rdkit import Chem

    from predictors.couplings import predict_one_bond_ch

    mol = Chem.MolFromSmiles(system.smiles)
    mol_h = Chem.AddHs(mol) if mol is not None else None
    out = []
    for site in sites:
        if mol_h is not None and site.atoms and all(
            a < mol_h.GetNumAtoms()
            and mol_h.GetAtomWithIdx(a).GetAtomicNum() == 1
            and mol_h.GetAtomWithIdx(a).GetNeighbors()[0].GetSymbol() == "C"
            for a in site.atoms
        ):
            out.append(float(np.mean([predict_one_bond_ch(mol_h, a) for a in site.atoms])))
        else:  # a system built by hand (atom indices are not H atoms): class value by label
            sp2 = any(k in site.label.lower() for k in _SP2_LABELS)
            out.append(_J_CH_SP2_HZ if sp2 else _J_CH_SP3_HZ)
    return np.array(out)


def _fold_aa_xx(j: np.ndarray, sites, *, skip=frozenset()) -> None:
    """Two 2H sites that are not magnetically equivalent (AA'XX', e.g. a para-disubstituted
    ring) are simulated as A2X2 with the splitting N = J_AX + J_AX' that the AA'XX' doublets show;
    the spin system's mean site coupling is (J_AX + J_AX') / 2, so it is doubled here. Sites in
    ``skip`` are simulated proton by proton and keep their mean couplings."""
    for a, sa in enumerate(sites):
        for b, sb in enumerate(sites):
            if (
                a != b
                and a not in skip
                and b not in skip
                and sa.n_h == 2
                and sb.n_h == 2
                and not sa.magnetically_equivalent
                and not sb.magnetically_equivalent
            ):
                j[a, b] = 2.0 * j[a, b]


def coupling_matrix(model: CandidateModel, j_values: np.ndarray) -> np.ndarray:
    """The model's coupling matrix with its refined couplings set to ``j_values``."""
    j = model.j0.copy()
    for (a, b), value in zip(model.j_pairs, j_values, strict=True):
        j[a, b] = j[b, a] = value
    return j


def unit_couplings(model: CandidateModel, j_values: np.ndarray) -> np.ndarray:
    """Couplings between the model's simulated spins with the refined couplings at ``j_values``.

    A refined coupling of two sites is their mean coupling; when a site is simulated proton by
    proton, every coupling between the two sites' spins moves by the same amount (the ortho and
    para couplings of a ring proton keep their difference)."""
    if model.unit_owner is None:
        return coupling_matrix(model, j_values)
    j = np.array(model.unit_j0, dtype=float)
    owner = model.unit_owner
    for (a, b), value in zip(model.j_pairs, j_values, strict=True):
        shift = float(value) - float(model.j0[a, b])
        if shift != 0.0:
            block = np.ix_(owner == a, owner == b)
            j[block] += shift
            j[np.ix_(owner == b, owner == a)] += shift
    return j


def _unit_pairs(model: CandidateModel) -> tuple[list, list]:
    """The spin pairs of each refined site pair (all of them) and the refined pair each stands for."""
    owner = model.unit_owner
    pairs, column = [], []
    for k, (a, b) in enumerate(model.j_pairs):
        for u in np.flatnonzero(owner == a):
            for v in np.flatnonzero(owner == b):
                pairs.append((int(u), int(v)))
                column.append(k)
    return pairs, column


def _simulation_inputs(model: CandidateModel, shifts: np.ndarray, j_values: np.ndarray):
    """Shifts, couplings and proton counts of the simulated spins."""
    if model.unit_owner is None:
        return np.asarray(shifts, dtype=float), coupling_matrix(model, j_values), model.n_h
    return np.asarray(shifts, dtype=float)[model.unit_owner], unit_couplings(model, j_values), model.unit_n


def _site_of(model: CandidateModel, spin_index: np.ndarray) -> np.ndarray:
    return spin_index if model.unit_owner is None else model.unit_owner[spin_index]


def model_lines(model: CandidateModel, shifts: np.ndarray, j_values: np.ndarray, field_mhz: float, *,
                satellites: bool = True):
    """Lines of one molecule with 13C satellites: (ppm, intensity, site, is satellite) arrays.

    Intensities are per molecule (they sum to its number of protons; without ``satellites`` the
    parents keep their full intensity). Clusters of the spin system already simulated with the same
    inputs are reused from ``model.memo``.
    """
    if model.pattern is not None:
        offsets, weights = model.pattern
        ppm = np.asarray(shifts, dtype=float)[0] + np.asarray(offsets, dtype=float) / field_mhz
        inten = np.asarray(weights, dtype=float) * (model.n_h[0] / float(np.sum(weights)))
        return _with_satellites(model, ppm, inten, np.zeros(ppm.size, int), field_mhz, satellites)
    spin_shifts, j, n_h = _simulation_inputs(model, shifts, j_values)
    freq, inten, spin, _ = _simulate_states(model, spin_shifts, j, n_h, field_mhz)
    site = _site_of(model, spin)
    keep, inten = _strong_lines(inten, site)
    ppm, inten, site, _ = _split_by_x(model, freq[keep] / field_mhz, inten, site[keep], field_mhz)
    return _with_satellites(model, ppm, inten, site, field_mhz, satellites)


def _simulate_states(model: CandidateModel, spin_shifts, j, n_h, field_mhz: float, pairs=None):
    """Lines (Hz) of the simulated spins, once per X spin state of ``model.x_plan`` (weighted and
    pooled): ``freq_hz, intensity, spin index, dfreq_dj`` (None without ``pairs``). Clusters already
    simulated with the same inputs are reused from ``model.memo``."""
    from predictors.spin import pool_state_lines, simulate_arrays_reusing, simulate_with_derivatives

    plan = model.x_plan
    states = [(1.0, None)] if plan is None else list(zip(plan.weights, plan.offsets_hz, strict=True))
    freq, inten, spin, deriv = [], [], [], []
    for weight, offsets in states:
        shifted = np.asarray(spin_shifts, dtype=float)
        if offsets is not None and np.any(offsets):
            spin_offsets = offsets if model.unit_owner is None else offsets[model.unit_owner]
            shifted = shifted + spin_offsets / field_mhz
        for attempt in range(2):
            try:
                if pairs is None:
                    lines = simulate_arrays_reusing(shifted, j, n_h, field_mhz=field_mhz, memo=model.memo)
                    dj = None
                else:
                    lines, dj, _ = simulate_with_derivatives(shifted, j, n_h, field_mhz=field_mhz,
                                                             pairs=pairs, memo=model.memo)
                break
            except np.linalg.LinAlgError:
                if attempt:
                    raise
                # exactly degenerate sites can stall the eigensolver: nudge them apart by < 0.01 Hz
                shifted = shifted + 1e-5 * np.arange(len(shifted)) / max(field_mhz, 1.0)
        freq.append(np.asarray(lines.ppm) * field_mhz)
        inten.append(np.asarray(lines.intensity) * weight)
        spin.append(np.asarray(lines.site_index))
        if dj is not None:
            deriv.append(np.asarray(dj, dtype=float))
    if len(states) == 1:
        return freq[0], inten[0], spin[0], (deriv[0] if deriv else None)
    return pool_state_lines(np.concatenate(freq), np.concatenate(inten), np.concatenate(spin),
                            np.concatenate(deriv) if deriv else None)


def model_lines_with_derivatives(model: CandidateModel, shifts: np.ndarray, j_values: np.ndarray,
                                 field_mhz: float):
    """:func:`model_lines` and, per line, the derivative of its position (ppm) with respect to each
    refined coupling (Hz), shape (n_lines, n_pairs); satellites move with their parent.

    The derivatives are exact first-order perturbation theory of the spin simulation
    (``predictors.spin.simulate_with_derivatives``): within a refinement round the couplings move
    lines as the shifts do, which stays accurate over changes of a line width and more."""
    if model.pattern is not None or not model.j_pairs:
        lines = model_lines(model, shifts, j_values, field_mhz)
        return lines + (np.zeros((lines[0].size, len(model.j_pairs))),)
    spin_shifts, j, n_h = _simulation_inputs(model, shifts, j_values)
    pairs, column = (model.j_pairs, None) if model.unit_owner is None else _unit_pairs(model)
    freq, inten, spin, dfreq_dj = _simulate_states(model, spin_shifts, j, n_h, field_mhz, pairs=pairs)
    if column is not None:  # a refined coupling moves all its spin pairs' couplings alike
        dfreq_dj = np.asarray(dfreq_dj, dtype=float) @ np.eye(len(model.j_pairs))[column]
    site = _site_of(model, spin)
    keep, inten = _strong_lines(inten, site)
    ppm, inten, site, parent = _split_by_x(model, freq[keep] / field_mhz, inten, site[keep], field_mhz)
    ppm, inten, site, sat = _with_satellites(model, ppm, inten, site, field_mhz, True)
    dppm = (np.asarray(dfreq_dj, dtype=float)[keep] / field_mhz)[parent]
    return ppm, inten, site, sat, np.concatenate([dppm] * (ppm.size // max(dppm.shape[0], 1)))


def x_half_width_hz(model: CandidateModel) -> np.ndarray:
    """Half the width (Hz) of each model site's 19F / 31P pattern, shape (n_sites,)."""
    if not model.x_couplings:
        return np.zeros(model.n_sites)
    return np.array([sum(n * abs(j) for _, n, j in site) / 2.0 for site in model.x_couplings], dtype=float)


def _split_by_x(model: CandidateModel, ppm, inten, site, field_mhz: float):
    """Lines split first order by the 19F / 31P couplings not simulated state by state, and each
    one's parent line."""
    if model.x_plan is None or not any(model.x_plan.first_order):
        return ppm, inten, site, np.arange(np.asarray(ppm).size)
    from predictors.spin import split_by_x

    freq, inten, site, parent = split_by_x(np.asarray(ppm) * field_mhz, inten, site, model.x_plan.first_order)
    return freq / field_mhz, inten, site, parent


#: Lines below this share of the molecule's tallest line are not drawn; their intensity goes to
#: the kept lines of their site, so every site keeps its area. A long chain simulated exactly has
#: hundreds of such combination lines (two thirds of its lines, well under 1 % of its intensity),
#: and each is drawn three times with its 13C satellites.
_MIN_LINE_SHARE = 1e-3


def _strong_lines(inten: np.ndarray, site: np.ndarray):
    """Mask of the lines kept and their intensities, each site's total intensity unchanged."""
    if inten.size == 0:
        return np.ones(0, bool), inten
    keep = np.abs(inten) >= _MIN_LINE_SHARE * float(np.max(np.abs(inten)))
    if keep.all():
        return keep, inten
    n = int(site.max()) + 1
    total = np.bincount(site, weights=inten, minlength=n)
    kept = np.bincount(site[keep], weights=inten[keep], minlength=n)
    lost = ~np.isin(np.arange(n), site[keep]) & (np.abs(total) > 0)
    if lost.any():  # a site with only weak lines keeps them all
        keep |= np.isin(site, np.flatnonzero(lost))
        kept = np.bincount(site[keep], weights=inten[keep], minlength=n)
    scale = np.where(np.abs(kept) > 0, total / np.where(kept == 0, 1.0, kept), 1.0)
    return keep, inten[keep] * scale[site[keep]]


def _with_satellites(model: CandidateModel, ppm, inten, site, field_mhz: float, satellites: bool):
    """Lines plus their 13C satellites at +-1J(C,H)/2 (none for a site whose 1J is 0)."""
    if not satellites or not np.any(model.jch[site] > 0):
        return ppm, inten, site, np.zeros(ppm.size, bool)
    half = model.jch[site] / 2.0 / field_mhz
    share = np.where(model.jch[site] > 0, SATELLITE_SHARE, 0.0)
    ppm = np.concatenate([ppm, ppm + half, ppm - half])
    inten = np.concatenate([inten * (1 - 2 * share), inten * share, inten * share])
    satellite = np.arange(ppm.size) >= site.size
    return ppm, inten, np.concatenate([site, site, site]), satellite
