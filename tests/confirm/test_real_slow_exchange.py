"""OH and NH couplings in DMSO-d6 checked on a real spectrum: panthenol (``panthenol/1h.dx`` of the
shared real spectra, cheminfo data set, MIT licence; skipped when the folder is absent).

The header says CDCl3; the data show DMSO-d5 and its water line (README of the folder), and in
DMSO-d6 the OH and amide NH exchange slowly: the N-H is a triplet, the CH(OH) proton a doublet
split by its O-H, the O-H a doublet. The splittings are measured here from the file at the
depositors' assigned shifts (``assignment.nmredata.sdf``: H10 7.744, H12 5.362, H2 3.699) and
compared with the predicted couplings.
"""

from __future__ import annotations

import numpy as np
import pytest
from rdkit import Chem
from scipy.signal import find_peaks

from confirm.processing import load_spectrum
from predictors.prediction import predict_spin_system

pytestmark = [pytest.mark.real_data]

PANTHENOL = "CC(C)(CO)C(O)C(=O)NCCCO"
ANCHOR_PPM = 0.789403  # H9, one of the two CH3 singlets, to align the depositors' axis


def _splitting_hz(spectrum, centre: float, n_lines: int) -> float:
    """Mean spacing (Hz) of the ``n_lines`` strongest lines within 0.03 ppm of ``centre``."""
    x, y = np.asarray(spectrum.ppm), np.asarray(spectrum.intensity)
    near = np.abs(x - centre) < 0.03
    peaks, props = find_peaks(y[near], height=0.2 * float(y[near].max()))
    top = np.sort(x[near][peaks[np.argsort(props["peak_heights"])[-n_lines:]]])
    assert top.size == n_lines, f"{n_lines} lines expected near {centre} ppm, found {top.size}"
    return float(np.mean(np.diff(top)) * spectrum.field_mhz)


def _coupling(system, heavy_atoms) -> float:
    """Predicted coupling (Hz) between the sites of the H on the two given heavy atoms."""
    mol = Chem.AddHs(Chem.MolFromSmiles(system.smiles))
    site_of = {}
    for k, site in enumerate(system.sites):
        for h in site.atoms:
            site_of[mol.GetAtomWithIdx(h).GetNeighbors()[0].GetIdx()] = k
    a, b = (site_of[i] for i in heavy_atoms)
    return float(abs(system.j_hz[a, b]))


def test_dmso_oh_and_nh_couplings_match_the_splittings_of_a_real_spectrum(real_spectra):
    spectrum = load_spectrum(real_spectra / "panthenol" / "1h.dx").spectrum
    assert spectrum.solvent == "DMSO-d6"
    x, y = np.asarray(spectrum.ppm), np.asarray(spectrum.intensity)
    near = np.abs(x - ANCHOR_PPM) < 0.05
    offset = float(x[near][np.argmax(y[near])]) - ANCHOR_PPM  # the two CH3 are 0.025 ppm apart
    system = predict_spin_system(PANTHENOL, n_conformers=4, solvent="DMSO-d6")
    mol = Chem.MolFromSmiles(system.smiles)
    amide_n = next(a.GetIdx() for a in mol.GetAtoms() if a.GetSymbol() == "N")
    ch_oh = next(a.GetIdx() for a in mol.GetAtoms() if a.GetSymbol() == "C" and a.GetTotalNumHs() == 1)
    hydroxyl = next(n.GetIdx() for n in mol.GetAtomWithIdx(ch_oh).GetNeighbors() if n.GetSymbol() == "O")
    n_ch2 = next(n.GetIdx() for n in mol.GetAtomWithIdx(amide_n).GetNeighbors() if n.GetTotalNumHs() == 2)
    # measured: NH triplet (H10), the O-H doublet (H12) and the CH doublet it splits (H2)
    nh = _splitting_hz(spectrum, 7.744 + offset, 3)
    oh = _splitting_hz(spectrum, 5.362 + offset, 2)
    ch = _splitting_hz(spectrum, 3.699 + offset, 2)
    assert oh == pytest.approx(ch, abs=0.3)  # one coupling seen from both ends
    assert _coupling(system, (amide_n, n_ch2)) == pytest.approx(nh, abs=1.5)
    assert _coupling(system, (hydroxyl, ch_oh)) == pytest.approx(oh, abs=1.5)
