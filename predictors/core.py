"""Core objects passed between the stages of confirm.

Everything that crosses a stage boundary is one of these frozen dataclasses.
They live in the lowest layer (``predictors``) so that both the models and the
workflow package (``confirm``) can use them while imports still go one way.
Arrays are copied and made read-only on construction; units are part of every
field name.
"""

from __future__ import annotations

import copyreg
import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType

import numpy as np

from predictors.errors import InputError

__all__ = [
    "PATHWAYS",
    "GEOMETRIES",
    "X_NUCLEI",
    "CONFIDENCE_LEVELS",
    "Candidate",
    "ProtonSite",
    "SpinSystem",
    "LineList",
    "Spectrum",
    "SiteEvidence",
    "ComponentFit",
    "MixtureFit",
    "RatioEstimate",
    "Verdict",
    "canonical_smiles",
]

#: Pathway tags a candidate may carry (Ei: thermal syn elimination through a cyclic transition
#: state; SN2' and SN1': substitution with allylic transposition).
PATHWAYS = ("E2", "E1", "E1cB", "Ei", "SN2", "SN1", "SN2'", "SN1'", "starting material", "user")
#: Alkene geometry labels (None when not an alkene or not stereogenic).
GEOMETRIES = ("E", "Z")
#: Verdict confidence levels, most to least certain.
CONFIDENCE_LEVELS = ("high", "moderate", "low", "undecided")


def canonical_smiles(smiles: str) -> str:
    """Return RDKit's canonical isomeric SMILES, or raise :class:`InputError`.

    Parameters
    ----------
    smiles : str
        Any SMILES that RDKit parses.
    """
    from rdkit import Chem

    from predictors.errors import ChemistryError
    from predictors.molecules import read_structure

    if not isinstance(smiles, str) or not smiles.strip():
        raise InputError(f"smiles: expected a non-empty SMILES string, got {smiles!r}")
    try:
        mol = read_structure(smiles, name="smiles")
    except ChemistryError as exc:  # a bad SMILES handed to a core object is bad input
        raise InputError(str(exc)) from None
    return Chem.MolToSmiles(mol, isomericSmiles=True)


def _frozen_array(values, *, name: str, ndim: int, dtype=float) -> np.ndarray:
    arr = np.array(values, dtype=dtype, copy=True)
    if arr.ndim != ndim:
        raise InputError(f"{name}: expected a {ndim}-D array, got shape {arr.shape}")
    if np.issubdtype(arr.dtype, np.floating) and not np.all(np.isfinite(arr)):
        raise InputError(f"{name}: contains NaN or infinite values")
    arr.setflags(write=False)
    return arr


def _frozen_mapping(values: Mapping | None) -> Mapping:
    return MappingProxyType(dict(values or {}))


def _read_only(values: dict) -> Mapping:
    return MappingProxyType(values)


# read-only mappings travel between processes (the analysis runs parts of the job in forked
# workers) as the dict they show, read-only again on arrival
copyreg.pickle(MappingProxyType, lambda mapping: (_read_only, (dict(mapping),)))


def _check_finite(value: float, *, name: str, low: float | None = None,
                  high: float | None = None) -> None:
    if not isinstance(value, (int, float, np.floating, np.integer)) or not math.isfinite(value):
        raise InputError(f"{name}: expected a finite number, got {value!r}")
    if low is not None and value < low:
        raise InputError(f"{name}: must be >= {low}, got {value!r}")
    if high is not None and value > high:
        raise InputError(f"{name}: must be <= {high}, got {value!r}")


@dataclass(frozen=True)
class Candidate:
    """A possible component of the sample.

    Attributes
    ----------
    smiles : str
        Canonical isomeric SMILES (canonicalised on construction).
    pathways : tuple of str
        Tags from :data:`PATHWAYS` naming every route that gives this product.
    label : str
        Short human name, e.g. ``"(E)-alkene, more substituted"``.
    prior : float
        Soft prior score in [0, 1]; never used to drop a candidate.
    rationale : str
        One line explaining the prior.
    regio : str or None
        ``"more substituted"``, ``"less substituted"`` or None.
    geometry : str or None
        ``"E"``, ``"Z"`` or None.
    notes : tuple of str
        Extra remarks (ring flip needed, rearranged cation, syn path...).
    name : str or None
        The user's own name of the compound (``name=SMILES``); tables and plots show it.
    """

    smiles: str
    pathways: tuple[str, ...]
    label: str = ""
    prior: float = 0.5
    rationale: str = ""
    regio: str | None = None
    geometry: str | None = None
    notes: tuple[str, ...] = ()
    name: str | None = None

    def __post_init__(self) -> None:
        object.__setattr__(self, "smiles", canonical_smiles(self.smiles))
        pathways = tuple(self.pathways)
        if not pathways:
            raise InputError("pathways: at least one pathway tag is required")
        for tag in pathways:
            if tag not in PATHWAYS:
                raise InputError(f"pathways: unknown tag {tag!r}; allowed: {', '.join(PATHWAYS)}")
        object.__setattr__(self, "pathways", pathways)
        _check_finite(self.prior, name="prior", low=0.0, high=1.0)
        if self.geometry is not None and self.geometry not in GEOMETRIES:
            raise InputError(f"geometry: expected one of {GEOMETRIES} or None, got {self.geometry!r}")
        object.__setattr__(self, "notes", tuple(self.notes))
        if self.name is not None and (not isinstance(self.name, str) or not self.name.strip()):
            raise InputError(f"name: expected a non-empty text or None, got {self.name!r}")


@dataclass(frozen=True)
class ProtonSite:
    """A group of equivalent protons.

    Attributes
    ----------
    atoms : tuple of int
        Indices of the H atoms in ``Chem.AddHs(Chem.MolFromSmiles(smiles))``.
    shift_ppm : float
        Predicted (or published) chemical shift.
    shift_sd_ppm : float
        Standard uncertainty of the shift, > 0.
    label : str
        Kind of proton, e.g. ``"vinyl"``, ``"aryl"``, ``"CH3"``.
    exchangeable : bool
        OH/NH protons: broad, position depends on conditions.
    magnetically_equivalent : bool
        True when every proton of the group couples equally to every other
        spin, so the simulator may treat the group as one composite spin.
    flags : tuple of str
        Notes on how the value was obtained (fallbacks, missing increments).
    """

    atoms: tuple[int, ...]
    shift_ppm: float
    shift_sd_ppm: float
    label: str = ""
    exchangeable: bool = False
    magnetically_equivalent: bool = True
    flags: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        atoms = tuple(int(a) for a in self.atoms)
        if not atoms:
            raise InputError("atoms: a site needs at least one H atom index")
        if len(set(atoms)) != len(atoms) or min(atoms) < 0:
            raise InputError(f"atoms: indices must be distinct and >= 0, got {atoms}")
        object.__setattr__(self, "atoms", atoms)
        _check_finite(self.shift_ppm, name="shift_ppm", low=-5.0, high=25.0)
        _check_finite(self.shift_sd_ppm, name="shift_sd_ppm", low=0.0)
        if self.shift_sd_ppm <= 0:
            raise InputError(f"shift_sd_ppm: must be > 0, got {self.shift_sd_ppm!r}")
        object.__setattr__(self, "flags", tuple(self.flags))

    @property
    def n_h(self) -> int:
        """Number of protons in the site."""
        return len(self.atoms)


#: Heteronuclei a SpinSystem may carry couplings to (spin 1/2, 100 % natural abundance).
X_NUCLEI = ("19F", "31P")
#: Largest heteronuclear coupling accepted (Hz); 1J(P,H) of H on P reaches about 700 Hz.
_MAX_X_J_HZ = 1000.0


def _check_x_couplings(values, n_sites: int) -> tuple:
    """Per-site tuples of ``(nucleus, n_equivalent, j_hz)``, checked; ``()`` gives empty sites."""
    try:
        per_site = tuple(values) if values is not None else ()
    except TypeError:
        raise InputError(f"x_couplings: expected one sequence per site, got {values!r}") from None
    if not per_site:
        return ((),) * n_sites
    if len(per_site) != n_sites:
        raise InputError(f"x_couplings: expected {n_sites} entries (one per site), got {len(per_site)}")
    out = []
    for k, site in enumerate(per_site):
        entries = []
        try:
            items = tuple(site)
        except TypeError:
            raise InputError(
                f"x_couplings[{k}]: expected a sequence of (nucleus, n, j_hz), got {site!r}") from None
        for item in items:
            try:
                nucleus, count, j = item
            except (TypeError, ValueError):
                raise InputError(f"x_couplings[{k}]: expected (nucleus, n, j_hz), got {item!r}") from None
            if nucleus not in X_NUCLEI:
                raise InputError(
                    f"x_couplings[{k}]: nucleus must be one of {', '.join(X_NUCLEI)}, got {nucleus!r}")
            if isinstance(count, bool) or not isinstance(count, (int, np.integer)) or not 1 <= count <= 12:
                raise InputError(f"x_couplings[{k}]: n_equivalent must be an integer 1-12, got {count!r}")
            _check_finite(j, name=f"x_couplings[{k}] j_hz", low=-_MAX_X_J_HZ, high=_MAX_X_J_HZ)
            entries.append((str(nucleus), int(count), float(j)))
        out.append(tuple(entries))
    return tuple(out)


@dataclass(frozen=True, eq=False)
class SpinSystem:
    """The protons of one molecule with their signed couplings.

    Attributes
    ----------
    smiles : str
        Canonical isomeric SMILES of the molecule.
    sites : tuple of ProtonSite
        The proton sites.
    j_hz : ndarray, shape (n_sites, n_sites)
        Symmetric signed coupling constants between sites, zero diagonal.
    j_sd_hz : ndarray or None, shape (n_sites, n_sites)
        Standard uncertainty of each coupling (None when unknown).
    proton_j_hz : ndarray or None, shape (n_h, n_h)
        Signed couplings between single protons, in the order of :attr:`proton_atoms` (the
        sites' atoms, site by site); ``j_hz`` is its mean over each pair of sites. Needed to
        simulate a site whose protons are not magnetically equivalent (the AA'BB' protons of
        a phenyl ring) proton by proton; None for a system given site by site, which is then
        simulated with one composite spin per site.
    split_sites : tuple of int
        Sites simulated proton by proton (needs ``proton_j_hz``): sites whose protons are not
        magnetically equivalent and where that shows, e.g. the AA'BB' protons of an aromatic
        ring. Other sites are one composite spin each.
    x_couplings : tuple of tuple of (str, int, float)
        Per site, the couplings of its protons to heteronuclei (19F, 31P) as
        ``(nucleus, n_equivalent, j_hz)``: ``n_equivalent`` X nuclei each coupled ``j_hz`` to every
        proton of the site (the three F of a CF3 next to a CH2: ``("19F", 3, 8.8)``). The X nuclei
        are far off resonance: each splits the site's lines first order (binomial patterns for
        equivalent nuclei). Empty (the default) when there are none; a decoupled acquisition
        drops them (``predictors.hetero_couplings.without_x_couplings``).
    """

    smiles: str
    sites: tuple[ProtonSite, ...]
    j_hz: np.ndarray
    j_sd_hz: np.ndarray | None = None
    proton_j_hz: np.ndarray | None = None
    split_sites: tuple[int, ...] = ()
    x_couplings: tuple = ()

    def __post_init__(self) -> None:
        object.__setattr__(self, "smiles", canonical_smiles(self.smiles))
        sites = tuple(self.sites)
        if not all(isinstance(s, ProtonSite) for s in sites):
            raise InputError("sites: every site must be a ProtonSite")
        object.__setattr__(self, "sites", sites)
        n = len(sites)
        j = _frozen_array(self.j_hz, name="j_hz", ndim=2)
        if j.shape != (n, n):
            raise InputError(f"j_hz: expected shape ({n}, {n}) for {n} sites, got {j.shape}")
        if not np.allclose(j, j.T, atol=1e-9):
            raise InputError("j_hz: coupling matrix must be symmetric")
        if n and np.any(np.diag(j) != 0):
            raise InputError("j_hz: diagonal (self-coupling) must be zero")
        object.__setattr__(self, "j_hz", j)
        if self.j_sd_hz is not None:
            sd = _frozen_array(self.j_sd_hz, name="j_sd_hz", ndim=2)
            if sd.shape != (n, n) or np.any(sd < 0):
                raise InputError("j_sd_hz: expected non-negative values of the same shape as j_hz")
            object.__setattr__(self, "j_sd_hz", sd)
        if self.proton_j_hz is not None:
            pj = _frozen_array(self.proton_j_hz, name="proton_j_hz", ndim=2)
            n_h = sum(s.n_h for s in sites)
            if pj.shape != (n_h, n_h):
                raise InputError(
                    f"proton_j_hz: expected shape ({n_h}, {n_h}) for {n_h} protons, got {pj.shape}")
            if not np.allclose(pj, pj.T, atol=1e-9) or (n_h and np.any(np.diag(pj) != 0)):
                raise InputError("proton_j_hz: must be symmetric with a zero diagonal")
            object.__setattr__(self, "proton_j_hz", pj)
        split = tuple(sorted({int(k) for k in self.split_sites}))
        if split and (self.proton_j_hz is None or split[0] < 0 or split[-1] >= n):
            raise InputError(f"split_sites: expected site indices 0..{n - 1} and proton_j_hz, got {split}")
        object.__setattr__(self, "split_sites", split)
        object.__setattr__(self, "x_couplings", _check_x_couplings(self.x_couplings, n))
        seen: set[int] = set()
        for site in sites:
            if seen & set(site.atoms):
                raise InputError("sites: an H atom belongs to more than one site")
            seen |= set(site.atoms)

    @property
    def n_h(self) -> int:
        """Total number of protons."""
        return sum(s.n_h for s in self.sites)

    @property
    def proton_atoms(self) -> tuple[int, ...]:
        """The H atoms of all sites, site by site (the order of ``proton_j_hz``)."""
        return tuple(a for s in self.sites for a in s.atoms)

    @property
    def shifts_ppm(self) -> np.ndarray:
        """Site shifts as a new array, shape (n_sites,)."""
        return np.array([s.shift_ppm for s in self.sites], dtype=float)

    @property
    def n_protons(self) -> np.ndarray:
        """Number of H per site as a new int array, shape (n_sites,)."""
        return np.array([s.n_h for s in self.sites], dtype=int)


@dataclass(frozen=True, eq=False)
class LineList:
    """Transitions of a simulated spin system.

    Attributes
    ----------
    ppm : ndarray, shape (n_lines,)
        Line positions.
    intensity : ndarray, shape (n_lines,)
        Line intensities; they sum to the number of protons.
    field_mhz : float
        1H spectrometer frequency the lines were computed for.
    site_index : ndarray of int, shape (n_lines,)
        The site each line belongs to most (for per-site integration).
    warnings : tuple of str
        Approximations the simulator had to make (e.g. strong couplings cut
        because a cluster exceeded its size limit); empty when exact.
    """

    ppm: np.ndarray
    intensity: np.ndarray
    field_mhz: float
    site_index: np.ndarray
    warnings: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        ppm = _frozen_array(self.ppm, name="ppm", ndim=1)
        inten = _frozen_array(self.intensity, name="intensity", ndim=1)
        idx = _frozen_array(self.site_index, name="site_index", ndim=1, dtype=int)
        if not (ppm.shape == inten.shape == idx.shape):
            raise InputError("LineList: ppm, intensity and site_index must have the same length")
        _check_finite(self.field_mhz, name="field_mhz", low=1e-6)
        object.__setattr__(self, "ppm", ppm)
        object.__setattr__(self, "intensity", inten)
        object.__setattr__(self, "site_index", idx)
        object.__setattr__(self, "warnings", tuple(self.warnings))


@dataclass(frozen=True, eq=False)
class Spectrum:
    """A processed 1D spectrum on a ppm axis.

    Attributes
    ----------
    ppm : ndarray, shape (n,)
        Chemical-shift axis, strictly decreasing.
    intensity : ndarray, shape (n,)
        Real intensities.
    field_mhz : float
        Spectrometer frequency of the observed nucleus.
    nucleus : str
        e.g. ``"1H"``.
    solvent : str or None
        Solvent name as recorded (normalised by the reader when known).
    metadata : mapping
        Acquisition parameters, processing record, source file and its SHA-256.
    """

    ppm: np.ndarray
    intensity: np.ndarray
    field_mhz: float
    nucleus: str = "1H"
    solvent: str | None = None
    metadata: Mapping = field(default_factory=dict)

    def __post_init__(self) -> None:
        ppm = _frozen_array(self.ppm, name="ppm", ndim=1)
        inten = _frozen_array(self.intensity, name="intensity", ndim=1)
        if ppm.shape != inten.shape:
            raise InputError(f"Spectrum: ppm {ppm.shape} and intensity {inten.shape} differ in length")
        if ppm.size < 2:
            raise InputError("Spectrum: needs at least two points")
        if not np.all(np.diff(ppm) < 0):
            raise InputError("Spectrum: ppm axis must be strictly decreasing")
        _check_finite(self.field_mhz, name="field_mhz", low=1e-6)
        object.__setattr__(self, "ppm", ppm)
        object.__setattr__(self, "intensity", inten)
        object.__setattr__(self, "metadata", _frozen_mapping(self.metadata))

    @property
    def hz_per_point(self) -> float:
        """Spacing of the axis in Hz."""
        return float((self.ppm[0] - self.ppm[-1]) / (self.ppm.size - 1) * self.field_mhz)


@dataclass(frozen=True)
class SiteEvidence:
    """One multiplet of a candidate read on its own (the basis of the consistency test).

    Attributes
    ----------
    site : int
        Index of the site in the candidate's spin system (the first of a merged group).
    label : str
    n_h : int
        Protons of the multiplet.
    ppm : float
        Refined shift.
    predicted_ppm, predicted_sd_ppm : float
        Predicted shift and its sd.
    amount, amount_sd : float
        The candidate's mole fraction as read from this multiplet alone, and its sd.
    seen : bool
        The multiplet stands clear of its uncertainty on its own.
    missing : bool
        It should stand out at the candidate's amount but is not in the data (or is too weak, of the
        wrong shape, or outside its predicted range).
    shape_match : float
        Normalised match of the predicted multiplet with the data left for it (1 = same shape).
    overlap : float
        Share of its window's modelled signal that belongs to other components.
    j_hz : tuple of float
        Refined couplings of 4 Hz and more, largest first.
    j_predicted_hz : tuple of float
        The same couplings as predicted.
    outside_range : bool
        A diagnostic vinyl multiplet the data pull to the edge of its shift window (3 sd from the
        prediction), or whose cis/trans 3J they pull to a bound of its refined range: counted as
        missing.
    swamped : bool
        A vinyl multiplet whose place holds lines more than ten times too strong for the molecule:
        another compound's; the molecule is not detected.
    integral_amount, integral_amount_sd : float
        The candidate's mole fraction (same scale as ``amount``) from the integral over the window
        that holds this multiplet (with the candidate's other multiplets that overlap it), and its
        sd; NaN when that window was not integrated (shared with other components, or cut short
        by lines the fitted multiplet does not reach) or the candidate is not detected.
    """

    site: int
    label: str
    n_h: int
    ppm: float
    predicted_ppm: float
    predicted_sd_ppm: float
    amount: float
    amount_sd: float
    seen: bool
    missing: bool
    shape_match: float
    overlap: float
    j_hz: tuple[float, ...] = ()
    j_predicted_hz: tuple[float, ...] = ()
    outside_range: bool = False
    swamped: bool = False
    integral_amount: float = math.nan
    integral_amount_sd: float = math.nan

    def to_json(self) -> dict:
        """Plain-type dictionary (the ``evidence`` entries of the analyze JSON)."""
        def num(x: float) -> float | None:
            return float(x) if math.isfinite(x) else None

        return {
            "site": self.site, "label": self.label, "n_h": self.n_h, "ppm": num(self.ppm),
            "predicted_ppm": self.predicted_ppm, "predicted_sd_ppm": self.predicted_sd_ppm,
            "amount": num(self.amount), "amount_sd": num(self.amount_sd), "seen": self.seen,
            "missing": self.missing, "shape_match": num(self.shape_match), "overlap": num(self.overlap),
            "j_hz": list(self.j_hz), "j_predicted_hz": list(self.j_predicted_hz),
            "outside_range": self.outside_range, "swamped": self.swamped,
            "integral_amount": num(self.integral_amount), "integral_amount_sd": num(self.integral_amount_sd),
        }


@dataclass(frozen=True)
class ComponentFit:
    """Fit result for one candidate.

    Attributes
    ----------
    candidate : Candidate
    mole_fraction : float or None
        Share of molecules among the detected components; None when the candidate is not
        detected (then only ``upper_limit`` is known).
    mole_fraction_sd : float
        Standard deviation of ``mole_fraction`` (0 when not detected).
    detection_limit : float
        Smallest mole fraction this spectrum could detect for the candidate.
    detected : bool
        True when the amount is clearly above its uncertainty, one of its diagnostic multiplets
        is seen on its own and none of its multiplets that should stand out is missing.
    refined_shifts_ppm : tuple of float
        Site shifts after refinement (same order as the spin system's sites).
    evidence : tuple of str
        Lines of evidence (observed vs predicted), one per multiplet.
    upper_limit : float or None
        For an undetected candidate, the 95 % upper bound of its mole fraction; None when
        detected.
    site_evidence : tuple of SiteEvidence
        The same evidence as data, one entry per multiplet.
    lookalikes : tuple of str
        SMILES of undetected candidates whose predicted spectrum reproduces this one's as fitted
        (same multiplets, couplings within the fit's room, shifts within 2 sd): the spectrum cannot
        tell this component from them.
    """

    candidate: Candidate
    mole_fraction: float | None
    mole_fraction_sd: float
    detection_limit: float
    detected: bool
    refined_shifts_ppm: tuple[float, ...] = ()
    evidence: tuple[str, ...] = ()
    upper_limit: float | None = None
    site_evidence: tuple[SiteEvidence, ...] = ()
    lookalikes: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        if self.upper_limit is not None:
            _check_finite(self.upper_limit, name="upper_limit", low=0.0, high=1 + 1e-9)
        if self.mole_fraction is not None:
            _check_finite(self.mole_fraction, name="mole_fraction", low=-1e-9, high=1 + 1e-9)
        if self.detected and self.mole_fraction is None:
            raise InputError("mole_fraction: a detected component needs a value")
        if not self.detected and self.upper_limit is None:
            raise InputError("upper_limit: an undetected component needs its upper bound")
        if self.mole_fraction is not None and self.upper_limit is not None \
                and self.mole_fraction > self.upper_limit + 1e-12:
            raise InputError("mole_fraction: exceeds the component's own upper_limit")
        _check_finite(self.mole_fraction_sd, name="mole_fraction_sd", low=0.0)
        _check_finite(self.detection_limit, name="detection_limit", low=0.0)
        object.__setattr__(self, "refined_shifts_ppm", tuple(float(x) for x in self.refined_shifts_ppm))
        object.__setattr__(self, "evidence", tuple(self.evidence))
        object.__setattr__(self, "site_evidence", tuple(self.site_evidence))
        object.__setattr__(self, "lookalikes", tuple(self.lookalikes))

    @property
    def share(self) -> float:
        """The mole fraction, 0 when not detected (for sums and ratios of detected parts)."""
        return float(self.mole_fraction) if self.mole_fraction is not None else 0.0


@dataclass(frozen=True, eq=False)
class MixtureFit:
    """The measured spectrum explained as a mixture of candidates.

    Attributes
    ----------
    components : tuple of ComponentFit
    ppm : ndarray, shape (n,)
        Axis of the fitted region.
    model : ndarray, shape (n,)
        Fitted mixture spectrum (including baseline).
    residual : ndarray, shape (n,)
        Measured minus model.
    line_width_hz : float
        Fitted common line width (full width at half height).
    quality : mapping of str to float
        Figures of merit (e.g. ``r_squared``, ``noise_sd``, ``snr``).
    warnings : tuple of str
    fraction_covariance : ndarray or None, shape (n_components, n_components)
        Covariance of the mole fractions (zero rows for undetected components);
        ratios between components propagate their uncertainty through it.
    unexplained_ppm : tuple of float
        Positions of signals above the noise that no candidate explains.
    alternative_fractions : tuple of tuple of float
        Mole fractions (one per component, 0 for undetected ones) of other fits that explain the
        spectrum about as well as this one: the multiplets assigned another way.
    """

    components: tuple[ComponentFit, ...]
    ppm: np.ndarray
    model: np.ndarray
    residual: np.ndarray
    line_width_hz: float
    quality: Mapping = field(default_factory=dict)
    warnings: tuple[str, ...] = ()
    fraction_covariance: np.ndarray | None = None
    unexplained_ppm: tuple[float, ...] = ()
    alternative_fractions: tuple[tuple[float, ...], ...] = ()

    def __post_init__(self) -> None:
        object.__setattr__(self, "components", tuple(self.components))
        alternatives = tuple(tuple(float(x) for x in row) for row in self.alternative_fractions)
        if any(len(row) != len(self.components) for row in alternatives):
            raise InputError("alternative_fractions: one mole fraction per component expected")
        object.__setattr__(self, "alternative_fractions", alternatives)
        for name in ("ppm", "model", "residual"):
            object.__setattr__(self, name, _frozen_array(getattr(self, name), name=name, ndim=1))
        if not (self.ppm.shape == self.model.shape == self.residual.shape):
            raise InputError("MixtureFit: ppm, model and residual must have the same length")
        _check_finite(self.line_width_hz, name="line_width_hz", low=0.0)
        object.__setattr__(self, "quality", _frozen_mapping(self.quality))
        object.__setattr__(self, "warnings", tuple(self.warnings))
        if self.fraction_covariance is not None:
            n = len(self.components)
            cov = _frozen_array(self.fraction_covariance, name="fraction_covariance", ndim=2)
            if cov.shape != (n, n):
                raise InputError(f"fraction_covariance: expected shape ({n}, {n}), got {cov.shape}")
            object.__setattr__(self, "fraction_covariance", cov)
        object.__setattr__(self, "unexplained_ppm", tuple(float(x) for x in self.unexplained_ppm))


@dataclass(frozen=True)
class RatioEstimate:
    """A ratio between two groups of components, as a share with uncertainty.

    ``share`` is numerator / (numerator + denominator), in [0, 1]; e.g. for
    an E:Z ratio the share of E. When a part is only bounded (a member not detected, known only
    by its upper bound) the ratio is a bound: ``low`` (share at least this) and/or ``high``
    (share at most this) are set, ``share`` is the value with the bounded members at zero, and
    the ratio is not decided.
    """

    name: str
    numerator: str
    denominator: str
    share: float
    share_sd: float
    decided: bool = True
    low: float | None = None
    high: float | None = None

    def __post_init__(self) -> None:
        _check_finite(self.share, name="share", low=-1e-9, high=1 + 1e-9)
        _check_finite(self.share_sd, name="share_sd", low=0.0)
        for name in ("low", "high"):
            value = getattr(self, name)
            if value is not None:
                _check_finite(value, name=name, low=-1e-9, high=1 + 1e-9)

    @property
    def is_bound(self) -> bool:
        """True when a part is only bounded."""
        return self.low is not None or self.high is not None

    @property
    def ratio_text(self) -> str:
        """The ratio written as ``a:b`` in percent (``>= a:b``, ``<= a:b`` or a range for a bound;
        ``not bounded`` when the bounds are 0 and 1)."""
        def pair(x: float) -> str:
            return f"{100.0 * x:.0f}:{100.0 - 100.0 * x:.0f}"

        # a bound at 0 or 1 bounds nothing ("E:Z >= 0:100" says no more than "any ratio")
        low = self.low if self.low is not None and self.low > 5e-4 else None
        high = self.high if self.high is not None and self.high < 1 - 5e-4 else None
        if self.is_bound and low is None and high is None:
            return "not bounded"
        if low is not None and high is not None:
            return f"{pair(low)} to {pair(high)}"
        if low is not None:
            return f">= {pair(low)}"
        if high is not None:
            return f"<= {pair(high)}"
        return pair(self.share)


@dataclass(frozen=True)
class Verdict:
    """What the spectrum says about the sample.

    Attributes
    ----------
    summary : str
        The verdict in one or two plain sentences.
    confidence : str
        One of :data:`CONFIDENCE_LEVELS`.
    major : str or None
        SMILES of the major product (None when undecided).
    identified : tuple of str
        SMILES of every detected component.
    ratios : tuple of RatioEstimate
    evidence : tuple of str
    unresolved : tuple of str
        Questions the spectrum cannot decide.
    next_steps : tuple of str
        Experiments that would settle them (NOE, 13C, higher field...).
    """

    summary: str
    confidence: str
    major: str | None = None
    identified: tuple[str, ...] = ()
    ratios: tuple[RatioEstimate, ...] = ()
    evidence: tuple[str, ...] = ()
    unresolved: tuple[str, ...] = ()
    next_steps: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        if self.confidence not in CONFIDENCE_LEVELS:
            raise InputError(
                f"confidence: expected one of {', '.join(CONFIDENCE_LEVELS)}, got {self.confidence!r}"
            )
        for name in ("identified", "ratios", "evidence", "unresolved", "next_steps"):
            object.__setattr__(self, name, tuple(getattr(self, name)))
