#!/usr/bin/env python3
"""Conformer ensembles of cis- and trans-4-tert-butylcyclohexan-1-ol for the
rank/assign/check tests of vicinal.

Made with RDKit 2026.09.1 and numpy. For each isomer: ETKDGv3 embedding of 300
conformers (fixed random seed), MMFF94 minimisation (maxIters 10000), MMFF94
energies in kcal/mol, duplicates pruned (energies within 0.05 kcal/mol and RMSD < 0.3 A over
heavy atoms plus the hydroxyl H after symmetry-aware alignment, the
lower-energy copy kept), conformers more than 8 kcal/mol above
the minimum dropped, at most 12 kept (lowest energies). The window is wide on
purpose: it keeps the ring-flipped chair (tert-butyl axial, about 5-6 kcal/mol
up in MMFF94) and some twist-boats, so that `vicinal assign` has the other
position of H1 to compare with; their Boltzmann populations are negligible.

Atom aliases (SDF "A" lines, read by vicinal as atom names) are the same in
both isomers, so one observations file maps onto either:
  C1 (carbinol carbon), C2..C6 ring carbons (C2 = the lower-index ring
  neighbour of C1, C3 next to it, C4 carries tert-butyl), O1, HO (hydroxyl H),
  H1, H4, and on C2, C3, C5, C6 the two protons H2ax/H2eq, H3ax/H3eq, ...,
  named by their position in CONFORMER 1 (the MMFF94 minimum; vicinal
  re-pairs CH2 protons per conformer so each keeps its conformer-1 position).
  In the locked chairs conformer 1's axial H stays axial.

Written to tests/data/tbch/:
  trans.sdf, cis.sdf   multi-record SDF, SD field MMFF94_energy_kcal_mol
  trans_noalias.sdf    trans.sdf with the H2ax alias removed (a label-mapping
                       error case), only conformer 1
  trans_doubled.sdf    conformer 1 with the H2eq proton aliased "H1" as
                       well (a doubled-label error case)
  summary.txt          per conformer: relative energy, Cremer-Pople theta,
                       H1 position (printed by this script)

  python3 tests/reference/tbch_ensembles.py
"""
import os
import sys

import numpy as np
from rdkit import Chem, rdBase
from rdkit.Chem import AllChem, rdMolAlign

RDKIT_VERSION = "2026.09.1"
HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, "..", "data", "tbch")
WINDOW_KCAL = 8.0
MAX_CONFS = 12
RMSD_PRUNE = 0.3
ENERGY_SAME_KCAL = 0.05
HEADER = f"RDKit {RDKIT_VERSION} ETKDGv3 + MMFF94"

ISOMERS = {
    # O0 C1 C2 C3 C4 C5(quaternary) C6 C7 C8 (methyls) C9 C10
    "trans": ("O[C@H]1CC[C@H](C(C)(C)C)CC1", 20260911),
    "cis": ("O[C@H]1CC[C@@H](C(C)(C)C)CC1", 20260912),
}


def embed_minimise(smiles, n, seed):
    mol = Chem.AddHs(Chem.MolFromSmiles(smiles))
    p = AllChem.ETKDGv3()
    p.randomSeed = seed
    cids = list(AllChem.EmbedMultipleConfs(mol, n, p))
    res = AllChem.MMFFOptimizeMoleculeConfs(mol, mmffVariant="MMFF94", maxIters=10000)
    confs = sorted((e, cid) for cid, (conv, e) in zip(cids, res) if conv == 0)
    return mol, confs


def prune(mol, confs):
    """Drops repeats: a conformer is a copy of a kept one when their MMFF94
    energies agree within ENERGY_SAME_KCAL and their heavy atoms (hydroxyl H
    included) agree within RMSD_PRUNE after symmetry-aware alignment
    (tert-butyl methyls are interchangeable)."""
    keep_atoms = [a.GetIdx() for a in mol.GetAtoms()
                  if a.GetAtomicNum() > 1 or a.GetNeighbors()[0].GetAtomicNum() == 8]
    sub = Chem.RWMol(mol)
    for i in sorted(set(range(mol.GetNumAtoms())) - set(keep_atoms), reverse=True):
        sub.RemoveAtom(i)
    sub = sub.GetMol()
    e_min = confs[0][0]
    kept = []
    for e, cid in confs:
        if e - e_min > WINDOW_KCAL:
            break
        dup = any(abs(e - ek) < ENERGY_SAME_KCAL
                  and rdMolAlign.GetBestRMS(Chem.Mol(sub), Chem.Mol(sub), prbId=cid, refId=k) < RMSD_PRUNE
                  for ek, k in kept)
        if not dup:
            kept.append((e, cid))
        if len(kept) == MAX_CONFS:
            break
    return kept


def cp_normal(x):
    x = x - x.mean(0)
    a = 2 * np.pi * np.arange(len(x)) / len(x)
    n = np.cross((x * np.sin(a)[:, None]).sum(0), (x * np.cos(a)[:, None]).sum(0))
    return n / np.linalg.norm(n)


def cp_theta(x):
    n = cp_normal(x)
    z = (x - x.mean(0)) @ n
    j = np.arange(6)
    c = np.sqrt(2 / 6) * (z * np.cos(2 * np.pi * 2 * j / 6)).sum()
    s = -np.sqrt(2 / 6) * (z * np.sin(2 * np.pi * 2 * j / 6)).sum()
    q3 = np.sqrt(1 / 6) * (z * (-1.0) ** j).sum()
    return np.degrees(np.arctan2(np.hypot(c, s), q3))


def angle_to_normal(x, ring, atom, sub):
    n = cp_normal(x[ring])
    b = x[sub] - x[atom]
    return np.degrees(np.arccos(abs(b @ n) / np.linalg.norm(b)))


def hydrogens(mol, idx):
    return sorted(nb.GetIdx() for nb in mol.GetAtomWithIdx(idx).GetNeighbors() if nb.GetAtomicNum() == 1)


def make(name, smiles, seed, summary):
    mol, confs = embed_minimise(smiles, 300, seed)
    kept = prune(mol, confs)
    c1 = 1
    nbrs = sorted(nb.GetIdx() for nb in mol.GetAtomWithIdx(c1).GetNeighbors() if nb.GetAtomicNum() == 6)
    c2, c6 = nbrs
    c3 = [nb.GetIdx() for nb in mol.GetAtomWithIdx(c2).GetNeighbors() if nb.GetAtomicNum() == 6 and nb.GetIdx() != c1][0]
    c5 = [nb.GetIdx() for nb in mol.GetAtomWithIdx(c6).GetNeighbors() if nb.GetAtomicNum() == 6 and nb.GetIdx() != c1][0]
    c4 = 4
    ring = [c1, c2, c3, c4, c5, c6]
    x1 = mol.GetConformer(kept[0][1]).GetPositions()
    alias = {c1: "C1", c2: "C2", c3: "C3", c4: "C4", c5: "C5", c6: "C6", 0: "O1",
             hydrogens(mol, 0)[0]: "HO", hydrogens(mol, c1)[0]: "H1", hydrogens(mol, c4)[0]: "H4"}
    for c, loc in ((c2, "2"), (c3, "3"), (c5, "5"), (c6, "6")):
        hs = hydrogens(mol, c)
        ax = min(hs, key=lambda h: angle_to_normal(x1, ring, c, h))
        alias[ax] = f"H{loc}ax"
        alias[[h for h in hs if h != ax][0]] = f"H{loc}eq"
    for i, a in alias.items():
        mol.GetAtomWithIdx(i).SetProp("molFileAlias", a)
    h1 = hydrogens(mol, c1)[0]
    summary.append(f"{name}: {mol.GetNumAtoms()} atoms, {len(kept)} conformers ({HEADER}, seed {seed})")
    for k, (e, cid) in enumerate(kept, 1):
        x = mol.GetConformer(cid).GetPositions()
        a = angle_to_normal(x, ring, c1, h1)
        pos = "axial" if a <= 35 else ("equatorial" if a >= 55 else "between")
        summary.append(f"  conformer {k}: E_rel = {e - kept[0][0]:.3f} kcal/mol, theta = {cp_theta(x[ring]):.1f} deg, "
                       f"H1 at {a:.1f} deg to the ring normal ({pos})")
    w = Chem.SDWriter(os.path.join(OUT, f"{name}.sdf"))
    for k, (e, cid) in enumerate(kept, 1):
        mol.SetProp("_Name", f"{name}-4-tert-butylcyclohexan-1-ol conformer {k}")
        mol.SetProp("MMFF94_energy_kcal_mol", f"{e:.6f}")
        mol.SetProp("generated_by", HEADER)
        w.write(mol, confId=cid)
    w.close()
    if name == "trans":
        for i, a in alias.items():
            if a == "H2ax":
                mol.GetAtomWithIdx(i).ClearProp("molFileAlias")
        w = Chem.SDWriter(os.path.join(OUT, "trans_noalias.sdf"))
        mol.SetProp("_Name", "trans-4-tert-butylcyclohexan-1-ol conformer 1, H2ax alias removed")
        mol.SetProp("MMFF94_energy_kcal_mol", f"{kept[0][0]:.6f}")
        w.write(mol, confId=kept[0][1])
        w.close()
        for i, a in alias.items():
            if a == "H2ax":
                mol.GetAtomWithIdx(i).SetProp("molFileAlias", "H2ax")
            if a == "H2eq":
                mol.GetAtomWithIdx(i).SetProp("molFileAlias", "H1")
        w = Chem.SDWriter(os.path.join(OUT, "trans_doubled.sdf"))
        mol.SetProp("_Name", "trans-4-tert-butylcyclohexan-1-ol conformer 1, H2eq aliased H1 (doubled label)")
        w.write(mol, confId=kept[0][1])
        w.close()


def main():
    if rdBase.rdkitVersion != RDKIT_VERSION:
        print(f"warning: RDKit {rdBase.rdkitVersion}, files were made with {RDKIT_VERSION}", file=sys.stderr)
    os.makedirs(OUT, exist_ok=True)
    summary = []
    for name, (smiles, seed) in ISOMERS.items():
        make(name, smiles, seed, summary)
    with open(os.path.join(OUT, "summary.txt"), "w") as f:
        f.write("\n".join(summary) + "\n")
    print("\n".join(summary))


if __name__ == "__main__":
    main()
