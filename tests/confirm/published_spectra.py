"""Published 1H shifts and couplings of real compounds, and synthetic data built from them.

These values build the synthetic mixtures that check the fitter and the verdict, and the
bundled sample spectra of ``confirm demo``. They never come from our own predictor: each
compound lists where its values come from. ``from memory`` marks values recalled from the
literature (CDCl3, room temperature) and not re-read from the original; treat them as
realistic test spectra, not as reference data.

Sites are listed as ``(shift_ppm, n_h, label)``; couplings as ``(site_i, site_j, j_hz)``.
Para-disubstituted benzene rings are written as two 2H sites with the apparent doublet
splitting N of their AA'XX' pattern, as a chemist quotes it ("d, 8.7, 2H"); the spectra draw
them proton by proton (:func:`spin_arrays`): J_ortho = N - J_para, with the usual benzene meta
(2.4-2.5 Hz) and para (0.35 Hz) couplings (from memory), and :func:`published_system` gives
the model the same proton couplings.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from predictors.core import Candidate, ProtonSite, SpinSystem

#: One-bond C-H couplings used to place 13C satellites (Hz); sp3 ~125-130, sp2 ~155-160.
# common practice (textbook ranges, e.g. Pretsch et al., 13C-1H coupling section; from memory)
J_CH_HZ = {
    "vinyl": 157.0,
    "aryl": 159.0,
    "CH3": 127.0,
    "CH2": 128.0,
    "CH": 130.0,
    "OCH3": 144.0,
    "OCH2": 146.0,
    "OCH": 143.0,
    "CHBr": 152.0,
}
#: Natural abundance of 13C: each satellite carries 0.55 % of its parent line.
SATELLITE_SHARE = 0.0055  # references.md section 5 (each 13C satellite ~0.55 %)


@dataclass(frozen=True)
class PublishedCompound:
    """Published 1H NMR data of one compound (CDCl3)."""

    name: str
    smiles: str
    sites: tuple[tuple[float, int, str], ...]
    couplings: tuple[tuple[int, int, float], ...]
    source: str
    geometry: str | None = None
    regio: str | None = None
    pathways: tuple[str, ...] = ("user",)

    @property
    def n_h(self) -> int:
        return sum(n for _, n, _ in self.sites)


# ---------------------------------------------------------------------------------------------
# The anisyl propene family (demo scenario and 400/60 MHz checks)
# ---------------------------------------------------------------------------------------------

# (E)-anethole, CDCl3: 7.27 (d, 8.7, 2H), 6.84 (d, 8.7, 2H), 6.36 (dq, 15.8, 1.6), 6.11 (dq, 15.8,
# 6.6), 3.80 (s), 1.86 (dd, 6.6, 1.6). Literature values as commonly tabulated for trans-anethole
# (e.g. spectral database entries for 4-propenylanisole) -- from memory.
E_ANETHOLE = PublishedCompound(
    name="(E)-anethole",
    smiles="C/C=C/c1ccc(OC)cc1",
    sites=(
        (7.27, 2, "aryl"),
        (6.84, 2, "aryl"),
        (6.36, 1, "vinyl"),
        (6.11, 1, "vinyl"),
        (3.80, 3, "OCH3"),
        (1.86, 3, "CH3"),
    ),
    # the allylic 4J is printed as a splitting; its sign is negative (Garbisch, J. Am. Chem. Soc.
    # 1964, 86, 5561; Sternhell, Q. Rev. Chem. Soc. 1969, 23, 236), which matters where the vinyl
    # and methyl protons are strongly coupled (60 MHz)
    couplings=((0, 1, 8.7), (2, 3, 15.8), (3, 5, 6.6), (2, 5, -1.6)),
    source="trans-anethole, CDCl3, literature values (from memory)",
    geometry="E",
    regio="more substituted",
    pathways=("E2",),
)

# (Z)-anethole, CDCl3: 7.23 (d, 8.7), 6.88 (d, 8.7), 6.36 (dq, 11.6, 1.8), 5.72 (dq, 11.6, 7.2),
# 3.81 (s), 1.90 (dd, 7.2, 1.8). cis-Anethole literature values -- from memory.
Z_ANETHOLE = PublishedCompound(
    name="(Z)-anethole",
    smiles="C/C=C\\c1ccc(OC)cc1",
    sites=(
        (7.23, 2, "aryl"),
        (6.88, 2, "aryl"),
        (6.36, 1, "vinyl"),
        (5.72, 1, "vinyl"),
        (3.81, 3, "OCH3"),
        (1.90, 3, "CH3"),
    ),
    couplings=((0, 1, 8.7), (2, 3, 11.6), (3, 5, 7.2), (2, 5, -1.8)),  # 4J negative, as above
    source="cis-anethole, CDCl3, literature values (from memory)",
    geometry="Z",
    regio="more substituted",
    pathways=("E2",),
)

# Estragole (4-allylanisole), CDCl3. Multiplet centres measured on the shared real spectrum
# (../shared/real_spectra/README.md, "measured"): 7.14 (d, 8.6, 2H), 6.87 (d, 8.6, 2H),
# 5.98 (ddt, 16.9, 10.1, 6.7), 5.09 (m, 2H), 3.81 (s), 3.36 (d, 6.7, 2H). The split of the
# 5.09 multiplet into 5.08 (trans-H) / 5.06 (cis-H) and the small 4J/2J values are from memory.
ESTRAGOLE = PublishedCompound(
    name="estragole",
    smiles="C=CCc1ccc(OC)cc1",
    sites=(
        (7.14, 2, "aryl"),
        (6.87, 2, "aryl"),
        (5.98, 1, "vinyl"),
        (5.08, 1, "vinyl"),
        (5.06, 1, "vinyl"),
        (3.81, 3, "OCH3"),
        (3.36, 2, "CH2"),
    ),
    couplings=((0, 1, 8.6), (2, 3, 16.9), (2, 4, 10.1), (2, 6, 6.7), (3, 4, 1.9), (3, 6, -1.6), (4, 6, -1.3)),
    source="estragole, CDCl3, measured centres from real_spectra/README.md; 2J/4J from memory",
    regio="less substituted",
    pathways=("E2",),
)

# 1-(4-Methoxyphenyl)propan-2-ol, CDCl3: 7.12 (d, 8.6, 2H), 6.86 (d, 8.6, 2H), 3.97 (m, 1H),
# 3.80 (s, 3H), 2.73 (dd, 13.6, 4.8), 2.63 (dd, 13.6, 7.9), 1.23 (d, 6.2, 3H), OH ~1.6 (br).
# Literature values for the secondary alcohol -- from memory. The OH is left out (exchangeable).
ANISYL_PROPANOL = PublishedCompound(
    name="1-(4-methoxyphenyl)propan-2-ol",
    smiles="CC(O)Cc1ccc(OC)cc1",
    sites=(
        (7.12, 2, "aryl"),
        (6.86, 2, "aryl"),
        (3.97, 1, "OCH"),
        (3.80, 3, "OCH3"),
        (2.73, 1, "CH2"),
        (2.63, 1, "CH2"),
        (1.23, 3, "CH3"),
    ),
    couplings=((0, 1, 8.6), (2, 4, 4.8), (2, 5, 7.9), (2, 6, 6.2), (4, 5, -13.6)),
    source="1-(4-methoxyphenyl)-2-propanol, CDCl3, literature values (from memory)",
    pathways=("SN2",),
)

# 1-(2-Bromopropyl)-4-methoxybenzene, CDCl3: 7.12 (d, 8.6), 6.86 (d, 8.6), 4.22 (m, 1H),
# 3.80 (s), 3.16 (dd, 14.1, 6.9), 2.99 (dd, 14.1, 7.4), 1.68 (d, 6.6). From memory, by analogy
# with (2-bromopropyl)benzene (4.27, 3.22, 3.03, 1.71); approximate.
ANISYL_BROMIDE = PublishedCompound(
    name="1-(2-bromopropyl)-4-methoxybenzene",
    smiles="CC(Br)Cc1ccc(OC)cc1",
    sites=(
        (7.12, 2, "aryl"),
        (6.86, 2, "aryl"),
        (4.22, 1, "CHBr"),
        (3.80, 3, "OCH3"),
        (3.16, 1, "CH2"),
        (2.99, 1, "CH2"),
        (1.68, 3, "CH3"),
    ),
    couplings=((0, 1, 8.6), (2, 4, 6.9), (2, 5, 7.4), (2, 6, 6.6), (4, 5, -14.1)),
    source="2-bromopropyl arene, CDCl3, literature values by analogy (from memory)",
    pathways=("starting material",),
)

# ---------------------------------------------------------------------------------------------
# The ethyl butenoate family (conjugated / deconjugated ester checks)
# ---------------------------------------------------------------------------------------------

# Ethyl (E)-crotonate, CDCl3: 6.97 (dq, 15.6, 6.9), 5.84 (dq, 15.6, 1.7), 4.18 (q, 7.1, 2H),
# 1.87 (dd, 6.9, 1.7, 3H), 1.28 (t, 7.1, 3H). From memory.
E_CROTONATE = PublishedCompound(
    name="ethyl (E)-crotonate",
    smiles="C/C=C/C(=O)OCC",
    sites=((6.97, 1, "vinyl"), (5.84, 1, "vinyl"), (4.18, 2, "OCH2"), (1.87, 3, "CH3"), (1.28, 3, "CH3")),
    couplings=((0, 1, 15.6), (0, 3, 6.9), (1, 3, 1.7), (2, 4, 7.1)),
    source="ethyl trans-crotonate, CDCl3, literature values (from memory)",
    geometry="E",
    regio="more substituted",
    pathways=("E1cB",),
)

# Ethyl (Z)-crotonate (ethyl isocrotonate), CDCl3: 6.36 (dq, 11.5, 7.3), 5.77 (dq, 11.5, 1.8),
# 4.16 (q, 7.1), 2.14 (dd, 7.3, 1.8), 1.28 (t, 7.1). From memory.
Z_CROTONATE = PublishedCompound(
    name="ethyl (Z)-crotonate",
    smiles="C/C=C\\C(=O)OCC",
    sites=((6.36, 1, "vinyl"), (5.77, 1, "vinyl"), (4.16, 2, "OCH2"), (2.14, 3, "CH3"), (1.28, 3, "CH3")),
    couplings=((0, 1, 11.5), (0, 3, 7.3), (1, 3, 1.8), (2, 4, 7.1)),
    source="ethyl cis-crotonate, CDCl3, literature values (from memory)",
    geometry="Z",
    regio="more substituted",
    pathways=("E1cB",),
)

# Ethyl but-3-enoate, CDCl3: 5.92 (ddt, 17.2, 10.2, 6.9), 5.17 (dq, 17.2, 1.5), 5.14 (dq, 10.2,
# 1.4), 4.14 (q, 7.1), 3.07 (dt, 6.9, 1.4, 2H), 1.26 (t, 7.1). From memory.
BUTENOATE = PublishedCompound(
    name="ethyl but-3-enoate",
    smiles="C=CCC(=O)OCC",
    sites=(
        (5.92, 1, "vinyl"),
        (5.17, 1, "vinyl"),
        (5.14, 1, "vinyl"),
        (4.14, 2, "OCH2"),
        (3.07, 2, "CH2"),
        (1.26, 3, "CH3"),
    ),
    couplings=((0, 1, 17.2), (0, 2, 10.2), (0, 4, 6.9), (1, 2, 1.5), (1, 4, -1.5), (2, 4, -1.4), (3, 5, 7.1)),
    source="ethyl 3-butenoate, CDCl3, literature values (from memory)",
    regio="less substituted",
    pathways=("E1cB",),
)

# ---------------------------------------------------------------------------------------------
# Others
# ---------------------------------------------------------------------------------------------

# Butyl acrylate, CDCl3, measured on the shared real spectrum (real_spectra/README.md):
# 6.39 (dd, 17.3, 1.4), 6.11 (dd, 17.3, 10.4), 5.80 (dd, 10.4, 1.4), 4.15 (t, 6.7, 2H),
# 1.66 (m, 2H), 1.40 (m, 2H), 0.94 (t, 7.4, 3H). CH2-CH2 couplings of the chain from memory.
BUTYL_ACRYLATE = PublishedCompound(
    name="butyl acrylate",
    smiles="C=CC(=O)OCCCC",
    sites=(
        (6.39, 1, "vinyl"),
        (6.11, 1, "vinyl"),
        (5.80, 1, "vinyl"),
        (4.15, 2, "OCH2"),
        (1.66, 2, "CH2"),
        (1.40, 2, "CH2"),
        (0.94, 3, "CH3"),
    ),
    couplings=((0, 1, 17.3), (0, 2, 1.4), (1, 2, 10.4), (3, 4, 6.7), (4, 5, 7.4), (5, 6, 7.4)),
    source="butyl acrylate, CDCl3, measured centres from real_spectra/README.md",
)

# Aspirin, CDCl3: 8.12 (dd, 7.9, 1.7), 7.62 (td, 7.8, 1.7), 7.35 (td, 7.7, 1.1), 7.14 (dd, 8.1,
# 1.1), 2.36 (s, 3H); the CO2H (~11 ppm, broad) is left out. real_spectra/README.md (from memory).
ASPIRIN = PublishedCompound(
    name="aspirin",
    smiles="CC(=O)Oc1ccccc1C(=O)O",
    sites=((8.12, 1, "aryl"), (7.62, 1, "aryl"), (7.35, 1, "aryl"), (7.14, 1, "aryl"), (2.36, 3, "CH3")),
    couplings=((0, 1, 1.7), (0, 2, 7.9), (1, 2, 7.6), (1, 3, 8.1), (2, 3, 1.1)),
    source="acetylsalicylic acid, CDCl3, real_spectra/README.md (from memory)",
)

# (E)- and (Z)-3-methylpent-2-ene, CDCl3: one vinyl H (q, 6.7 Hz) near 5.2 ppm, no vicinal
# vinyl-vinyl coupling; E 5.21 / Z 5.13 vinyl, allylic CH3 1.60 / 1.67, CH2 2.01 / 2.05.
# Approximate literature values (from memory) -- the two isomers differ by < 0.1 ppm.
E_METHYLPENTENE = PublishedCompound(
    name="(E)-3-methylpent-2-ene",
    smiles="C/C=C(\\C)CC",
    sites=((5.21, 1, "vinyl"), (1.57, 3, "CH3"), (1.60, 3, "CH3"), (2.01, 2, "CH2"), (0.98, 3, "CH3")),
    couplings=((0, 1, 6.7), (3, 4, 7.5), (0, 2, 1.3)),
    source="(E)-3-methyl-2-pentene, CDCl3, approximate literature values (from memory)",
    geometry="E",
    pathways=("E2",),
)
Z_METHYLPENTENE = PublishedCompound(
    name="(Z)-3-methylpent-2-ene",
    smiles="C/C=C(/C)CC",
    sites=((5.13, 1, "vinyl"), (1.55, 3, "CH3"), (1.67, 3, "CH3"), (2.05, 2, "CH2"), (0.96, 3, "CH3")),
    couplings=((0, 1, 6.8), (3, 4, 7.5), (0, 2, 1.4)),
    source="(Z)-3-methyl-2-pentene, CDCl3, approximate literature values (from memory)",
    geometry="Z",
    pathways=("E2",),
)

ANISYL_FAMILY = (E_ANETHOLE, Z_ANETHOLE, ESTRAGOLE, ANISYL_PROPANOL, ANISYL_BROMIDE)
BUTENOATE_FAMILY = (E_CROTONATE, Z_CROTONATE, BUTENOATE)
ALL_COMPOUNDS = ANISYL_FAMILY + BUTENOATE_FAMILY + (BUTYL_ACRYLATE, ASPIRIN, E_METHYLPENTENE, Z_METHYLPENTENE)


# ---------------------------------------------------------------------------------------------
# Builders
# ---------------------------------------------------------------------------------------------


#: AA'XX' couplings of a para-disubstituted benzene ring beside its ortho coupling (Hz):
#: J(H2,H6) and J(H3,H5) meta, J(H2,H5) para. From memory: J_meta 2.3-2.6, J_para 0.3-0.4 Hz.
_RING_META_HZ = (2.4, 2.5)
_RING_PARA_HZ = 0.35


def ring_pairs(compound: PublishedCompound) -> tuple[tuple[int, int], ...]:
    """Pairs (a, b) of 2H aryl sites coupled to each other: the AA' and XX' halves of a
    para-disubstituted ring."""
    out = []
    for a, b, value in compound.couplings:
        if (compound.sites[a][1] == 2 and compound.sites[b][1] == 2 and compound.sites[a][2] == "aryl"
                and compound.sites[b][2] == "aryl" and abs(value) > 5.0):
            out.append((min(a, b), max(a, b)))
    return tuple(out)


def spin_arrays(compound: PublishedCompound) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """(shifts, couplings, protons, site) of the spins that draw the compound: one spin per site,
    except the protons of a para-disubstituted ring, one spin each (H2, H6 of site a; H3, H5 of
    site b)."""
    j_site = coupling_matrix(compound)
    in_ring = {k: (pair, side) for pair in ring_pairs(compound) for side, k in enumerate(pair)}
    owner, n_h = [], []
    for k, (_, n, _) in enumerate(compound.sites):
        count = 2 if k in in_ring else 1
        owner += [k] * count
        n_h += [1] * count if k in in_ring else [n]
    owner = np.array(owner)
    first = {k: int(np.flatnonzero(owner == k)[0]) for k in in_ring}
    j = j_site[np.ix_(owner, owner)].copy()
    np.fill_diagonal(j, 0.0)
    for (a, b) in ring_pairs(compound):
        h2, h6, h3, h5 = first[a], first[a] + 1, first[b], first[b] + 1
        ortho = j_site[a, b] - _RING_PARA_HZ
        j[h2, h3] = j[h3, h2] = j[h6, h5] = j[h5, h6] = ortho
        j[h2, h5] = j[h5, h2] = j[h6, h3] = j[h3, h6] = _RING_PARA_HZ
        j[h2, h6] = j[h6, h2] = _RING_META_HZ[0]
        j[h3, h5] = j[h5, h3] = _RING_META_HZ[1]
    shifts = np.array([compound.sites[k][0] for k in owner])
    return shifts, j, np.array(n_h), owner


def coupling_matrix(compound: PublishedCompound) -> np.ndarray:
    """Symmetric site coupling matrix (Hz) of a published compound."""
    n = len(compound.sites)
    j = np.zeros((n, n))
    for a, b, value in compound.couplings:
        j[a, b] = j[b, a] = value
    return j


def published_system(
    compound: PublishedCompound,
    *,
    shift_sd_ppm: float = 0.05,
    shift_offsets_ppm=None,
    j_offsets_hz: float = 0.0,
) -> SpinSystem:
    """SpinSystem of a published compound (atom indices are placeholders 0..n_H-1).

    ``shift_offsets_ppm`` (per site) and ``j_offsets_hz`` (added to every non-zero coupling)
    perturb the published values, to test the fitter starting away from the truth.
    """
    offsets = np.zeros(len(compound.sites)) if shift_offsets_ppm is None else np.asarray(shift_offsets_ppm)
    in_ring = {k for pair in ring_pairs(compound) for k in pair}
    sites, start = [], 0
    for k, ((shift, n_h, label), off) in enumerate(zip(compound.sites, offsets, strict=True)):
        sites.append(
            ProtonSite(
                atoms=tuple(range(start, start + n_h)),
                shift_ppm=shift + off,
                shift_sd_ppm=shift_sd_ppm,
                label=label,
                magnetically_equivalent=k not in in_ring,
            )
        )
        start += n_h
    j = coupling_matrix(compound)
    j = np.where(j != 0, j + np.sign(j) * j_offsets_hz, 0.0)
    proton_j = None
    if in_ring:  # proton by proton: each composite spin's protons carry its couplings
        _, j_spin, n_spin, _ = spin_arrays(compound)
        j_spin = np.where(j_spin != 0, j_spin + np.sign(j_spin) * j_offsets_hz, 0.0)
        spin = np.repeat(np.arange(n_spin.size), n_spin)
        proton_j = j_spin[np.ix_(spin, spin)]
        proton_j[spin[:, None] == spin[None, :]] = 0.0
        site = np.repeat(np.arange(len(compound.sites)), [n for _, n, _ in compound.sites])
        for a, b in ring_pairs(compound):  # a site pair's coupling is the mean of its protons'
            j[a, b] = j[b, a] = float(np.mean(proton_j[np.ix_(site == a, site == b)]))
    return SpinSystem(smiles=compound.smiles, sites=tuple(sites), j_hz=j, j_sd_hz=np.where(j != 0, 0.7, 0.0),
                      proton_j_hz=proton_j, split_sites=tuple(sorted(in_ring)))


def published_candidate(compound: PublishedCompound) -> Candidate:
    """Candidate for a published compound, with its geometry, regio and pathway labels."""
    return Candidate(
        smiles=compound.smiles,
        pathways=compound.pathways,
        label=compound.name,
        geometry=compound.geometry,
        regio=compound.regio,
    )


def mixture_lines(mixture, *, field_mhz: float, solvent_lines: bool = True):
    """Line positions (ppm) and intensities of a mixture, with 13C satellites and solvent.

    Parameters
    ----------
    mixture : sequence of (PublishedCompound, float)
        Compounds and their amounts in molecules (any unit).
    field_mhz : float
    solvent_lines : bool
        Add residual CHCl3 (7.26 ppm, Gottlieb et al., J. Org. Chem. 1997, 62, 7512), water (1.56)
        and TMS (0.00), each with its satellites.
    """
    from predictors.spin import simulate_arrays

    ppm, inten = [], []
    for compound, amount in mixture:
        shifts, j, n_h, owner = spin_arrays(compound)
        lines = simulate_arrays(shifts, j, n_h, field_mhz=field_mhz)
        labels = np.array([compound.sites[i][2] for i in owner[lines.site_index]])
        half = np.array([J_CH_HZ.get(lab, 130.0) for lab in labels]) / 2.0 / field_mhz
        base_ppm, base_i = np.asarray(lines.ppm), np.asarray(lines.intensity) * amount
        ppm += [base_ppm, base_ppm + half, base_ppm - half]
        inten += [base_i * (1 - 2 * SATELLITE_SHARE), base_i * SATELLITE_SHARE, base_i * SATELLITE_SHARE]
    ppm, inten = np.concatenate(ppm), np.concatenate(inten)
    widths = np.full(ppm.size, 0.0)
    if solvent_lines:
        total = sum(amount * c.n_h for c, amount in mixture)
        extra = [
            (7.26, 0.02 * total, 0.0, 209.0),
            (1.56, 0.03 * total, 3.0, 0.0),
            (0.00, 0.01 * total, 0.0, 118.0),
        ]
        for shift, area, extra_width, j_ch in extra:
            sat = SATELLITE_SHARE if j_ch else 0.0
            ppm = np.concatenate([ppm, [shift, shift + j_ch / 2 / field_mhz, shift - j_ch / 2 / field_mhz]])
            inten = np.concatenate([inten, [area * (1 - 2 * sat), area * sat, area * sat]])
            widths = np.concatenate([widths, [extra_width] * 3])
    return ppm, inten, widths


def synthesize_fid(
    mixture,
    *,
    field_mhz: float,
    sw_hz: float,
    n_points: int,
    carrier_ppm: float = 5.0,
    line_width_hz: float = 1.0,
    snr: float = 300.0,
    phase_deg: float = 0.0,
    group_delay_points: float = 0.0,
    baseline_roll: float = 0.0,
    seed: int = 0,
    solvent_lines: bool = True,
) -> np.ndarray:
    """Complex FID of a mixture, as a spectrometer with a digital filter would record it.

    The signal is a sum of exponentially decaying complex lines (Lorentzian of FWHM
    ``line_width_hz``) with a zero-order phase error, optionally delayed by a fractional
    number of points (the digital-filter group delay), plus complex white noise scaled so
    that the tallest line stands ``snr`` times the noise sd above zero after a plain FFT, plus
    a baseline roll from a distorted first point.
    """
    rng = np.random.default_rng(seed)
    ppm, inten, extra_w = mixture_lines(mixture, field_mhz=field_mhz, solvent_lines=solvent_lines)
    freq_hz = (ppm - carrier_ppm) * field_mhz
    keep = np.abs(freq_hz) < sw_hz / 2
    t = np.arange(n_points) / sw_hz
    decay = np.pi * (line_width_hz + extra_w[keep])
    fid = (inten[keep, None] * np.exp((2j * np.pi * freq_hz[keep, None] - decay[:, None]) * t[None, :])).sum(
        0
    )
    fid *= np.exp(1j * np.deg2rad(phase_deg))
    fid[0] *= 0.5  # the first point of a sampled FID carries half weight in the discrete transform
    peak = np.abs(np.fft.fft(fid)).max()
    noise_sd = peak / snr / np.sqrt(n_points)
    fid = fid + noise_sd * (rng.standard_normal(n_points) + 1j * rng.standard_normal(n_points))
    fid[0] += baseline_roll * np.abs(fid[0]) * np.exp(1j * 0.7)
    if group_delay_points:
        k = np.fft.fftfreq(n_points)
        fid = np.fft.ifft(np.fft.fft(fid) * np.exp(-2j * np.pi * k * group_delay_points))
    return fid
