"""Shift data the project already holds, mapped to atoms (not retyped).

* ``benchmarks/corpus/compounds.py``: sites are not atom-mapped; ``CORPUS_ATOMS`` gives, per
  compound, the heavy atom(s) of each site in site order (a tuple for a site that spans
  mirror-related carbons, ``None`` for a site left out). A site of one H on a CH2 adds one value
  to that carbon, so a carbon listed by two sites carries both resolved shifts.
* ``tests/predictors/sp3_reference.py``: mapped SMILES; the ``defining`` entries are left out
  (they set values of the increment table, so they measure nothing).
* ``tests/predictors/alkene_reference.py``: mapped SMILES; the two H of a =CH2 become the two
  values of that carbon.
"""

from __future__ import annotations

from rdkit import Chem

from benchmarks.shift_reference.model import ShiftEntry, entry

# sites in the order of each compound's ``sites`` (see benchmarks/corpus/compounds.py)
_RING5 = {
    "a": (5, 6, 7, 8, 9),
    "b": (4, 5, 6, 7, 8),
    "c": (3, 4, 5, 6, 7),
    "d": (6, 7, 8, 9, 10),
    "e": (7, 8, 9, 10, 11),
}
CORPUS_ATOMS: dict[str, tuple] = {
    "phenylpropyl_bromide": _RING5["a"] + (1, 3, 3, 0),
    "phenylpropanol": _RING5["a"] + (1, 3, 3, 0, 2),
    "e_methylstyrene": _RING5["b"] + (2, 1, 0),
    "z_methylstyrene": _RING5["b"] + (2, 1, 0),
    "allylbenzene": _RING5["b"] + (1, 0, 0, 2),
    "phenylethyl_bromide": _RING5["b"] + (1, 0),
    "phenylethanol": _RING5["b"] + (1, 0, 2),
    "styrene": _RING5["c"] + (1, 0, 0),
    "phenylethyl_ethyl_ether": _RING5["d"] + (3, 1, 1, 4, 0),
    "bromohexane": (4, 3, 3, 5, 2, 1, 0),
    "hexanol_2": (4, 3, 3, 2, 1, 5, 0, 6),
    "hexene_1": (1, 0, 0, 2, 3, 4, 5),
    "e_hexene_2": (1, 2, 3, 0, 4, 5),
    "z_hexene_2": (1, 2, 3, 0, 4, 5),
    "hydroxybutanoate": (1, 7, 3, 3, 8, 0, 2),
    "e_crotonate": (1, 2, 6, 0, 7),
    "z_crotonate": (1, 2, 6, 0, 7),
    "butenoate": (1, 0, 0, 6, 2, 7),
    "hydroxy_phenylpropanoate": (8, 9, 10, 11, 12, 5, 0, 4, 4, 6),
    "e_cinnamate": _RING5["e"] + (5, 4, 0),
    "z_cinnamate": _RING5["e"] + (5, 4, 0),
    "aldol_ketone": _RING5["e"] + (4, 3, 3, 0, 5),
    "e_benzalacetone": (6, 7, 8, 9, 10, 4, 3, 0),
    "z_benzalacetone": (6, 7, 8, 9, 10, 4, 3, 0),
    "diethyl_malate": (6, 11, 1, 5, 5, 12, 0, 7),
    "diethyl_fumarate": ((5, 6), 1, 10, 0, 11),
    "diethyl_maleate": ((5, 6), 1, 10, 0, 11),
    "tert_amyl_alcohol": (1, (3, 4), 0, 5),
    "methylbutene_2": (1, 3, 4, 0),
    "methylbutene_1": (0, 0, 3, 2, 4),
    "tert_amyl_chloride": (1, (3, 4), 0),
    "cumyl_alcohol": _RING5["a"] + ((0, 2), 3),
    "alpha_methylstyrene": _RING5["b"] + (0, 0, 2),
    "cumyl_methyl_ether": _RING5["d"] + (0, (3, 4)),
    "methylcyclohexanol": ((3, 7), (3, 7), (4, 6), (4, 6), 5, 5, 0, 2),
    "methylcyclohexene": (2, 3, 6, 0, 5, 4),
    "methylenecyclohexane": (0, 2, 6, 3, 5, 4),
    "cyclohexanol": (1, (2, 6), (2, 6), (3, 5), (3, 5), 4, 4, 0),
    "bromocyclohexane": (1, (2, 6), (2, 6), (3, 5), (3, 5), 4, 4),
    "cyclohexene": (0, 1, 2, 5, 3, 4),
    "phenylbutanol": _RING5["d"] + (3, 2, 2, 1, 1, 0, 4),
    "e_phenylbutene": _RING5["a"] + (3, 2, 1, 0),
    "z_phenylbutene": _RING5["a"] + (3, 2, 1, 0),
    # carbinol phenyl first, then the benzyl phenyl
    "diphenylethanol": (10, 11, 12, 13, 14, 4, 5, 6, 7, 8, 1, 2, 2, 0),
    "e_stilbene": (3, 4, 5, 6, 7, 9, 10, 11, 12, 13, 0, 1),
    "z_stilbene": (3, 4, 5, 6, 7, 9, 10, 11, 12, 13, 0, 1),
    "anisyl_bromide": (5, 6, 10, 11, 1, 9, 3, 3, 0),
    "anisyl_propanol": (5, 6, 10, 11, 1, 9, 3, 3, 0, 2),
    "e_anethole": (4, 5, 9, 10, 2, 1, 8, 0),
    "z_anethole": (4, 5, 9, 10, 2, 1, 8, 0),
    "estragole": (4, 5, 9, 10, 1, 0, 0, 8, 2),
    "trans_tbu_cyclohexanol": (7, (6, 9), (6, 9), (5, 10), (5, 10), 4, (0, 2, 3), 8),
    "cis_tbu_cyclohexanol": (7, (6, 9), (6, 9), (5, 10), (5, 10), 4, (0, 2, 3), 8),
    "butyl_acrylate": (0, 1, 0, 5, 6, 7, 8),
    # 8 = H6, 6 = H4, 7 = H5, 5 = H3
    "aspirin": (8, 6, 7, 5, 0, 12),
}


def corpus_entries() -> list[ShiftEntry]:
    """Entries of the quantification corpus whose sites ``CORPUS_ATOMS`` maps to atoms."""
    from benchmarks.corpus.compounds import COMPOUNDS

    out = []
    for compound in COMPOUNDS:
        atoms = CORPUS_ATOMS.get(compound.key)
        if atoms is None:
            continue
        if len(atoms) != len(compound.sites):
            raise ValueError(
                f"corpus map of {compound.key}: {len(atoms)} sites, compound has {len(compound.sites)}"
            )
        values: dict[int, list[float]] = {}
        for site, where in zip(compound.sites, atoms, strict=True):
            if where is None:
                continue
            for atom in where if isinstance(where, tuple) else (where,):
                values.setdefault(atom, []).append(site[0])
        out.append(
            entry(
                f"corpus:{compound.key}",
                compound.smiles,
                "CDCl3",
                values,
                f"{compound.source} (benchmarks/corpus/compounds.py)",
            )
        )
    return out


def _plain(mapped: str) -> tuple[str, dict[int, int]]:
    """SMILES in the atom order of ``mapped`` without map numbers, and map number -> atom index."""
    mol = Chem.MolFromSmiles(mapped)
    where = {}
    for atom in mol.GetAtoms():
        if atom.GetAtomMapNum():
            where[atom.GetAtomMapNum()] = atom.GetIdx()
            atom.SetAtomMapNum(0)
    smiles = Chem.MolToSmiles(mol, canonical=False)
    order = list(mol.GetProp("_smilesAtomOutputOrder").strip("[],").split(","))
    new_index = {int(old): new for new, old in enumerate(x for x in order if x)}
    return smiles, {m: new_index[i] for m, i in where.items()}


def sp3_entries() -> list[ShiftEntry]:
    """The ``test`` and ``calibration`` entries of ``tests/predictors/sp3_reference.py`` and the
    ring and polar compounds of ``tests/predictors/polar_reference.py`` (D2O where their source
    says so)."""
    from tests.predictors.polar_reference import POLAR_SP3
    from tests.predictors.sp3_reference import REFERENCE_SP3

    out = []
    for prefix, module, refs in (("sp3", "sp3_reference", REFERENCE_SP3),
                                 ("polar", "polar_reference", POLAR_SP3)):
        for ref in refs:
            if ref.role == "defining":
                continue
            smiles, where = _plain(ref.mapped_smiles)
            out.append(
                entry(
                    f"{prefix}:{ref.name}",
                    smiles,
                    "D2O" if "D2O" in ref.source else "CDCl3",
                    {where[m]: v for m, v in ref.shifts.items()},
                    f"{ref.source} (tests/predictors/{module}.py)",
                )
            )
    return out


def alkene_entries() -> list[ShiftEntry]:
    """The vinyl shifts of ``tests/predictors/alkene_reference.py``."""
    from tests.predictors.alkene_reference import REFERENCE_ALKENES

    out = []
    for ref in REFERENCE_ALKENES:
        smiles, where = _plain(ref.mapped_smiles)
        values: dict[int, list[float]] = {}
        for carbon, _ref, _relation, shift in ref.shifts:
            values.setdefault(where[carbon], []).append(shift)
        out.append(
            entry(
                f"alkene:{ref.name}",
                smiles,
                "CDCl3",
                values,
                f"{ref.source} (tests/predictors/alkene_reference.py)",
            )
        )
    return out
