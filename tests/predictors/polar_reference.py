"""Published 1H shifts of ring and polar sp3 compounds (lactams, cyclic ethers, polyols, sugars,
acetals) used to calibrate and test the ring, polyol and acetal corrections of the sp3 model.

Each entry is a SMILES with atom-map numbers on the carbons whose protons are compared, and
``{map: shift_ppm}`` (mean of the protons on that carbon). The model does not tell axial from
equatorial ring CH-O (the anomeric H of alpha- and beta-glucopyranosides, about 0.5 ppm apart):
both anomers are in the fit, which lands between them. ``role`` holds the compound's half of the
shift-reference split (``benchmarks.shift_split.half_of``): the ``correction`` constants of
``predictors/data/sp3_increments.csv`` were fitted on the ``"fitting"`` entries only (least
squares, the six constants together); the ``"held-out"`` entries test them. Values marked
``from memory`` were recalled, not read from the source.
"""

from __future__ import annotations

from tests.predictors.sp3_reference import Sp3Reference

CDCL3 = "literature value, CDCl3 (from memory)"
GOTTLIEB = "Gottlieb, Kotlyar, Nudelman, J. Org. Chem. 1997, 62, 7512, Table 1, CDCl3 (from memory)"
D2O = "literature value, D2O (from memory)"

#: role field of Sp3Reference holds the half ("fitting" / "held-out").
POLAR_SP3 = (
    Sp3Reference("tetrahydrofuran", "[CH2:1]1[CH2:2]OCC1", {1: 1.85, 2: 3.76}, GOTTLIEB, "fitting"),
    Sp3Reference("tetrahydropyran", "[CH2:3]1[CH2:2][CH2:1]OCC1", {1: 3.64, 2: 1.59, 3: 1.59}, CDCL3,
                 "fitting"),
    Sp3Reference("cyclohexanone", "O=C1[CH2:1][CH2:2][CH2:3]CC1", {1: 2.33, 2: 1.86, 3: 1.72}, CDCL3,
                 "fitting"),
    Sp3Reference("piperidine", "N1[CH2:1][CH2:2][CH2:3]CC1", {1: 2.79, 2: 1.52, 3: 1.52}, CDCL3, "fitting"),
    Sp3Reference("2-piperidone", "O=C1N[CH2:1][CH2:2][CH2:3][CH2:4]1", {1: 3.30, 2: 1.78, 3: 1.78, 4: 2.34},
                 CDCL3, "fitting"),
    Sp3Reference("N-methyl-2-pyrrolidone", "O=C1N([CH3:4])[CH2:1][CH2:2][CH2:3]1",
                 {1: 3.37, 2: 2.02, 3: 2.37, 4: 2.84}, CDCL3, "fitting"),
    Sp3Reference("2-pyrrolidinone", "O=C1N[CH2:1][CH2:2][CH2:3]1", {1: 3.40, 2: 2.15, 3: 2.30}, CDCL3,
                 "fitting"),
    Sp3Reference("gamma-butyrolactone", "O=C1O[CH2:1][CH2:2][CH2:3]1", {1: 4.35, 2: 2.28, 3: 2.49}, CDCL3,
                 "fitting"),
    Sp3Reference("cyclohexanol", "O[CH:1]1CCCCC1", {1: 3.61}, CDCL3, "fitting"),
    Sp3Reference("trans-cyclohexane-1,2-diol", "O[C@@H:1]1CCCC[C@H]1O", {1: 3.35}, CDCL3, "fitting"),
    Sp3Reference("methyl alpha-D-glucopyranoside",
                 "[CH3:7]O[C@H:1]1O[C@H:5]([CH2:6]O)[C@@H:4](O)[C@H:3](O)[C@H:2]1O",
                 {1: 4.80, 2: 3.56, 3: 3.66, 4: 3.40, 5: 3.64, 6: 3.81, 7: 3.42}, D2O, "fitting"),
    Sp3Reference("methyl beta-D-glucopyranoside",
                 "[CH3:7]O[C@@H:1]1O[C@H:5]([CH2:6]O)[C@@H:4](O)[C@H:3](O)[C@H:2]1O",
                 {1: 4.37, 2: 3.25, 3: 3.48, 4: 3.37, 5: 3.45, 6: 3.82, 7: 3.57}, D2O, "fitting"),
    Sp3Reference("glycerol", "O[CH2:1][CH:2](O)CO", {1: 3.60, 2: 3.78}, D2O, "fitting"),
    Sp3Reference("propane-1,2-diol", "[CH3:3][CH:2](O)[CH2:1]O", {1: 3.47, 2: 3.87, 3: 1.13}, D2O, "fitting"),
    Sp3Reference("D-mannitol", "O[CH2:1][C@@H:2](O)[C@@H:3](O)[C@H](O)[C@H](O)CO",
                 {1: 3.76, 2: 3.75, 3: 3.79}, D2O, "fitting"),
    Sp3Reference("2-methyltetrahydrofuran", "[CH3:3][CH:1]1CC[CH2:2]O1", {1: 3.92, 2: 3.78, 3: 1.22}, CDCL3,
                 "fitting"),
    Sp3Reference("cyclopentylbenzene", "c1ccc([CH:1]2CCCC2)cc1", {1: 2.98}, CDCL3, "fitting"),
    Sp3Reference("cyclopentyl methyl ether", "CO[CH:1]1CCCC1", {1: 3.78}, CDCL3, "fitting"),
    Sp3Reference("cyclohexyl acetate", "CC(=O)O[CH:1]1CCCCC1", {1: 4.75}, CDCL3, "fitting"),
    Sp3Reference("1,1-dimethoxyethane", "CO[CH:1](C)OC", {1: 4.57}, CDCL3, "fitting"),
    Sp3Reference("benzaldehyde dimethyl acetal", "CO[CH:1](OC)c1ccccc1", {1: 5.38}, CDCL3, "fitting"),
    Sp3Reference("1,1-diethoxypropane", "CC[CH:1](OCC)OCC", {1: 4.45}, CDCL3, "fitting"),
    Sp3Reference("paraldehyde", "C[CH:1]1OC(C)OC(C)O1", {1: 5.00}, CDCL3, "fitting"),
    # --- held-out: never used to set a constant -----------------------------------------------
    Sp3Reference("alpha-D-glucopyranose", "O[CH2:6][C@H:5]1O[C@H:1](O)[C@H:2](O)[C@@H:3](O)[C@@H:4]1O",
                 {1: 5.22, 2: 3.53, 3: 3.71, 4: 3.41, 5: 3.83}, D2O, "held-out"),
    Sp3Reference("beta-D-glucopyranose", "O[CH2:6][C@H:5]1O[C@@H:1](O)[C@H:2](O)[C@@H:3](O)[C@@H:4]1O",
                 {1: 4.64, 2: 3.25, 3: 3.49, 4: 3.41, 5: 3.47}, D2O, "held-out"),
    Sp3Reference("1,4-dioxane", "[CH2:1]1COCCO1", {1: 3.71}, GOTTLIEB, "held-out"),
    Sp3Reference("cyclohexane", "[CH2:1]1CCCCC1", {1: 1.43}, GOTTLIEB, "held-out"),
    Sp3Reference("N,N-dimethylacetamide", "[CH3:1]C(=O)N([CH3:2])[CH3:3]", {1: 2.09, 2: 2.98, 3: 2.98},
                 GOTTLIEB, "held-out"),
    Sp3Reference("morpholine", "O1[CH2:1][CH2:2]NCC1", {1: 3.67, 2: 2.86}, CDCL3, "held-out"),
    Sp3Reference("acetaldehyde diethyl acetal", "CCO[CH:1](C)OCC", {1: 4.67}, CDCL3, "held-out"),
    Sp3Reference("2-methoxytetrahydropyran", "CO[CH:1]1CCCCO1", {1: 4.53}, CDCL3, "held-out"),
    Sp3Reference("2-methyl-1,3-dioxolane", "C[CH:1]1OCCO1", {1: 5.00}, CDCL3, "held-out"),
    Sp3Reference("2-phenyl-1,3-dioxolane", "c1ccc([CH:1]2OCCO2)cc1", {1: 5.81}, CDCL3, "held-out"),
    Sp3Reference("1-methyl-2-piperidone", "O=C1N([CH3:4])[CH2:1][CH2:2]C[CH2:3]1",
                 {1: 3.28, 2: 1.80, 3: 2.36, 4: 2.93}, CDCL3, "held-out"),
)
