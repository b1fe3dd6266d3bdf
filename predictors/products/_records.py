"""Records passed between the enumerator's stages: the product set, routes, outcomes, context."""

from __future__ import annotations

from dataclasses import dataclass, field

from rdkit import Chem

from predictors.core import Candidate
from predictors.reagents import Reagent
from predictors.substrate import Substrate

GAS_CONSTANT_KCAL = 1.987204e-3  # kcal/(mol K)


@dataclass(frozen=True, eq=False)
class ProductSet:
    """Candidates for one substrate under one set of conditions.

    Attributes
    ----------
    substrate_smiles : str
        Canonical SMILES of the substrate (counter-ions removed).
    reagent : Reagent
    candidates : tuple of Candidate
        Sorted by prior, highest first; the starting material is included.
    notes : tuple of str
        What was assumed or could not be modelled.
    beta_hydrogens : tuple of BetaHydrogenReport
        For every beta-H of every 3D-tested path: the conformer that makes it periplanar to
        the leaving group and its cost.
    """

    substrate_smiles: str
    reagent: Reagent
    candidates: tuple[Candidate, ...]
    notes: tuple[str, ...]
    beta_hydrogens: tuple[BetaHydrogenReport, ...] = ()


@dataclass(frozen=True)
class BetaHydrogenReport:
    """Where one beta-H becomes periplanar to the leaving group, and at what cost.

    Attributes
    ----------
    alpha_idx, beta_idx, h_idx : int
        Atoms in ``Chem.AddHs`` of the substrate (heavy-atom indices as in the input order).
    mode : str
        ``"anti"`` (E2) or ``"syn"`` (Ei).
    conformer : str
        ``"chair"``, ``"flipped chair"``, ``"twist-boat"``, ``"distorted ring"`` or ``"rotamer"``.
    energy_above_min_kcal : float
        MMFF94 energy of that conformer above the global minimum.
    ring_flip : bool
        The ring holding the alpha carbon had to leave its lowest chair.
    reachable : bool
        Periplanar within tolerance and at most 8 kcal/mol above the minimum.
    dihedral_deg : float
        H-C-C-LG dihedral in that conformer.
    """

    alpha_idx: int
    beta_idx: int
    h_idx: int
    mode: str
    conformer: str
    energy_above_min_kcal: float
    ring_flip: bool
    reachable: bool
    dihedral_deg: float


@dataclass(frozen=True)
class _Outcome:
    smiles: str
    geometry: str | None = None
    n_subst: int | None = None
    conjugated: bool = False


@dataclass(frozen=True)
class _Route:
    smiles: str
    pathways: tuple[str, ...]
    weight: float
    label: str
    rationale: str
    geometry: str | None = None
    n_subst: int | None = None
    group: str = ""
    notes: tuple[str, ...] = ()
    regio: str | None = None


@dataclass(frozen=True, eq=False)
class _Context:
    substrate: Substrate
    mol_h: Chem.Mol
    reagent: Reagent
    solvent: Reagent | None
    temp_c: float
    seed: int
    undefined_atoms: frozenset[int]
    undefined_bonds: bool
    any_defined: bool
    models: dict = field(default_factory=dict)
    reports: list = field(default_factory=list)

    @property
    def rt_kcal(self) -> float:
        return GAS_CONSTANT_KCAL * (self.temp_c + 273.15)


