"""Reference for the pro-R/pro-S assignment of the two H6 protons of a
hexopyranose, made with RDKit (2026.09.1) CIP labelling.

Methyl alpha-D-glucopyranoside is embedded (ETKDG, fixed seed) and MMFF-optimised;
each H6 in turn is made deuterium, chiral tags are set from the 3D
coordinates (AssignStereochemistryFrom3D), and the new CIP label of C6 is read with
RDKit's rule-based labeller (rdCIPLabeler). The H whose replacement by D gives
(R) is H6R (pro-R). The C5-C6 fragment (O5, C5, H5, C4, C6, O6, H6R, H6S) is
written with its coordinates so that the Rust test needs no Python.

Run: python3 tests/reference/hydroxymethyl_prochirality.py > tests/reference/hydroxymethyl_prochirality.txt
"""
from rdkit import Chem
from rdkit.Chem import AllChem, rdMolTransforms
from rdkit.Chem import rdCIPLabeler

# methyl alpha-D-glucopyranoside (PubChem isomeric SMILES, from memory)
SMILES = "CO[C@@H]1[C@@H]([C@H]([C@@H]([C@H](O1)CO)O)O)O"

mol = Chem.AddHs(Chem.MolFromSmiles(SMILES))
AllChem.EmbedMolecule(mol, randomSeed=20260901)
AllChem.MMFFOptimizeMolecule(mol)
conf = mol.GetConformer()

ring_o = None
for a in mol.GetAtoms():
    if a.GetSymbol() == "O" and a.IsInRing():
        ring_o = a.GetIdx()
# C5: ring carbon bonded to ring O and to an exocyclic CH2
c5 = c6 = None
for n in mol.GetAtomWithIdx(ring_o).GetNeighbors():
    for m in n.GetNeighbors():
        if m.GetSymbol() == "C" and not m.IsInRing():
            c5, c6 = n.GetIdx(), m.GetIdx()
o6 = [n.GetIdx() for n in mol.GetAtomWithIdx(c6).GetNeighbors() if n.GetSymbol() == "O"][0]
h6 = [n.GetIdx() for n in mol.GetAtomWithIdx(c6).GetNeighbors() if n.GetSymbol() == "H"]
h5 = [n.GetIdx() for n in mol.GetAtomWithIdx(c5).GetNeighbors() if n.GetSymbol() == "H"][0]
c4 = [n.GetIdx() for n in mol.GetAtomWithIdx(c5).GetNeighbors()
      if n.GetSymbol() == "C" and n.GetIdx() != c6][0]

labels = {}
for h in h6:
    m2 = Chem.Mol(mol)
    m2.GetAtomWithIdx(h).SetIsotope(2)
    Chem.AssignStereochemistryFrom3D(m2)
    rdCIPLabeler.AssignCIPLabels(m2)
    labels[h] = m2.GetAtomWithIdx(c6).GetProp("_CIPCode")
pro_r = [h for h in h6 if labels[h] == "R"][0]
pro_s = [h for h in h6 if labels[h] == "S"][0]

omega = rdMolTransforms.GetDihedralDeg(conf, ring_o, c5, c6, o6)
print("# C5-C6 fragment of methyl alpha-D-glucopyranoside, RDKit ETKDG+MMFF, seed 20260901")
print("# columns: role element x y z (angstrom)")
print(f"# omega(O5-C5-C6-O6) RDKit GetDihedralDeg = {omega:.4f}")
for role, idx in [("O5", ring_o), ("C5", c5), ("H5", h5), ("C4", c4), ("C6", c6),
                  ("O6", o6), ("H6R", pro_r), ("H6S", pro_s)]:
    p = conf.GetAtomPosition(idx)
    el = mol.GetAtomWithIdx(idx).GetSymbol()
    print(f"{role} {el} {p.x:.6f} {p.y:.6f} {p.z:.6f}")
print(f"# J(H5,H6R) dihedral RDKit = {rdMolTransforms.GetDihedralDeg(conf, h5, c5, c6, pro_r):.4f}")
print(f"# J(H5,H6S) dihedral RDKit = {rdMolTransforms.GetDihedralDeg(conf, h5, c5, c6, pro_s):.4f}")
