"""Heteroaromatic and pseudo-aromatic rings: pyridines, diazines, azoles, furan, thiophene, indole,
quinoline, 2-pyridone, coumarin, caffeine (CDCl3 unless given). Comments name the positions."""

from __future__ import annotations

from benchmarks.shift_reference.model import GOTTLIEB, MEMORY, entry

M = MEMORY

ENTRIES = (
    # 2/4 = H2/H6, 1/5 = H3/H5, 0 = H4
    entry("pyridine", "c1ccncc1", "CDCl3", {0: 7.68, 1: 7.29, 2: 8.62, 4: 8.62, 5: 7.29}, GOTTLIEB),
    # 2 = H3, 3 = H4, 4 = H5, 5 = H6
    entry(
        "picoline_2",
        "Cc1ccccn1",
        "CDCl3",
        {0: 2.55, 2: 7.13, 3: 7.56, 4: 7.08, 5: 8.49},
        M + "2-methylpyridine, CDCl3, literature values",
    ),
    entry(
        "dmap",
        "CN(C)c1ccncc1",
        "CDCl3",
        {0: 3.00, 2: 3.00, 4: 6.49, 5: 8.23, 7: 8.23, 8: 6.49},
        M + "4-(dimethylamino)pyridine, CDCl3, literature values",
    ),
    # 5 = H4, 6 = H5, 7 = H6, 9 = H2
    entry(
        "methyl_nicotinate",
        "COC(=O)c1cccnc1",
        "CDCl3",
        {0: 3.96, 5: 8.30, 6: 7.40, 7: 8.78, 9: 9.22},
        M + "methyl nicotinate, CDCl3, literature values",
    ),
    entry(
        "chloropyridine_2",
        "Clc1ccccn1",
        "CDCl3",
        {2: 7.32, 3: 7.64, 4: 7.23, 5: 8.39},
        M + "2-chloropyridine, CDCl3, literature values",
    ),
    # 0 = H5, 1/5 = H4/H6, 3 = H2
    entry(
        "pyrimidine",
        "c1cncnc1",
        "CDCl3",
        {0: 7.36, 1: 8.78, 3: 9.26, 5: 8.78},
        M + "pyrimidine, CDCl3, literature values",
    ),
    entry(
        "pyrazine",
        "c1cnccn1",
        "CDCl3",
        {0: 8.59, 1: 8.59, 3: 8.59, 4: 8.59},
        M + "pyrazine, CDCl3, literature values",
    ),
    # 0 = H6, 1 = H7, 2 = H8, 5 = H2, 6 = H3, 7 = H4, 9 = H5
    entry(
        "quinoline",
        "c1ccc2ncccc2c1",
        "CDCl3",
        {0: 7.53, 1: 7.71, 2: 8.11, 5: 8.91, 6: 7.38, 7: 8.14, 9: 7.80},
        M + "quinoline, CDCl3, literature values",
    ),
    # 0 = H5, 1 = H6, 2 = H7, 4 = NH, 5 = H2, 6 = H3, 8 = H4
    entry(
        "indole",
        "c1ccc2[nH]ccc2c1",
        "CDCl3",
        {0: 7.12, 1: 7.19, 2: 7.40, 5: 7.21, 6: 6.56, 8: 7.65},
        M + "indole, CDCl3, literature values",
    ),
    entry(
        "pyrrole",
        "c1cc[nH]c1",
        "CDCl3",
        {0: 6.24, 1: 6.24, 2: 6.74, 4: 6.74},
        M + "pyrrole, CDCl3, literature values",
    ),
    entry(
        "furan",
        "c1ccoc1",
        "CDCl3",
        {0: 6.38, 1: 6.38, 2: 7.42, 4: 7.42},
        M + "furan, CDCl3, literature values",
    ),
    entry(
        "thiophene",
        "c1ccsc1",
        "CDCl3",
        {0: 7.12, 1: 7.12, 2: 7.33, 4: 7.33},
        M + "thiophene, CDCl3, literature values",
    ),
    # 4 = H3, 5 = H4, 6 = H5
    entry(
        "acetylthiophene_2",
        "CC(=O)c1cccs1",
        "CDCl3",
        {0: 2.56, 4: 7.69, 5: 7.12, 6: 7.63},
        M + "2-acetylthiophene, CDCl3, literature values",
    ),
    entry(
        "furfural",
        "O=Cc1ccco1",
        "CDCl3",
        {1: 9.66, 3: 7.25, 4: 6.60, 5: 7.68},
        M + "furan-2-carbaldehyde, CDCl3, literature values",
    ),
    # 0 = H4, 1 = H5, 3 = H2
    entry(
        "thiazole", "c1cscn1", "CDCl3", {0: 7.98, 1: 7.41, 3: 8.88}, M + "thiazole, CDCl3, literature values"
    ),
    # 2 = H5, 3 = H4, 5 = H2
    entry(
        "methylimidazole_1",
        "Cn1ccnc1",
        "CDCl3",
        {0: 3.64, 2: 6.86, 3: 7.01, 5: 7.38},
        M + "1-methylimidazole, CDCl3, literature values",
    ),
    entry(
        "oxazole", "c1cocn1", "CDCl3", {0: 7.09, 1: 7.69, 3: 7.95}, M + "oxazole, CDCl3, literature values"
    ),
    # 2 = H3, 3 = H4, 4 = H5, 5 = H6
    entry(
        "pyridone_2",
        "O=c1cccc[nH]1",
        "CDCl3",
        {2: 6.59, 3: 7.48, 4: 6.30, 5: 7.35},
        M + "2-pyridone, CDCl3, literature values",
    ),
    # 2 = H3, 3 = H4, 5 = H5, 6 = H6, 7 = H7, 8 = H8
    entry(
        "coumarin",
        "O=c1ccc2ccccc2o1",
        "CDCl3",
        {2: 6.43, 3: 7.72, 5: 7.49, 6: 7.28, 7: 7.53, 8: 7.33},
        M + "coumarin, CDCl3, literature values (../shared/real_spectra/README.md)",
    ),
    # 0 = N7-CH3, 2 = H8, 9 = N1-CH3, 13 = N3-CH3
    entry(
        "caffeine",
        "Cn1cnc2c1c(=O)n(C)c(=O)n2C",
        "CDCl3",
        {0: 4.00, 2: 7.51, 9: 3.41, 13: 3.57},
        M + "caffeine, CDCl3, literature values",
    ),
    # ---- more five-membered rings
    # 2 = H3, 3 = H4, 4 = H5
    entry(
        "methylfuran_2",
        "Cc1ccco1",
        "CDCl3",
        {0: 2.28, 2: 5.93, 3: 6.23, 4: 7.25},
        M + "2-methylfuran, CDCl3, literature values",
    ),
    # 5 = H3, 6 = H4, 7 = H5
    entry(
        "methyl_furoate",
        "COC(=O)c1ccco1",
        "CDCl3",
        {0: 3.89, 5: 7.18, 6: 6.50, 7: 7.57},
        M + "methyl furan-2-carboxylate, CDCl3, literature values",
    ),
    entry(
        "acetylfuran_2",
        "CC(=O)c1ccco1",
        "CDCl3",
        {0: 2.48, 4: 7.19, 5: 6.53, 6: 7.59},
        M + "2-acetylfuran, CDCl3, literature values",
    ),
    entry(
        "methylthiophene_2",
        "Cc1cccs1",
        "CDCl3",
        {0: 2.49, 2: 6.77, 3: 6.90, 4: 7.05},
        M + "2-methylthiophene, CDCl3, literature values",
    ),
    entry(
        "thiophenecarbaldehyde",
        "O=Cc1cccs1",
        "CDCl3",
        {1: 9.95, 3: 7.80, 4: 7.22, 5: 7.77},
        M + "thiophene-2-carbaldehyde, CDCl3, literature values",
    ),
    entry(
        "methylpyrrole_1",
        "Cn1cccc1",
        "CDCl3",
        {0: 3.62, 2: 6.58, 3: 6.12, 4: 6.12, 5: 6.58},
        M + "1-methylpyrrole, CDCl3, literature values",
    ),
    # 2 = H5, 3 = H4, 4 = H3
    entry(
        "methylpyrazole_1",
        "Cn1cccn1",
        "CDCl3",
        {0: 3.89, 2: 7.33, 3: 6.22, 4: 7.48},
        M + "1-methylpyrazole, CDCl3, literature values",
    ),
    entry(
        "imidazole",
        "c1c[nH]cn1",
        "CDCl3",
        {0: 7.13, 1: 7.13, 3: 7.70},
        M + "imidazole, CDCl3, literature values",
    ),
    # 0 = H5, 1 = H6, 2 = H7, 5 = H2, 6 = H3, 8 = H4
    entry(
        "benzofuran",
        "c1ccc2occc2c1",
        "CDCl3",
        {0: 7.22, 1: 7.29, 2: 7.50, 5: 7.62, 6: 6.77, 8: 7.60},
        M + "benzofuran, CDCl3, literature values",
    ),
    # 0 = H6, 1 = H7, 2 = H8, 4 = H1, 6 = H3, 7 = H4, 9 = H5
    entry(
        "isoquinoline",
        "c1ccc2cnccc2c1",
        "CDCl3",
        {0: 7.69, 1: 7.60, 2: 7.95, 4: 9.26, 6: 8.52, 7: 7.64, 9: 7.80},
        M + "isoquinoline, CDCl3, literature values",
    ),
    # 2 = H2, 3 = H3, 5 = H4, 6 = H5, 7 = H6, 8 = H7
    entry(
        "methylindole_1",
        "Cn1ccc2ccccc21",
        "CDCl3",
        {0: 3.78, 2: 7.03, 3: 6.48, 5: 7.63, 6: 7.10, 7: 7.21, 8: 7.31},
        M + "1-methylindole, CDCl3, literature values",
    ),
)
