"""Aliphatic and olefinic compounds: halides, alcohols, ethers, carbonyl compounds, amines, amides
and lactams, alkenes, nitriles, nitro and phosphorus compounds, sugars and amino acids.
Comments name the positions where the SMILES order does not make them plain."""

from __future__ import annotations

from benchmarks.shift_reference.model import GOTTLIEB, MEMORY, entry

M = MEMORY

ENTRIES = (
    # ---- halides
    entry("iodomethane", "CI", "CDCl3", {0: 2.16}, M + "iodomethane, CDCl3, literature values"),
    entry(
        "iodobutane",
        "ICCCC",
        "CDCl3",
        {1: 3.20, 2: 1.80, 3: 1.41, 4: 0.93},
        M + "1-iodobutane, CDCl3, literature values",
    ),
    entry(
        "bromopropane_2",
        "CC(C)Br",
        "CDCl3",
        {0: 1.71, 1: 4.29, 2: 1.71},
        M + "2-bromopropane, CDCl3, literature values",
    ),
    entry("bromoethane", "CCBr", "CDCl3", {0: 1.67, 1: 3.43}, M + "bromoethane, CDCl3, literature values"),
    entry(
        "ethyl_bromoacetate",
        "CCOC(=O)CBr",
        "CDCl3",
        {0: 1.30, 1: 4.23, 5: 3.83},
        M + "ethyl bromoacetate, CDCl3, literature values",
    ),
    entry("chloroform", "ClC(Cl)Cl", "CDCl3", {1: 7.26}, GOTTLIEB),
    # ---- alcohols, ethers, polyols
    entry(
        "glycerol",
        "OCC(O)CO",
        "D2O",
        {1: (3.65, 3.56), 2: 3.78, 4: (3.65, 3.56)},
        M + "glycerol, D2O, literature values",
    ),
    entry(
        "tetrahydropyran",
        "C1CCOCC1",
        "CDCl3",
        {0: 1.57, 1: 1.57, 2: 3.57, 4: 3.57, 5: 1.57},
        M + "tetrahydropyran, CDCl3, literature values",
    ),
    entry(
        "menthol",
        "C[C@@H]1CC[C@H]([C@@H](C1)O)C(C)C",
        "CDCl3",
        {0: 0.93, 5: 3.41, 8: 2.17, 9: 0.95, 10: 0.81},
        M + "(-)-menthol, CDCl3, literature values",
    ),
    # methyl alpha-D-glucopyranoside: 2 = H1, 4 = H5, 5 = H6a/b, 7 = H4, 9 = H3, 11 = H2
    entry(
        "methyl_glucoside_alpha",
        "CO[C@H]1O[C@H](CO)[C@@H](O)[C@H](O)[C@H]1O",
        "D2O",
        {0: 3.42, 2: 4.80, 4: 3.64, 5: (3.86, 3.76), 7: 3.40, 9: 3.66, 11: 3.56},
        M + "methyl alpha-D-glucopyranoside, D2O, literature values",
    ),
    # glucopyranose anomers: 1 = H6a/b, 2 = H5, 4 = H1, 6 = H2, 8 = H3, 10 = H4
    entry(
        "glucose_alpha",
        "OC[C@H]1O[C@H](O)[C@H](O)[C@@H](O)[C@@H]1O",
        "D2O",
        {1: (3.84, 3.77), 2: 3.84, 4: 5.23, 6: 3.54, 8: 3.72, 10: 3.42},
        M + "alpha-D-glucopyranose, D2O, literature values",
    ),
    entry(
        "glucose_beta",
        "OC[C@H]1O[C@@H](O)[C@H](O)[C@@H](O)[C@@H]1O",
        "D2O",
        {1: (3.90, 3.73), 2: 3.47, 4: 4.65, 6: 3.25, 8: 3.50, 10: 3.41},
        M + "beta-D-glucopyranose, D2O, literature values",
    ),
    # ---- carbonyl compounds
    entry("acetone", "CC(C)=O", "CDCl3", {0: 2.17, 2: 2.17}, GOTTLIEB),
    entry(
        "cyclohexanone",
        "O=C1CCCCC1",
        "CDCl3",
        {2: 2.33, 3: 1.86, 4: 1.72, 5: 1.86, 6: 2.33},
        M + "cyclohexanone, CDCl3, literature values",
    ),
    entry(
        "butyrolactone",
        "O=C1CCCO1",
        "CDCl3",
        {2: 2.49, 3: 2.28, 4: 4.35},
        M + "gamma-butyrolactone, CDCl3, literature values",
    ),
    entry(
        "butanal",
        "CCCC=O",
        "CDCl3",
        {0: 0.97, 1: 1.68, 2: 2.42, 3: 9.77},
        M + "butanal, CDCl3, literature values",
    ),
    entry(
        "phenylacetaldehyde",
        "O=CCc1ccccc1",
        "CDCl3",
        {1: 9.75, 2: 3.69, 4: 7.22, 5: 7.36, 6: 7.30, 7: 7.36, 8: 7.22},
        M + "phenylacetaldehyde, CDCl3, literature values",
    ),
    entry(
        "cinnamaldehyde",
        "O=C/C=C/c1ccccc1",
        "CDCl3",
        {1: 9.70, 2: 6.72, 3: 7.50, 5: 7.57, 6: 7.43, 7: 7.43, 8: 7.43, 9: 7.57},
        M + "(E)-cinnamaldehyde, CDCl3, literature values",
    ),
    entry(
        "cyclopentenone",
        "O=C1CCC=C1",
        "CDCl3",
        {2: 2.35, 3: 2.66, 4: 7.73, 5: 6.21},
        M + "cyclopent-2-en-1-one, CDCl3, literature values",
    ),
    entry(
        "maleic_anhydride",
        "O=C1OC(=O)C=C1",
        "CDCl3",
        {5: 7.05, 6: 7.05},
        M + "maleic anhydride, CDCl3, literature values",
    ),
    # ---- amines, amides, lactams
    entry(
        "piperidine",
        "C1CCNCC1",
        "CDCl3",
        {0: 1.53, 1: 1.53, 2: 2.79, 4: 2.79, 5: 1.53},
        M + "piperidine, CDCl3, literature values",
    ),
    entry(
        "pyrrolidine",
        "C1CCNC1",
        "CDCl3",
        {0: 1.68, 1: 1.68, 2: 2.87, 4: 2.87},
        M + "pyrrolidine, CDCl3, literature values",
    ),
    entry(
        "morpholine",
        "C1COCCN1",
        "CDCl3",
        {0: 2.86, 1: 3.67, 3: 3.67, 4: 2.86},
        M + "morpholine, CDCl3, literature values",
    ),
    entry(
        "benzylamine",
        "NCc1ccccc1",
        "CDCl3",
        {1: 3.86, 3: 7.30, 4: 7.33, 5: 7.24, 6: 7.33, 7: 7.30},
        M + "benzylamine, CDCl3, literature values",
    ),
    entry("dmf", "CN(C)C=O", "CDCl3", {0: 2.96, 2: 2.88, 3: 8.02}, GOTTLIEB),
    entry("dimethylacetamide", "CC(=O)N(C)C", "CDCl3", {0: 2.09, 4: 3.02, 5: 2.94}, GOTTLIEB),
    # N-methyl-2-pyrrolidinone: 2 = NCH2, 3 = CH2, 4 = COCH2
    entry(
        "nmp",
        "CN1CCCC1=O",
        "CDCl3",
        {0: 2.85, 2: 3.40, 3: 2.02, 4: 2.38},
        M + "N-methyl-2-pyrrolidinone, CDCl3, literature values",
    ),
    entry(
        "pyrrolidinone",
        "O=C1CCCN1",
        "CDCl3",
        {2: 2.30, 3: 2.15, 4: 3.40},
        M + "2-pyrrolidinone, CDCl3, literature values",
    ),
    # ---- alkenes
    entry(
        "acrylonitrile",
        "C=CC#N",
        "CDCl3",
        {0: (6.24, 6.11), 1: 5.68},
        M + "acrylonitrile, CDCl3, literature values",
    ),
    entry(
        "limonene",
        "CC1=CC[C@@H](CC1)C(C)=C",
        "CDCl3",
        {0: 1.65, 2: 5.40, 8: 1.73, 9: (4.71, 4.69)},
        M + "(R)-limonene, CDCl3, literature values",
    ),
    # ---- nitriles, nitro, sulfur and phosphorus compounds
    entry("acetonitrile", "CC#N", "CDCl3", {0: 2.10}, GOTTLIEB),
    entry("nitromethane", "C[N+](=O)[O-]", "CDCl3", {0: 4.33}, GOTTLIEB),
    entry(
        "nitroethane",
        "CC[N+](=O)[O-]",
        "CDCl3",
        {0: 1.58, 1: 4.44},
        M + "nitroethane, CDCl3, literature values",
    ),
    entry(
        "nitropropane",
        "CCC[N+](=O)[O-]",
        "CDCl3",
        {0: 1.03, 1: 2.03, 2: 4.38},
        M + "1-nitropropane, CDCl3, literature values",
    ),
    entry("dmso", "CS(C)=O", "CDCl3", {0: 2.62, 2: 2.62}, GOTTLIEB),
    entry(
        "triethyl_phosphate",
        "CCOP(=O)(OCC)OCC",
        "CDCl3",
        {0: 1.34, 1: 4.10, 6: 4.10, 7: 1.34, 9: 4.10, 10: 1.34},
        M + "triethyl phosphate, CDCl3, literature values",
    ),
    entry(
        "dimethyl_methylphosphonate",
        "COP(C)(=O)OC",
        "CDCl3",
        {0: 3.74, 3: 1.48, 6: 3.74},
        M + "dimethyl methylphosphonate, CDCl3, literature values",
    ),
    # ---- amino acids (D2O)
    entry("glycine", "NCC(=O)O", "D2O", {1: 3.56}, M + "glycine, D2O, literature values"),
    entry("alanine", "C[C@H](N)C(=O)O", "D2O", {0: 1.48, 1: 3.78}, M + "L-alanine, D2O, literature values"),
    entry(
        "valine",
        "CC(C)[C@H](N)C(=O)O",
        "D2O",
        {0: 1.04, 1: 2.27, 2: 0.99, 3: 3.60},
        M + "L-valine, D2O, literature values",
    ),
    entry(
        "serine",
        "OC[C@H](N)C(=O)O",
        "D2O",
        {1: (3.97, 3.93), 2: 3.83},
        M + "L-serine, D2O, literature values",
    ),
    # proline: 3 = H-alpha, 4 = beta, 5 = gamma, 6 = delta
    entry(
        "proline",
        "OC(=O)[C@@H]1CCCN1",
        "D2O",
        {3: 4.12, 4: (2.34, 2.07), 5: 2.00, 6: (3.41, 3.33)},
        M + "L-proline, D2O, literature values",
    ),
    entry(
        "phenylalanine",
        "N[C@@H](Cc1ccccc1)C(=O)O",
        "D2O",
        {1: 3.99, 2: (3.29, 3.13), 4: 7.32, 5: 7.42, 6: 7.37, 7: 7.42, 8: 7.32},
        M + "L-phenylalanine, D2O, literature values",
    ),
    # ---- more aldehydes and formates
    entry("acetaldehyde", "CC=O", "CDCl3", {0: 2.21, 1: 9.79}, M + "acetaldehyde, CDCl3, literature values"),
    entry(
        "isobutyraldehyde",
        "CC(C)C=O",
        "CDCl3",
        {0: 1.13, 1: 2.43, 2: 1.13, 3: 9.63},
        M + "2-methylpropanal, CDCl3, literature values",
    ),
    entry(
        "ethyl_formate",
        "CCOC=O",
        "CDCl3",
        {0: 1.30, 1: 4.22, 3: 8.03},
        M + "ethyl formate, CDCl3, literature values",
    ),
    # ---- more methyls on N and S
    entry(
        "dimethylbenzylamine",
        "CN(C)Cc1ccccc1",
        "CDCl3",
        {0: 2.24, 2: 2.24, 3: 3.42},
        M + "N,N-dimethylbenzylamine, CDCl3, literature values",
    ),
    entry(
        "n_methylmorpholine",
        "CN1CCOCC1",
        "CDCl3",
        {0: 2.30, 2: 2.42, 3: 3.71, 5: 3.71, 6: 2.42},
        M + "4-methylmorpholine, CDCl3, literature values",
    ),
    entry(
        "n_methylacetamide",
        "CNC(C)=O",
        "CDCl3",
        {0: 2.81, 3: 1.98},
        M + "N-methylacetamide, CDCl3, literature values",
    ),
    entry(
        "dimethyl_sulfide",
        "CSC",
        "CDCl3",
        {0: 2.10, 2: 2.10},
        M + "dimethyl sulfide, CDCl3, literature values",
    ),
    entry(
        "methyl_phenyl_sulfone",
        "CS(=O)(=O)c1ccccc1",
        "CDCl3",
        {0: 3.05, 5: 7.95, 6: 7.57, 7: 7.66, 8: 7.57, 9: 7.95},
        M + "methyl phenyl sulfone, CDCl3, literature values",
    ),
)
