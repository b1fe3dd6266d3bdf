"""Accuracy of the predicted 1H-1H couplings against the corpus compounds' published couplings.

The mixture fit starts every multiplet from its predicted couplings and refines them only within a
few Hz (and not at all in molecules whose strongly coupled clusters are large), so a coupling that
is predicted systematically off draws the multiplet in the wrong shape. This benchmark compares
:func:`predictors.prediction.predict_spin_system` with the published couplings of the corpus
compounds (``benchmarks/corpus/compounds.py``, each with its source; sites mapped to atoms by
``benchmarks/shift_reference/reused.CORPUS_ATOMS``), one value per pair of carbons: the predicted
coupling is the mean over the H atoms of the two carbons. Where a corpus compound lists the two H
of one carbon as two sites (a =CH2, a diastereotopic CH2) the two are matched to the two H atoms in
the order that fits the published couplings of that compound best (the labels cannot tell them
apart; their couplings do). A site spanning mirror-related carbons (the two axial H next to a
ring's CH-OH) is compared through the H pairs on the nearest carbons.

Prints, per class of coupling and per half of the corpus split (tune / held-out, by compound),
n, the mean error (predicted - published: the bias), the MAE and the largest error, then the 12
largest errors.

    python -m benchmarks.coupling_accuracy [--json out.json]
"""

from __future__ import annotations

import argparse
import itertools
import json
import sys
from collections.abc import Callable
from dataclasses import asdict, dataclass

import numpy as np
from rdkit import Chem

from benchmarks.corpus.compounds import COMPOUNDS
from benchmarks.corpus.families import compound_half
from benchmarks.shift_reference.reused import CORPUS_ATOMS


@dataclass(frozen=True)
class CouplingComparison:
    """One published coupling against the prediction."""

    compound: str
    half: str
    kind: str
    atoms: tuple[int, int]
    published_hz: float
    predicted_hz: float

    @property
    def error_hz(self) -> float:
        return self.predicted_hz - self.published_hz


def coupling_kind(mol: Chem.Mol, a: int, b: int) -> str:
    """Class of the coupling between H on heavy atoms ``a`` and ``b`` of ``mol`` (corpus numbering)."""
    if a == b:
        return "geminal"
    path = Chem.GetShortestPath(mol, a, b)
    n_bonds = len(path) + 1  # H-C ... C-H
    atoms = [mol.GetAtomWithIdx(i) for i in path]
    bonds = [mol.GetBondBetweenAtoms(path[i], path[i + 1]) for i in range(len(path) - 1)]
    if all(x.GetIsAromatic() for x in atoms):
        return {3: "aryl ortho", 4: "aryl meta", 5: "aryl para"}.get(n_bonds, "other")
    double = [bd.GetBondType() == Chem.BondType.DOUBLE for bd in bonds]
    if n_bonds == 3:
        if double[0]:
            return "across C=C"
        sp2 = [x.GetHybridization() == Chem.HybridizationType.SP2 for x in atoms]
        if any(sp2):
            return "vinyl-sp3 3J" if all(x.GetSymbol() == "C" for x in atoms) else "other"
        return "ring sp3 3J" if bonds[0].IsInRing() else "sp3 3J"
    if n_bonds == 4 and any(double):
        return "allylic 4J"
    return "other"


def _atom_map(ref: Chem.Mol, mol_h: Chem.Mol) -> dict[int, int]:
    """Heavy atoms of the corpus molecule ``ref`` -> heavy atoms of the predicted system's molecule
    ``mol_h`` (explicit H added after the heavy atoms, so their indices are the SMILES')."""
    match = mol_h.GetSubstructMatch(ref, useChirality=False)
    if len(match) != ref.GetNumAtoms():
        target = Chem.MolToSmiles(Chem.RemoveHs(mol_h))
        raise ValueError(f"{Chem.MolToSmiles(ref)}: no atom map onto {target}")
    return dict(enumerate(match))


def _proton_couplings(system, mol_h: Chem.Mol) -> tuple[dict[int, list[int]], Callable[[int, int], float]]:
    """H atoms of each heavy atom of the system (``mol_h``: its molecule with explicit H), and the
    coupling between two H atoms."""
    site_of = {h: k for k, site in enumerate(system.sites) for h in site.atoms}
    position = {h: i for i, h in enumerate(system.proton_atoms)}
    on = {}
    for h in system.proton_atoms:
        on.setdefault(mol_h.GetAtomWithIdx(h).GetNeighbors()[0].GetIdx(), []).append(h)

    def j(h1: int, h2: int) -> float:
        if system.proton_j_hz is not None:
            return float(system.proton_j_hz[position[h1], position[h2]])
        return float(system.j_hz[site_of[h1], site_of[h2]])

    return on, j


def compare_compound(compound, system) -> list[CouplingComparison]:
    """The compound's published couplings between mapped sites against ``system``.

    A site maps to one carbon or to a tuple of mirror-related carbons (the axial H of both CH2 next
    to a ring's CH-OH); several sites on the same carbons stand for single H atoms of each, and
    every way of dealing those H out is tried (the labels cannot tell them apart, the couplings
    can). Between two such sites only the H pairs on the nearest carbons are compared: a published
    coupling of the axial H of C-2/C-6 to those of C-3/C-5 is the C-2/C-3 one, not C-2/C-5.
    """
    mapped = CORPUS_ATOMS.get(compound.key)
    if mapped is None:
        return []
    ref = Chem.MolFromSmiles(compound.smiles)
    mol_h = Chem.AddHs(Chem.MolFromSmiles(system.smiles))
    amap = _atom_map(ref, mol_h)
    on, j = _proton_couplings(system, mol_h)
    dist = Chem.GetDistanceMatrix(mol_h)
    half = compound_half(compound.key)
    carbons = {s: _carbons(atom) for s, atom in enumerate(mapped)}
    sites_of: dict[tuple, list[int]] = {}
    for s, key in carbons.items():
        if key:
            sites_of.setdefault(key, []).append(s)
    usable = []  # (site, site, published value, nearest carbons, class): the same for every pick below
    for i, k, value in compound.couplings:
        if carbons.get(i) and carbons.get(k):
            a, b = min(((a, b) for a in carbons[i] for b in carbons[k]), key=lambda ab: _apart(ref, *ab))
            usable.append((i, k, float(value), (a, b), coupling_kind(ref, a, b)))
    choices = []
    for key, sites in sites_of.items():
        per_carbon = [on.get(amap[c], []) for c in key]
        if len(sites) == 1:
            choices.append([{sites[0]: [h for hs in per_carbon for h in hs]}])
            continue
        if any(len(hs) != len(sites) for hs in per_carbon):
            return []
        options = []
        for perms in itertools.product(*(itertools.permutations(hs) for hs in per_carbon)):
            options.append({s: [perm[n] for perm in perms] for n, s in enumerate(sites)})
        choices.append(options)
    best, best_cost = None, np.inf
    for pick in itertools.product(*choices):
        h_of_site = {s: hs for chosen in pick for s, hs in chosen.items()}
        rows = []
        for i, k, value, atoms, kind in usable:
            pairs = [(x, y) for x in h_of_site[i] for y in h_of_site[k] if x != y]
            if not pairs:
                continue
            nearest = min(dist[x, y] for x, y in pairs)
            predicted = float(np.mean([j(x, y) for x, y in pairs if dist[x, y] == nearest]))
            rows.append(CouplingComparison(compound.key, half, kind, atoms, value, predicted))
        cost = sum(abs(r.error_hz) for r in rows)
        if cost < best_cost:
            best, best_cost = rows, cost
    return best or []


def _apart(mol: Chem.Mol, a: int, b: int) -> int:
    """Bonds between atoms ``a`` and ``b`` (0 for one atom)."""
    return 0 if a == b else len(Chem.GetShortestPath(mol, a, b)) - 1


def _carbons(atom) -> tuple:
    """The corpus atoms a site maps to, as a tuple (empty for anything else)."""
    if isinstance(atom, int):
        return (atom,)
    if isinstance(atom, tuple) and atom and all(isinstance(a, int) for a in atom):
        return atom
    return ()


def compare_all() -> list[CouplingComparison]:
    from predictors.prediction import predict_spin_system

    out = []
    for compound in COMPOUNDS:
        if compound.key not in CORPUS_ATOMS:
            continue
        out.extend(compare_compound(compound, predict_spin_system(compound.smiles, solvent="CDCl3")))
    return out


def summarise(rows: list[CouplingComparison]) -> dict:
    """Per half and coupling class: n, bias (mean predicted - published), MAE and largest error."""
    out: dict = {}
    for half in ("tune", "held-out"):
        for kind in sorted({r.kind for r in rows}):
            err = np.array([r.error_hz for r in rows if r.half == half and r.kind == kind])
            if err.size:
                out.setdefault(half, {})[kind] = {
                    "n": int(err.size), "bias_hz": float(err.mean()), "mae_hz": float(np.abs(err).mean()),
                    "max_hz": float(np.abs(err).max())}
    return out


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m benchmarks.coupling_accuracy",
                                     description=__doc__.split("\n")[0])
    parser.add_argument("--json", metavar="OUT", help="write the comparisons and the summary as JSON")
    args = parser.parse_args(argv)
    rows = compare_all()
    summary = summarise(rows)
    for half, kinds in summary.items():
        print(f"=== {half} half ({len({r.compound for r in rows if r.half == half})} compounds)")
        print(f"  {'class':16s} {'n':>4s} {'bias':>7s} {'MAE':>6s} {'max':>6s}  (Hz, predicted - published)")
        for kind, s in kinds.items():
            print(f"  {kind:16s} {s['n']:4d} {s['bias_hz']:+7.2f} {s['mae_hz']:6.2f} {s['max_hz']:6.2f}")
    print("12 largest errors")
    for r in sorted(rows, key=lambda r: -abs(r.error_hz))[:12]:
        print(f"  {r.compound:24s} {r.half:8s} {r.kind:14s} published {r.published_hz:+6.1f} "
              f"predicted {r.predicted_hz:+6.2f} error {r.error_hz:+5.2f}")
    if args.json:
        with open(args.json, "w", encoding="utf-8") as fh:
            json.dump({"summary": summary, "comparisons": [asdict(r) for r in rows]}, fh, indent=1)
    return 0


if __name__ == "__main__":
    sys.exit(main())
