"""Three staggered C5-C6 rotamers of methyl alpha-D-glucopyranoside for the
hydroxymethyl population check of `vicinal fit` (tests/fit_cli.rs).

Made with RDKit 2026.09.1: ETKDG embedding (fixed seed), MMFF94 minimisation,
then the torsion omega = O5-C5-C6-O6 set with SetDihedralDeg to -60 (gg),
+60 (gt) and 180 (tg) degrees without further minimisation (only the C6
branch moves, so the ring is identical in the three records). The two H6 are
told apart by RDKit CIP labels (the H whose replacement by deuterium makes C6
(R) is H6R), as in tests/reference/hydroxymethyl_prochirality.py.

Writes tests/data/fit/glucoside_rotamers.sdf (3 records, title names the
rotamer, SD field omega_deg), tests/data/fit/glucoside_rotamers_65.sdf (the
same with omega -65/65/180, the limiting values of the authors' analysis) and tests/data/fit/glucoside_observed.csv with
the published couplings of methyl alpha-D-glucopyranoside, J5,6R = 5.49 Hz and
J5,6S = 2.39 Hz (Stenutz, Carmichael, Widmalm & Serianni, J. Org. Chem. 67,
949, 2002), whose gg/gt/tg populations the authors give as 42/47/10 %.

Run: python3 tests/reference/glucoside_rotamers.py   (prints the atom roles)
"""
from pathlib import Path

from rdkit import Chem
from rdkit.Chem import AllChem, rdMolTransforms
from rdkit.Chem import rdCIPLabeler

# methyl alpha-D-glucopyranoside (PubChem isomeric SMILES, from memory; the
# same string as tests/reference/hydroxymethyl_prochirality.py)
SMILES = "CO[C@@H]1[C@@H]([C@H]([C@@H]([C@H](O1)CO)O)O)O"
OUT = Path(__file__).resolve().parent.parent / "data" / "fit"

mol = Chem.AddHs(Chem.MolFromSmiles(SMILES))
AllChem.EmbedMolecule(mol, randomSeed=20260901)
AllChem.MMFFOptimizeMolecule(mol)

ring_o = [a.GetIdx() for a in mol.GetAtoms() if a.GetSymbol() == "O" and a.IsInRing()][0]
c5 = c6 = None
for n in mol.GetAtomWithIdx(ring_o).GetNeighbors():
    for m in n.GetNeighbors():
        if m.GetSymbol() == "C" and not m.IsInRing():
            c5, c6 = n.GetIdx(), m.GetIdx()
o6 = [n.GetIdx() for n in mol.GetAtomWithIdx(c6).GetNeighbors() if n.GetSymbol() == "O"][0]
h6 = [n.GetIdx() for n in mol.GetAtomWithIdx(c6).GetNeighbors() if n.GetSymbol() == "H"]
h5 = [n.GetIdx() for n in mol.GetAtomWithIdx(c5).GetNeighbors() if n.GetSymbol() == "H"][0]

labels = {}
for h in h6:
    m2 = Chem.Mol(mol)
    m2.GetAtomWithIdx(h).SetIsotope(2)
    Chem.AssignStereochemistryFrom3D(m2)
    rdCIPLabeler.AssignCIPLabels(m2)
    labels[h] = m2.GetAtomWithIdx(c6).GetProp("_CIPCode")
pro_r = [h for h in h6 if labels[h] == "R"][0]
pro_s = [h for h in h6 if labels[h] == "S"][0]

def write_rotamers(path, limits):
    writer = Chem.SDWriter(str(path))
    for name, omega in zip(["gg", "gt", "tg"], limits):
        m = Chem.Mol(mol)
        conf = m.GetConformer()
        rdMolTransforms.SetDihedralDeg(conf, ring_o, c5, c6, o6, omega)
        m.SetProp("_Name", f"methyl alpha-D-glucopyranoside {name} (omega {omega:.0f} deg)")
        m.SetProp("omega_deg", f"{rdMolTransforms.GetDihedralDeg(conf, ring_o, c5, c6, o6):.4f}")
        writer.write(m)
    writer.close()


# Ideal staggered rotamers, and the limiting omega the authors used for their
# populations (-65/65/180 deg; www.stenutz.eu/conf/hm2.php, from memory).
write_rotamers(OUT / "glucoside_rotamers.sdf", [-60.0, 60.0, 180.0])
write_rotamers(OUT / "glucoside_rotamers_65.sdf", [-65.0, 65.0, 180.0])

(OUT / "glucoside_observed.csv").write_text(
    "# Methyl alpha-D-glucopyranoside: J5,6R and J5,6S as published by Stenutz,\n"
    "# Carmichael, Widmalm & Serianni, J. Org. Chem. 67, 949 (2002); atoms 1-based into\n"
    "# glucoside_rotamers.sdf (H6R/H6S by RDKit CIP labels; tests/reference/glucoside_rotamers.py).\n"
    "atom1,atom2,j_hz,label\n"
    f"{h5 + 1},{pro_r + 1},5.49,J5-6R\n"
    f"{h5 + 1},{pro_s + 1},2.39,J5-6S\n"
)
print(f"H5 {h5 + 1} H6R {pro_r + 1} H6S {pro_s + 1} C5 {c5 + 1} C6 {c6 + 1} O5 {ring_o + 1} O6 {o6 + 1}")
