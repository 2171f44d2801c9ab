"""Reference values for the conformer readers (tests/io_reference.rs).

Writes small conformer files with RDKit 2026.09.1 and records what RDKit and
MDTraj 1.11.1 read from them; the Rust test reads the same files with vicinal
and compares. Molecules and conformers are a scenario of our own making.

Run from the repository root:  python3 tests/reference/io_readers.py
Outputs: tests/data/reference/{charged_v2000.sdf,charged_v3000.sdf,cyclohexanol_models.pdb}
         tests/reference/io_readers.json
"""
import json

import mdtraj as md
from rdkit import Chem
from rdkit.Chem import AllChem

out = {}
mols = []
for i, smi in enumerate(["CC(=O)[O-]", "C[NH3+]", "OC1CCCCC1"]):
    m = Chem.AddHs(Chem.MolFromSmiles(smi))
    AllChem.EmbedMultipleConfs(m, numConfs=2, randomSeed=7 + i)
    AllChem.MMFFOptimizeMoleculeConfs(m)
    m.SetProp("_Name", f"mol{i}:{smi}")
    mols.append(m)


def records(path, v3000):
    w = Chem.SDWriter(path)
    w.SetForceV3000(v3000)
    for m in mols:
        for c in m.GetConformers():
            m.SetProp("conf_energy", f"{-10.0 - c.GetId() * 0.5:.3f}")
            w.write(m, confId=c.GetId())
    w.close()
    recs = []
    for m in Chem.SDMolSupplier(path, removeHs=False, sanitize=False):
        conf = m.GetConformer()
        recs.append({
            "title": m.GetProp("_Name"),
            "atomic_numbers": [a.GetAtomicNum() for a in m.GetAtoms()],
            "charges": [a.GetFormalCharge() for a in m.GetAtoms()],
            "bonds": sorted([sorted([b.GetBeginAtomIdx(), b.GetEndAtomIdx()]) + [b.GetBondTypeAsDouble()]
                             for b in m.GetBonds()]),
            "coords": [list(conf.GetAtomPosition(k)) for k in range(m.GetNumAtoms())],
            "energy": float(m.GetProp("conf_energy")),
        })
    return recs


out["charged_v2000.sdf"] = records("tests/data/reference/charged_v2000.sdf", False)
out["charged_v3000.sdf"] = records("tests/data/reference/charged_v3000.sdf", True)

# Multi-model PDB of cyclohexanol's two conformers, written by RDKit, read by MDTraj.
pdb = "tests/data/reference/cyclohexanol_models.pdb"
m = mols[2]
with open(pdb, "w") as f:
    for c in m.GetConformers():
        block = Chem.MolToPDBBlock(m, confId=c.GetId(), flavor=2 | 8)  # no CONECT, no END
        f.write(f"MODEL     {c.GetId() + 1:4d}\n")
        f.write("".join(l + "\n" for l in block.splitlines() if l.startswith(("ATOM", "HETATM"))))
        f.write("ENDMDL\n")
    conect = Chem.MolToPDBBlock(m, confId=0)
    f.write("".join(l + "\n" for l in conect.splitlines() if l.startswith("CONECT")))
    f.write("END\n")
t = md.load_pdb(pdb)
out["cyclohexanol_models.pdb"] = {
    "source": "MDTraj 1.11.1 md.load_pdb; coordinates converted nm -> Angstrom (float32 storage)",
    "elements": [a.element.symbol for a in t.topology.atoms],
    "names": [a.name for a in t.topology.atoms],
    "bonds": sorted(sorted([b[0].index, b[1].index]) for b in t.topology.bonds),
    "coords": [[[float(v) * 10.0 for v in p] for p in frame] for frame in t.xyz],
}
with open("tests/reference/io_readers.json", "w") as f:
    json.dump(out, f, indent=1)
print("wrote", list(out))
