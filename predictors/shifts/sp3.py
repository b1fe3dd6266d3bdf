"""sp3 protons: Shoolery's rule as extended by Schaller et al. for CH2XY, otherwise the
alpha/beta/gamma increments of Beauchamp & Marquez (``data/sp3_increments.csv``)."""

from __future__ import annotations

from rdkit import Chem

from predictors.shifts.substituents import _ALKYL_KEYS, _is_carbonyl, classify_substituent
from predictors.shifts.tables import ShiftEstimate, _sp3_table, _sp3_value, _with_sd


def _sp3_shift(mol, parent) -> ShiftEstimate:
    n_h = parent.GetTotalNumHs(includeNeighbors=True)
    label = {3: "CH3", 2: "CH2"}.get(n_h, "CH" if n_h == 1 else "CH4")
    heavy = [n for n in parent.GetNeighbors() if n.GetAtomicNum() > 1]
    flags: list[str] = []
    if n_h == 2 and len(heavy) == 2:
        keys = [classify_substituent(mol, n.GetIdx(), parent.GetIdx()) for n in heavy]
        groups = [_shoolery_group(k) for k, _ in keys]
        usable = all(g != "alkyl" and ("shoolery", g) in _sp3_table() for g in groups)
        if usable and not any(f for _, f in keys):
            shift = _sp3_value("shoolery", "base", "alpha_ppm")
            shift += sum(_sp3_value("shoolery", g, "alpha_ppm") for g in groups)
            return _with_sd(shift, label, "shoolery", flags)
    base_group = label if label in ("CH3", "CH2", "CH") else "CH3"
    shift = _sp3_value("base", base_group, "shift_ppm")
    shift += _bm_increments(mol, parent, base_group, flags)
    shift += _ring_correction(mol, parent, label, flags)
    if label == "CH" and sum(1 for n in heavy if n.GetSymbol() == "O") >= 2:
        shift += _sp3_value("correction", "acetal_CH", "alpha_ppm")
        flags.append("acetal CH: correction for two O on the carbon")
    return _with_sd(shift, label, "bm", flags)


def _ring_correction(mol, parent, label: str, flags: list[str]) -> float:
    """Shift of a CH2 or CH in a five- to seven-membered ring relative to the open-chain increments
    (``correction`` rows ``ring5_CH2`` ... ``ring6_CH`` of ``data/sp3_increments.csv``; ``ring6``
    covers six- and seven-membered rings)."""
    if label not in ("CH2", "CH"):
        return 0.0
    sizes = [len(r) for r in mol.GetRingInfo().AtomRings() if parent.GetIdx() in r]
    if not sizes or not 5 <= min(sizes) <= 7:
        return 0.0
    ring = "ring5" if min(sizes) == 5 else "ring6"
    flags.append(f"{ring} {label}: ring correction added")
    return _sp3_value("correction", f"{ring}_{label}", "alpha_ppm")


def _shoolery_group(key: str) -> str:
    if key in _ALKYL_KEYS:
        return "alkyl"
    return {"CHO": "COR", "COCl": "COR"}.get(key, key)


def _is_sp3_carbon(atom) -> bool:
    return (atom.GetSymbol() == "C" and not atom.GetIsAromatic()
            and all(b.GetBondType() == Chem.BondType.SINGLE for b in atom.GetBonds())
            and sum(1 for n in atom.GetNeighbors() if n.GetSymbol() == "F") < 3)


def _bm_increments(mol, start, carbon_type: str, flags: list[str]) -> float:
    """Alpha/beta/gamma increments along sp3-carbon paths from ``start``, saturated.

    Alpha increments depend on the carbon type (``alpha_CH3`` / ``alpha_CH2`` / ``alpha_CH``
    rows, from monosubstituted alkanes), and so do the beta increments of methyl groups
    (``beta_CH3`` rows), where the table has them; otherwise the Beauchamp-Marquez value is
    used. The sum is then made sub-additive by :func:`_saturate`.

    On a carbon that carries an oxygen (alcohols, ethers, sugars), a further oxygen on a beta
    carbon does not add the Beauchamp-Marquez beta increment: polyols and sugar ring CH come
    0.2-0.5 ppm above what plain additivity gives, so such an oxygen adds the calibrated
    ``polyol_beta_O`` value instead (``correction`` rows of ``data/sp3_increments.csv``).
    """
    columns = ("alpha_ppm", "beta_ppm", "gamma_ppm")
    alphas: list[float] = []
    distant = polyol = 0.0
    oxygenated = any(n.GetSymbol() == "O" for n in start.GetNeighbors())
    frontier = [start]
    seen = {start.GetIdx()}
    for depth in range(3):
        next_frontier = []
        for atom in frontier:
            for nbr in atom.GetNeighbors():
                if nbr.GetAtomicNum() == 1 or nbr.GetIdx() in seen:
                    continue
                if _is_sp3_carbon(nbr):
                    next_frontier.append(nbr)
                    continue
                if depth == 1 and oxygenated and nbr.GetSymbol() == "O":
                    polyol += _sp3_value("correction", "polyol_beta_O", "beta_ppm")
                    continue
                term = _bm_term(mol, nbr, atom, columns[depth], carbon_type, flags)
                if depth == 0:
                    alphas.append(term)
                else:
                    distant += term
        seen.update(a.GetIdx() for a in next_frontier)
        frontier = next_frontier
    if polyol:
        flags.append("polyol: beta O on an O-bearing carbon (non-additive value)")
    return _saturate(alphas, distant) + polyol


def _saturate(alphas: list[float], distant: float) -> float:
    """Sum of increments with the sub-additivity of crowded carbons.

    A second (third) alpha substituent adds ``1 - k_alpha * a1`` of its increment, where ``a1``
    is the largest alpha increment; beta and gamma increments add ``1 - k_far * A`` of theirs,
    where ``A`` is the saturated alpha sum (never below zero). Both constants are calibrated
    (see the ``saturation`` rows of ``data/sp3_increments.csv``).
    """
    if not alphas:
        return distant
    k_alpha = _sp3_value("saturation", "second_alpha", "alpha_ppm")
    k_far = _sp3_value("saturation", "beta_gamma", "alpha_ppm")
    ordered = sorted(alphas, reverse=True)
    lead = ordered[0]
    alpha_sum = lead + sum(ordered[1:]) * max(0.0, 1.0 - k_alpha * max(lead, 0.0))
    return alpha_sum + distant * max(0.0, 1.0 - k_far * max(alpha_sum, 0.0))


def _bm_term(mol, nbr, atom, column: str, carbon_type: str, flags: list[str]) -> float:
    key, fallback = classify_substituent(mol, nbr.GetIdx(), atom.GetIdx())
    group = {"COAr": "COR", "COCl": "COR"}.get(key, key)
    if key == "NR2" and nbr.GetIsAromatic():
        group, fallback = "N_azole", False
    if group == "C=C" and not fallback and _conjugated_alkene(mol, nbr, atom):
        group = "C=C_conj"
    if ("bm", group) not in _sp3_table() or fallback:
        if column == "alpha_ppm":
            flags.append(f"sp3 increment for {key} (atom {nbr.GetIdx()}) taken from generic")
        group = "C=C" if group not in _sp3_table() else group
        if ("bm", group) not in _sp3_table():
            return 0.0
    typed = f"{column.removesuffix('_ppm')}_{carbon_type}"
    if (typed, group) in _sp3_table():
        return _sp3_value(typed, group, column)
    return _sp3_value("bm", group, column)


def _conjugated_alkene(mol, carbon, from_atom) -> bool:
    """True when the alkene starting at ``carbon`` carries an aryl, C=C or C=O on its far carbon."""
    for bond in carbon.GetBonds():
        if bond.GetBondType() != Chem.BondType.DOUBLE:
            continue
        far = bond.GetOtherAtom(carbon)
        return any(n.GetIdx() != carbon.GetIdx() and (n.GetIsAromatic() or _is_carbonyl(n) or any(
            b.GetBondType() == Chem.BondType.DOUBLE for b in n.GetBonds())) for n in far.GetNeighbors())
    return False
