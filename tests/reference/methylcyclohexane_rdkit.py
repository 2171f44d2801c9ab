#!/usr/bin/env python3
"""Reference chairs of methylcyclohexane for tests/pucker_axial.rs.

Made with RDKit 2026.09.1 and numpy: ETKDG v3 embedding (random seed 20260901,
200 attempts), MMFF94 minimisation, then the lowest-energy chair with the methyl
equatorial and the lowest-energy chair with the methyl axial are kept.

Axial/equatorial labels are decided here, independently of the Rust code, by
the same definition (angle between the ring-atom -> substituent bond and the
Cremer-Pople mean-plane normal, folded into [0, 90] deg; axial <= 35,
equatorial >= 55) computed with numpy, and cross-checked against the facts of
the trade (common practice): in a chair every ring CH2 carries exactly one
axial and one equatorial H, and the methine H is axial when the methyl is
equatorial and vice versa.

Writes (relative to this file):
  ../data/ref/methylcyclohexane_chairs.xyz  two frames: equatorial, axial methyl
  ../data/ref/methylcyclohexane_chairs.csv  one row per ring substituent

Atom order (from SMILES CC1CCCCC1 with explicit H): atom 1 is the methyl
carbon, atoms 2-7 are the ring carbons in ring order, hydrogens follow.
"""
import os

import numpy as np
from rdkit import Chem, rdBase
from rdkit.Chem import AllChem

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, "..", "data", "ref")
SEED = 20260901


def normal(ring):
    x = ring - ring.mean(0)
    a = 2 * np.pi * np.arange(len(x)) / len(x)
    r1 = (x * np.sin(a)[:, None]).sum(0)
    r2 = (x * np.cos(a)[:, None]).sum(0)
    n = np.cross(r1, r2)
    return n / np.linalg.norm(n)


def label(angle):
    if angle <= 35.0:
        return "axial"
    if angle >= 55.0:
        return "equatorial"
    return "ambiguous"


def main():
    assert rdBase.rdkitVersion == "2026.09.1", rdBase.rdkitVersion
    mol = Chem.AddHs(Chem.MolFromSmiles("CC1CCCCC1"))
    ring = [1, 2, 3, 4, 5, 6]
    params = AllChem.ETKDGv3()
    params.randomSeed = SEED
    cids = list(AllChem.EmbedMultipleConfs(mol, 200, params))
    res = AllChem.MMFFOptimizeMoleculeConfs(mol, mmffVariant="MMFF94", maxIters=5000)
    best = {}
    for cid, (conv, e) in zip(cids, res):
        if conv != 0:
            continue
        xyz = mol.GetConformer(cid).GetPositions()
        n = normal(xyz[ring])
        # chair check: alternating signs of displacements
        z = (xyz[ring] - xyz[ring].mean(0)) @ n
        if not all(z[i] * z[(i + 1) % 6] < 0 for i in range(6)):
            continue
        b = xyz[0] - xyz[1]
        ang = np.degrees(np.arccos(abs(b @ n) / np.linalg.norm(b)))
        kind = label(ang)
        if kind == "ambiguous":
            continue
        if kind not in best or e < best[kind][1]:
            best[kind] = (cid, e)
    assert set(best) == {"axial", "equatorial"}, best
    rows = []
    frames = []
    for fi, kind in enumerate(["equatorial", "axial"]):
        cid, e = best[kind]
        xyz = mol.GetConformer(cid).GetPositions()
        n = normal(xyz[ring])
        frames.append((kind, e, xyz))
        methine_h = None
        for r in ring:
            atom = mol.GetAtomWithIdx(r)
            labels = []
            for nb in atom.GetNeighbors():
                j = nb.GetIdx()
                if j in ring:
                    continue
                b = xyz[j] - xyz[r]
                ang = np.degrees(np.arccos(abs(b @ n) / np.linalg.norm(b)))
                lab = label(ang)
                labels.append(lab)
                if r == 1 and nb.GetSymbol() == "H":
                    methine_h = lab
                rows.append((fi + 1, r + 1, j + 1, nb.GetSymbol(), ang, lab))
            assert sorted(labels) == ["axial", "equatorial"], (kind, r, labels)
        other = "axial" if kind == "equatorial" else "equatorial"
        assert methine_h == other, (kind, methine_h)
    with open(os.path.join(OUT, "methylcyclohexane_chairs.xyz"), "w") as f:
        for kind, e, xyz in frames:
            f.write(f"{mol.GetNumAtoms()}\n")
            f.write(
                f"methylcyclohexane {kind}-methyl chair, RDKit 2026.09.1 ETKDGv3 seed {SEED} "
                f"+ MMFF94, energy={e:.4f} kcal/mol\n"
            )
            for a, p in zip(mol.GetAtoms(), xyz):
                f.write(f"{a.GetSymbol():2s} {p[0]:12.6f} {p[1]:12.6f} {p[2]:12.6f}\n")
    with open(os.path.join(OUT, "methylcyclohexane_chairs.csv"), "w") as f:
        f.write("# made by tests/reference/methylcyclohexane_rdkit.py (RDKit 2026.09.1, numpy); "
                "frame 1 = equatorial methyl, frame 2 = axial methyl; atoms 1-based\n")
        f.write("frame,ring_atom,substituent,element,angle_to_normal_deg,position\n")
        for r in rows:
            f.write(f"{r[0]},{r[1]},{r[2]},{r[3]},{r[4]:.2f},{r[5]}\n")
    for kind in best:
        print(kind, best[kind])


if __name__ == "__main__":
    main()
