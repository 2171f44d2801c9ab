#!/usr/bin/env python3
"""Add atom names (MDL V2000 atom aliases, `A  nnn` lines) to the demo SDF files
made by make_ensembles.py, so that vicinal's reports name atoms the way a
chemist numbers them (sugar numbering for the galactoside, ring numbering for
the cyclohexanol). Diastereotopic CH2 protons get the suffixes a/b in index
order; which is pro-R or pro-S is not implied.

Run after make_ensembles.py:  python3 examples/add_atom_names.py
Plain Python, no packages needed.
"""
import pathlib

HERE = pathlib.Path(__file__).resolve().parent

# 1-based atom index -> name, from the atom order written by make_ensembles.py.
NAMES = {
    # methyl beta-D-galactopyranoside
    "megal.sdf": {
        1: "CMe", 2: "O1", 3: "C1", 4: "O5", 5: "C5", 6: "C6", 7: "O6", 8: "C4",
        9: "O4", 10: "C3", 11: "O3", 12: "C2", 13: "O2", 14: "HMe1", 15: "HMe2",
        16: "HMe3", 17: "H1", 18: "H5", 19: "H6a", 20: "H6b", 21: "HO6", 22: "H4",
        23: "HO4", 24: "H3", 25: "HO3", 26: "H2", 27: "HO2",
    },
    # cis-2-methylcyclohexan-1-ol
    "cis2mech.sdf": {
        1: "CMe", 2: "C2", 3: "C3", 4: "C4", 5: "C5", 6: "C6", 7: "C1", 8: "O1",
        9: "HMe1", 10: "HMe2", 11: "HMe3", 12: "H2", 13: "H3a", 14: "H3b",
        15: "H4a", 16: "H4b", 17: "H5a", 18: "H5b", 19: "H6a", 20: "H6b",
        21: "H1", 22: "HO1",
    },
}


def add_names(path, names):
    lines = path.read_text().split("\n")
    out = []
    for line in lines:
        if line.startswith("A  "):
            continue  # replace any earlier aliases
        if line == "M  END":
            for idx in sorted(names):
                out.append(f"A  {idx:3d}")
                out.append(names[idx])
        out.append(line)
    path.write_text("\n".join(out))


for name, names in NAMES.items():
    add_names(HERE / name, names)
    print(f"named {len(names)} atoms in every record of {name}")
