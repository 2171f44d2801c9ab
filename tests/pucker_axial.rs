//! Axial/equatorial labels on RDKit-built chairs of methylcyclohexane.
//!
//! Reference: `tests/data/ref/methylcyclohexane_chairs.{xyz,csv}`, made by
//! `tests/reference/methylcyclohexane_rdkit.py` with RDKit 2026.09.1 (ETKDGv3 +
//! MMFF94) and numpy, which labels each ring substituent independently and
//! checks the facts of the trade (common practice): one axial and one
//! equatorial H per ring CH2, methine H axial when the methyl is equatorial.

use vicinal::geometry::Vec3;
use vicinal::pucker::{Position, Pucker, Shape};

const XYZ: &str = include_str!("data/ref/methylcyclohexane_chairs.xyz");
const CSV: &str = include_str!("data/ref/methylcyclohexane_chairs.csv");

/// Minimal multi-frame XYZ parser local to this test (element, coordinates).
fn frames(text: &str) -> Vec<Vec<(String, Vec3)>> {
    let mut lines = text.lines();
    let mut out = Vec::new();
    while let Some(first) = lines.next() {
        if first.trim().is_empty() {
            continue;
        }
        let n: usize = first.trim().parse().expect("atom count");
        lines.next().expect("comment line");
        let atoms = (0..n)
            .map(|_| {
                let l = lines.next().expect("atom line");
                let f: Vec<&str> = l.split_whitespace().collect();
                let p = |i: usize| f[i].parse::<f64>().expect("coordinate");
                (f[0].to_string(), Vec3::new(p(1), p(2), p(3)))
            })
            .collect();
        out.push(atoms);
    }
    out
}

#[test]
fn methylcyclohexane_chairs_match_rdkit_side_labels() {
    let frames = frames(XYZ);
    assert_eq!(frames.len(), 2);
    // Atom 1 is the methyl carbon, atoms 2–7 the ring in ring order (0-based 1..=6).
    let ring: Vec<usize> = (1..=6).collect();
    let mut checked = 0;
    for (fi, atoms) in frames.iter().enumerate() {
        let coords: Vec<Vec3> = atoms.iter().map(|a| a.1).collect();
        let p = Pucker::from_indices(&coords, &ring).unwrap();
        assert_eq!(p.shape(), Shape::Chair, "frame {}", fi + 1);
        assert!(p.q_total > 0.5 && p.q_total < 0.65, "Q = {}", p.q_total);
        for (k, &r) in ring.iter().enumerate() {
            // Substituents: atoms bonded by distance that are not ring atoms.
            let mut labels = Vec::new();
            for (j, (el, pos)) in atoms.iter().enumerate() {
                if ring.contains(&j) {
                    continue;
                }
                let cut = if el == "H" { 1.25 } else { 1.65 };
                if (pos - coords[r]).norm() > cut {
                    continue;
                }
                let got = p.position(k, &coords[r], pos);
                labels.push(got);
                // Compare with the RDKit-side label for this substituent.
                let want = CSV
                    .lines()
                    .filter(|l| !l.starts_with('#') && !l.starts_with("frame"))
                    .map(|l| l.split(',').collect::<Vec<_>>())
                    .find(|f| {
                        f[0] == (fi + 1).to_string()
                            && f[1] == (r + 1).to_string()
                            && f[2] == (j + 1).to_string()
                    })
                    .map(|f| f[5].to_string())
                    .expect("reference row");
                assert_eq!(got.label(), want, "frame {} atom {}", fi + 1, j + 1);
                checked += 1;
            }
            let ax = labels.iter().filter(|x| **x == Position::Axial).count();
            let eq = labels
                .iter()
                .filter(|x| **x == Position::Equatorial)
                .count();
            assert_eq!((ax, eq), (1, 1), "frame {} ring atom {}", fi + 1, r + 1);
        }
        // Methyl (atom 1 on ring atom 2): equatorial in frame 1, axial in 2.
        let methyl = p.position(0, &coords[1], &coords[0]);
        let want = if fi == 0 {
            Position::Equatorial
        } else {
            Position::Axial
        };
        assert_eq!(methyl, want);
    }
    assert_eq!(checked, 24);
}

/// Methyl β-D-galactopyranoside from `examples/megal.xyz` (made by
/// `examples/make_ensembles.py` with RDKit 2026.09.1 ETKDGv3 + MMFF94, whose
/// numpy side asserts O4 axial and O1, O2, O3, C6 equatorial in the lowest
/// conformer): β-D-galactopyranosides adopt the 4C1 chair (common practice).
/// With the ring order O5, C1 … C5, the descriptor must read "4C1" and θ lies
/// near 0° (the pyranose convention, from memory).
#[test]
fn galactoside_example_is_4c1() {
    let frames = frames(include_str!("../examples/megal.xyz"));
    assert!(!frames.is_empty());
    // 0-based: O5 = 3, C1 = 2, C2 = 11, C3 = 9, C4 = 7, C5 = 4.
    let ring = [3, 2, 11, 9, 7, 4];
    let locants = ["O5", "1", "2", "3", "4", "5"];
    for atoms in &frames {
        let coords: Vec<Vec3> = atoms.iter().map(|a| a.1).collect();
        let p = Pucker::from_indices(&coords, &ring).unwrap();
        assert_eq!(p.shape(), Shape::Chair);
        assert_eq!(p.chair_descriptor(&locants, 1).as_deref(), Some("4C1"));
        assert!(p.theta_deg().unwrap() < 22.5);
        // O4 (0-based 8) on C4 axial, O2 (12) on C2 equatorial.
        assert_eq!(p.position(4, &coords[7], &coords[8]), Position::Axial);
        assert_eq!(
            p.position(2, &coords[11], &coords[12]),
            Position::Equatorial
        );
    }
}

/// The two chairs of cis-2-methylcyclohexan-1-ol in `examples/cis2mech.xyz`
/// (RDKit 2026.09.1; the script's numpy side gave θ = 179.3° and 0.6° for
/// ring order C1 … C6) sit at opposite poles, methyl equatorial then axial.
#[test]
fn cyclohexanol_example_chairs() {
    let frames = frames(include_str!("../examples/cis2mech.xyz"));
    assert_eq!(frames.len(), 2);
    let ring = [6, 1, 2, 3, 4, 5];
    let mut thetas = Vec::new();
    for (k, atoms) in frames.iter().enumerate() {
        let coords: Vec<Vec3> = atoms.iter().map(|a| a.1).collect();
        let p = Pucker::from_indices(&coords, &ring).unwrap();
        thetas.push(p.theta_deg().unwrap());
        let want = if k == 0 {
            Position::Equatorial
        } else {
            Position::Axial
        };
        assert_eq!(p.position(1, &coords[1], &coords[0]), want);
    }
    assert!((thetas[0] - 179.3).abs() < 0.1, "{thetas:?}");
    assert!((thetas[1] - 0.6).abs() < 0.1, "{thetas:?}");
}
