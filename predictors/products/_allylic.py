"""Allylic leaving groups: SN2' (attack at the far end of the C=C) and 1,4-elimination to dienes.

For X-C(alpha)-C(beta)=C(gamma):

* **SN2'**: the nucleophile bonds to C(gamma), the C=C moves to C(alpha)=C(beta) and X
  leaves. It competes with SN2 when C(alpha) is more hindered than C(gamma) (common
  practice; Clayden et al. 2012, allylic substitution, from memory): its share grows tenfold
  per carbon substituent that C(alpha) carries beyond C(gamma).
* **1,4-elimination**: a base removes an H from C(delta), next to C(gamma); C(delta)=C(gamma)
  and C(beta)=C(alpha) form, a conjugated 1,3-diene (vinylogous E2; common practice). It is
  listed with the 1,2-eliminations, each delta-H weighted a tenth of a beta-H before the
  conjugation bonus.

The new C=C geometries are not fixed by a 3D model here: both are listed, E over Z.
"""

from __future__ import annotations

from rdkit import Chem

from predictors.products._editing import (
    _add_fragment,
    _alkene_outcomes,
    _geometry_weight,
    _hydrogens,
    _index,
    _remove,
    _tagged,
    _with_hydrogens,
)
from predictors.products._records import _Context, _Route
from predictors.products._substitution import _nucleophiles
from predictors.substrate import LeavingGroup

#: SN2' beside SN2 when both ends carry as many carbon substituents (common practice: minor).
_SN2_PRIME_BASE = 0.1
_SN2_PRIME_RANGE = (0.02, 5.0)
#: Weight of a delta-H (1,4-elimination) relative to a beta-H, before the conjugation bonus.
_DELTA_H_FACTOR = 0.1


def allylic_ends(mol: Chem.Mol, alpha: int) -> list[tuple[int, int]]:
    """(beta, gamma) pairs with C(alpha)-C(beta)=C(gamma), C=C not aromatic."""
    out = []
    for beta in mol.GetAtomWithIdx(alpha).GetNeighbors():
        if beta.GetAtomicNum() != 6 or beta.GetIsAromatic():
            continue
        for bond in beta.GetBonds():
            gamma = bond.GetOtherAtom(beta)
            if bond.GetBondType() == Chem.BondType.DOUBLE and gamma.GetAtomicNum() == 6 \
                    and gamma.GetIdx() != alpha:
                out.append((beta.GetIdx(), gamma.GetIdx()))
    return out


def _carbons(mol: Chem.Mol, idx: int, exclude: int) -> int:
    return sum(1 for n in mol.GetAtomWithIdx(idx).GetNeighbors()
               if n.GetAtomicNum() == 6 and n.GetIdx() != exclude)


def sn2_prime_factor(ctx: _Context, lg: LeavingGroup) -> float:
    """Share of SN2' relative to SN2 at this allylic site (0 when the site is not allylic)."""
    mol = ctx.substrate.mol
    ends = allylic_ends(mol, lg.alpha_idx)
    if not ends:
        return 0.0
    beta, gamma = ends[0]
    steps = _carbons(mol, lg.alpha_idx, beta) - _carbons(mol, gamma, beta)
    low, high = _SN2_PRIME_RANGE
    return min(high, max(low, _SN2_PRIME_BASE * 10.0 ** steps))


def _transposed(ctx: _Context, lg: LeavingGroup, beta: int, gamma: int) -> tuple[Chem.RWMol, int, int, int]:
    rw = _tagged(ctx.mol_h)
    rw.GetBondBetweenAtoms(lg.alpha_idx, beta).SetBondType(Chem.BondType.DOUBLE)
    rw.GetBondBetweenAtoms(beta, gamma).SetBondType(Chem.BondType.SINGLE)
    for bond in rw.GetAtomWithIdx(beta).GetBonds():
        bond.SetStereo(Chem.BondStereo.STEREONONE)
    for idx in (lg.alpha_idx, beta, gamma):
        rw.GetAtomWithIdx(idx).SetChiralTag(Chem.ChiralType.CHI_UNSPECIFIED)
    return rw, lg.alpha_idx, beta, gamma


def sn2_prime_routes(ctx: _Context, lg: LeavingGroup) -> list[_Route]:
    """The nucleophile at C(gamma), the C=C moved to C(alpha)=C(beta)."""
    routes = []
    for beta, gamma in allylic_ends(ctx.substrate.mol, lg.alpha_idx):
        for frag, name, solvolysis in _nucleophiles(ctx, for_cation=False):
            rw, alpha, beta_t, gamma_t = _transposed(ctx, lg, beta, gamma)
            _add_fragment(rw, _index(rw, gamma_t), frag)
            _remove(rw, _with_hydrogens(ctx.mol_h, lg.lg_atoms))
            for o in _alkene_outcomes(rw, _index(rw, alpha), _index(rw, beta_t)):
                notes = (f"solvolysis by {name}",) if solvolysis else ()
                why = f"SN2' by {name}: attack at the far end of the C=C, allylic transposition"
                routes.append(_Route(o.smiles, ("SN2'",), _geometry_weight(o, ctx.rt_kcal),
                                     f"substitution ({name}), allylic transposition", why, o.geometry,
                                     None, f"SN2'@{lg.alpha_idx}", notes))
    return routes


def one_four_eliminations(ctx: _Context, lg: LeavingGroup) -> list[tuple]:
    """(outcome, weight, why, notes) of each 1,4-elimination to a conjugated diene.

    The weight leaves out the orientation factor, which the E2 assembly applies to every alkene.
    """
    out = []
    for beta, gamma in allylic_ends(ctx.substrate.mol, lg.alpha_idx):
        for delta in ctx.substrate.mol.GetAtomWithIdx(gamma).GetNeighbors():
            hs = _hydrogens(ctx.mol_h, delta.GetIdx())
            if delta.GetIdx() == beta or delta.GetAtomicNum() != 6 or not hs \
                    or delta.GetHybridization() != Chem.HybridizationType.SP3:
                continue
            rw, alpha, beta_t, gamma_t = _transposed(ctx, lg, beta, gamma)
            rw.GetBondBetweenAtoms(gamma, delta.GetIdx()).SetBondType(Chem.BondType.DOUBLE)
            rw.GetAtomWithIdx(delta.GetIdx()).SetChiralTag(Chem.ChiralType.CHI_UNSPECIFIED)
            _remove(rw, (*_with_hydrogens(ctx.mol_h, lg.lg_atoms), hs[0]))
            for o in _alkene_outcomes(rw, _index(rw, alpha), _index(rw, beta_t)):
                weight = len(hs) * _DELTA_H_FACTOR * _geometry_weight(o, ctx.rt_kcal)
                out.append((o, weight, "1,4-elimination (H removed two carbons further along the C=C)",
                            ("1,4-elimination to a conjugated diene",)))
    return out
