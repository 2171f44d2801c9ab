//! Writes a synthetic molecular-dynamics-like multi-frame XYZ trajectory of
//! hexan-2-ol (C6H14O, 21 atoms) for the benchmarks: the three backbone
//! torsions C2–C3, C3–C4 and C4–C5 follow seeded random walks and every atom
//! gets a small seeded thermal displacement (0.02 Å). A torsion step that
//! would bring two atoms more than three bonds apart closer than 2.0 Å is
//! rejected and redrawn, so no frame has a clash that bond checks would read
//! as a new bond. The starting geometry is
//! one RDKit 2026.09.1 ETKDG + MMFF94 conformer (random seed 7), pasted below.
//! This is synthetic data for speed tests, not a simulation.
//!
//! ```sh
//! cargo run --release --example gen_trajectory -- examples/bench/hexanol_100k.xyz 100000
//! ```

use std::fs::File;
use std::io::{BufWriter, Write};

const START: &str = "\
C 2.6369 0.5523 -0.7776
C 2.1748 -0.1946 0.4640
C 0.7875 -0.8248 0.3190
C -0.3361 0.2084 0.1749
C -1.7180 -0.4518 0.1028
C -2.8182 0.5783 -0.1151
O -1.9883 -1.1590 1.3101
H 2.0211 1.4362 -0.9672
H 2.5999 -0.0927 -1.6611
H 3.6699 0.8911 -0.6487
H 2.8967 -0.9920 0.6780
H 2.1887 0.4841 1.3248
H 0.7798 -1.5009 -0.5446
H 0.6032 -1.4432 1.2058
H -0.1789 0.8067 -0.7292
H -0.2980 0.8892 1.0345
H -1.7410 -1.1795 -0.7158
H -3.7981 0.0897 -0.1415
H -2.8492 1.3011 0.7077
H -2.6737 1.1220 -1.0535
H -1.9591 -0.5206 2.0431";

/// SplitMix64 (Steele, Lea & Flood, OOPSLA 2014), enough for synthetic data.
struct Rng(u64);

impl Rng {
    fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    fn uniform(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }
    fn normal(&mut self) -> f64 {
        let u = self.uniform().max(1e-300);
        let v = self.uniform();
        (-2.0 * u.ln()).sqrt() * (std::f64::consts::TAU * v).cos()
    }
}

type P = [f64; 3];

fn sub(a: P, b: P) -> P {
    [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
}

/// Rotates `p` about the axis through `o` along unit vector `k` by `t` radians (Rodrigues).
fn rotate(p: P, o: P, k: P, t: f64) -> P {
    let v = sub(p, o);
    let (s, c) = t.sin_cos();
    let kxv = [
        k[1] * v[2] - k[2] * v[1],
        k[2] * v[0] - k[0] * v[2],
        k[0] * v[1] - k[1] * v[0],
    ];
    let kv = k[0] * v[0] + k[1] * v[1] + k[2] * v[2];
    let mut r = [0.0; 3];
    for i in 0..3 {
        r[i] = o[i] + v[i] * c + kxv[i] * s + k[i] * kv * (1.0 - c);
    }
    r
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let args: Vec<String> = std::env::args().collect();
    let path = args
        .get(1)
        .map(String::as_str)
        .unwrap_or("hexanol_traj.xyz");
    let frames: usize = args
        .get(2)
        .map(|s| s.parse())
        .transpose()?
        .unwrap_or(100_000);

    let mut sym = Vec::new();
    let mut base: Vec<P> = Vec::new();
    for line in START.lines() {
        let f: Vec<&str> = line.split_whitespace().collect();
        sym.push(f[0]);
        base.push([f[1].parse()?, f[2].parse()?, f[3].parse()?]);
    }
    let n = base.len();
    // Bonds by distance (1.2 x sum of rough radii) to find each torsion's moving side.
    let rad = |s: &str| if s == "H" { 0.31 } else { 0.72 };
    let mut nb = vec![Vec::new(); n];
    for i in 0..n {
        for j in i + 1..n {
            let d = sub(base[i], base[j]);
            let r = (d[0] * d[0] + d[1] * d[1] + d[2] * d[2]).sqrt();
            if r < 1.2 * (rad(sym[i]) + rad(sym[j])) + 0.1 {
                nb[i].push(j);
                nb[j].push(i);
            }
        }
    }
    // Atoms on the far side of bond b–c, seen from b.
    let side = |b: usize, c: usize| -> Vec<usize> {
        let mut seen = vec![false; n];
        seen[b] = true;
        seen[c] = true;
        let mut stack = vec![c];
        let mut out = vec![c];
        while let Some(a) = stack.pop() {
            for &x in &nb[a] {
                if !seen[x] {
                    seen[x] = true;
                    out.push(x);
                    stack.push(x);
                }
            }
        }
        out
    };
    let torsions = [(1usize, 2usize), (2, 3), (3, 4)];
    let moving: Vec<Vec<usize>> = torsions.iter().map(|&(b, c)| side(b, c)).collect();

    // Pairs more than three bonds apart, which must not clash.
    let mut hops = vec![vec![usize::MAX; n]; n];
    for (s0, row) in hops.iter_mut().enumerate() {
        row[s0] = 0;
        let mut queue = std::collections::VecDeque::from([s0]);
        while let Some(a) = queue.pop_front() {
            for &x in &nb[a] {
                if row[x] == usize::MAX {
                    row[x] = row[a] + 1;
                    queue.push_back(x);
                }
            }
        }
    }
    let far: Vec<(usize, usize)> = (0..n)
        .flat_map(|i| (i + 1..n).map(move |j| (i, j)))
        .filter(|&(i, j)| hops[i][j] > 3)
        .collect();
    let build = |angle: &[f64; 3]| -> Vec<P> {
        let mut xyz = base.clone();
        for (t, &(b, c)) in torsions.iter().enumerate() {
            let o = xyz[b];
            let d = sub(xyz[c], o);
            let l = (d[0] * d[0] + d[1] * d[1] + d[2] * d[2]).sqrt();
            let k = [d[0] / l, d[1] / l, d[2] / l];
            for &a in &moving[t] {
                xyz[a] = rotate(xyz[a], o, k, angle[t]);
            }
        }
        xyz
    };
    let clashes = |xyz: &[P]| {
        far.iter().any(|&(i, j)| {
            let d = sub(xyz[i], xyz[j]);
            d[0] * d[0] + d[1] * d[1] + d[2] * d[2] < 4.0
        })
    };

    let mut rng = Rng(20261201);
    let mut angle = [0.0f64; 3];
    let mut w = BufWriter::with_capacity(1 << 20, File::create(path)?);
    for f in 0..frames {
        let mut xyz = build(&angle);
        for _ in 0..100 {
            let mut trial = angle;
            for a in trial.iter_mut() {
                *a += 0.15 * rng.normal();
            }
            let t = build(&trial);
            if !clashes(&t) {
                angle = trial;
                xyz = t;
                break;
            }
        }
        writeln!(w, "{n}")?;
        writeln!(w, "frame {} t={:.1} ps", f + 1, f as f64 * 0.5)?;
        for (s, p) in sym.iter().zip(&xyz) {
            writeln!(
                w,
                "{s} {:12.6} {:12.6} {:12.6}",
                p[0] + 0.02 * rng.normal(),
                p[1] + 0.02 * rng.normal(),
                p[2] + 0.02 * rng.normal()
            )?;
        }
    }
    w.flush()?;
    eprintln!("wrote {frames} frames of {n} atoms to {path}");
    Ok(())
}
