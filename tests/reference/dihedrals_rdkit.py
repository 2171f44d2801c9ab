#!/usr/bin/env python3
"""Reference H-X-Y-H dihedrals made with RDKit 2026.09.1 (rdkit.Chem.rdMolTransforms.GetDihedralDeg).

For each molecule: explicit hydrogens, 3 conformers embedded with ETKDGv3 (fixed random
seed), each MMFF94-optimised. Coordinates are rounded to 10 decimals and set back into the
conformer *before* the dihedrals are measured, so the XYZ files written here hold exactly the
coordinates RDKit measured (tests/dihedrals_vs_rdkit.rs compares to 1e-6 degrees).

Outputs:
  tests/data/ref/<name>.xyz   multi-frame XYZ, 10 decimals, comment "<name> conf <k> MMFF94 E=<kcal/mol>"
  tests/data/ref/<name>.sdf   the same conformers as SD records (V2000, 4 decimals), field MMFF94_energy_kcal_mol
  tests/reference/dihedrals_rdkit.csv
      file, conformer (1-based), h1, x, y, h2 (1-based atom indices, h1 < h2, h1 on x),
      dihedral_deg (from the XYZ coordinates), dihedral_deg_sdf (from the SDF as re-read by RDKit,
      4-decimal coordinates: agreement only to ~1e-2 degrees).

Run from the repository root:  python3 tests/reference/dihedrals_rdkit.py
"""
import csv
import os

import rdkit
from rdkit import Chem
from rdkit.Chem import AllChem
from rdkit.Chem import rdMolTransforms as T
from rdkit.Geometry import Point3D

MOLECULES = [
    ("butane", "CCCC"),
    ("methylcyclohexane", "CC1CCCCC1"),
    # methyl beta-D-glucopyranoside
    ("methyl_beta_glucopyranoside", "CO[C@@H]1O[C@H](CO)[C@@H](O)[C@H](O)[C@H]1O"),
    # N-acetyl-L-alanine N'-methylamide (alanine dipeptide)
    ("alanine_dipeptide", "CC(=O)N[C@@H](C)C(=O)NC"),
]
SEED = 20260901
N_CONF = 3
OUT_DATA = os.path.join("tests", "data", "ref")
OUT_CSV = os.path.join("tests", "reference", "dihedrals_rdkit.csv")


def paths(mol):
    """Every H-X-Y-H path, X-Y a bond between heavy atoms, oriented h1 < h2."""
    out = []
    for b in mol.GetBonds():
        x, y = b.GetBeginAtom(), b.GetEndAtom()
        if x.GetAtomicNum() == 1 or y.GetAtomicNum() == 1:
            continue
        for hx in x.GetNeighbors():
            if hx.GetAtomicNum() != 1:
                continue
            for hy in y.GetNeighbors():
                if hy.GetAtomicNum() != 1:
                    continue
                a, bx, by, d = hx.GetIdx(), x.GetIdx(), y.GetIdx(), hy.GetIdx()
                if a > d:
                    a, bx, by, d = d, by, bx, a
                out.append((a, bx, by, d))
    return sorted(out)


def main():
    os.makedirs(OUT_DATA, exist_ok=True)
    rows = []
    for name, smi in MOLECULES:
        mol = Chem.AddHs(Chem.MolFromSmiles(smi))
        params = AllChem.ETKDGv3()
        params.randomSeed = SEED
        cids = list(AllChem.EmbedMultipleConfs(mol, numConfs=N_CONF, params=params))
        assert len(cids) == N_CONF, name
        res = AllChem.MMFFOptimizeMoleculeConfs(mol, maxIters=5000)
        xyz_lines = []
        sdf_path = os.path.join(OUT_DATA, name + ".sdf")
        w = Chem.SDWriter(sdf_path)
        for k, cid in enumerate(cids):
            conf = mol.GetConformer(cid)
            for i in range(mol.GetNumAtoms()):
                p = conf.GetAtomPosition(i)
                conf.SetAtomPosition(
                    i, Point3D(float(f"{p.x:.10f}"), float(f"{p.y:.10f}"), float(f"{p.z:.10f}"))
                )
            energy = res[k][1]
            xyz_lines.append(str(mol.GetNumAtoms()))
            xyz_lines.append(f"{name} conf {k + 1} MMFF94 E={energy:.6f}")
            for i, atom in enumerate(mol.GetAtoms()):
                p = conf.GetAtomPosition(i)
                xyz_lines.append(f"{atom.GetSymbol():<2} {p.x:.10f} {p.y:.10f} {p.z:.10f}")
            mol.SetProp("_Name", f"{name} conf {k + 1}")
            mol.SetProp("MMFF94_energy_kcal_mol", f"{energy:.6f}")
            w.write(mol, confId=cid)
        w.close()
        with open(os.path.join(OUT_DATA, name + ".xyz"), "w") as f:
            f.write("\n".join(xyz_lines) + "\n")

        sdf_mols = [m for m in Chem.SDMolSupplier(sdf_path, removeHs=False)]
        for k, cid in enumerate(cids):
            conf = mol.GetConformer(cid)
            sconf = sdf_mols[k].GetConformer()
            for (a, b, c, d) in paths(mol):
                rows.append(
                    [
                        name + ".xyz",
                        k + 1,
                        a + 1,
                        b + 1,
                        c + 1,
                        d + 1,
                        f"{T.GetDihedralDeg(conf, a, b, c, d):.10f}",
                        f"{T.GetDihedralDeg(sconf, a, b, c, d):.6f}",
                    ]
                )
    with open(OUT_CSV, "w", newline="") as f:
        f.write(f"# H-X-Y-H dihedrals (degrees) from RDKit {rdkit.__version__} GetDihedralDeg; "
                "made by tests/reference/dihedrals_rdkit.py\n")
        wr = csv.writer(f, lineterminator="\n")
        wr.writerow(["file", "conformer", "h1", "x", "y", "h2", "dihedral_deg", "dihedral_deg_sdf"])
        wr.writerows(rows)


if __name__ == "__main__":
    main()
