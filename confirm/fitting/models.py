"""Working models of the candidates: the sites the fit moves, their couplings and their lines.

A :class:`CandidateModel` holds one candidate's non-exchangeable sites with their predicted
shifts, the window each may move in, the couplings that are refined with their bounds, and the
one-bond 13C-1H couplings that place the 13C satellites. :func:`model_lines` simulates the
molecule (exact spin simulation of ``predictors.spin``) and adds the satellites.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from predictors.core import SpinSystem
from predictors.errors import FitError

__all__ = ["SATELLITE_SHARE", "CandidateModel", "build_model", "model_lines", "coupling_matrix"]

#: 13C natural abundance: each satellite is 0.55 % of its parent (references.md section 5).
SATELLITE_SHARE = 0.0055
#: One-bond C-H couplings (Hz) for satellite positions of hand-built systems: sp2 ~158, sp3 ~128.
# common practice (textbook ranges of 1J(C,H))
_J_CH_SP2_HZ = 158.0
_J_CH_SP3_HZ = 128.0
_SP2_LABELS = ("vinyl", "aryl", "aromatic", "alkene", "aldehyde", "cho", "olefinic")
#: Couplings smaller than this (Hz) are kept as predicted: they broaden a multiplet, they do not shape it.
_MIN_REFINED_J_HZ = 1.0
#: Spread (ppm) of sites whose predicted shifts are exactly equal (see _spread_equal_shifts).
_TIE_SPREAD_PPM = 0.01
#: Prior sd (Hz) of a coupling whose spin system gives none.
_DEFAULT_J_SD_HZ = 1.0


@dataclass
class CandidateModel:
    """Working copy of one candidate's spin system (non-exchangeable sites only)."""

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

    @property
    def n_sites(self) -> int:
        return int(self.shift0.size)

    @property
    def j_values0(self) -> np.ndarray:
        """Predicted values of the refined couplings."""
        return np.array([self.j0[a, b] for a, b in self.j_pairs], dtype=float)


def build_model(system: SpinSystem, options) -> CandidateModel:
    """The fit's model of one candidate (raises FitError when it has nothing to fit)."""
    keep = [i for i, s in enumerate(system.sites) if not s.exchangeable]
    if not keep:
        raise FitError(f"systems: candidate {system.smiles} has no non-exchangeable protons to fit")
    j_full = np.asarray(system.j_hz, dtype=float)
    j_sd_full = None if system.j_sd_hz is None else np.asarray(system.j_sd_hz, dtype=float)
    groups = [(i,) for i in keep]
    first = keep
    sites = [system.sites[i] for i in first]
    sd = np.array([s.shift_sd_ppm for s in sites])
    window = np.clip(options.shift_window_sd * sd, options.min_shift_window_ppm, options.max_shift_window_ppm)
    n_h = np.array([s.n_h for s in sites])
    j0 = j_full[np.ix_(first, first)].copy()
    _fold_aa_xx(j0, sites)
    j_sd = np.full(j0.shape, _DEFAULT_J_SD_HZ) if j_sd_full is None else j_sd_full[np.ix_(first, first)]
    pairs, lo, hi, prior = [], [], [], []
    if options.refine_couplings:
        for a in range(len(first)):
            for b in range(a + 1, len(first)):
                value = j0[a, b]
                if abs(value) < _MIN_REFINED_J_HZ:
                    continue
                sd_ab = max(float(j_sd[a, b]), 0.3)
                reach = max(options.j_window_hz, options.j_window_sd * sd_ab)
                low, high = (max(0.0, value - reach), value + reach) if value > 0 else (
                    value - reach, min(0.0, value + reach))
                pairs.append((a, b))
                lo.append(low)
                hi.append(high)
                prior.append(sd_ab)
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
    )


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


def _fold_aa_xx(j: np.ndarray, sites) -> None:
    """Two 2H sites that are not magnetically equivalent (AA'XX', e.g. a para-disubstituted
    ring) are simulated as A2X2 with the splitting N = J_AX + J_AX' that the AA'XX' doublets show;
    the spin system's mean site coupling is (J_AX + J_AX') / 2, so it is doubled here."""
    for a, sa in enumerate(sites):
        for b, sb in enumerate(sites):
            if (
                a != b
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


def model_lines(model: CandidateModel, shifts: np.ndarray, j_values: np.ndarray, field_mhz: float, *,
                satellites: bool = True):
    """Lines of one molecule with 13C satellites: (ppm, intensity, site, is satellite) arrays.

    Intensities are per molecule (they sum to its number of protons; without ``satellites`` the
    parents keep their full intensity). Clusters of the spin system already simulated with the same
    inputs are reused from ``model.memo``.
    """
    from predictors.spin import simulate_arrays_reusing

    j = coupling_matrix(model, j_values)
    try:
        lines = simulate_arrays_reusing(shifts, j, model.n_h, field_mhz=field_mhz, memo=model.memo)
    except np.linalg.LinAlgError:
        # exactly degenerate sites can stall the eigensolver: nudge them apart by < 0.01 Hz and retry
        nudged = np.asarray(shifts) + 1e-5 * np.arange(len(shifts)) / max(field_mhz, 1.0)
        lines = simulate_arrays_reusing(nudged, j, model.n_h, field_mhz=field_mhz, memo=model.memo)
    ppm, inten = np.asarray(lines.ppm), np.asarray(lines.intensity)
    site = np.asarray(lines.site_index)
    if not satellites:
        return ppm, inten, site, np.zeros(ppm.size, bool)
    half = model.jch[site] / 2.0 / field_mhz
    ppm = np.concatenate([ppm, ppm + half, ppm - half])
    inten = np.concatenate(
        [inten * (1 - 2 * SATELLITE_SHARE), inten * SATELLITE_SHARE, inten * SATELLITE_SHARE]
    )
    satellite = np.arange(ppm.size) >= site.size
    return ppm, inten, np.concatenate([site, site, site]), satellite
