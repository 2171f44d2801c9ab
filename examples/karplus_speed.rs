//! Measures the cost of one prepared coupling evaluation (dihedral, ξ signs,
//! HLA with four substituents) in nanoseconds. Run in release:
//!
//! ```text
//! cargo run --release --example karplus_speed
//! ```
//!
//! The geometry is an invented ethane-1,2-diol-like fragment (a demo scenario
//! of our own, not a published molecule), rotated a little per "conformer".

use std::hint::black_box;
use std::time::Instant;

use vicinal::elements::Element;
use vicinal::fragments::{FragmentKind, Substituent, VicinalPair};
use vicinal::geometry::Vec3;
use vicinal::io::{Bond, BondOrder};
use vicinal::karplus::{ModelChoice, ParamLibrary, PreparedPair};
use vicinal::topology::{Atom, BondSource, Hybridization, Topology};

fn main() -> vicinal::Result<()> {
    // Atoms: 0 C1, 1 C2, 2 H1, 3 H2, 4 O1, 5 C1', 6 O2, 7 C2'.
    let els = [
        Element::C,
        Element::C,
        Element::H,
        Element::H,
        Element::O,
        Element::C,
        Element::O,
        Element::C,
    ];
    let bonds = [(0, 1), (0, 2), (1, 3), (0, 4), (0, 5), (1, 6), (1, 7)];
    let mut neighbors = vec![Vec::new(); els.len()];
    for &(a, b) in &bonds {
        neighbors[a].push(b);
        neighbors[b].push(a);
    }
    neighbors.iter_mut().for_each(|v| v.sort());
    let top = Topology {
        atoms: els
            .iter()
            .map(|&e| Atom {
                element: e,
                name: None,
                charge: 0,
            })
            .collect(),
        bonds: bonds
            .iter()
            .map(|&(a, b)| Bond {
                a,
                b,
                order: BondOrder::Single,
            })
            .collect(),
        neighbors,
        bond_source: BondSource::File,
        rings: vec![],
        hybridization: els
            .iter()
            .map(|e| {
                if e.is_hydrogen() {
                    Hybridization::Other
                } else {
                    Hybridization::Sp3
                }
            })
            .collect(),
    };
    let sub = |a: usize| Substituent {
        atom: a,
        beta: vec![],
    };
    let pair = VicinalPair {
        h1: 2,
        x: 0,
        y: 1,
        h2: 3,
        kind: FragmentKind::HCsp3Csp3H,
        amide: false,
        subs_x: vec![sub(4), sub(5)],
        subs_y: vec![sub(6), sub(7)],
        rotor1: None,
        rotor2: None,
    };
    let lib = ParamLibrary::builtin();
    let mut warnings = Vec::new();
    let pp = match PreparedPair::new(&pair, &top, &lib, &ModelChoice::default(), &mut warnings)? {
        Ok(p) => p,
        Err(ne) => return Err(vicinal::Error::Model(ne.reason)),
    };
    // A staggered fragment along z; conformers rotate the C2 end about z.
    let base: Vec<Vec3> = vec![
        Vec3::new(0.0, 0.0, 0.0),
        Vec3::new(0.0, 0.0, 1.54),
        Vec3::new(1.03, 0.0, -0.36),
        Vec3::new(-1.03, 0.0, 1.90),
        Vec3::new(-0.67, 1.17, -0.48),
        Vec3::new(-0.73, -1.26, -0.51),
        Vec3::new(0.67, -1.17, 2.02),
        Vec3::new(0.73, 1.26, 2.05),
    ];
    let n_conf = 1024;
    let frames: Vec<Vec<Vec3>> = (0..n_conf)
        .map(|k| {
            let t = (k as f64) * 0.0061;
            let (s, c) = t.sin_cos();
            base.iter()
                .enumerate()
                .map(|(i, p)| {
                    if [1, 3, 6, 7].contains(&i) {
                        Vec3::new(c * p.x - s * p.y, s * p.x + c * p.y, p.z)
                    } else {
                        *p
                    }
                })
                .collect()
        })
        .collect();
    let reps = 200;
    let mut acc = 0.0;
    // Warm-up.
    for f in &frames {
        acc += pp.evaluate(f)?.1;
    }
    // Best and median of 15 trials: the minimum is robust against other jobs
    // sharing the CPU.
    let mut per_eval = Vec::new();
    for _ in 0..15 {
        let t0 = Instant::now();
        for _ in 0..reps {
            for f in &frames {
                acc += black_box(pp.evaluate(black_box(f))?).1;
            }
        }
        per_eval.push(t0.elapsed().as_nanos() as f64 / (reps * n_conf) as f64);
    }
    per_eval.sort_by(f64::total_cmp);
    let mut j_only = Vec::new();
    for _ in 0..15 {
        let t0 = Instant::now();
        for _ in 0..reps {
            for f in &frames {
                acc += black_box(pp.evaluate_j(black_box(f))?);
            }
        }
        j_only.push(t0.elapsed().as_nanos() as f64 / (reps * n_conf) as f64);
    }
    j_only.sort_by(f64::total_cmp);
    println!(
        "set {}: {:.1} ns per evaluation (best of 15 trials of {} evaluations; median {:.1} ns; checksum {:.3})",
        pp.set_id,
        per_eval[0],
        reps * n_conf,
        per_eval[7],
        acc
    );
    println!(
        "set {}: {:.1} ns per evaluate_j (J only, best of 15; median {:.1} ns)",
        pp.set_id, j_only[0], j_only[7]
    );
    Ok(())
}
