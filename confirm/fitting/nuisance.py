"""Residual solvent, water and TMS as lines of the model, not holes in the data.

Masking a fixed window around each of these lines hides whatever candidate multiplet lies under
it: the 6H singlet of a dimethylbenzyl group at 1.59 ppm under water at 1.56, aromatic lines under
CHCl3 at 7.26. The refinement therefore fits them like candidates that are never reported: each is
a fixed pattern (a singlet; the quintet of a CHD2 group, 1:2:3:2:1 at J(H,D); the 1:1:1 triplet of
CHDCl2) with a free amount, a position free within a small range and a width of its own (water
exchanges and is broad). The assignment search still masks them (it works on blurred data with one
line width).
"""

from __future__ import annotations

import numpy as np

from confirm.fitting.models import CandidateModel

__all__ = ["line_model", "nuisance_models"]

#: How far (ppm) each line may sit from its table value (referencing, concentration, temperature).
_REACH_PPM = {"residual solvent": 0.05, "water": 0.25, "TMS": 0.05}
#: Width range and start (FWHM, Hz) of each line.
_WIDTH_HZ = {"residual solvent": (0.2, 6.0, 1.0), "water": (0.5, 60.0, 5.0), "TMS": (0.2, 6.0, 1.0)}
#: 29Si satellites of TMS (4.7 % in all, +-3.3 Hz) and its 13C satellites (1J(C,H) ~118 Hz).
# common practice (textbook values; from memory)
_TMS_SI_SHARE = 0.0235
_TMS_SI_HZ = 3.3
_TMS_J_CH_HZ = 118.0


def nuisance_models(solvent: str | None, intervals) -> list[CandidateModel]:
    """The solvent, water and TMS lines of ``solvent`` that fall inside the fitted ``intervals``."""
    from confirm.solvents import solvent_signals

    lines = [("TMS", 0.0, "s", None, _TMS_J_CH_HZ)]
    if solvent:
        try:
            info = solvent_signals(solvent)
        except Exception:  # noqa: BLE001 -- an unknown solvent has no table lines to model
            info = None
        if info is not None:
            lines.append(("residual solvent", info.residual_ppm, info.residual_multiplicity,
                          info.residual_j_hd_hz, info.residual_j_ch_hz or 0.0))
            if info.water_ppm is not None:
                lines.append(("water", info.water_ppm, "s", None, 0.0))
    out = []
    for kind, ppm, multiplicity, j_hd, j_ch in lines:
        if not any(lo <= ppm <= hi for lo, hi in intervals):
            continue
        out.append(line_model(kind, float(ppm), _pattern(kind, multiplicity, j_hd), float(j_ch),
                              reach_ppm=_REACH_PPM[kind], width_hz=_WIDTH_HZ[kind]))
    return out


def _pattern(kind: str, multiplicity: str, j_hd: float | None) -> tuple:
    """Line offsets (Hz) and relative intensities of a nuisance line."""
    text = (multiplicity or "s").strip().lower()
    if kind == "TMS":
        return (0.0, -_TMS_SI_HZ, _TMS_SI_HZ), (1 - 2 * _TMS_SI_SHARE, _TMS_SI_SHARE, _TMS_SI_SHARE)
    if j_hd and text in ("quint", "quintet", "p", "5"):  # CHD2: two deuterons (spin 1) -> 1:2:3:2:1
        return tuple(k * j_hd for k in (-2, -1, 0, 1, 2)), (1.0, 2.0, 3.0, 2.0, 1.0)
    if j_hd and text in ("t", "triplet", "3"):  # CHD: one deuteron -> 1:1:1
        return tuple(k * j_hd for k in (-1, 0, 1)), (1.0, 1.0, 1.0)
    return (0.0,), (1.0,)


def line_model(label: str, ppm: float, pattern: tuple, j_ch_hz: float, *, reach_ppm: float,
               width_hz: tuple) -> CandidateModel:
    """A nuisance line: a fixed ``pattern`` (offsets in Hz, relative intensities) at ``ppm``, free
    within ``reach_ppm``, with a width of its own (lowest, highest, starting FWHM in Hz), its 13C
    satellites at ``j_ch_hz`` (0: none); fitted, never reported."""
    return CandidateModel(
        groups=((-1,),),
        shift0=np.array([ppm]),
        sd=np.array([reach_ppm / 3.0]),
        window=np.array([reach_ppm]),
        n_h=np.array([1]),
        j0=np.zeros((1, 1)),
        j_pairs=(),
        j_lo=np.zeros(0),
        j_hi=np.zeros(0),
        j_sd=np.zeros(0),
        jch=np.array([j_ch_hz]),
        labels=(label,),
        pattern=pattern,
        own_width=width_hz,
        nuisance=True,
    )
