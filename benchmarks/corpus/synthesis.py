"""Render a benchmark case to a processed-looking 1H spectrum.

The sample's lines come from an exact spin simulation (``predictors.spin.simulate_arrays``: the
physics, not our shift predictor) of the published parameters in
:mod:`benchmarks.corpus.compounds`. Each line is a complex Lorentzian (absorption plus
dispersion), optionally broadened by a Gaussian (a Voigt line) or given a small shifted shoulder
(poor shimming); the residual zero- and first-order phase then mixes in the dispersion, so a
phase error shows as it does on a measured spectrum. Added: 13C satellites of every line
(+-1J(C,H)/2, 0.55 % each), residual CHCl3 at 7.26 with its satellites (1J 209 Hz), water near
1.56 (broad), TMS at 0.00 with its 29Si (+-3.3 Hz, 2.35 % each) and 13C satellites, sometimes a
common impurity and sometimes an unknown multiplet, a smooth baseline roll, a referencing error
of the whole axis and white Gaussian noise (SNR = tallest sample line / noise sd). Solvent and
impurity shifts: Gottlieb, Kotlyar, Nudelman, J. Org. Chem. 1997, 62, 7512 (Table 1, CDCl3).

Lines are drawn exactly: sticks on a fine grid (<= 0.02 Hz, linear sharing between the two
nearest points keeps area and centre), convolved in the time domain with the line shape, and the
output grid is every m-th fine point. Everything is deterministic given the case.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from benchmarks.corpus.cases import Case
from benchmarks.corpus.compounds import COMPOUND_BY_KEY
from predictors.core import Spectrum
from predictors.spin import simulate_arrays

#: Spectral window of every rendered spectrum (ppm), as usually acquired for 1H.
WINDOW_PPM = (13.0, -1.0)
#: Share of a parent line in each 13C satellite (1.1 % natural 13C, half on each side).
SATELLITE_SHARE = 0.0055  # references.md section 5
#: 29Si satellites of TMS: 4.7 % natural 29Si, half on each side; 2J(Si,H) 6.6 Hz (from memory).
SI_SATELLITE_SHARE = 0.0235
SI_SATELLITE_HZ = 6.6
#: 1J(C,H) of CHCl3 and TMS (Hz; from memory: 209 and 118).
CHCL3_JCH_HZ = 209.0
TMS_JCH_HZ = 118.0
CHCL3_PPM = 7.26  # Gottlieb et al. 1997, Table 1
TMS_PPM = 0.00
#: Height of the tallest sample line in the rendered spectrum (arbitrary units).
TALLEST = 100.0
_FINE_HZ = 0.02
_GREASE_WIDTH_HZ = 10.0

#: Common impurities in CDCl3 (Gottlieb, Kotlyar, Nudelman, J. Org. Chem. 1997, 62, 7512, Table 1;
#: couplings from memory): sites (shift_ppm, n_h), couplings (i, j, j_hz), broad (grease).
IMPURITIES = {
    "ethyl acetate": (((2.05, 3), (4.12, 2), (1.26, 3)), ((1, 2, 7.1),), False),
    "acetone": (((2.17, 6),), (), False),
    "diethyl ether": (((3.48, 2), (3.48, 2), (1.21, 3), (1.21, 3)), ((0, 2, 7.0), (1, 3, 7.0)), False),
    "dichloromethane": (((5.30, 2),), (), False),
    "hexane": (
        ((0.88, 3), (1.26, 2), (1.26, 2), (1.26, 2), (1.26, 2), (0.88, 3)),
        ((0, 1, 7.0), (1, 2, 7.0), (2, 3, 7.0), (3, 4, 7.0), (4, 5, 7.0)),
        False,
    ),
    "grease": (((1.26, 8), (0.86, 3)), (), True),
}


@dataclass(frozen=True)
class CaseLines:
    """Every line of a case, at its true position in the rendered spectrum (ppm, offset included).

    ``owner`` is the compound key, or ``"solvent"``, ``"water"``, ``"tms"``, ``"impurity"``,
    ``"unknown"``; ``site`` the site index within the compound (-1 otherwise); ``satellite`` marks
    13C/29Si satellites; ``exchangeable`` the broad OH/NH lines of the sample.
    """

    ppm: np.ndarray
    area: np.ndarray
    width_hz: np.ndarray
    owner: np.ndarray
    site: np.ndarray
    satellite: np.ndarray
    exchangeable: np.ndarray


@lru_cache(maxsize=512)
def compound_lines(key: str, field_mhz: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Lines of one molecule of a compound: ppm, intensity (sums to the counted H), site index.

    Exchangeable sites are left out (they are drawn as broad singlets by :func:`case_lines`).
    """
    comp = COMPOUND_BY_KEY[key]
    keep = [i for i, ex in enumerate(comp.exchangeable) if not ex]
    j = comp.coupling_matrix()[np.ix_(keep, keep)]
    lines = simulate_arrays(
        comp.shifts_ppm[keep], j, comp.n_protons[keep], field_mhz=field_mhz, max_cluster_spins=14
    )
    inten = np.asarray(lines.intensity)
    big = inten > 1e-6 * inten.sum()
    site = np.asarray(keep)[np.asarray(lines.site_index)[big]]
    return np.asarray(lines.ppm)[big], inten[big], site


def _spin_lines(sites, couplings, field_mhz):
    shifts = np.array([s for s, _ in sites], dtype=float)
    n = np.array([k for _, k in sites], dtype=int)
    j = np.zeros((len(sites), len(sites)))
    for a, b, v in couplings:
        j[a, b] = j[b, a] = v
    lines = simulate_arrays(shifts, j, n, field_mhz=field_mhz, max_cluster_spins=14)
    return np.asarray(lines.ppm), np.asarray(lines.intensity)


def case_lines(case: Case) -> CaseLines:
    """All lines of a case (sample, satellites, solvent, water, TMS, impurity, unknown)."""
    f = case.faults
    field = case.field_mhz
    ppm, area, width, owner, site, sat, exch = [], [], [], [], [], [], []

    def add(p, a, w, o, s, is_sat, is_exch=False):
        p = np.atleast_1d(np.asarray(p, dtype=float))
        ppm.append(p)
        area.append(np.broadcast_to(np.asarray(a, dtype=float), p.shape))
        width.append(np.full(p.shape, float(w)))
        owner.append(np.full(p.shape, o, dtype=object))
        site.append(np.broadcast_to(np.asarray(s, dtype=int), p.shape))
        sat.append(np.full(p.shape, bool(is_sat)))
        exch.append(np.full(p.shape, bool(is_exch)))

    sample_h = 0.0
    for key, x in case.truth:
        comp = COMPOUND_BY_KEY[key]
        sample_h += x * comp.n_h_counted
        lp, li, ls = compound_lines(key, field)
        jch = np.asarray(comp.j_ch_hz)[ls]
        add(lp, li * x * (1 - 2 * SATELLITE_SHARE), f.line_width_hz, key, ls, False)
        for sign in (1.0, -1.0):
            add(lp + sign * jch / 2 / field, li * x * SATELLITE_SHARE, f.line_width_hz, key, ls, True)
        for i, ((shift, n_h, _), ex) in enumerate(zip(comp.sites, comp.exchangeable, strict=True)):
            if ex:
                add(shift + f.exchange_offset_ppm, n_h * x, f.exchange_width_hz, key, i, False, True)
    if f.chcl3_share:
        a = f.chcl3_share * sample_h
        add(CHCL3_PPM, a * (1 - 2 * SATELLITE_SHARE), f.line_width_hz, "solvent", -1, False)
        add(
            [CHCL3_PPM + CHCL3_JCH_HZ / 2 / field, CHCL3_PPM - CHCL3_JCH_HZ / 2 / field],
            a * SATELLITE_SHARE,
            f.line_width_hz,
            "solvent",
            -1,
            True,
        )
    if f.water_share:
        add(f.water_ppm, f.water_share * sample_h, f.water_width_hz, "water", -1, False)
    if f.tms_share:
        a = f.tms_share * sample_h
        add(
            TMS_PPM, a * (1 - 2 * SI_SATELLITE_SHARE - 2 * SATELLITE_SHARE), f.line_width_hz, "tms", -1, False
        )
        si = SI_SATELLITE_HZ / 2 / field
        add([TMS_PPM + si, TMS_PPM - si], a * SI_SATELLITE_SHARE, f.line_width_hz, "tms", -1, True)
        c = TMS_JCH_HZ / 2 / field
        add([TMS_PPM + c, TMS_PPM - c], a * SATELLITE_SHARE, f.line_width_hz, "tms", -1, True)
    if f.impurity:
        sites, couplings, broad = IMPURITIES[f.impurity]
        if broad:
            for shift, n_h in sites:
                add(shift, n_h * f.impurity_share, _GREASE_WIDTH_HZ, "impurity", -1, False)
        else:
            lp, li = _spin_lines(sites, couplings, field)
            add(lp, li * f.impurity_share, f.line_width_hz, "impurity", -1, False)
    if f.unknown is not None:
        shift, n_partners, j_hz, share = f.unknown
        k = np.arange(n_partners + 1)
        binom = np.array([_binomial(n_partners, i) for i in k], dtype=float)
        pos = shift + (k - n_partners / 2) * j_hz / field
        add(pos, share * sample_h * binom / binom.sum(), f.line_width_hz, "unknown", -1, False)
    return CaseLines(
        ppm=np.concatenate(ppm) + f.ref_offset_ppm,
        area=np.concatenate(area),
        width_hz=np.concatenate(width),
        owner=np.concatenate(owner),
        site=np.concatenate(site),
        satellite=np.concatenate(sat),
        exchangeable=np.concatenate(exch),
    )


def _binomial(n: int, k: int) -> int:
    from math import comb

    return comb(n, k)


def spectrum_grid(case: Case) -> tuple[int, int]:
    """(output points, oversampling factor) for a case's field and digital resolution."""
    sw_hz = (WINDOW_PPM[0] - WINDOW_PPM[1]) * case.field_mhz
    n_out = 2 ** int(round(np.log2(sw_hz / case.faults.resolution_hz)))
    m = 2 ** int(np.ceil(np.log2(max(4.0, sw_hz / n_out / _FINE_HZ))))
    return n_out, m


def _render_complex(lines: CaseLines, mask, case: Case) -> np.ndarray:
    """Complex spectrum (absorption + i dispersion) of the selected lines, on the output grid
    (ppm increasing)."""
    f = case.faults
    n_out, m = spectrum_grid(case)
    n_fine = n_out * m
    lo_hz = WINDOW_PPM[1] * case.field_mhz
    dx = (WINDOW_PPM[0] - WINDOW_PPM[1]) * case.field_mhz / n_fine
    t = np.fft.fftfreq(n_fine, d=dx)
    shape = np.ones(n_fine, dtype=complex)
    if f.gauss_fwhm_hz > 0:
        shape *= np.exp(-((np.pi * f.gauss_fwhm_hz * t) ** 2) / (4 * np.log(2)))
    if f.shoulder_fraction > 0:
        shape *= (1 - f.shoulder_fraction) + f.shoulder_fraction * np.exp(
            2j * np.pi * f.shoulder_offset_hz * t
        )
    total = np.zeros(n_fine, dtype=complex)
    widths = lines.width_hz[mask]
    for w in np.unique(widths):
        sel = np.flatnonzero(mask)[widths == w]
        idx = (lines.ppm[sel] * case.field_mhz - lo_hz) / dx
        inside = (idx >= 0) & (idx < n_fine - 1)
        i0 = np.floor(idx[inside]).astype(int)
        frac = idx[inside] - i0
        a = lines.area[sel][inside] / dx
        sticks = np.zeros(n_fine)
        np.add.at(sticks, i0, a * (1 - frac))
        np.add.at(sticks, i0 + 1, a * frac)
        decay = np.where(t > 0, 2.0 * np.exp(-np.pi * w * np.clip(t, 0, None)), 0.0)
        decay[0] = 1.0
        total += np.fft.fft(np.fft.ifft(sticks) * decay * shape)
    return total[::m]


def render_case(case: Case, *, noise: bool = True) -> Spectrum:
    """The processed-looking spectrum of a case.

    Parameters
    ----------
    case : Case
    noise : bool
        False renders the noise-free spectrum (checks of the synthesis).

    Returns
    -------
    Spectrum
        ppm decreasing over ``WINDOW_PPM``, real intensity, ``solvent="CDCl3"``; the metadata
        carry the case id and the noise sd.
    """
    f = case.faults
    lines = case_lines(case)
    is_sample = np.array([o in COMPOUND_BY_KEY for o in lines.owner])
    sample = _render_complex(lines, is_sample & ~lines.exchangeable, case)
    everything = _render_complex(lines, np.ones(lines.ppm.size, dtype=bool), case)
    n_out, _ = spectrum_grid(case)
    ppm = np.linspace(WINDOW_PPM[1], WINDOW_PPM[0], n_out, endpoint=False)
    scale = TALLEST / float(sample.real.max())
    centre = 0.5 * (WINDOW_PPM[0] + WINDOW_PPM[1])
    span = WINDOW_PPM[0] - WINDOW_PPM[1]
    phase = np.deg2rad(f.phase0_deg + f.phase1_deg * (centre - ppm) / span)
    real = (everything * np.exp(1j * phase)).real * scale
    real += TALLEST * baseline_roll(ppm, f)
    noise_sd = TALLEST / case.snr
    if noise:
        rng = np.random.default_rng(case.seed)
        real += rng.normal(0.0, noise_sd, real.size)
    return Spectrum(
        ppm=ppm[::-1].copy(),
        intensity=real[::-1].copy(),
        field_mhz=case.field_mhz,
        nucleus="1H",
        solvent="CDCl3",
        metadata={"source": "benchmark corpus", "case": case.id, "noise_sd": noise_sd if noise else 0.0},
    )


def baseline_roll(ppm: np.ndarray, faults) -> np.ndarray:
    """Smooth roll (sum of cosines) scaled to the case's amplitude (fraction of the tallest line)."""
    if not faults.baseline_amplitude or not faults.baseline_terms:
        return np.zeros_like(ppm)
    roll = sum(w * np.cos(2 * np.pi * ppm / period + phi) for period, phi, w in faults.baseline_terms)
    return faults.baseline_amplitude * roll / np.abs(roll).max()
