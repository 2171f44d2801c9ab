#!/usr/bin/env python3
"""Reference ring perception made with RDKit 2026.09.1.

Two RDKit ring sets are recorded: Chem.GetSSSR(mol), RDKit's smallest set of smallest
rings (as many rings as the cyclomatic number), and Mol.GetRingInfo().AtomRings(), which
RDKit fills with its *symmetrised* SSSR: for cubane 6 faces instead of 5, for adamantane
4 six-rings instead of 3. vicinal's SSSR is compared with GetSSSR in count and sizes, and
each of its rings must be one of the AtomRings rings.

Each molecule gets explicit hydrogens, one ETKDGv3 conformer (fixed seed), MMFF94
optimisation, and is written as tests/data/ref/rings/<name>.xyz (bonds are then perceived
from distances by vicinal). tests/reference/rings_rdkit.csv lists, per molecule, the number
of SSSR rings and their sizes (sorted, space-separated) from GetSSSR, and the AtomRings
(symmetrised SSSR) rings as sorted 1-based atom sets (';'-separated). Where the SSSR is not
unique (cubane: any 5 of the 6 faces) only counts and sizes can be compared.

Run from the repository root:  python3 tests/reference/rings_rdkit.py
"""
import csv
import os

import rdkit
from rdkit import Chem
from rdkit.Chem import AllChem

MOLECULES = [
    ("cyclohexane", "C1CCCCC1"),
    ("decalin", "C1CCC2CCCCC2C1"),
    ("norbornane", "C1CC2CCC1C2"),
    ("cubane", "C12C3C4C1C5C2C3C45"),
    ("methyl_beta_glucopyranoside", "CO[C@@H]1O[C@H](CO)[C@@H](O)[C@H](O)[C@H]1O"),
    ("spiro_4_5_decane", "C1CCC2(C1)CCCCC2"),
    ("adamantane", "C1C2CC3CC1CC(C2)C3"),
    ("indane", "c1ccc2c(c1)CCC2"),
]
SEED = 20260901
OUT_DIR = os.path.join("tests", "data", "ref", "rings")
OUT_CSV = os.path.join("tests", "reference", "rings_rdkit.csv")


def main():
    os.makedirs(OUT_DIR, exist_ok=True)
    rows = []
    for name, smi in MOLECULES:
        mol = Chem.AddHs(Chem.MolFromSmiles(smi))
        params = AllChem.ETKDGv3()
        params.randomSeed = SEED
        assert AllChem.EmbedMolecule(mol, params) == 0, name
        AllChem.MMFFOptimizeMolecule(mol, maxIters=5000)
        conf = mol.GetConformer()
        with open(os.path.join(OUT_DIR, name + ".xyz"), "w") as f:
            f.write(f"{mol.GetNumAtoms()}\n{name} (RDKit ETKDGv3 + MMFF94)\n")
            for i, atom in enumerate(mol.GetAtoms()):
                p = conf.GetAtomPosition(i)
                f.write(f"{atom.GetSymbol():<2} {p.x:.6f} {p.y:.6f} {p.z:.6f}\n")
        rings = [sorted(i + 1 for i in r) for r in mol.GetRingInfo().AtomRings()]
        # GetSSSR replaces the molecule's ring info, so it runs on a copy, after AtomRings.
        sssr = sorted(len(r) for r in Chem.GetSSSR(Chem.Mol(mol)))
        rings.sort(key=lambda r: (len(r), r))
        rows.append(
            [
                name + ".xyz",
                mol.GetNumAtoms(),
                len(sssr),
                " ".join(str(k) for k in sssr),
                ";".join(" ".join(str(i) for i in r) for r in rings),
            ]
        )
    with open(OUT_CSV, "w", newline="") as f:
        f.write(f"# Rings from RDKit {rdkit.__version__}: n_rings and ring_sizes from Chem.GetSSSR, "
                "symm_rings from GetRingInfo().AtomRings() (symmetrised SSSR); "
                "made by tests/reference/rings_rdkit.py\n")
        wr = csv.writer(f, lineterminator="\n")
        wr.writerow(["file", "n_atoms", "n_rings", "ring_sizes", "symm_rings"])
        wr.writerows(rows)


if __name__ == "__main__":
    main()
