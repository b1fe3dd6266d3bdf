"""Published vinyl 1H shifts (CDCl3) used to test and benchmark the olefinic shift model.

Each compound is a SMILES with atom-map numbers on the atoms needed to name a
vinyl proton: ``(carbon_map, ref_map, relation, shift_ppm)`` means the H on the
carbon mapped ``carbon_map`` that is ``relation`` ("cis"/"trans") to the atom
mapped ``ref_map`` on the other alkene carbon (``ref_map`` None when the carbon
carries one H). ``geometry`` is "cis"/"trans" for 1,2-disubstituted alkenes
(checked against the predicted 3J), else None.

Values marked ``from memory`` were recalled, not read from a spectrum; values
from ``../shared/real_spectra/README.md`` were measured on those files.
"""

from __future__ import annotations

from dataclasses import dataclass

from rdkit import Chem

from predictors.equivalence import map_alkene_relations

MEASURED = "measured, ../shared/real_spectra/README.md"
MEMORY = "literature value, CDCl3 (from memory)"


@dataclass(frozen=True)
class AlkeneReference:
    name: str
    mapped_smiles: str
    shifts: tuple
    source: str
    geometry: str | None = None
    kind: str = ""


REFERENCE_ALKENES = (
    AlkeneReference(
        "butyl acrylate",
        "[CH2:1]=[CH:2][C:3](=O)OCCCC",
        ((1, 3, "cis", 6.39), (1, 3, "trans", 5.80), (2, None, None, 6.11)),
        MEASURED,
        None,
        "enoate",
    ),
    AlkeneReference(
        "estragole",
        "[CH2:1]=[CH:2][CH2:3]c1ccc(OC)cc1",
        ((2, None, None, 5.98), (1, 3, "cis", 5.09), (1, 3, "trans", 5.09)),
        MEASURED,
        None,
        "terminal",
    ),
    AlkeneReference(
        "methyl acrylate",
        "[CH2:1]=[CH:2][C:3](=O)OC",
        ((1, 3, "cis", 6.40), (1, 3, "trans", 5.82), (2, None, None, 6.13)),
        MEMORY,
        None,
        "enoate",
    ),
    AlkeneReference(
        "methyl (E)-crotonate",
        "C/[CH:1]=[CH:2]/C(=O)OC",
        ((1, None, None, 6.97), (2, None, None, 5.84)),
        MEMORY,
        "trans",
        "enoate",
    ),
    AlkeneReference(
        "methyl (Z)-crotonate",
        "C/[CH:1]=[CH:2]\\C(=O)OC",
        ((1, None, None, 6.35), (2, None, None, 5.77)),
        MEMORY,
        "cis",
        "enoate",
    ),
    AlkeneReference(
        "methyl (E)-cinnamate",
        "c1ccccc1/[CH:1]=[CH:2]/C(=O)OC",
        ((1, None, None, 7.70), (2, None, None, 6.44)),
        MEMORY,
        "trans",
        "enoate",
    ),
    AlkeneReference(
        "methyl (Z)-cinnamate",
        "c1ccccc1/[CH:1]=[CH:2]\\C(=O)OC",
        ((1, None, None, 6.95), (2, None, None, 5.95)),
        MEMORY,
        "cis",
        "enoate",
    ),
    AlkeneReference(
        "styrene",
        "[CH2:1]=[CH:2][c:3]1ccccc1",
        ((2, None, None, 6.72), (1, 3, "cis", 5.75), (1, 3, "trans", 5.24)),
        MEMORY,
        None,
        "styrene",
    ),
    AlkeneReference(
        "(E)-beta-methylstyrene",
        "c1ccccc1/[CH:1]=[CH:2]/C",
        ((1, None, None, 6.41), (2, None, None, 6.24)),
        MEMORY,
        "trans",
        "styrene",
    ),
    AlkeneReference(
        "(Z)-beta-methylstyrene",
        "c1ccccc1/[CH:1]=[CH:2]\\C",
        ((1, None, None, 6.45), (2, None, None, 5.79)),
        MEMORY,
        "cis",
        "styrene",
    ),
    AlkeneReference(
        "(E)-stilbene",
        "c1ccccc1/[CH:1]=[CH:2]/c1ccccc1",
        ((1, None, None, 7.11),),
        MEMORY,
        "trans",
        "styrene",
    ),
    AlkeneReference(
        "(Z)-stilbene", "c1ccccc1/[CH:1]=[CH:2]\\c1ccccc1", ((1, None, None, 6.60),), MEMORY, "cis", "styrene"
    ),
    AlkeneReference(
        "1-hexene",
        "[CH2:1]=[CH:2][CH2:3]CCC",
        ((2, None, None, 5.81), (1, 3, "cis", 5.00), (1, 3, "trans", 4.93)),
        MEMORY,
        None,
        "terminal",
    ),
    AlkeneReference(
        "allyl alcohol",
        "[CH2:1]=[CH:2][CH2:3]O",
        ((2, None, None, 5.98), (1, 3, "cis", 5.27), (1, 3, "trans", 5.13)),
        MEMORY,
        None,
        "terminal",
    ),
    AlkeneReference(
        "vinyl acetate",
        "[CH2:1]=[CH:2][O:3]C(C)=O",
        ((2, None, None, 7.27), (1, 3, "cis", 4.88), (1, 3, "trans", 4.57)),
        MEMORY,
        None,
        "vinyl ester",
    ),
    AlkeneReference(
        "ethyl vinyl ether",
        "[CH2:1]=[CH:2][O:3]CC",
        ((2, None, None, 6.47), (1, 3, "cis", 4.18), (1, 3, "trans", 3.98)),
        MEMORY,
        None,
        "enol ether",
    ),
    AlkeneReference(
        "cyclohex-2-en-1-one",
        "O=C1[CH:2]=[CH:1]CCC1",
        ((1, None, None, 6.99), (2, None, None, 6.01)),
        MEMORY,
        "cis",
        "enone",
    ),
    AlkeneReference(
        "(E)-pent-3-en-2-one",
        "C/[CH:1]=[CH:2]/C(C)=O",
        ((1, None, None, 6.87), (2, None, None, 6.10)),
        MEMORY,
        "trans",
        "enone",
    ),
    AlkeneReference(
        "methyl vinyl ketone",
        "[CH2:1]=[CH:2][C:3](C)=O",
        ((2, None, None, 6.35), (1, 3, "cis", 6.22), (1, 3, "trans", 5.90)),
        MEMORY,
        None,
        "enone",
    ),
    AlkeneReference("mesityl oxide", "CC(C)=[CH:1]C(C)=O", ((1, None, None, 6.08),), MEMORY, None, "enone"),
    AlkeneReference(
        "(E)-crotonaldehyde",
        "C/[CH:1]=[CH:2]/C=O",
        ((1, None, None, 6.87), (2, None, None, 6.15)),
        MEMORY,
        "trans",
        "enal",
    ),
    AlkeneReference(
        "methyl methacrylate",
        "[CH2:1]=C(C)[C:3](=O)OC",
        ((1, 3, "cis", 6.10), (1, 3, "trans", 5.55)),
        MEMORY,
        None,
        "enoate",
    ),
    AlkeneReference(
        "dimethyl fumarate",
        "COC(=O)/[CH:1]=[CH:2]/C(=O)OC",
        ((1, None, None, 6.86),),
        MEMORY,
        "trans",
        "enoate",
    ),
    AlkeneReference(
        "dimethyl maleate",
        "COC(=O)/[CH:1]=[CH:2]\\C(=O)OC",
        ((1, None, None, 6.28),),
        MEMORY,
        "cis",
        "enoate",
    ),
    AlkeneReference(
        "2-methylbut-2-ene", "C[CH:1]=C(C)C", ((1, None, None, 5.19),), MEMORY, None, "trisubstituted"
    ),
    AlkeneReference("cyclohexene", "C1CC[CH:1]=[CH:2]C1", ((1, None, None, 5.67),), MEMORY, "cis", "ring"),
    AlkeneReference(
        "coumarin",
        "O=c1[cH:2][cH:1]c2ccccc2o1",
        ((1, None, None, 7.72), (2, None, None, 6.43)),
        "../shared/real_spectra/README.md (from memory)",
        "cis",
        "ring enoate",
    ),
)


@dataclass(frozen=True)
class MatchedShift:
    name: str
    observed_ppm: float
    predicted_ppm: float
    site_index: int


def locate_reference(entry: AlkeneReference) -> tuple[str, dict[int, int]]:
    """Canonical SMILES of the entry and a map from atom-map number to canonical atom index."""
    mol = Chem.MolFromSmiles(entry.mapped_smiles)
    maps = {a.GetAtomMapNum(): a.GetIdx() for a in mol.GetAtoms() if a.GetAtomMapNum()}
    for atom in mol.GetAtoms():
        atom.SetAtomMapNum(0)
    smiles = Chem.MolToSmiles(mol)
    order = list(mol.GetPropsAsDict(True, True)["_smilesAtomOutputOrder"])
    return smiles, {m: order.index(idx) for m, idx in maps.items()}


def select_proton(mol_h: Chem.Mol, carbon: int, ref: int | None, relation: str | None) -> int:
    """Index of the H on ``carbon`` with the given relation to ``ref``."""
    hs = [n.GetIdx() for n in mol_h.GetAtomWithIdx(carbon).GetNeighbors() if n.GetAtomicNum() == 1]
    if ref is None:
        return hs[0]
    rel = map_alkene_relations(mol_h)[carbon]
    return next(h for h in hs if rel.relation(h, ref) == relation)


def match_reference(entry: AlkeneReference, system) -> tuple[MatchedShift, ...]:
    """Pair each observed shift of ``entry`` with the predicted site of that proton."""
    smiles, index = locate_reference(entry)
    mol_h = Chem.AddHs(Chem.MolFromSmiles(smiles))
    out = []
    for carbon_map, ref_map, relation, shift in entry.shifts:
        ref = index[ref_map] if ref_map is not None else None
        h = select_proton(mol_h, index[carbon_map], ref, relation)
        site = next(k for k, s in enumerate(system.sites) if h in s.atoms)
        out.append(MatchedShift(entry.name, shift, system.sites[site].shift_ppm, site))
    return tuple(out)
