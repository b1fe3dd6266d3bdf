"""Predict the 1H spin system of a molecule: sites, shifts +- sd, signed couplings.

:func:`predict_spin_system` ties together proton equivalence
(:mod:`predictors.equivalence`), shifts (:mod:`predictors.shifts`) and
couplings (:mod:`predictors.couplings`). Atom indices refer to
``Chem.AddHs(Chem.MolFromSmiles(system.smiles))`` where ``system.smiles`` is
RDKit's canonical isomeric SMILES. Each site's shift sd is the calibrated sd of its environment
class (:func:`predictors.shift_uncertainty.calibrated_estimates`).
"""

from __future__ import annotations

import dataclasses

import numpy as np
from rdkit import Chem

from predictors.core import ProtonSite, SpinSystem
from predictors.couplings import embed_conformers, predict_couplings, slow_exchange_protons
from predictors.equivalence import (
    amide_rotamer_branches,
    check_magnetic_equivalence,
    find_equivalent_protons,
    map_alkene_relations,
    split_amide_rotamers,
)
from predictors.errors import InputError
from predictors.hetero_couplings import predict_x_couplings, site_x_couplings
from predictors.molecules import parse_molecule
from predictors.shift_uncertainty import calibrated_estimates
from predictors.shifts import (
    ShiftEstimate,
    predict_proton_shifts,
    prepare_model_molecule,
    split_amide_rotamer_shifts,
    split_diastereotopic,
)
from predictors.shifts.exchangeable import nmr_solvent_key

__all__ = ["predict_spin_system", "proton_shift_estimates", "first_order_multiplicity", "second_order_pairs",
           "MULTIPLET_NAMES", "FIRST_ORDER_RATIO"]

#: First-order multiplet letters by number of equally coupled neighbours.
MULTIPLET_NAMES = {1: "d", 2: "t", 3: "q", 4: "quint", 5: "sext", 6: "sept"}
#: Couplings closer than this (Hz) count as one in a first-order description.
_MERGE_HZ = 1.0
#: Spin systems whose first-order pattern has more couplings than this are "m".
_MAX_DISTINCT = 3
#: Two coupled sites give a first-order pattern when their shift difference in Hz is at least this
#: many times their coupling (common practice: textbooks put the limit near 10; below about 3 the
#: lines lean strongly and extra lines appear).
FIRST_ORDER_RATIO = 10.0


def predict_spin_system(molecule, *, n_conformers: int = 10, seed: int = 0xC0FFEE,
                        solvent: str | None = None) -> SpinSystem:
    """Predict shifts and couplings for every proton site of a molecule.

    Parameters
    ----------
    molecule : str or rdkit.Chem.Mol
        Isomeric SMILES or a molecule.
    n_conformers : int, keyword-only
        Conformers embedded for averaging vicinal and allylic couplings (1-50).
    seed : int, keyword-only
        Random seed of the conformer embedding.
    solvent : str, keyword-only
        NMR solvent of the sample (``"CDCl3"``, ``"DMSO-d6"``, ``"D2O"``, ``"CD3OD"``); sets the
        shifts of exchangeable H, their couplings in DMSO-d6 (slow exchange) and, in DMSO-d6, the
        shifts of the C-H on and next to a carbinol carbon. None: CDCl3 values.

    Returns
    -------
    SpinSystem
        Sites ordered by atom index; ``j_hz`` is the mean coupling per proton
        pair between two sites; ``j_sd_hz`` its uncertainty; ``proton_j_hz`` the
        couplings proton by proton (averaged over each freely rotating CH2/CH3);
        ``split_sites`` the aromatic sites whose protons are not magnetically
        equivalent (simulated proton by proton, ``predictors.spin.spin_units``); ``x_couplings``
        the couplings of each site to 19F and 31P (``predictors.hetero_couplings``).

    Raises
    ------
    ChemistryError
        Unparsable structure, radicals, unsupported elements.
    InputError
        ``n_conformers`` out of range.
    """
    if not isinstance(n_conformers, (int, np.integer)) or not 1 <= n_conformers <= 50:
        raise InputError(f"n_conformers: expected an integer in 1..50, got {n_conformers!r}")
    mol = parse_molecule(molecule)
    smiles = Chem.MolToSmiles(mol, isomericSmiles=True)
    mol_h = Chem.AddHs(Chem.MolFromSmiles(smiles))
    model, pseudo = prepare_model_molecule(mol_h)
    groups = find_equivalent_protons(mol_h, map_alkene_relations(mol_h))
    amide_branches = amide_rotamer_branches(mol_h)
    groups = split_amide_rotamers(mol_h, groups, amide_branches)
    relations = map_alkene_relations(model)
    conformers = embed_conformers(mol_h, n_conformers=int(n_conformers), seed=seed)
    shifts = _shift_estimates(mol_h, model, pseudo, relations, groups, amide_branches, solvent=solvent)
    exchangeable = frozenset(h for h, est in shifts.items() if est.exchangeable)
    slow = slow_exchange_protons(mol_h, exchangeable, nmr_solvent_key(solvent)[0])
    j_atom, sd_atom = predict_couplings(model, conformers, relations, exchangeable=exchangeable,
                                        slow_exchange=slow,
                                        pseudo_atoms=pseudo)
    groups = _split_by_partners(mol_h, groups, _rotor_averaged(mol_h, groups, j_atom))
    averaged = _rotor_averaged(mol_h, groups, j_atom)
    magnetic = check_magnetic_equivalence(groups, averaged, tol_hz=0.5)
    sites = tuple(_make_site(group, shifts, mag) for group, mag in zip(groups, magnetic, strict=True))
    j_site, sd_site = _site_matrices(groups, j_atom, sd_atom)
    if conformers.n_conformers == 0:
        sites = tuple(_add_flag(s, "no 3D conformer: vicinal couplings from generic values") for s in sites)
    order = [h for group in groups for h in group]
    proton_j = np.round(averaged[np.ix_(order, order)], 3)
    proton_j[np.abs(proton_j) < 0.05] = 0.0
    np.fill_diagonal(proton_j, 0.0)
    split = tuple(k for k, (group, mag) in enumerate(zip(groups, magnetic, strict=True))
                  if not mag and len(group) > 1
                  and all(mol_h.GetAtomWithIdx(h).GetNeighbors()[0].GetIsAromatic() for h in group))
    x_couplings = site_x_couplings(groups, predict_x_couplings(mol_h, conformers, exchangeable=exchangeable))
    return SpinSystem(smiles=smiles, sites=sites, j_hz=j_site, j_sd_hz=sd_site, proton_j_hz=proton_j,
                      split_sites=split, x_couplings=x_couplings)


def proton_shift_estimates(mol_h: Chem.Mol, *, solvent: str | None = None,
                           table=None) -> dict[int, ShiftEstimate]:
    """Shift and calibrated sd of every H of ``mol_h``, exactly as :func:`predict_spin_system` uses them.

    Parameters
    ----------
    mol_h : rdkit.Chem.Mol
        Molecule with explicit H; the keys of the result are its atom indices.
    solvent : str, keyword-only, optional
        NMR solvent (exchangeable H only); None: CDCl3 values.
    table : dict, keyword-only, optional
        Class sds (:func:`predictors.shift_uncertainty.load_sd_table`); the benchmark that builds
        the packaged table passes a provisional one.
    """
    model, pseudo = prepare_model_molecule(mol_h)
    groups = find_equivalent_protons(mol_h, map_alkene_relations(mol_h))
    amide_branches = amide_rotamer_branches(mol_h)
    groups = split_amide_rotamers(mol_h, groups, amide_branches)
    return _shift_estimates(mol_h, model, pseudo, map_alkene_relations(model), groups, amide_branches,
                            solvent=solvent, table=table)


def _shift_estimates(mol_h, model, pseudo, relations, groups, amide_branches, *, solvent, table=None):
    shifts = predict_proton_shifts(model, pseudo_atoms=pseudo, relations=relations, solvent=solvent)
    shifts = split_diastereotopic(mol_h, shifts, groups)
    shifts = split_amide_rotamer_shifts(mol_h, shifts, amide_branches)
    return calibrated_estimates(model, shifts, table=table)


def _make_site(group, shifts, magnetic: bool) -> ProtonSite:
    estimates = [shifts[h] for h in group]
    flags = tuple(dict.fromkeys(f for e in estimates for f in e.flags))
    return ProtonSite(
        atoms=group,
        shift_ppm=round(float(np.mean([e.shift_ppm for e in estimates])), 4),
        shift_sd_ppm=float(max(e.sd_ppm for e in estimates)),
        label=estimates[0].label,
        exchangeable=estimates[0].exchangeable,
        magnetically_equivalent=bool(magnetic),
        flags=flags,
    )


def _add_flag(site: ProtonSite, flag: str) -> ProtonSite:
    return dataclasses.replace(site, flags=site.flags + (flag,))


def _site_matrices(groups, j_atom, sd_atom) -> tuple[np.ndarray, np.ndarray]:
    n = len(groups)
    j = np.zeros((n, n))
    sd = np.zeros((n, n))
    for a in range(n):
        for b in range(a + 1, n):
            block = np.ix_(groups[a], groups[b])
            value = float(np.mean(j_atom[block]))
            j[a, b] = j[b, a] = round(value, 3) if abs(value) >= 0.05 else 0.0
            sd[a, b] = sd[b, a] = float(np.sqrt(np.mean(sd_atom[block] ** 2)))
    return j, sd


def _split_by_partners(mol_h, groups, j_atom: np.ndarray, *, min_j_hz: float = 0.5) -> list[tuple[int, ...]]:
    """Split a group of equivalent protons into the parts that couple to different partners.

    The two ethyl groups of diethyl ether are equivalent, but each CH2 couples only to its own
    CH3: one 6H site and one 4H site with a mean coupling would give a 3.5 Hz multiplet instead of
    the observed 7 Hz quartet and triplet. Protons stay together when they sit on the same carbon,
    share a coupling partner outside the group, or have no partner at all (a tert-butyl group).
    Each part keeps the group's shift; the parts are simulated as separate, uncoupled sites.
    """
    out = []
    for group in groups:
        members = list(group)
        if len(members) < 2:
            out.append(tuple(members))
            continue
        inside = set(members)
        partners = {h: {int(x) for x in np.flatnonzero(np.abs(j_atom[h]) >= min_j_hz) if x not in inside}
                    for h in members}
        carbon = {h: mol_h.GetAtomWithIdx(h).GetNeighbors()[0].GetIdx() for h in members}
        parts: list[set[int]] = []
        for h in members:
            joined = [p for p in parts if any(
                carbon[h] == carbon[o] or partners[h] & partners[o] or not (partners[h] or partners[o])
                for o in p)]
            merged = {h}.union(*joined)
            parts = [p for p in parts if p not in joined] + [merged]
        out.extend(sorted(tuple(sorted(p)) for p in parts))
    return out


def _rotor_averaged(mol_h, groups, j_atom: np.ndarray) -> np.ndarray:
    """Average couplings over the equivalent H of each acyclic CH2/CH3 (fast rotation)."""
    j = np.array(j_atom, dtype=float)
    group_of = {h: k for k, g in enumerate(groups) for h in g}
    for atom in mol_h.GetAtoms():
        hs = [n.GetIdx() for n in atom.GetNeighbors() if n.GetAtomicNum() == 1]
        if atom.GetSymbol() != "C" or len(hs) < 2 or atom.IsInRing():
            continue
        if len({group_of[h] for h in hs}) != 1:
            continue
        mean = j[hs, :].mean(axis=0)
        j[hs, :] = mean
        j[:, hs] = mean[:, None]
        j[np.ix_(hs, hs)] = 0.0
    return j


def second_order_pairs(system: SpinSystem, field_mhz: float, *, min_j_hz: float = 0.5,
                       ratio: float = FIRST_ORDER_RATIO) -> list[tuple[int, int, float]]:
    """Coupled site pairs whose pattern is not first order at ``field_mhz``: ``(i, k, dnu/J)`` with
    the shift difference in Hz over the coupling below ``ratio``, most strongly coupled first.
    Exchangeable sites are left out (their couplings rarely show)."""
    out = []
    n = len(system.sites)
    for i in range(n):
        for k in range(i + 1, n):
            j = abs(float(system.j_hz[i, k]))
            if j < min_j_hz or system.sites[i].exchangeable or system.sites[k].exchangeable:
                continue
            dnu = abs(system.sites[i].shift_ppm - system.sites[k].shift_ppm) * field_mhz
            if dnu < ratio * j:
                out.append((i, k, dnu / j))
    return sorted(out, key=lambda t: (t[2], t[0], t[1]))


def first_order_multiplicity(system: SpinSystem, site_index: int, *, min_j_hz: float = 0.5) -> str:
    """First-order multiplet name of a site, e.g. ``"dd"``, ``"dt"``, ``"t"``, ``"m"``.

    Couplings within ``1 Hz`` of each other merge into one (``t`` not ``dd``);
    more than three distinct couplings, or patterns beyond a septet, give ``"m"``.
    Couplings to 19F and 31P (``system.x_couplings``) count like proton partners (a CH2CF3 is
    ``"q"``). Exchangeable sites are ``"br s"``.

    Parameters
    ----------
    system : SpinSystem
    site_index : int
        Index into ``system.sites``.
    min_j_hz : float, keyword-only
        Couplings with smaller magnitude are not resolved.
    """
    n = len(system.sites)
    if not isinstance(site_index, (int, np.integer)) or not 0 <= site_index < n:
        raise InputError(f"site_index: expected an integer in 0..{n - 1}, got {site_index!r}")
    if system.sites[site_index].exchangeable:
        return "br s"
    here = system.sites[site_index]
    coupled = [k for k in range(n) if k != site_index and abs(system.j_hz[site_index, k]) >= min_j_hz]
    hetero = [(abs(float(j)), int(count)) for _, count, j in system.x_couplings[site_index]
              if abs(j) >= min_j_hz]
    if not coupled and not hetero:
        return "s"
    if here.n_h > 1 and any(system.sites[k].n_h > 1 and not (
            here.magnetically_equivalent and system.sites[k].magnetically_equivalent) for k in coupled):
        return "m"  # AA'XX'-type: not first order
    partners = [(abs(float(system.j_hz[site_index, k])), system.sites[k].n_h) for k in coupled] + hetero
    clusters: list[list[float]] = []
    for j, count in sorted(partners, reverse=True):
        if clusters and abs(np.mean(clusters[-1][1:]) - j) < _MERGE_HZ:
            clusters[-1][0] += count
            clusters[-1].append(j)
        else:
            clusters.append([count, j])
    if len(clusters) > _MAX_DISTINCT or any(c[0] > max(MULTIPLET_NAMES) for c in clusters):
        return "m"
    if len(clusters) > 1 and any(c[0] > 3 for c in clusters):
        return "m"
    return "".join(MULTIPLET_NAMES[int(c[0])] for c in clusters)
