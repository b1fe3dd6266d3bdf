"""Candidates the spectrum cannot tell apart: the same multiplets where a found one's are.

A candidate that is not detected may explain the data exactly as well as one that is: a diethyl
fumarate and a diethyl 2-methylenemalonate both show one 2H vinyl singlet and two ethyl groups, and
when their predicted vinyl shifts lie within each other's uncertainty the fit's choice between them
rests on a difference of predictions smaller than their error. The verdict must then say that the
spectrum does not decide, not name one.

An undetected candidate is a look-alike of a detected one when its predicted spin system, moved
within its shift uncertainty, reproduces the detected one's as refined: as many multiplets with the
same numbers of protons, each of its predicted shifts within :data:`_SHIFT_SD` of its sd of the
refined shift it is matched to, and every coupling between matched multiplets within the room the
refinement itself gives a coupling (``FitOptions.j_window_hz``, or ``j_window_sd`` times its prior
sd). E and Z isomers (3J 15 against 11 Hz), epimers (axial 11-12 Hz couplings against small ones)
and homologues (other multiplets) are told apart, and so is anything with 19F or 31P couplings.
"""

from __future__ import annotations

import numpy as np
from scipy.optimize import linear_sum_assignment

from confirm.fitting.models import DEFAULT_J_SD_HZ, coupling_matrix, coupling_reach

__all__ = ["lookalike_pairs", "spectra_alike"]

#: A predicted shift counts as reaching a found multiplet within this many of its sds (the shift
#: sds are calibrated so that 95 % of errors lie within 2 sd).
_SHIFT_SD = 2.0
#: Couplings below this (Hz) on both sides shape no multiplet at the widths fitted: not compared.
_SMALL_J_HZ = 1.0
_FORBIDDEN = 1e9


def _coupling_reach(model, j_window_hz: float, j_window_sd: float) -> np.ndarray:
    """Per pair of the model's sites, how far the refinement may move its coupling."""
    reach = np.full(model.j0.shape, coupling_reach(DEFAULT_J_SD_HZ, j_window_hz, j_window_sd))
    for (a, b), sd in zip(model.j_pairs, model.j_sd, strict=True):
        reach[a, b] = reach[b, a] = coupling_reach(float(sd), j_window_hz, j_window_sd)
    return reach


def spectra_alike(found, shifts, jvals, other, *, j_window_hz: float, j_window_sd: float) -> bool:
    """Whether candidate model ``other``, as predicted, reproduces model ``found`` as refined
    (``shifts`` and ``jvals`` its refined shifts and couplings); see the module docstring."""
    if found.pattern is not None or other.pattern is not None or found.nuisance or other.nuisance:
        return False
    if found.x_couplings or other.x_couplings or found.n_sites != other.n_sites or found.n_sites == 0:
        return False
    n_found, n_other = np.asarray(found.n_h), np.asarray(other.n_h)
    if sorted(n_found.tolist()) != sorted(n_other.tolist()):
        return False
    shifts = np.asarray(shifts, dtype=float)
    gap = np.abs(shifts[:, None] - np.asarray(other.shift0, dtype=float)[None, :])
    allowed = (n_found[:, None] == n_other[None, :]) & (gap <= _SHIFT_SD * np.asarray(other.sd)[None, :])
    rows, cols = linear_sum_assignment(np.where(allowed, gap, _FORBIDDEN))
    if not np.all(allowed[rows, cols]):
        return False
    order = cols[np.argsort(rows)]  # the other's site matched to each of the found one's sites
    j_found = np.abs(coupling_matrix(found, np.asarray(jvals, dtype=float)))
    j_other = np.abs(np.asarray(other.j0, dtype=float))[np.ix_(order, order)]
    reach = _coupling_reach(other, j_window_hz, j_window_sd)[np.ix_(order, order)]
    shaping = (j_found >= _SMALL_J_HZ) | (j_other >= _SMALL_J_HZ)
    return bool(np.all(np.abs(j_found - j_other)[shaping] <= reach[shaping]))


def lookalike_pairs(models, shifts, jvals, detected, *, j_window_hz: float, j_window_sd: float) -> dict:
    """Per detected model index, the undetected model indexes that look alike (see the module
    docstring); ``shifts`` and ``jvals`` per model, as refined."""
    out = {}
    for k, model in enumerate(models):
        if not detected[k]:
            continue
        alike = tuple(i for i, other in enumerate(models) if i != k and not detected[i]
                      and spectra_alike(model, shifts[k], jvals[k], other, j_window_hz=j_window_hz,
                                        j_window_sd=j_window_sd))
        if alike:
            out[k] = alike
    return out
