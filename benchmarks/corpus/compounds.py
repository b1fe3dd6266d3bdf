"""Published 1H NMR parameters (CDCl3) of real compounds, grouped into reaction families.

This is the data of the benchmark corpus (issue 13). Every value comes from published spectra,
never from our own predictor (``predictors/`` is not used to make or check them). Where the
original was not re-read, the source says ``from memory``: such values are realistic test
spectra (shifts to about 0.02 ppm, couplings to about 0.5 Hz), not reference data.

Conventions
-----------
- ``sites``: ``(shift_ppm, n_h, label)``. A site is a group of protons that is treated as
  magnetically equivalent by the spin simulation.
- Aromatic rings are written proton by proton (``_mono_ring``, ``_para_ring``), so the exact
  simulation draws the real AA'BB'C / AA'XX' patterns, not A2B2C / A2X2 approximations. Their
  meta and para couplings are the usual benzene values (from memory: J_o 7.4-8.6, J_m 1.3-2.5,
  J_p 0.3-0.6 Hz).
- Two identical groups that couple to different partners (the two ethyls of a diester, the two
  halves of a symmetric ring) are written as separate sites, for the same reason.
- Mirror-related CH2 protons of cyclohexane rings are grouped as 2H sites: their multiplets are
  unresolved envelopes at 1.1-2.1 ppm and the simplification only changes fine structure.
- A diastereotopic CH2 next to a stereocentre is written as two 1H sites with their geminal
  coupling (negative, sp3).
- ``couplings``: ``(site_i, site_j, j_hz)``, signed where the sign is known (2J sp3 negative,
  allylic 4J negative, aromatic and vicinal J positive).
- Exchangeable protons (labels in ``EXCHANGEABLE_LABELS``) are rendered as broad lines and are
  not used to count molecules.
- One-bond 1J(C,H) for the 13C satellites: class values by label (``J_CH_CLASS_HZ``, common
  practice), unless a compound gives its own ``one_bond_ch_hz``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: Labels of exchangeable protons: broad lines, not counted in mole fractions.
EXCHANGEABLE_LABELS = frozenset({"OH", "NH", "CO2H"})

#: One-bond C-H couplings by site class (Hz), to place 13C satellites.
# common practice: textbook ranges (sp3 125-130, O-CH 140-148, sp2 155-160 Hz; from memory)
J_CH_CLASS_HZ = {
    "vinyl": 156.0,
    "aryl": 160.0,
    "CH3": 127.0,
    "CH2": 128.0,
    "CH": 130.0,
    "OCH3": 144.0,
    "OCH2": 145.0,
    "OCH": 143.0,
    "CHBr": 152.0,
    "CHCl": 150.0,
}


@dataclass(frozen=True)
class Compound:
    """Published 1H parameters of one compound (CDCl3).

    Attributes
    ----------
    key : str
        Short identifier used by families, identity sets and cases.
    name : str
    smiles : str
        Isomeric SMILES.
    sites : tuple of (shift_ppm, n_h, label)
    couplings : tuple of (site_i, site_j, j_hz)
    source : str
        Citation, or ``"from memory: ..."``.
    one_bond_ch_hz : tuple of float, optional
        1J(C,H) per site (Hz); empty: class values by label.
    """

    key: str
    name: str
    smiles: str
    sites: tuple[tuple[float, int, str], ...]
    couplings: tuple[tuple[int, int, float], ...]
    source: str
    one_bond_ch_hz: tuple[float, ...] = ()

    @property
    def shifts_ppm(self) -> np.ndarray:
        return np.array([s[0] for s in self.sites], dtype=float)

    @property
    def n_protons(self) -> np.ndarray:
        return np.array([s[1] for s in self.sites], dtype=int)

    @property
    def exchangeable(self) -> tuple[bool, ...]:
        """Per site: True for OH/NH/CO2H protons (broad, not counted)."""
        return tuple(s[2] in EXCHANGEABLE_LABELS for s in self.sites)

    @property
    def n_h_counted(self) -> int:
        """Non-exchangeable protons (the ones that count molecules)."""
        return int(sum(n for (_, n, _), ex in zip(self.sites, self.exchangeable, strict=True) if not ex))

    @property
    def j_ch_hz(self) -> tuple[float, ...]:
        """1J(C,H) of each site (Hz); 0 for exchangeable sites (no satellites drawn)."""
        if self.one_bond_ch_hz:
            return tuple(self.one_bond_ch_hz)
        return tuple(
            0.0 if ex else J_CH_CLASS_HZ.get(s[2], 130.0)
            for s, ex in zip(self.sites, self.exchangeable, strict=True)
        )

    def coupling_matrix(self) -> np.ndarray:
        """Symmetric site coupling matrix (Hz)."""
        n = len(self.sites)
        j = np.zeros((n, n))
        for a, b, value in self.couplings:
            j[a, b] = j[b, a] = value
        return j


# ---------------------------------------------------------------------------------------------
# Ring helpers (keep the per-compound tables short; the couplings are benzene's, from memory)
# ---------------------------------------------------------------------------------------------


def _mono_ring(ortho: float, meta: float, para: float) -> tuple[tuple[float, int, str], ...]:
    """Sites of a monosubstituted benzene ring, in the order o, m, p, m', o'."""
    return ((ortho, 1, "aryl"), (meta, 1, "aryl"), (para, 1, "aryl"), (meta, 1, "aryl"), (ortho, 1, "aryl"))


def _mono_ring_j(first: int, *, j_om: float = 7.7, j_mp: float = 7.4) -> tuple[tuple[int, int, float], ...]:
    """Couplings of a ``_mono_ring`` whose sites start at index ``first``.

    from memory: monosubstituted benzenes J_om 7.5-7.9, J_mp 7.3-7.5, meta 1.3-1.9, para 0.6 Hz.
    """
    o, m, p, m2, o2 = range(first, first + 5)
    return (
        (o, m, j_om),
        (m, p, j_mp),
        (p, m2, j_mp),
        (m2, o2, j_om),
        (o, p, 1.3),
        (p, o2, 1.3),
        (o, o2, 1.9),
        (m, m2, 1.4),
        (o, m2, 0.6),
        (m, o2, 0.6),
    )


def _para_ring(a: float, b: float) -> tuple[tuple[float, int, str], ...]:
    """Sites of a para-disubstituted ring, in the order H2, H3, H5, H6 (AA'XX')."""
    return ((a, 1, "aryl"), (b, 1, "aryl"), (b, 1, "aryl"), (a, 1, "aryl"))


def _para_ring_j(first: int, *, j_ortho: float) -> tuple[tuple[int, int, float], ...]:
    """Couplings of a ``_para_ring`` (from memory: J_meta 2.3-2.6, J_para 0.3-0.4 Hz)."""
    h2, h3, h5, h6 = range(first, first + 4)
    return (
        (h2, h3, j_ortho),
        (h5, h6, j_ortho),
        (h2, h6, 2.4),
        (h3, h5, 2.5),
        (h2, h5, 0.35),
        (h3, h6, 0.35),
    )


_PUB = "tests/confirm/published_spectra.py"

# ---------------------------------------------------------------------------------------------
# The compounds. Each comment line gives the spectrum as a chemist would quote it.
# ---------------------------------------------------------------------------------------------

COMPOUNDS: tuple[Compound, ...] = (
    # ---- 1-phenylpropyl family --------------------------------------------------------------
    # 7.31 (m, 2H), 7.25-7.18 (m, 3H), 4.27 (m, 1H), 3.22 (dd, 14.0, 6.9), 3.03 (dd, 14.0, 7.4),
    # 1.71 (d, 6.7, 3H)
    Compound(
        "phenylpropyl_bromide",
        "(2-bromopropyl)benzene",
        "CC(Br)Cc1ccccc1",
        _mono_ring(7.20, 7.31, 7.25)
        + ((4.27, 1, "CHBr"), (3.22, 1, "CH2"), (3.03, 1, "CH2"), (1.71, 3, "CH3")),
        _mono_ring_j(0) + ((5, 6, 6.9), (5, 7, 7.4), (5, 8, 6.7), (6, 7, -14.0)),
        "from memory: (2-bromopropyl)benzene, CDCl3, literature values",
    ),
    # 7.31 (m, 2H), 7.22 (m, 3H), 4.02 (m, 1H), 2.78 (dd, 13.5, 4.8), 2.68 (dd, 13.5, 8.0),
    # 1.24 (d, 6.2, 3H), 1.55 (br s, OH)
    Compound(
        "phenylpropanol",
        "1-phenylpropan-2-ol",
        "CC(O)Cc1ccccc1",
        _mono_ring(7.21, 7.31, 7.23)
        + ((4.02, 1, "OCH"), (2.78, 1, "CH2"), (2.68, 1, "CH2"), (1.24, 3, "CH3"), (1.55, 1, "OH")),
        _mono_ring_j(0) + ((5, 6, 4.8), (5, 7, 8.0), (5, 8, 6.2), (6, 7, -13.5)),
        "from memory: 1-phenyl-2-propanol, CDCl3, literature values",
    ),
    # 7.34 (d, 2H), 7.28 (t, 2H), 7.18 (t, 1H), 6.40 (dq, 15.8, 1.6), 6.23 (dq, 15.8, 6.5),
    # 1.88 (dd, 6.5, 1.6, 3H)
    Compound(
        "e_methylstyrene",
        "(E)-prop-1-enylbenzene",
        "C/C=C/c1ccccc1",
        _mono_ring(7.34, 7.28, 7.18) + ((6.40, 1, "vinyl"), (6.23, 1, "vinyl"), (1.88, 3, "CH3")),
        _mono_ring_j(0) + ((5, 6, 15.8), (6, 7, 6.5), (5, 7, -1.6)),
        "from memory: trans-beta-methylstyrene, CDCl3, literature values",
    ),
    # 7.33 (m, 2H), 7.27 (m, 2H), 7.21 (m, 1H), 6.44 (dq, 11.6, 1.8), 5.78 (dq, 11.6, 7.2),
    # 1.90 (dd, 7.2, 1.8, 3H)
    Compound(
        "z_methylstyrene",
        "(Z)-prop-1-enylbenzene",
        "C/C=C\\c1ccccc1",
        _mono_ring(7.27, 7.33, 7.21) + ((6.44, 1, "vinyl"), (5.78, 1, "vinyl"), (1.90, 3, "CH3")),
        _mono_ring_j(0) + ((5, 6, 11.6), (6, 7, 7.2), (5, 7, -1.8)),
        "from memory: cis-beta-methylstyrene, CDCl3, literature values",
    ),
    # 7.30 (m, 2H), 7.20 (m, 3H), 5.97 (ddt, 17.0, 10.1, 6.7), 5.09 (dq, 17.0, 1.7),
    # 5.07 (dq, 10.1, 1.5), 3.39 (d, 6.7, 2H)
    Compound(
        "allylbenzene",
        "allylbenzene",
        "C=CCc1ccccc1",
        _mono_ring(7.19, 7.30, 7.21)
        + ((5.97, 1, "vinyl"), (5.09, 1, "vinyl"), (5.07, 1, "vinyl"), (3.39, 2, "CH2")),
        _mono_ring_j(0) + ((5, 6, 17.0), (5, 7, 10.1), (5, 8, 6.7), (6, 7, 1.8), (6, 8, -1.6), (7, 8, -1.4)),
        "from memory: allylbenzene, CDCl3, literature values",
    ),
    # ---- 1-phenylethyl family ---------------------------------------------------------------
    # 7.44 (d, 2H), 7.34 (t, 2H), 7.28 (t, 1H), 5.21 (q, 6.9), 2.04 (d, 6.9, 3H)
    Compound(
        "phenylethyl_bromide",
        "(1-bromoethyl)benzene",
        "CC(Br)c1ccccc1",
        _mono_ring(7.44, 7.34, 7.28) + ((5.21, 1, "CHBr"), (2.04, 3, "CH3")),
        _mono_ring_j(0) + ((5, 6, 6.9),),
        "from memory: (1-bromoethyl)benzene, CDCl3, literature values",
    ),
    # 7.37-7.33 (m, 4H), 7.27 (m, 1H), 4.89 (q, 6.5), 1.85 (br s, OH), 1.49 (d, 6.5, 3H)
    Compound(
        "phenylethanol",
        "1-phenylethanol",
        "CC(O)c1ccccc1",
        _mono_ring(7.37, 7.34, 7.27) + ((4.89, 1, "OCH"), (1.49, 3, "CH3"), (1.85, 1, "OH")),
        _mono_ring_j(0, j_mp=7.3) + ((5, 6, 6.5),),
        "from memory: 1-phenylethanol, CDCl3, literature values",
    ),
    # 7.41 (d, 2H), 7.33 (t, 2H), 7.26 (t, 1H), 6.72 (dd, 17.6, 10.9), 5.75 (dd, 17.6, 0.9),
    # 5.24 (dd, 10.9, 0.9)
    Compound(
        "styrene",
        "styrene",
        "C=Cc1ccccc1",
        _mono_ring(7.41, 7.33, 7.26) + ((6.72, 1, "vinyl"), (5.75, 1, "vinyl"), (5.24, 1, "vinyl")),
        _mono_ring_j(0) + ((5, 6, 17.6), (5, 7, 10.9), (6, 7, 0.9)),
        "from memory: styrene, CDCl3, literature values",
    ),
    # 7.33 (m, 4H), 7.25 (m, 1H), 4.40 (q, 6.5), 3.39 (dq, 9.3, 7.0), 3.34 (dq, 9.3, 7.0),
    # 1.43 (d, 6.5, 3H), 1.19 (t, 7.0, 3H)
    Compound(
        "phenylethyl_ethyl_ether",
        "(1-ethoxyethyl)benzene",
        "CCOC(C)c1ccccc1",
        _mono_ring(7.33, 7.32, 7.25)
        + ((4.40, 1, "OCH"), (3.39, 1, "OCH2"), (3.34, 1, "OCH2"), (1.43, 3, "CH3"), (1.19, 3, "CH3")),
        _mono_ring_j(0) + ((5, 8, 6.5), (6, 7, -9.3), (6, 9, 7.0), (7, 9, 7.0)),
        "from memory: 1-phenylethyl ethyl ether, CDCl3, literature values",
    ),
    # ---- 2-hexyl family ---------------------------------------------------------------------
    # 4.14 (m, 1H), 1.84 (m, 1H), 1.73 (m, 1H), 1.71 (d, 6.7, 3H), 1.45 (m, 2H), 1.34 (m, 2H),
    # 0.91 (t, 7.2, 3H)
    Compound(
        "bromohexane",
        "2-bromohexane",
        "CCCCC(C)Br",
        (
            (4.14, 1, "CHBr"),
            (1.84, 1, "CH2"),
            (1.73, 1, "CH2"),
            (1.71, 3, "CH3"),
            (1.45, 2, "CH2"),
            (1.34, 2, "CH2"),
            (0.91, 3, "CH3"),
        ),
        (
            (0, 1, 8.3),
            (0, 2, 5.9),
            (0, 3, 6.7),
            (1, 2, -14.0),
            (1, 4, 7.6),
            (2, 4, 7.3),
            (4, 5, 7.3),
            (5, 6, 7.2),
        ),
        "from memory: 2-bromohexane, CDCl3, literature values",
    ),
    # 3.80 (m, 1H), 1.6 (br s, OH), 1.48-1.28 (m, 6H), 1.19 (d, 6.2, 3H), 0.91 (t, 7.1, 3H)
    Compound(
        "hexanol_2",
        "hexan-2-ol",
        "CCCCC(C)O",
        (
            (3.80, 1, "OCH"),
            (1.46, 1, "CH2"),
            (1.40, 1, "CH2"),
            (1.35, 2, "CH2"),
            (1.31, 2, "CH2"),
            (1.19, 3, "CH3"),
            (0.91, 3, "CH3"),
            (1.60, 1, "OH"),
        ),
        (
            (0, 1, 7.6),
            (0, 2, 5.2),
            (0, 5, 6.2),
            (1, 2, -13.5),
            (1, 3, 7.5),
            (2, 3, 7.5),
            (3, 4, 7.3),
            (4, 6, 7.1),
        ),
        "from memory: 2-hexanol, CDCl3, literature values",
    ),
    # 5.81 (ddt, 17.1, 10.2, 6.7), 4.99 (dq, 17.1, 1.7), 4.93 (ddt, 10.2, 2.1, 1.2), 2.05 (m, 2H),
    # 1.38 (m, 2H), 1.33 (m, 2H), 0.90 (t, 7.2, 3H)
    Compound(
        "hexene_1",
        "hex-1-ene",
        "C=CCCCC",
        (
            (5.81, 1, "vinyl"),
            (4.99, 1, "vinyl"),
            (4.93, 1, "vinyl"),
            (2.05, 2, "CH2"),
            (1.38, 2, "CH2"),
            (1.33, 2, "CH2"),
            (0.90, 3, "CH3"),
        ),
        (
            (0, 1, 17.1),
            (0, 2, 10.2),
            (0, 3, 6.7),
            (1, 2, 2.1),
            (1, 3, -1.6),
            (2, 3, -1.2),
            (3, 4, 7.4),
            (4, 5, 7.3),
            (5, 6, 7.2),
        ),
        "from memory: 1-hexene, CDCl3, literature values",
    ),
    # 5.44 (dqt, 15.2, 6.2, 1.3), 5.40 (dtq, 15.2, 6.5, 1.5), 1.96 (m, 2H), 1.64 (dd, 6.2, 1.5, 3H),
    # 1.37 (sext, 7.4, 2H), 0.88 (t, 7.4, 3H)
    Compound(
        "e_hexene_2",
        "(E)-hex-2-ene",
        "C/C=C/CCC",
        (
            (5.44, 1, "vinyl"),
            (5.40, 1, "vinyl"),
            (1.96, 2, "CH2"),
            (1.64, 3, "CH3"),
            (1.37, 2, "CH2"),
            (0.88, 3, "CH3"),
        ),
        ((0, 1, 15.2), (0, 3, 6.2), (1, 3, -1.5), (0, 2, -1.3), (1, 2, 6.5), (2, 4, 7.4), (4, 5, 7.4)),
        "from memory: trans-2-hexene, CDCl3, literature values",
    ),
    # 5.46 (m, 1H), 5.38 (m, 1H), 2.01 (q, 7.2, 2H), 1.60 (d, 6.7, 3H), 1.37 (m, 2H), 0.90 (t, 3H)
    Compound(
        "z_hexene_2",
        "(Z)-hex-2-ene",
        "C/C=C\\CCC",
        (
            (5.46, 1, "vinyl"),
            (5.38, 1, "vinyl"),
            (2.01, 2, "CH2"),
            (1.60, 3, "CH3"),
            (1.37, 2, "CH2"),
            (0.90, 3, "CH3"),
        ),
        ((0, 1, 10.8), (0, 3, 6.7), (1, 3, -1.7), (0, 2, -1.5), (1, 2, 7.2), (2, 4, 7.4), (4, 5, 7.4)),
        "from memory: cis-2-hexene, CDCl3, literature values",
    ),
    # ---- ethyl 3-hydroxybutanoate family (E1cB) ---------------------------------------------
    # 4.21 (m, 1H), 4.17 (q, 7.1, 2H), 2.95 (br d, OH), 2.49 (dd, 16.5, 3.4), 2.40 (dd, 16.5, 8.8),
    # 1.27 (t, 7.1, 3H), 1.23 (d, 6.3, 3H)
    Compound(
        "hydroxybutanoate",
        "ethyl 3-hydroxybutanoate",
        "CC(O)CC(=O)OCC",
        (
            (4.21, 1, "OCH"),
            (4.17, 2, "OCH2"),
            (2.49, 1, "CH2"),
            (2.40, 1, "CH2"),
            (1.27, 3, "CH3"),
            (1.23, 3, "CH3"),
            (2.95, 1, "OH"),
        ),
        ((0, 2, 3.4), (0, 3, 8.8), (0, 5, 6.3), (2, 3, -16.5), (1, 4, 7.1)),
        "from memory: ethyl 3-hydroxybutyrate, CDCl3, literature values",
    ),
    Compound(
        "e_crotonate",
        "ethyl (E)-but-2-enoate",
        "C/C=C/C(=O)OCC",
        ((6.97, 1, "vinyl"), (5.84, 1, "vinyl"), (4.18, 2, "OCH2"), (1.87, 3, "CH3"), (1.28, 3, "CH3")),
        ((0, 1, 15.6), (0, 3, 6.9), (1, 3, -1.7), (2, 4, 7.1)),
        f"{_PUB} (ethyl trans-crotonate, from memory there); allylic 4J sign negative (from memory)",
    ),
    Compound(
        "z_crotonate",
        "ethyl (Z)-but-2-enoate",
        "C/C=C\\C(=O)OCC",
        ((6.36, 1, "vinyl"), (5.77, 1, "vinyl"), (4.16, 2, "OCH2"), (2.14, 3, "CH3"), (1.28, 3, "CH3")),
        ((0, 1, 11.5), (0, 3, 7.3), (1, 3, -1.8), (2, 4, 7.1)),
        f"{_PUB} (ethyl cis-crotonate, from memory there); allylic 4J sign negative (from memory)",
    ),
    Compound(
        "butenoate",
        "ethyl but-3-enoate",
        "C=CCC(=O)OCC",
        (
            (5.92, 1, "vinyl"),
            (5.17, 1, "vinyl"),
            (5.14, 1, "vinyl"),
            (4.14, 2, "OCH2"),
            (3.07, 2, "CH2"),
            (1.26, 3, "CH3"),
        ),
        ((0, 1, 17.2), (0, 2, 10.2), (0, 4, 6.9), (1, 2, 1.5), (1, 4, -1.5), (2, 4, -1.4), (3, 5, 7.1)),
        f"{_PUB} (ethyl 3-butenoate, from memory there)",
    ),
    # ---- methyl cinnamate family ------------------------------------------------------------
    # 7.38-7.27 (m, 5H), 5.14 (dd, 8.9, 3.8), 3.72 (s, 3H), 3.25 (br, OH), 2.77 (dd, 16.4, 8.9),
    # 2.71 (dd, 16.4, 3.8)
    Compound(
        "hydroxy_phenylpropanoate",
        "methyl 3-hydroxy-3-phenylpropanoate",
        "COC(=O)CC(O)c1ccccc1",
        _mono_ring(7.37, 7.35, 7.29)
        + ((5.14, 1, "OCH"), (3.72, 3, "OCH3"), (2.77, 1, "CH2"), (2.71, 1, "CH2"), (3.25, 1, "OH")),
        _mono_ring_j(0) + ((5, 7, 8.9), (5, 8, 3.8), (7, 8, -16.4)),
        "from memory: methyl 3-hydroxy-3-phenylpropanoate (aldol/Reformatsky product), CDCl3",
    ),
    # 7.70 (d, 16.0), 7.53 (m, 2H), 7.39 (m, 3H), 6.44 (d, 16.0), 3.81 (s, 3H)
    Compound(
        "e_cinnamate",
        "methyl (E)-cinnamate",
        "COC(=O)/C=C/c1ccccc1",
        _mono_ring(7.53, 7.39, 7.38) + ((7.70, 1, "vinyl"), (6.44, 1, "vinyl"), (3.81, 3, "OCH3")),
        _mono_ring_j(0, j_om=7.6, j_mp=7.3) + ((5, 6, 16.0),),
        "from memory: methyl trans-cinnamate, CDCl3, literature values",
    ),
    # 7.58 (m, 2H), 7.35 (m, 3H), 6.95 (d, 12.6), 5.95 (d, 12.6), 3.71 (s, 3H)
    Compound(
        "z_cinnamate",
        "methyl (Z)-cinnamate",
        "COC(=O)/C=C\\c1ccccc1",
        _mono_ring(7.58, 7.35, 7.33) + ((6.95, 1, "vinyl"), (5.95, 1, "vinyl"), (3.71, 3, "OCH3")),
        _mono_ring_j(0, j_om=7.6, j_mp=7.3) + ((5, 6, 12.6),),
        "from memory: methyl cis-cinnamate, CDCl3, literature values",
    ),
    # ---- benzylideneacetone family ----------------------------------------------------------
    # 7.38-7.27 (m, 5H), 5.16 (dd, 9.0, 3.4), 3.30 (br, OH), 2.89 (dd, 17.6, 9.0),
    # 2.83 (dd, 17.6, 3.4), 2.20 (s, 3H)
    Compound(
        "aldol_ketone",
        "4-hydroxy-4-phenylbutan-2-one",
        "CC(=O)CC(O)c1ccccc1",
        _mono_ring(7.36, 7.34, 7.28)
        + ((5.16, 1, "OCH"), (2.89, 1, "CH2"), (2.83, 1, "CH2"), (2.20, 3, "CH3"), (3.30, 1, "OH")),
        _mono_ring_j(0, j_mp=7.2) + ((5, 6, 9.0), (5, 7, 3.4), (6, 7, -17.6)),
        "from memory: 4-hydroxy-4-phenyl-2-butanone (acetone-benzaldehyde aldol), CDCl3",
    ),
    # 7.54 (m, 2H), 7.50 (d, 16.3), 7.40 (m, 3H), 6.72 (d, 16.3), 2.38 (s, 3H)
    Compound(
        "e_benzalacetone",
        "(E)-4-phenylbut-3-en-2-one",
        "CC(=O)/C=C/c1ccccc1",
        _mono_ring(7.54, 7.40, 7.39) + ((7.50, 1, "vinyl"), (6.72, 1, "vinyl"), (2.38, 3, "CH3")),
        _mono_ring_j(0, j_om=7.6, j_mp=7.3) + ((5, 6, 16.3),),
        "from memory: trans-benzalacetone, CDCl3, literature values",
    ),
    # 7.47 (m, 2H), 7.36-7.33 (m, 3H), 6.90 (d, 12.7), 6.17 (d, 12.7), 2.14 (s, 3H)
    Compound(
        "z_benzalacetone",
        "(Z)-4-phenylbut-3-en-2-one",
        "CC(=O)/C=C\\c1ccccc1",
        _mono_ring(7.47, 7.36, 7.34) + ((6.90, 1, "vinyl"), (6.17, 1, "vinyl"), (2.14, 3, "CH3")),
        _mono_ring_j(0, j_om=7.6, j_mp=7.3) + ((5, 6, 12.7),),
        "from memory: cis-benzalacetone (photoisomer), CDCl3, approximate literature values",
    ),
    # ---- diethyl malate family --------------------------------------------------------------
    # 4.48 (m, 1H), 4.27 (q, 7.1, 2H), 4.16 (q, 7.1, 2H), 3.22 (br, OH), 2.83 (dd, 16.4, 4.5),
    # 2.77 (dd, 16.4, 6.1), 1.30 (t, 7.1, 3H), 1.26 (t, 7.1, 3H)
    Compound(
        "diethyl_malate",
        "diethyl 2-hydroxybutanedioate",
        "CCOC(=O)CC(O)C(=O)OCC",
        (
            (4.48, 1, "OCH"),
            (4.27, 2, "OCH2"),
            (4.16, 2, "OCH2"),
            (2.83, 1, "CH2"),
            (2.77, 1, "CH2"),
            (1.30, 3, "CH3"),
            (1.26, 3, "CH3"),
            (3.22, 1, "OH"),
        ),
        ((0, 3, 4.5), (0, 4, 6.1), (3, 4, -16.4), (1, 5, 7.1), (2, 6, 7.1)),
        "from memory: diethyl malate, CDCl3, literature values",
    ),
    # 6.85 (s, 2H), 4.25 (q, 7.1, 4H), 1.31 (t, 7.1, 6H)
    Compound(
        "diethyl_fumarate",
        "diethyl (E)-but-2-enedioate",
        "CCOC(=O)/C=C/C(=O)OCC",
        ((6.85, 2, "vinyl"), (4.25, 2, "OCH2"), (4.25, 2, "OCH2"), (1.31, 3, "CH3"), (1.31, 3, "CH3")),
        ((1, 3, 7.1), (2, 4, 7.1)),
        "from memory: diethyl fumarate, CDCl3, literature values",
    ),
    # 6.23 (s, 2H), 4.23 (q, 7.1, 4H), 1.30 (t, 7.1, 6H)
    Compound(
        "diethyl_maleate",
        "diethyl (Z)-but-2-enedioate",
        "CCOC(=O)/C=C\\C(=O)OCC",
        ((6.23, 2, "vinyl"), (4.23, 2, "OCH2"), (4.23, 2, "OCH2"), (1.30, 3, "CH3"), (1.30, 3, "CH3")),
        ((1, 3, 7.1), (2, 4, 7.1)),
        "from memory: diethyl maleate, CDCl3, literature values",
    ),
    # ---- tert-amyl family (E1 / SN1) --------------------------------------------------------
    # 1.50 (q, 7.5, 2H), 1.35 (br s, OH), 1.21 (s, 6H), 0.93 (t, 7.5, 3H)
    Compound(
        "tert_amyl_alcohol",
        "2-methylbutan-2-ol",
        "CCC(C)(C)O",
        ((1.50, 2, "CH2"), (1.21, 6, "CH3"), (0.93, 3, "CH3"), (1.35, 1, "OH")),
        ((0, 2, 7.5),),
        "from memory: tert-amyl alcohol, CDCl3, literature values",
    ),
    # 5.19 (m, 1H), 1.69 (br s, 3H), 1.60 (br s, 3H), 1.57 (d, 6.7, 3H)
    Compound(
        "methylbutene_2",
        "2-methylbut-2-ene",
        "CC=C(C)C",
        ((5.19, 1, "vinyl"), (1.69, 3, "CH3"), (1.60, 3, "CH3"), (1.57, 3, "CH3")),
        ((0, 3, 6.7), (0, 1, -1.4), (0, 2, -1.3)),
        "from memory: 2-methyl-2-butene, CDCl3, literature values",
    ),
    # 4.68 (m, 1H), 4.65 (m, 1H), 2.01 (q, 7.4, 2H), 1.71 (s, 3H), 1.02 (t, 7.4, 3H)
    Compound(
        "methylbutene_1",
        "2-methylbut-1-ene",
        "C=C(C)CC",
        ((4.68, 1, "vinyl"), (4.65, 1, "vinyl"), (2.01, 2, "CH2"), (1.71, 3, "CH3"), (1.02, 3, "CH3")),
        ((0, 1, 1.8), (0, 3, -1.4), (1, 3, -1.0), (0, 2, -1.0), (1, 2, -1.2), (2, 4, 7.4)),
        "from memory: 2-methyl-1-butene, CDCl3, literature values",
    ),
    # 1.76 (q, 7.4, 2H), 1.57 (s, 6H), 1.03 (t, 7.4, 3H)
    Compound(
        "tert_amyl_chloride",
        "2-chloro-2-methylbutane",
        "CCC(C)(C)Cl",
        ((1.76, 2, "CH2"), (1.57, 6, "CH3"), (1.03, 3, "CH3")),
        ((0, 2, 7.4),),
        "from memory: tert-amyl chloride, CDCl3, literature values",
    ),
    # ---- cumyl family (E1 / SN1 in methanol) ------------------------------------------------
    # 7.49 (d, 2H), 7.35 (t, 2H), 7.25 (t, 1H), 1.78 (br s, OH), 1.59 (s, 6H)
    Compound(
        "cumyl_alcohol",
        "2-phenylpropan-2-ol",
        "CC(C)(O)c1ccccc1",
        _mono_ring(7.49, 7.35, 7.25) + ((1.59, 6, "CH3"), (1.78, 1, "OH")),
        _mono_ring_j(0, j_om=7.8, j_mp=7.3),
        "from memory: 2-phenyl-2-propanol, CDCl3, literature values",
    ),
    # 7.47 (d, 2H), 7.33 (t, 2H), 7.27 (t, 1H), 5.37 (m, 1H), 5.09 (m, 1H), 2.15 (dd, 1.5, 0.8, 3H)
    Compound(
        "alpha_methylstyrene",
        "prop-1-en-2-ylbenzene",
        "C=C(C)c1ccccc1",
        _mono_ring(7.47, 7.33, 7.27) + ((5.37, 1, "vinyl"), (5.09, 1, "vinyl"), (2.15, 3, "CH3")),
        _mono_ring_j(0, j_mp=7.3) + ((5, 6, 1.4), (5, 7, -0.8), (6, 7, -1.5)),
        "from memory: alpha-methylstyrene, CDCl3, literature values",
    ),
    # 7.41 (d, 2H), 7.34 (t, 2H), 7.25 (t, 1H), 3.07 (s, 3H), 1.53 (s, 6H)
    Compound(
        "cumyl_methyl_ether",
        "(2-methoxypropan-2-yl)benzene",
        "COC(C)(C)c1ccccc1",
        _mono_ring(7.41, 7.34, 7.25) + ((3.07, 3, "OCH3"), (1.53, 6, "CH3")),
        _mono_ring_j(0, j_mp=7.3),
        "from memory: cumyl methyl ether, CDCl3, literature values",
    ),
    # ---- 1-methylcyclohexyl family (E1) -----------------------------------------------------
    # 1.65-1.35 (m, 10H), 1.30 (br s, OH), 1.21 (s, 3H). Ring CH2 split into the H cis and trans to
    # OH, mirror-related pairs grouped (approximate)
    Compound(
        "methylcyclohexanol",
        "1-methylcyclohexan-1-ol",
        "CC1(O)CCCCC1",
        (
            (1.62, 2, "CH2"),
            (1.45, 2, "CH2"),
            (1.55, 2, "CH2"),
            (1.38, 2, "CH2"),
            (1.50, 1, "CH2"),
            (1.27, 1, "CH2"),
            (1.21, 3, "CH3"),
            (1.30, 1, "OH"),
        ),
        (
            (0, 1, -13.2),
            (2, 3, -13.2),
            (4, 5, -13.0),
            (0, 2, 4.0),
            (0, 3, 9.0),
            (1, 2, 9.0),
            (1, 3, 4.0),
            (2, 4, 4.0),
            (2, 5, 9.0),
            (3, 4, 9.0),
            (3, 5, 4.0),
        ),
        "from memory: 1-methylcyclohexanol, CDCl3, approximate literature values",
    ),
    # 5.38 (br s, 1H), 1.96 (m, 2H), 1.90 (m, 2H), 1.63 (s, 3H), 1.60 (m, 2H), 1.53 (m, 2H)
    Compound(
        "methylcyclohexene",
        "1-methylcyclohex-1-ene",
        "CC1=CCCCC1",
        (
            (5.38, 1, "vinyl"),
            (1.96, 2, "CH2"),
            (1.90, 2, "CH2"),
            (1.63, 3, "CH3"),
            (1.60, 2, "CH2"),
            (1.53, 2, "CH2"),
        ),
        ((0, 1, 3.8), (0, 3, -1.4), (0, 2, -1.2), (1, 5, 6.0), (4, 5, 6.0), (2, 4, 6.2)),
        "from memory: 1-methylcyclohexene, CDCl3, literature values",
    ),
    # 4.58 (quint, 1.0, 2H), 2.13 (m, 4H), 1.54 (m, 6H)
    Compound(
        "methylenecyclohexane",
        "methylidenecyclohexane",
        "C=C1CCCCC1",
        (
            (4.58, 2, "vinyl"),
            (2.13, 2, "CH2"),
            (2.13, 2, "CH2"),
            (1.55, 2, "CH2"),
            (1.55, 2, "CH2"),
            (1.52, 2, "CH2"),
        ),
        ((0, 1, -1.0), (0, 2, -1.0), (1, 3, 6.2), (2, 4, 6.2), (3, 5, 6.0), (4, 5, 6.0)),
        "from memory: methylenecyclohexane, CDCl3, literature values",
    ),
    # ---- cyclohexyl family ------------------------------------------------------------------
    # 3.61 (tt, 9.1, 4.0, 1H), 1.88 (m, 2H), 1.73 (m, 2H), 1.55 (m, 1H), 1.45 (br s, OH),
    # 1.32-1.10 (m, 5H). Equatorial-OH chair written out; mirror pairs grouped
    Compound(
        "cyclohexanol",
        "cyclohexanol",
        "OC1CCCCC1",
        (
            (3.61, 1, "OCH"),
            (1.88, 2, "CH2"),
            (1.28, 2, "CH2"),
            (1.73, 2, "CH2"),
            (1.24, 2, "CH2"),
            (1.55, 1, "CH2"),
            (1.16, 1, "CH2"),
            (1.45, 1, "OH"),
        ),
        (
            (0, 1, 4.0),
            (0, 2, 9.2),
            (1, 2, -12.5),
            (3, 4, -13.0),
            (5, 6, -13.0),
            (1, 3, 3.5),
            (1, 4, 3.5),
            (2, 3, 3.5),
            (2, 4, 11.5),
            (3, 5, 3.5),
            (3, 6, 3.5),
            (4, 5, 3.5),
            (4, 6, 11.5),
        ),
        "from memory: cyclohexanol, CDCl3, literature values",
    ),
    # 4.17 (m, 1H), 2.10 (m, 2H), 1.82 (m, 2H), 1.64 (m, 2H), 1.50 (m, 1H), 1.37 (m, 2H), 1.29 (m, 1H)
    Compound(
        "bromocyclohexane",
        "bromocyclohexane",
        "BrC1CCCCC1",
        (
            (4.17, 1, "CHBr"),
            (2.10, 2, "CH2"),
            (1.82, 2, "CH2"),
            (1.64, 2, "CH2"),
            (1.37, 2, "CH2"),
            (1.50, 1, "CH2"),
            (1.29, 1, "CH2"),
        ),
        (
            (0, 1, 4.0),
            (0, 2, 8.5),
            (1, 2, -13.0),
            (3, 4, -13.0),
            (5, 6, -13.0),
            (1, 3, 4.0),
            (1, 4, 4.0),
            (2, 3, 4.0),
            (2, 4, 10.0),
            (3, 5, 4.0),
            (3, 6, 4.0),
            (4, 5, 4.0),
            (4, 6, 10.0),
        ),
        "from memory: cyclohexyl bromide, CDCl3, literature values",
    ),
    # 5.67 (m, 2H), 1.99 (m, 4H), 1.61 (m, 4H)
    Compound(
        "cyclohexene",
        "cyclohexene",
        "C1=CCCCC1",
        (
            (5.67, 1, "vinyl"),
            (5.67, 1, "vinyl"),
            (1.99, 2, "CH2"),
            (1.99, 2, "CH2"),
            (1.61, 2, "CH2"),
            (1.61, 2, "CH2"),
        ),
        (
            (0, 1, 10.0),
            (1, 2, 3.5),
            (0, 3, 3.5),
            (0, 2, -1.5),
            (1, 3, -1.5),
            (2, 4, 6.0),
            (3, 5, 6.0),
            (4, 5, 6.0),
        ),
        "from memory: cyclohexene, CDCl3, literature values",
    ),
    # ---- 1-phenylbutyl family ---------------------------------------------------------------
    # 7.34 (m, 4H), 7.27 (m, 1H), 4.67 (dd, 7.6, 5.8), 1.80 (br, OH), 1.79 (m, 1H), 1.67 (m, 1H),
    # 1.42 (m, 1H), 1.30 (m, 1H), 0.93 (t, 7.4, 3H)
    Compound(
        "phenylbutanol",
        "1-phenylbutan-1-ol",
        "CCCC(O)c1ccccc1",
        _mono_ring(7.34, 7.33, 7.27)
        + (
            (4.67, 1, "OCH"),
            (1.79, 1, "CH2"),
            (1.67, 1, "CH2"),
            (1.42, 1, "CH2"),
            (1.30, 1, "CH2"),
            (0.93, 3, "CH3"),
            (1.80, 1, "OH"),
        ),
        _mono_ring_j(0, j_mp=7.2)
        + (
            (5, 6, 7.6),
            (5, 7, 5.8),
            (6, 7, -13.6),
            (8, 9, -13.2),
            (6, 8, 5.5),
            (6, 9, 10.0),
            (7, 8, 10.0),
            (7, 9, 5.5),
            (8, 10, 7.4),
            (9, 10, 7.4),
        ),
        "from memory: 1-phenyl-1-butanol, CDCl3, literature values",
    ),
    # 7.35 (d, 2H), 7.29 (t, 2H), 7.18 (t, 1H), 6.37 (dt, 15.9, 1.5), 6.26 (dt, 15.9, 6.4),
    # 2.22 (m, 2H), 1.09 (t, 7.5, 3H)
    Compound(
        "e_phenylbutene",
        "(E)-but-1-enylbenzene",
        "CC/C=C/c1ccccc1",
        _mono_ring(7.35, 7.29, 7.18)
        + ((6.37, 1, "vinyl"), (6.26, 1, "vinyl"), (2.22, 2, "CH2"), (1.09, 3, "CH3")),
        _mono_ring_j(0, j_mp=7.3) + ((5, 6, 15.9), (6, 7, 6.4), (5, 7, -1.5), (7, 8, 7.5)),
        "from memory: trans-1-phenyl-1-butene, CDCl3, literature values",
    ),
    # 7.32 (m, 2H), 7.28 (m, 2H), 7.21 (m, 1H), 6.40 (d, 11.7), 5.67 (dt, 11.7, 7.3),
    # 2.35 (m, 2H), 1.07 (t, 7.5, 3H)
    Compound(
        "z_phenylbutene",
        "(Z)-but-1-enylbenzene",
        "CC/C=C\\c1ccccc1",
        _mono_ring(7.28, 7.32, 7.21)
        + ((6.40, 1, "vinyl"), (5.67, 1, "vinyl"), (2.35, 2, "CH2"), (1.07, 3, "CH3")),
        _mono_ring_j(0) + ((5, 6, 11.7), (6, 7, 7.3), (5, 7, -1.8), (7, 8, 7.5)),
        "from memory: cis-1-phenyl-1-butene, CDCl3, literature values",
    ),
    # ---- stilbene family --------------------------------------------------------------------
    # 7.37-7.18 (m, 10H), 4.90 (dd, 8.6, 4.8), 3.03 (dd, 13.7, 4.8), 2.97 (dd, 13.7, 8.6),
    # 1.95 (br, OH)
    Compound(
        "diphenylethanol",
        "1,2-diphenylethanol",
        "OC(Cc1ccccc1)c1ccccc1",
        _mono_ring(7.36, 7.33, 7.28)
        + _mono_ring(7.19, 7.29, 7.23)
        + ((4.90, 1, "OCH"), (3.03, 1, "CH2"), (2.97, 1, "CH2"), (1.95, 1, "OH")),
        _mono_ring_j(0, j_mp=7.2) + _mono_ring_j(5) + ((10, 11, 4.8), (10, 12, 8.6), (11, 12, -13.7)),
        "from memory: 1,2-diphenylethanol, CDCl3, literature values",
    ),
    # 7.52 (d, 4H), 7.37 (t, 4H), 7.27 (t, 2H), 7.12 (s, 2H)
    Compound(
        "e_stilbene",
        "(E)-stilbene",
        "C(=C/c1ccccc1)\\c1ccccc1",
        _mono_ring(7.52, 7.37, 7.27)
        + _mono_ring(7.52, 7.37, 7.27)
        + ((7.12, 1, "vinyl"), (7.12, 1, "vinyl")),
        _mono_ring_j(0, j_om=7.6) + _mono_ring_j(5, j_om=7.6) + ((10, 11, 16.4),),
        "from memory: trans-stilbene, CDCl3, literature values",
    ),
    # 7.26-7.16 (m, 10H), 6.60 (s, 2H)
    Compound(
        "z_stilbene",
        "(Z)-stilbene",
        "C(=C\\c1ccccc1)\\c1ccccc1",
        _mono_ring(7.24, 7.20, 7.17)
        + _mono_ring(7.24, 7.20, 7.17)
        + ((6.60, 1, "vinyl"), (6.60, 1, "vinyl")),
        _mono_ring_j(0) + _mono_ring_j(5) + ((10, 11, 12.2),),
        "from memory: cis-stilbene, CDCl3, literature values",
    ),
    # ---- anisyl propene family (the demo scenario; held-out half only) ----------------------
    Compound(
        "anisyl_bromide",
        "1-(2-bromopropyl)-4-methoxybenzene",
        "CC(Br)Cc1ccc(OC)cc1",
        _para_ring(7.12, 6.86)
        + ((4.22, 1, "CHBr"), (3.80, 3, "OCH3"), (3.16, 1, "CH2"), (2.99, 1, "CH2"), (1.68, 3, "CH3")),
        _para_ring_j(0, j_ortho=8.6) + ((4, 6, 6.9), (4, 7, 7.4), (4, 8, 6.6), (6, 7, -14.1)),
        f"{_PUB} (by analogy with (2-bromopropyl)benzene, from memory there); AA'XX' 4J/5J from memory",
    ),
    Compound(
        "anisyl_propanol",
        "1-(4-methoxyphenyl)propan-2-ol",
        "CC(O)Cc1ccc(OC)cc1",
        _para_ring(7.12, 6.86)
        + (
            (3.97, 1, "OCH"),
            (3.80, 3, "OCH3"),
            (2.73, 1, "CH2"),
            (2.63, 1, "CH2"),
            (1.23, 3, "CH3"),
            (1.60, 1, "OH"),
        ),
        _para_ring_j(0, j_ortho=8.6) + ((4, 6, 4.8), (4, 7, 7.9), (4, 8, 6.2), (6, 7, -13.6)),
        f"{_PUB} (from memory there; OH ~1.6 br)",
    ),
    Compound(
        "e_anethole",
        "(E)-anethole",
        "C/C=C/c1ccc(OC)cc1",
        _para_ring(7.27, 6.84)
        + ((6.36, 1, "vinyl"), (6.11, 1, "vinyl"), (3.80, 3, "OCH3"), (1.86, 3, "CH3")),
        _para_ring_j(0, j_ortho=8.7) + ((4, 5, 15.8), (5, 7, 6.6), (4, 7, -1.6)),
        f"{_PUB} (trans-anethole, from memory there)",
    ),
    Compound(
        "z_anethole",
        "(Z)-anethole",
        "C/C=C\\c1ccc(OC)cc1",
        _para_ring(7.23, 6.88)
        + ((6.36, 1, "vinyl"), (5.72, 1, "vinyl"), (3.81, 3, "OCH3"), (1.90, 3, "CH3")),
        _para_ring_j(0, j_ortho=8.7) + ((4, 5, 11.6), (5, 7, 7.2), (4, 7, -1.8)),
        f"{_PUB} (cis-anethole, from memory there)",
    ),
    Compound(
        "estragole",
        "estragole",
        "C=CCc1ccc(OC)cc1",
        _para_ring(7.14, 6.87)
        + ((5.98, 1, "vinyl"), (5.08, 1, "vinyl"), (5.06, 1, "vinyl"), (3.81, 3, "OCH3"), (3.36, 2, "CH2")),
        _para_ring_j(0, j_ortho=8.6)
        + ((4, 5, 16.9), (4, 6, 10.1), (4, 8, 6.7), (5, 6, 1.9), (5, 8, -1.6), (6, 8, -1.3)),
        f"{_PUB} (centres measured on the shared real estragole spectrum; 2J/4J from memory)",
    ),
    # ---- identity-only compounds ------------------------------------------------------------
    # trans: 3.51 (tt, 11.1, 4.3, 1H), 2.02 (m, 2H), 1.78 (m, 2H), 1.55 (br, OH), 1.22 (m, 2H),
    # 1.03 (m, 2H), 0.98 (tt, 1H), 0.85 (s, 9H)
    Compound(
        "trans_tbu_cyclohexanol",
        "trans-4-tert-butylcyclohexan-1-ol",
        "CC(C)(C)[C@H]1CC[C@H](O)CC1",
        (
            (3.51, 1, "OCH"),
            (2.02, 2, "CH2"),
            (1.22, 2, "CH2"),
            (1.78, 2, "CH2"),
            (1.03, 2, "CH2"),
            (0.98, 1, "CH"),
            (0.85, 9, "CH3"),
            (1.55, 1, "OH"),
        ),
        (
            (0, 1, 4.3),
            (0, 2, 11.1),
            (1, 2, -12.5),
            (3, 4, -13.0),
            (1, 3, 3.5),
            (1, 4, 3.5),
            (2, 3, 3.5),
            (2, 4, 12.0),
            (3, 5, 3.3),
            (4, 5, 12.0),
        ),
        "from memory: trans-4-tert-butylcyclohexanol (axial H-1), CDCl3, literature values",
    ),
    # cis: 4.03 (m, W1/2 ~8 Hz, 1H), 1.83 (m, 2H), 1.55-1.45 (m, 4H), 1.35 (m, 2H), 1.00 (m, 1H),
    # 0.86 (s, 9H)
    Compound(
        "cis_tbu_cyclohexanol",
        "cis-4-tert-butylcyclohexan-1-ol",
        "CC(C)(C)[C@H]1CC[C@@H](O)CC1",
        (
            (4.03, 1, "OCH"),
            (1.83, 2, "CH2"),
            (1.48, 2, "CH2"),
            (1.52, 2, "CH2"),
            (1.33, 2, "CH2"),
            (1.00, 1, "CH"),
            (0.86, 9, "CH3"),
            (1.40, 1, "OH"),
        ),
        (
            (0, 1, 2.8),
            (0, 2, 2.8),
            (1, 2, -13.5),
            (3, 4, -13.0),
            (1, 3, 3.5),
            (1, 4, 13.0),
            (2, 3, 3.5),
            (2, 4, 3.5),
            (3, 5, 3.3),
            (4, 5, 12.0),
        ),
        "from memory: cis-4-tert-butylcyclohexanol (equatorial H-1), CDCl3, literature values",
    ),
    Compound(
        "butyl_acrylate",
        "butyl prop-2-enoate",
        "C=CC(=O)OCCCC",
        (
            (6.39, 1, "vinyl"),
            (6.11, 1, "vinyl"),
            (5.80, 1, "vinyl"),
            (4.15, 2, "OCH2"),
            (1.66, 2, "CH2"),
            (1.40, 2, "CH2"),
            (0.94, 3, "CH3"),
        ),
        ((0, 1, 17.3), (0, 2, 1.4), (1, 2, 10.4), (3, 4, 6.7), (4, 5, 7.4), (5, 6, 7.4)),
        f"{_PUB} (multiplet centres measured on the shared real spectrum; chain J from memory)",
    ),
    Compound(
        "aspirin",
        "2-acetoxybenzoic acid",
        "CC(=O)Oc1ccccc1C(=O)O",
        (
            (8.12, 1, "aryl"),
            (7.62, 1, "aryl"),
            (7.35, 1, "aryl"),
            (7.14, 1, "aryl"),
            (2.36, 3, "CH3"),
            (11.0, 1, "CO2H"),
        ),
        ((0, 1, 1.7), (0, 2, 7.9), (1, 2, 7.6), (1, 3, 8.1), (2, 3, 1.1), (0, 3, 0.4)),
        f"{_PUB} (acetylsalicylic acid, from memory there; CO2H ~11 br, 5J 0.4 from memory)",
    ),
)

COMPOUND_BY_KEY: dict[str, Compound] = {c.key: c for c in COMPOUNDS}
