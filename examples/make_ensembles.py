#!/usr/bin/env python3
"""Demo conformer ensembles for vicinal (a scenario of our own making).

Made with RDKit 2026.09.1 and numpy. For each molecule: ETKDGv3 embedding
(fixed random seed), MMFF94 minimisation, MMFF94 energies in kcal/mol,
duplicates pruned (heavy-atom RMSD < 0.3 A after optimal alignment, the
lower-energy copy kept), conformers more than 5 kcal/mol above the minimum
dropped, at most 30 kept (lowest energies). Written to examples/:

  <name>.sdf           multi-record SDF, title "<name> conformer <k>", SD field
                       MMFF94_energy_kcal_mol on every record
  <name>.xyz           the same conformers, comment line carrying
                       energy=<value> (kcal/mol, MMFF94)
  <name>_observed.csv  INVENTED "measured" couplings for the fitting demo:
                       columns atom1,atom2,j_hz,sigma_hz (1-based proton indices
                       into the files above). These are NOT computed and NOT
                       measured: they were made by hand from the trade's typical
                       vicinal values (common practice: axial-axial ~11 Hz,
                       axial-equatorial ~3.5 Hz, equatorial-equatorial ~2.5 Hz;
                       gauche/anti CH2 values for the exocyclic rotamers), mixed
                       in a chosen ratio; see the tables below.

The scenario:
  cis2mech  cis-2-methylcyclohexan-1-ol. Its two chairs (OH axial / methyl
            equatorial, and OH equatorial / methyl axial) are both populated.
            Demo "observed" values: a 70:30 mix of the two chairs (Me-eq : Me-ax).
  megal     methyl beta-D-galactopyranoside: a 4C1 chair with the exocyclic
            C5-C6 bond as the flexible part. Demo "observed" values: typical
            ring couplings of a beta-galacto 4C1 chair and an invented
            gt:tg:gg = 60:30:10 mix for H5-H6.

  python3 examples/make_ensembles.py             # writes the demo files
  python3 examples/make_ensembles.py --big 10000 /tmp/big.sdf
      writes a large SDF (not committed) for speed checks: 10,000 records of
      methyl 2,3,4,6-tetra-O-methyl-beta-D-galactopyranoside (39 atoms), made
      from MMFF94 minima with small random coordinate perturbations
      (Gaussian, sigma 0.02 A, numpy seed 7); energies are the parent
      minimum's MMFF94 energy.
"""
import argparse
import os
import sys

import numpy as np
from rdkit import Chem, rdBase
from rdkit.Chem import AllChem, rdMolAlign

RDKIT_VERSION = "2026.09.1"
HERE = os.path.dirname(os.path.abspath(__file__))
WINDOW_KCAL = 5.0
MAX_CONFS = 30
RMSD_PRUNE = 0.3
HEADER = f"RDKit {RDKIT_VERSION} ETKDGv3 + MMFF94"

# Typical vicinal couplings in Hz (common practice, rounded), used only to
# invent the demo "observed" values.
J_AA, J_AE, J_EE = 11.0, 3.5, 2.5


def embed_minimise(smiles, n, seed):
    mol = Chem.AddHs(Chem.MolFromSmiles(smiles))
    p = AllChem.ETKDGv3()
    p.randomSeed = seed
    cids = list(AllChem.EmbedMultipleConfs(mol, n, p))
    res = AllChem.MMFFOptimizeMoleculeConfs(mol, mmffVariant="MMFF94", maxIters=10000)
    confs = [(e, cid) for cid, (conv, e) in zip(cids, res) if conv == 0]
    confs.sort()
    return mol, confs


def prune(mol, confs):
    heavy = [a.GetIdx() for a in mol.GetAtoms() if a.GetAtomicNum() > 1]
    amap = [(i, i) for i in heavy]
    e_min = confs[0][0]
    kept = []
    for e, cid in confs:
        if e - e_min > WINDOW_KCAL:
            break
        dup = False
        for _, k in kept:
            rms = rdMolAlign.AlignMol(mol, mol, prbCid=cid, refCid=k, atomMap=amap)
            if rms < RMSD_PRUNE:
                dup = True
                break
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
    """Cremer-Pople theta (degrees) of a six-membered ring in the order given."""
    n = cp_normal(x)
    z = (x - x.mean(0)) @ n
    j = np.arange(6)
    c = np.sqrt(2 / 6) * (z * np.cos(2 * np.pi * 2 * j / 6)).sum()
    s = -np.sqrt(2 / 6) * (z * np.sin(2 * np.pi * 2 * j / 6)).sum()
    q3 = np.sqrt(1 / 6) * (z * (-1.0) ** j).sum()
    return np.degrees(np.arctan2(np.hypot(c, s), q3))


def ax_eq(xyz, ring, atom, sub):
    n = cp_normal(xyz[ring])
    b = xyz[sub] - xyz[atom]
    ang = np.degrees(np.arccos(abs(b @ n) / np.linalg.norm(b)))
    return "a" if ang <= 35 else ("e" if ang >= 55 else "?")


def hydrogens(mol, idx):
    return sorted(nb.GetIdx() for nb in mol.GetAtomWithIdx(idx).GetNeighbors() if nb.GetAtomicNum() == 1)


def write(mol, kept, name, note):
    sdf = os.path.join(HERE, f"{name}.sdf")
    w = Chem.SDWriter(sdf)
    for k, (e, cid) in enumerate(kept, 1):
        mol.SetProp("_Name", f"{name} conformer {k}")
        mol.SetProp("MMFF94_energy_kcal_mol", f"{e:.6f}")
        mol.SetProp("generated_by", f"{HEADER}; {note}")
        w.write(mol, confId=cid)
    w.close()
    with open(os.path.join(HERE, f"{name}.xyz"), "w") as f:
        for k, (e, cid) in enumerate(kept, 1):
            f.write(f"{mol.GetNumAtoms()}\n")
            f.write(f"{name} conformer {k} energy={e:.6f} (MMFF94 kcal/mol, {HEADER})\n")
            for a, p in zip(mol.GetAtoms(), mol.GetConformer(cid).GetPositions()):
                f.write(f"{a.GetSymbol():2s} {p[0]:12.6f} {p[1]:12.6f} {p[2]:12.6f}\n")


def write_observed(name, rows, header):
    with open(os.path.join(HERE, f"{name}_observed.csv"), "w") as f:
        for line in header:
            f.write(f"# {line}\n")
        f.write("atom1,atom2,j_hz,sigma_hz\n")
        for a, b, j, s, _ in rows:
            f.write(f"{a + 1},{b + 1},{j:.1f},{s:.1f}\n")


def repaired(mol, xyz, ref):
    """Coordinates `xyz` with the two protons of every CH2 exchanged where they
    sit the other way round from `ref` (conformer 1), as vicinal does before
    evaluating couplings: ETKDG places the two equivalent-in-the-graph protons
    either way round, so an atom index alone does not follow one proton."""
    x = xyz.copy()
    for a in mol.GetAtoms():
        nbs = [n.GetIdx() for n in a.GetNeighbors()]
        hs = sorted(i for i in nbs if mol.GetAtomWithIdx(i).GetAtomicNum() == 1)
        others = sorted(i for i in nbs if i not in hs)
        if len(nbs) != 4 or len(hs) != 2:
            continue
        c = a.GetIdx()

        def side(q):
            return np.sign((q[hs[0]] - q[c]) @ np.cross(q[others[0]] - q[c], q[others[1]] - q[c]))

        if side(xyz) != side(ref):
            x[[hs[0], hs[1]]] = x[[hs[1], hs[0]]]
    return x


def typical(p, q):
    return {"aa": J_AA, "ae": J_AE, "ea": J_AE, "ee": J_EE}[p + q]


def cyclohexanol():
    name = "cis2mech"
    # atom 0 methyl C, 1 = C2, 2..5 = C3..C6, 6 = C1, 7 = O
    mol, confs = embed_minimise("C[C@@H]1CCCC[C@@H]1O", 300, 20260901)
    kept = prune(mol, confs)
    ring = [6, 1, 2, 3, 4, 5]  # C1..C6
    chairs = {}
    for k, (e, cid) in enumerate(kept):
        x = mol.GetConformer(cid).GetPositions()
        n = cp_normal(x[ring])
        # cis check: O on C1 and CH3 on C2 on the same face of the ring
        assert np.sign((x[7] - x[6]) @ n) == np.sign((x[0] - x[1]) @ n), "not cis"
        th = cp_theta(x[ring])
        me = ax_eq(x, ring, 1, 0)
        print(f"{name} conformer {k + 1}: E = {e - kept[0][0]:.3f} kcal/mol rel, "
              f"theta = {th:.1f}, methyl {me}, OH {ax_eq(x, ring, 6, 7)}")
        if (th < 25 or th > 155) and me in "ae" and me not in chairs:
            chairs[me] = cid
    assert set(chairs) == {"a", "e"}, chairs
    write(mol, kept, name, "cis-2-methylcyclohexan-1-ol")
    # Invented observed values: 70:30 mix (methyl-equatorial : methyl-axial)
    # of typical couplings for the ring protons named below.
    h1 = hydrogens(mol, 6)[0]
    h2 = hydrogens(mol, 1)[0]
    h6 = hydrogens(mol, 5)
    h3 = hydrogens(mol, 2)
    pairs = [(h1, 6, h2, 1), (h1, 6, h6[0], 5), (h1, 6, h6[1], 5), (h2, 1, h3[0], 2), (h2, 1, h3[1], 2)]
    rows = []
    ref = mol.GetConformer(kept[0][1]).GetPositions()
    for ha, ca, hb, cb in pairs:
        j = 0.0
        for me, w in (("e", 0.7), ("a", 0.3)):
            x = repaired(mol, mol.GetConformer(chairs[me]).GetPositions(), ref)
            j += w * typical(ax_eq(x, ring, ca, ha), ax_eq(x, ring, cb, hb))
        rows.append((ha, hb, j, 0.3, None))
    write_observed(name, rows, [
        "INVENTED demo values, not measured and not computed: a 70:30 mix (methyl-equatorial :",
        "methyl-axial chair) of typical vicinal couplings (common practice: ax-ax 11.0, ax-eq 3.5,",
        "eq-eq 2.5 Hz), chair positions from the example geometries (CH2 protons followed by their",
        "conformer-1 positions, as vicinal does). Scenario: cis-2-methylcyclohexan-1-ol;",
        "pairs H1-H2, H1-H6 (x2), H2-H3 (x2); atoms 1-based into cis2mech.sdf/.xyz;",
        f"made by examples/make_ensembles.py ({HEADER}).",
    ])
    return name, mol.GetNumAtoms(), len(kept)


def galactoside():
    name = "megal"
    # map: 2 = C1, 3 = O5, 4 = C5, 5 = C6, 6 = O6, 7 = C4, 8 = O4, 9 = C3, 10 = O3, 11 = C2, 12 = O2
    mol, confs = embed_minimise("CO[C@@H]1O[C@H](CO)[C@H](O)[C@H](O)[C@H]1O", 600, 20260902)
    kept = prune(mol, confs)
    ring = [3, 2, 11, 9, 7, 4]  # O5, C1, C2, C3, C4, C5
    for k, (e, cid) in enumerate(kept):
        x = mol.GetConformer(cid).GetPositions()
        th = cp_theta(x[ring])
        subs = "".join(ax_eq(x, ring, r, s) for r, s in ((2, 1), (11, 12), (9, 10), (7, 8), (4, 5)))
        print(f"{name} conformer {k + 1}: E = {e - kept[0][0]:.3f} kcal/mol rel, theta = {th:.1f}, "
              f"O1 O2 O3 O4 C6 = {subs}")
    # Lowest conformer: 4C1 chair of a beta-D-galacto ring (common practice):
    # O1, O2, O3, C6 equatorial, O4 axial; with the ring order O5, C1..C5
    # the Cremer-Pople theta of 4C1 is near 0.
    x = mol.GetConformer(kept[0][1]).GetPositions()
    assert cp_theta(x[ring]) < 25
    assert "".join(ax_eq(x, ring, r, s) for r, s in ((2, 1), (11, 12), (9, 10), (7, 8), (4, 5))) == "eeeae"
    write(mol, kept, name, "methyl beta-D-galactopyranoside")
    h = {c: hydrogens(mol, i) for c, i in (("1", 2), ("2", 11), ("3", 9), ("4", 7), ("5", 4), ("6", 5))}
    # Invented values (Hz) from typical couplings of a beta-galacto 4C1 chair
    # (H1-H2 ax-ax ~8, H2-H3 ax-ax ~10, H3-H4 ax-eq ~3.4, H4-H5 eq-ax ~1) and
    # an invented gt:tg:gg = 60:30:10 mix for H5-H6 (anti ~10.5, gauche ~2.5 Hz).
    rows = [
        (h["1"][0], h["2"][0], 7.9, 0.3, None),
        (h["2"][0], h["3"][0], 9.8, 0.3, None),
        (h["3"][0], h["4"][0], 3.4, 0.3, None),
        (h["4"][0], h["5"][0], 1.0, 0.3, None),
        (h["5"][0], h["6"][0], 7.6, 0.4, None),
        (h["5"][0], h["6"][1], 4.6, 0.4, None),
    ]
    write_observed(name, rows, [
        "INVENTED demo values, not measured and not computed: typical couplings (common practice) of a",
        "beta-galacto 4C1 chair (H1-H2 ~8, H2-H3 ~10, H3-H4 ~3.4, H4-H5 ~1 Hz) and an invented",
        "gt:tg:gg = 60:30:10 rotamer mix for H5-H6 (anti ~10.5, gauche ~2.5 Hz); which H6 is which is",
        "not assigned. Scenario: methyl beta-D-galactopyranoside; atoms 1-based into megal.sdf/.xyz;",
        f"made by examples/make_ensembles.py ({HEADER}).",
    ])
    return name, mol.GetNumAtoms(), len(kept)


def big(n, path):
    smiles = "CO[C@@H]1O[C@H](COC)[C@H](OC)[C@H](OC)[C@H]1OC"
    mol, confs = embed_minimise(smiles, 100, 20260903)
    rng = np.random.default_rng(7)
    w = Chem.SDWriter(path)
    conf = Chem.Conformer(mol.GetNumAtoms())
    out = Chem.Mol(mol)
    out.RemoveAllConformers()
    cid_out = out.AddConformer(conf, assignId=True)
    c = out.GetConformer(cid_out)
    for k in range(n):
        e, cid = confs[k % len(confs)]
        x = mol.GetConformer(cid).GetPositions() + rng.normal(0.0, 0.02, (mol.GetNumAtoms(), 3))
        for i, p in enumerate(x):
            c.SetAtomPosition(i, p.tolist())
        out.SetProp("_Name", f"tetramethyl-megal conformer {k + 1}")
        out.SetProp("MMFF94_energy_kcal_mol", f"{e:.6f}")
        w.write(out, confId=cid_out)
    w.close()
    print(f"wrote {n} records of {mol.GetNumAtoms()} atoms to {path}")


def main():
    if rdBase.rdkitVersion != RDKIT_VERSION:
        print(f"warning: RDKit {rdBase.rdkitVersion}, files were made with {RDKIT_VERSION}", file=sys.stderr)
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--big", nargs=2, metavar=("N", "PATH"), help="write N records for speed checks to PATH")
    a = ap.parse_args()
    if a.big:
        big(int(a.big[0]), a.big[1])
        return
    for f in (cyclohexanol, galactoside):
        name, atoms, n = f()
        print(f"{name}: {atoms} atoms, {n} conformers")


if __name__ == "__main__":
    main()
