"""Deterministic benchmark cases: mixtures, identity sets and wrong-sample controls.

:func:`generate_cases` draws every case from one master seed: which family members are mixed
and in what amounts, the field, the signal-to-noise ratio and the faults of the rendered
spectrum (:class:`Faults`). A case only describes a spectrum; :mod:`benchmarks.corpus.synthesis`
renders it. The same seed always gives the same cases, and each case carries its own seed, so
one case can be rendered again on its own.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from rdkit import Chem, RDLogger

from benchmarks.corpus.compounds import COMPOUND_BY_KEY
from benchmarks.corpus.families import FAMILIES, HALVES, IDENTITY_SETS

#: Spectrometer frequencies of the corpus (MHz): benchtop and high field.
FIELDS_MHZ = (60.0, 80.0, 90.0, 300.0, 400.0, 500.0, 600.0)
LOW_FIELDS_MHZ = (60.0, 80.0, 90.0)
HIGH_FIELDS_MHZ = (300.0, 400.0, 500.0, 600.0)
SNR_RANGE = (30.0, 5000.0)
MINOR_RANGE = (0.005, 0.20)
KINDS = ("mixture", "identity", "control")
MASTER_SEED = 20130

#: Impurities that may be drawn into a case; their lines are in ``synthesis.IMPURITIES``.
IMPURITY_NAMES = ("ethyl acetate", "acetone", "diethyl ether", "dichloromethane", "hexane", "grease")


@dataclass(frozen=True)
class Faults:
    """What the rendered spectrum gets besides the sample's own lines.

    Attributes
    ----------
    phase0_deg : float
        Residual zero-order phase.
    phase1_deg : float
        Residual first-order phase: the change from the left to the right edge of the window
        (pivot at the centre).
    baseline_amplitude : float
        Largest excursion of the baseline roll, as a fraction of the tallest sample line.
    baseline_terms : tuple of (period_ppm, phase_rad, weight)
        Smooth cosine terms of the roll.
    ref_offset_ppm : float
        Referencing error: every line (solvent and TMS too) sits this much off.
    line_width_hz : float
        Lorentzian FWHM of the sample lines.
    gauss_fwhm_hz : float
        Gaussian part of a Voigt line (0: pure Lorentzian).
    shoulder_fraction, shoulder_offset_hz : float
        A small shifted copy of every line (poor shimming): its share of the area and its offset.
    resolution_hz : float
        Target digital resolution (Hz per point).
    chcl3_share : float
        Residual CHCl3 area over the sample's counted 1H area.
    water_share, water_ppm, water_width_hz : float
        Water line (share 0: absent).
    tms_share : float
        TMS area (12 H) over the sample's counted 1H area (0: absent).
    impurity, impurity_share : str or None, float
        A common impurity and its amount in molecules per sample molecule.
    unknown : tuple or None
        An extra multiplet in no table: (shift_ppm, n_partners, j_hz, area_share).
    exchange_width_hz, exchange_offset_ppm : float
        Width and shift change of exchangeable (OH) lines.
    """

    phase0_deg: float = 0.0
    phase1_deg: float = 0.0
    baseline_amplitude: float = 0.0
    baseline_terms: tuple[tuple[float, float, float], ...] = ()
    ref_offset_ppm: float = 0.0
    line_width_hz: float = 0.8
    gauss_fwhm_hz: float = 0.0
    shoulder_fraction: float = 0.0
    shoulder_offset_hz: float = 0.0
    resolution_hz: float = 0.15
    chcl3_share: float = 0.0
    water_share: float = 0.0
    water_ppm: float = 1.56
    water_width_hz: float = 3.0
    tms_share: float = 0.0
    impurity: str | None = None
    impurity_share: float = 0.0
    unknown: tuple[float, int, float, float] | None = None
    exchange_width_hz: float = 12.0
    exchange_offset_ppm: float = 0.0


#: A case without faults (for checks of the synthesis itself).
NO_FAULTS = Faults()


@dataclass(frozen=True)
class Case:
    """One benchmark spectrum and the question asked of it.

    Attributes
    ----------
    id : str
    kind : str
        ``"mixture"``, ``"identity"`` or ``"control"``.
    family : str
        Family key (mixtures, family controls) or identity-set key.
    half : str
        ``"tune"`` or ``"held-out"``.
    field_mhz, snr : float
        SNR = tallest sample line / noise sd.
    truth : tuple of (compound key, mole fraction)
        What is in the tube (fractions sum to 1).
    candidates : tuple of (SMILES, compound key or None)
        The structures offered; the key names the corpus compound a SMILES is (present or not),
        None for a decoy that is only a SMILES.
    faults : Faults
    seed : int
        Seed of this case's noise.
    """

    id: str
    kind: str
    family: str
    half: str
    field_mhz: float
    snr: float
    truth: tuple[tuple[str, float], ...]
    candidates: tuple[tuple[str, str | None], ...]
    faults: Faults
    seed: int

    @property
    def truth_map(self) -> dict[str, float]:
        return dict(self.truth)


def generate_cases(
    *,
    master_seed: int = MASTER_SEED,
    n_mixtures: int = 336,
    identity_per_set: int = 2,
) -> tuple[Case, ...]:
    """Every case of the corpus, in a fixed order.

    Parameters
    ----------
    master_seed : int
    n_mixtures : int
        Mixtures, spread evenly over the families (so about half per half).
    identity_per_set : int
        Identity cases per identity set (the first at low field, the second at high field).

    Returns
    -------
    tuple of Case
        Mixtures, then identity cases, then wrong-sample controls.
    """
    rng = np.random.default_rng(master_seed)
    cases = []
    for i in range(n_mixtures):
        family = FAMILIES[i % len(FAMILIES)]
        cases.append(_mixture_case(i, family, np.random.default_rng(rng.integers(2**62))))
    for ident in IDENTITY_SETS:
        for j in range(identity_per_set):
            sub = np.random.default_rng(rng.integers(2**62))
            band = LOW_FIELDS_MHZ if j % 2 == 0 else HIGH_FIELDS_MHZ
            cases.append(_identity_case(ident, j, sub, band))
    for ident in IDENTITY_SETS:
        cases.append(_decoy_control(ident, np.random.default_rng(rng.integers(2**62))))
    for family in FAMILIES:
        cases.append(_family_control(family, np.random.default_rng(rng.integers(2**62))))
    return tuple(cases)


def select_cases(cases, *, half: str | None = None, kinds=None, limit: int | None = None, ids=None,
                 matching=()) -> tuple[Case, ...]:
    """Cases of one half and some kinds; ``limit`` keeps the first N of each kind, in order.

    ``ids`` (case ids) keeps only those cases; an id that is not among the half's cases of those
    kinds is an error. ``matching`` (SMARTS) keeps the cases with a candidate that has one of
    the substructures: the only cases a change confined to that part of the chemistry can move.
    """
    if half is not None and half not in HALVES:
        raise ValueError(f"half: {half!r} is not one of {HALVES}")
    kinds = tuple(kinds) if kinds else KINDS
    bad = [k for k in kinds if k not in KINDS]
    if bad:
        raise ValueError(f"kinds: {bad} not among {KINDS}")
    patterns = []
    for smarts in matching:
        RDLogger.DisableLog("rdApp.*")  # the parser's own multi-line complaint; ours is one line
        try:
            pattern = Chem.MolFromSmarts(smarts)
        finally:
            RDLogger.EnableLog("rdApp.*")
        if pattern is None:
            raise ValueError(f"matching: {smarts!r} is not a valid SMARTS")
        patterns.append(pattern)
    wanted = None if ids is None else set(ids)
    known: set = set()
    matches: dict = {}  # candidate SMILES -> has one of the substructures (cases share candidates)
    out = []
    for kind in kinds:
        chosen = [c for c in cases if c.kind == kind and (half is None or c.half == half)]
        known.update(c.id for c in chosen)
        if wanted is not None:
            chosen = [c for c in chosen if c.id in wanted]
        if patterns:
            chosen = [c for c in chosen if _has_any(c, patterns, matches)]
        out += chosen[:limit] if limit is not None else chosen
    unknown = sorted(wanted - known) if wanted is not None else []
    if unknown:
        raise ValueError(f"ids: not cases of this half and these kinds: {', '.join(unknown[:5])}")
    return tuple(out)


def _has_any(case: Case, patterns, matches: dict) -> bool:
    for smiles, _ in case.candidates:
        if smiles not in matches:
            mol = Chem.MolFromSmiles(smiles)
            matches[smiles] = mol is not None and any(mol.HasSubstructMatch(p) for p in patterns)
        if matches[smiles]:
            return True
    return False


# ---------------------------------------------------------------------------------------------


def _log_uniform(rng, low: float, high: float) -> float:
    return float(np.exp(rng.uniform(np.log(low), np.log(high))))


def _mixture_case(index: int, family, rng) -> Case:
    keys = [k for k, _ in family.members]
    n_comp = int(rng.integers(2, min(6, len(keys)) + 1))
    present = [keys[i] for i in sorted(rng.choice(len(keys), size=n_comp, replace=False))]
    order = list(rng.permutation(n_comp))
    n_major = 1 if (n_comp == 2 or rng.uniform() < 0.5) else 2
    majors = [present[i] for i in order[:n_major]]
    minors = [present[i] for i in order[n_major:]]
    while True:
        minor_x = [_log_uniform(rng, *MINOR_RANGE) for _ in minors]
        if sum(minor_x) <= 0.5:
            break
    rest = 1.0 - sum(minor_x)
    major_x = [rest] if n_major == 1 else [rest * (u := rng.uniform(0.3, 0.7)), rest * (1 - u)]
    amounts = dict(zip(majors + minors, major_x + minor_x, strict=True))
    field = float(rng.choice(FIELDS_MHZ))
    truth = tuple((k, float(amounts[k])) for k in present)
    return Case(
        id=f"mix{index:03d}-{family.key}",
        kind="mixture",
        family=family.key,
        half=family.half,
        field_mhz=field,
        snr=_log_uniform(rng, *SNR_RANGE),
        truth=truth,
        candidates=tuple((COMPOUND_BY_KEY[k].smiles, k) for k in keys),
        faults=draw_faults(rng, field_mhz=field),
        seed=int(rng.integers(2**31)),
    )


def _shuffled(rng, items):
    return tuple(items[i] for i in rng.permutation(len(items)))


def _identity_case(ident, j: int, rng, band) -> Case:
    field = float(rng.choice(band))
    true = COMPOUND_BY_KEY[ident.true_key]
    cands = ((true.smiles, true.key),) + tuple((s, None) for s, _ in ident.decoys)
    return Case(
        id=f"{ident.key}-{j}",
        kind="identity",
        family=ident.key,
        half=ident.half,
        field_mhz=field,
        snr=_log_uniform(rng, *SNR_RANGE),
        truth=((true.key, 1.0),),
        candidates=_shuffled(rng, cands),
        faults=draw_faults(rng, field_mhz=field),
        seed=int(rng.integers(2**31)),
    )


def _decoy_control(ident, rng) -> Case:
    field = float(rng.choice(FIELDS_MHZ))
    return Case(
        id=f"ctl-{ident.key}",
        kind="control",
        family=ident.key,
        half=ident.half,
        field_mhz=field,
        snr=_log_uniform(rng, *SNR_RANGE),
        truth=((ident.true_key, 1.0),),
        candidates=_shuffled(rng, tuple((s, None) for s, _ in ident.decoys)),
        faults=draw_faults(rng, field_mhz=field),
        seed=int(rng.integers(2**31)),
    )


def _family_control(family, rng) -> Case:
    keys = [k for k, _ in family.members]
    present = keys[int(rng.integers(len(keys)))]
    field = float(rng.choice(FIELDS_MHZ))
    return Case(
        id=f"ctl-{family.key}",
        kind="control",
        family=family.key,
        half=family.half,
        field_mhz=field,
        snr=_log_uniform(rng, *SNR_RANGE),
        truth=((present, 1.0),),
        candidates=tuple((COMPOUND_BY_KEY[k].smiles, k) for k in keys if k != present),
        faults=draw_faults(rng, field_mhz=field),
        seed=int(rng.integers(2**31)),
    )


def draw_faults(rng, *, field_mhz: float) -> Faults:
    """Faults of one case: most small, some large (the ranges of issue 13).

    Parameters
    ----------
    rng : numpy.random.Generator
    field_mhz : float
        Sets the digital resolution (0.1-0.2 Hz/point at high field, 0.2-0.4 at 60-90 MHz).
    """
    large_phase = rng.uniform() < 0.25
    phase0 = rng.uniform(-15, 15) if large_phase else float(np.clip(rng.normal(0, 2.0), -15, 15))
    phase1 = rng.uniform(-10, 10) if large_phase else float(np.clip(rng.normal(0, 1.5), -10, 10))
    terms = tuple(
        (rng.uniform(2.0, 15.0), rng.uniform(0, 2 * np.pi), rng.uniform(0.2, 1.0)) for _ in range(3)
    )
    ref = (
        rng.uniform(-0.05, 0.05) if rng.uniform() < 0.3 else float(np.clip(rng.normal(0, 0.005), -0.05, 0.05))
    )
    shape = rng.uniform()
    gauss = rng.uniform(0.2, 1.5) if 0.5 <= shape < 0.8 else 0.0
    shoulder = rng.uniform(0.02, 0.08) if shape >= 0.8 else 0.0
    shoulder_hz = float(rng.choice([-1, 1]) * rng.uniform(1.0, 4.0)) if shoulder else 0.0
    res = rng.uniform(0.1, 0.2) if field_mhz >= 200 else rng.uniform(0.2, 0.4)
    water = _log_uniform(rng, 0.005, 0.05) if rng.uniform() < 0.85 else 0.0
    tms = _log_uniform(rng, 0.005, 0.03) if rng.uniform() < 0.8 else 0.0
    impurity = str(rng.choice(IMPURITY_NAMES)) if rng.uniform() < 0.3 else None
    unknown = None
    if rng.uniform() < 0.15:
        unknown = (
            rng.uniform(0.8, 8.0),
            int(rng.integers(0, 4)),
            rng.uniform(6.0, 8.0),
            _log_uniform(rng, 0.01, 0.05),
        )
    return Faults(
        phase0_deg=float(phase0),
        phase1_deg=float(phase1),
        baseline_amplitude=float(rng.uniform(0.0, 0.01)),
        baseline_terms=tuple((float(a), float(b), float(c)) for a, b, c in terms),
        ref_offset_ppm=float(ref),
        line_width_hz=float(rng.uniform(0.3, 2.0)),
        gauss_fwhm_hz=float(gauss),
        shoulder_fraction=float(shoulder),
        shoulder_offset_hz=shoulder_hz,
        resolution_hz=float(res),
        chcl3_share=_log_uniform(rng, 0.003, 0.05),
        water_share=float(water),
        water_ppm=float(np.clip(rng.normal(1.56, 0.02), 1.50, 1.62)),
        water_width_hz=float(rng.uniform(2.0, 6.0)),
        tms_share=float(tms),
        impurity=impurity,
        impurity_share=_log_uniform(rng, 0.005, 0.05) if impurity else 0.0,
        unknown=None
        if unknown is None
        else tuple(float(x) if i != 1 else int(x) for i, x in enumerate(unknown)),
        exchange_width_hz=float(rng.uniform(5.0, 30.0)),
        exchange_offset_ppm=float(rng.normal(0.0, 0.1)),
    )
