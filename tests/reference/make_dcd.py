#!/usr/bin/env python3
"""Writes the DCD test fixtures in tests/data/dcd/ with MDTraj 1.11.1.

Scenario of our own making: an ethane molecule (8 atoms) whose H1-C1-C2-H4
torsion is turned through six values, with a little seeded noise on every
coordinate so that no two numbers repeat. Coordinates are in angstrom (the DCD
convention). Two trajectories are written:

  ethane_cell.dcd    6 frames, with a unit-cell record per frame
  ethane_nocell.dcd  6 frames, without unit-cell records

plus a PDB topology (ethane.pdb, written by hand: element and atom name per
atom) and, for each trajectory, the coordinates as MDTraj reads them back
(ethane_cell.csv, ethane_nocell.csv: frame,atom,element,x,y,z with the exact
float32 values printed as shortest round-trip decimals) and the cell
(ethane_cell_box.csv: frame,a,b,c,alpha,beta,gamma).

Run from the repository top level:  python3 tests/reference/make_dcd.py
"""
import os

import numpy as np
import mdtraj
from mdtraj.formats import DCDTrajectoryFile

OUT = os.path.join("tests", "data", "dcd")
ELEMENTS = ["C", "C", "H", "H", "H", "H", "H", "H"]
NAMES = ["C1", "C2", "H11", "H12", "H13", "H21", "H22", "H23"]
TORSIONS_DEG = [60.0, 90.0, 120.0, 180.0, 240.0, 300.0]


def ethane(torsion_deg, rng):
    """Ethane along z: C-C 1.54 A, C-H 1.09 A, H-C-C 110.9 degrees."""
    cc, ch = 1.54, 1.09
    theta = np.radians(110.9)
    xyz = [[0.0, 0.0, 0.0], [0.0, 0.0, cc]]
    for k in range(3):  # hydrogens on C1 point away from C2
        phi = np.radians(120.0 * k)
        r = ch * np.sin(theta)
        xyz.append([r * np.cos(phi), r * np.sin(phi), ch * np.cos(theta)])
    for k in range(3):  # hydrogens on C2, turned by the torsion
        phi = np.radians(120.0 * k + torsion_deg)
        r = ch * np.sin(theta)
        xyz.append([r * np.cos(phi), r * np.sin(phi), cc - ch * np.cos(theta)])
    xyz = np.array(xyz) + rng.normal(scale=0.01, size=(8, 3)) + [5.0, -3.0, 12.0]
    return xyz


def main():
    rng = np.random.default_rng(20240611)
    xyz = np.array([ethane(t, rng) for t in TORSIONS_DEG], dtype=np.float32)
    n = len(TORSIONS_DEG)
    lengths = np.array([[30.0 + 0.1 * i, 31.0, 32.5 - 0.05 * i] for i in range(n)],
                       dtype=np.float32)
    angles = np.array([[90.0, 90.0, 90.0]] * n, dtype=np.float32)

    with DCDTrajectoryFile(os.path.join(OUT, "ethane_cell.dcd"), "w", force_overwrite=True) as f:
        f.write(xyz, cell_lengths=lengths, cell_angles=angles)
    with DCDTrajectoryFile(os.path.join(OUT, "ethane_nocell.dcd"), "w", force_overwrite=True) as f:
        f.write(xyz)

    with open(os.path.join(OUT, "ethane.pdb"), "w") as f:
        f.write("REMARK   1 ETHANE TOPOLOGY FOR THE DCD TESTS (FIRST FRAME)\n")
        for i, (el, name) in enumerate(zip(ELEMENTS, NAMES)):
            x, y, z = (float(v) for v in xyz[0, i])
            f.write("HETATM%5d %-4s ETH A   1    %8.3f%8.3f%8.3f  1.00  0.00          %2s\n"
                    % (i + 1, name, x, y, z, el))
        f.write("END\n")

    for stem in ("ethane_cell", "ethane_nocell"):
        with DCDTrajectoryFile(os.path.join(OUT, stem + ".dcd")) as f:
            back, cell_len, cell_ang = f.read()
        assert back.dtype == np.float32 and back.shape == xyz.shape
        assert np.array_equal(back, xyz)
        with open(os.path.join(OUT, stem + ".csv"), "w") as out:
            out.write("# MDTraj %s DCDTrajectoryFile.read of %s.dcd (angstrom, float32)\n"
                      % (mdtraj.__version__, stem))
            out.write("frame,atom,element,x,y,z\n")
            for fr in range(back.shape[0]):
                for a in range(back.shape[1]):
                    vals = ",".join(repr(float(v)) for v in back[fr, a])
                    out.write("%d,%d,%s,%s\n" % (fr, a, ELEMENTS[a], vals))
        if stem == "ethane_cell":
            with open(os.path.join(OUT, "ethane_cell_box.csv"), "w") as out:
                out.write("# MDTraj %s cell lengths (angstrom) and angles (degrees)\n"
                          % mdtraj.__version__)
                out.write("frame,a,b,c,alpha,beta,gamma\n")
                for fr in range(cell_len.shape[0]):
                    vals = [repr(float(v)) for v in list(cell_len[fr]) + list(cell_ang[fr])]
                    out.write("%d,%s\n" % (fr, ",".join(vals)))


if __name__ == "__main__":
    main()
