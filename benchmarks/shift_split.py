"""One split of shift-reference compounds into a fitting half and a held-out half.

Shift models and their uncertainty tables are tuned on the ``"fitting"`` half only; accuracy is
reported on the ``"held-out"`` half. The split is by compound (canonical isomeric SMILES), so
it is the same on every machine and does not move when compounds are added:

- a compound of the quantification corpus (``benchmarks/corpus``) keeps that corpus's half
  (``tune`` -> fitting, ``held-out`` -> held-out), so the fit's held-out spectra never contain a
  compound whose shifts calibrated the predictor;
- any other compound goes by the parity of the SHA-256 of its canonical SMILES.
"""

from __future__ import annotations

import functools
import hashlib

from rdkit import Chem

HALVES = ("fitting", "held-out")


def canonical(smiles: str) -> str:
    """Canonical isomeric SMILES of ``smiles`` (ValueError if it does not parse)."""
    mol = Chem.MolFromSmiles(smiles)
    if mol is None:
        raise ValueError(f"unparsable SMILES {smiles!r}")
    return Chem.MolToSmiles(mol, isomericSmiles=True)


@functools.cache
def _corpus_halves() -> dict[str, str]:
    from benchmarks.corpus.compounds import COMPOUNDS
    from benchmarks.corpus.families import compound_half

    return {canonical(c.smiles): ("fitting" if compound_half(c.key) == "tune" else "held-out")
            for c in COMPOUNDS}


def half_of(smiles: str) -> str:
    """``"fitting"`` or ``"held-out"`` for one compound."""
    key = canonical(smiles)
    if key in _corpus_halves():
        return _corpus_halves()[key]
    return HALVES[int(hashlib.sha256(key.encode("utf-8")).hexdigest(), 16) % 2]
