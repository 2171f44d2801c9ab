#!/usr/bin/env python3
"""Peer of `examples/bench_trajectory.rs` with MDTraj 1.11.1 + NumPy, for the
speed comparison (a benchmark, not a test): the time averages of every
H-C(sp3)-C(sp3)-H coupling of a multi-frame XYZ trajectory by the
Haasnoot-de Leeuw-Altona equation (Tetrahedron 1980, 36, 2783), with the same
parameter sets (read from params/karplus/sets.csv, chosen by the number of
substituents as vicinal does), the same Huggins group electronegativities
with beta correction (params/elements.csv) and the same orientation signs xi
(configurational, so computed once from the first frame), methyl groups
averaged over their three protons in each frame, equal weights.

Scope difference, stated: the peer does only the HC(sp3)C(sp3)H pairs (the
H-O-C-H coupling, the state tracking and the block averaging that vicinal also
does are left out), so it does somewhat less work than vicinal.

Usage:  python3 examples/peer_mdtraj.py /tmp/bench/hex100k.xyz [chunk]
"""
import csv
import math
import os
import sys
import tempfile
import time

import mdtraj as md
import numpy as np

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))


def read_first_frame(path):
    with open(path) as f:
        n = int(f.readline())
        f.readline()
        el, xyz = [], []
        for _ in range(n):
            s = f.readline().split()
            el.append(s[0])
            xyz.append([float(v) for v in s[1:4]])
    return el, np.array(xyz)


def elements_table():
    radius, chi = {}, {}
    with open(os.path.join(ROOT, "params", "elements.csv")) as f:
        rows = csv.DictReader(line for line in f if not line.startswith("#"))
        for r in rows:
            radius[r["symbol"]] = float(r["covalent_radius_A"])
            if r["chi_huggins"]:
                chi[r["symbol"]] = float(r["chi_huggins"])
    return radius, chi


def hla_sets():
    out = {}
    with open(os.path.join(ROOT, "params", "karplus", "sets.csv")) as f:
        rows = csv.DictReader(line for line in f if not line.startswith("#"))
        for r in rows:
            if r["form"] == "hla":
                p = [float(v) for v in r["coefficients"].split()]
                p[5] = math.radians(p[5])
                out[r["id"]] = p
    return out


def write_pdb(path, el, xyz):
    with open(path, "w") as f:
        for i, (e, p) in enumerate(zip(el, xyz)):
            f.write("HETATM%5d %-4s MOL A   1    %8.3f%8.3f%8.3f  1.00  0.00          %2s\n"
                    % (i + 1, e + str(i + 1), p[0], p[1], p[2], e))
        f.write("END\n")


def main():
    path = sys.argv[1]
    chunk = int(sys.argv[2]) if len(sys.argv) > 2 else 10000
    t0 = time.perf_counter()
    el, x0 = read_first_frame(path)
    radius, chi = elements_table()
    sets = hla_sets()
    n = len(el)
    # Bonds by distance: covalent radii + 0.45 A, as vicinal perceives them.
    nb = [[] for _ in range(n)]
    for i in range(n):
        for j in range(i + 1, n):
            if np.linalg.norm(x0[i] - x0[j]) <= radius[el[i]] + radius[el[j]] + 0.45:
                if el[i] == "H" and el[j] == "H":
                    continue
                nb[i].append(j)
                nb[j].append(i)
    heavy = lambda a: [b for b in nb[a] if el[b] != "H"]
    hyd = lambda a: [b for b in nb[a] if el[b] == "H"]
    methyl = {c for c in range(n) if el[c] == "C" and len(hyd(c)) == 3 and len(heavy(c)) == 1}
    quads, groups, terms = [], {}, []
    for x in range(n):
        for y in range(x + 1, n):
            if el[x] != "C" or el[y] != "C" or y not in nb[x] or len(nb[x]) != 4 or len(nb[y]) != 4:
                continue
            subs = [(x, s) for s in heavy(x) if s != y] + [(y, s) for s in heavy(y) if s != x]
            pset = sets[{0: "hla-general-beta", 1: "hla-general-beta", 2: "hla-2sub",
                         3: "hla-3sub"}.get(len(subs), "hla-4sub")]
            for h1 in hyd(x):
                for h2 in hyd(y):
                    a, b = (h1, h2) if h1 < h2 else (h2, h1)
                    cx, cy = (x, y) if h1 < h2 else (y, x)
                    t = []
                    for on, s in subs:
                        d = chi[el[s]] - chi["H"]
                        d -= pset[6] * sum(chi[el[bb]] - chi["H"] for bb in heavy(s) if bb != on)
                        ha, ca, cb = (a, cx, cy) if on == cx else (b, cy, cx)
                        trip = np.dot(np.cross(x0[ha] - x0[ca], x0[s] - x0[ca]), x0[cb] - x0[ca])
                        t.append((d, -1.0 if trip < 0 else 1.0))
                    k = len(quads)
                    quads.append((a, cx, cy, b))
                    terms.append((pset, t))
                    side = lambda h, c: ("rotor", c) if c in methyl else ("h", h)
                    groups.setdefault((min(x, y), max(x, y), side(h1, x), side(h2, y)), []).append(k)
    quads = np.array(quads)
    with tempfile.TemporaryDirectory() as d:
        pdb = os.path.join(d, "first.pdb")
        write_pdb(pdb, el, x0)
        sums = np.zeros(len(quads))
        frames = 0
        for tr in md.iterload(path, top=pdb, chunk=chunk):
            phi = md.compute_dihedrals(tr, quads, periodic=False)  # (frames, pairs), radians
            j = np.empty_like(phi)
            for k, (p, t) in enumerate(terms):
                f = phi[:, k]
                c = np.cos(f)
                jk = p[0] * c * c + p[1] * c + p[2]
                for dchi, xi in t:
                    a = np.cos(xi * f + p[5] * abs(dchi))
                    jk = jk + dchi * (p[3] + p[4] * a * a)
                j[:, k] = jk
            sums += j.sum(axis=0)
            frames += tr.n_frames
    per_pair = sums / frames
    means = {key: per_pair[ks].mean() for key, ks in groups.items()}
    secs = time.perf_counter() - t0
    size = os.path.getsize(path)
    print("%d frames, %d HC(sp3)C(sp3)H couplings (%d pairs); %.1f MB in %.3f s: %.1f MB/s"
          % (frames, len(means), len(quads), size / 1e6, secs, size / 1e6 / secs))
    for key in sorted(means)[:3]:
        print("  %s: %.3f Hz" % (key, means[key]))


if __name__ == "__main__":
    main()
