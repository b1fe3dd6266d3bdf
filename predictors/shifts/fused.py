"""Fused aromatics: the peri effect of a substituent across a ring fusion.

A substituent on C1 of naphthalene sits about 2.5 A from H8 (both carbons bond to the same
fusion carbon C8a but lie in different rings); a carbonyl or nitro group held in the ring plane
deshields H8 by up to 1.4 ppm, far more than any cross-ring inductive effect. The increments
(``peri6`` rows of ``data/ring_increments.csv``) are H8 of 1-substituted naphthalenes minus
naphthalene H1. The same geometry links N1 and H7 of indole (``peri5`` rows: N-acyl and
N-sulfonyl groups). Bay protons (H4/H5 of phenanthrene) are in the base values of their ring.
Other cross-ring substituent effects are a few hundredths of a ppm and are left out.
"""

from __future__ import annotations

from rdkit import Chem

from predictors.shifts.heteroaromatic import RingPosition, ring_increment_table

__all__ = ["peri_effect"]


def peri_effect(mol: Chem.Mol, where: RingPosition, h_parent: int, classify) -> tuple[float, list[str]]:
    """Sum of the peri increments of substituents across a ring fusion from ``h_parent``.

    Parameters
    ----------
    mol : rdkit.Chem.Mol
    where : RingPosition
        Position of the CH (its ring system).
    h_parent : int
        The CH carbon.
    classify : callable
        :func:`predictors.shifts.substituents.classify_substituent`.

    Returns
    -------
    shift : float
    flags : list of str
        One note per peri substituent (applied, or not tabulated).
    """
    ring_info = mol.GetRingInfo()
    parent = mol.GetAtomWithIdx(h_parent)
    total, flags = 0.0, []
    for fusion in parent.GetNeighbors():
        if fusion.GetIdx() not in where.system or ring_info.NumAtomRings(fusion.GetIdx()) < 2:
            continue
        for carrier in fusion.GetNeighbors():
            c_idx = carrier.GetIdx()
            if c_idx == h_parent or c_idx not in where.system or any(
                    c_idx in r and h_parent in r for r in ring_info.AtomRings()):
                continue
            ring_size = min(len(r) for r in ring_info.AtomRings() if c_idx in r and fusion.GetIdx() in r)
            for sub in carrier.GetNeighbors():
                if sub.GetIdx() in where.system or sub.GetAtomicNum() == 1:
                    continue
                key, _ = classify(mol, sub.GetIdx(), c_idx)
                table = "peri6" if ring_size == 6 else "peri5"
                group = _peri_group(sub, key)
                values = ring_increment_table().get((table, group))
                if values is None:
                    if table == "peri6":
                        flags.append(f"peri effect of {key} (atom {sub.GetIdx()}) not tabulated: none added")
                    continue
                total += values[0]
                flags.append(f"peri {key} (atom {sub.GetIdx()}) across the ring fusion: {values[0]:+.2f} ppm")
    return total, flags


def _peri_group(sub, key: str) -> str:
    if key == "alkyl":
        return "CH3" if sub.GetTotalNumHs(includeNeighbors=True) == 3 else "alkyl"
    if key in ("CH2N", "CH2S", "CH2CO", "CH2Ar", "CH2Cl", "CH2I"):
        return "alkyl"
    return key
