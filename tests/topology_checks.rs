//! Topology perception on the RDKit-made reference conformers
//! (tests/reference/dihedrals_rdkit.py): hybridisation, amide nitrogens,
//! per-conformer checks, and a 10,000-atom ensemble for the O(n) grid.

mod common;

use vicinal::elements::Element;
use vicinal::geometry::Vec3;
use vicinal::io::Frame;
use vicinal::topology::perceive::{self, FrameChecker};
use vicinal::topology::{BondSource, Hybridization};

fn load(name: &str) -> Vec<Frame> {
    common::read_xyz(&common::test_path(&format!("data/ref/{name}")))
}

#[test]
fn alanine_dipeptide_hybridisation() {
    // RDKit atom order from SMILES CC(=O)N[C@@H](C)C(=O)NC (heavy atoms 1–10).
    let frames = load("alanine_dipeptide.xyz");
    let top = perceive::build(&frames[0]).unwrap();
    assert_eq!(top.bond_source, BondSource::Distance);
    use Hybridization::*;
    let heavy: Vec<Hybridization> = top.hybridization[..10].to_vec();
    assert_eq!(
        heavy,
        vec![Sp3, Sp2, Sp2, Sp2, Sp3, Sp3, Sp2, Sp2, Sp2, Sp3]
    );
    let amide: Vec<usize> = (0..top.len())
        .filter(|&i| top.is_amide_nitrogen(i))
        .collect();
    assert_eq!(amide, vec![3, 8]);
    for (k, f) in frames.iter().enumerate() {
        perceive::check_frame(&top, f, k + 1).unwrap();
    }
}

#[test]
fn glucoside_conformers_agree_and_a_swapped_atom_is_named() {
    let frames = load("methyl_beta_glucopyranoside.xyz");
    let top = perceive::build(&frames[0]).unwrap();
    assert!(top
        .hybridization
        .iter()
        .all(|h| matches!(h, Hybridization::Sp3 | Hybridization::Other)));
    let mut checker = FrameChecker::new(&top);
    for (k, f) in frames.iter().enumerate() {
        checker.check(f, k + 1).unwrap();
    }
    let mut bad = frames[2].clone();
    bad.elements.swap(0, 1); // C1 and O2
    let e = checker.check(&bad, 3).unwrap_err().to_string();
    assert!(
        e.contains("conformer 3: atom 1 is O here but C in conformer 1"),
        "{e}"
    );
}

#[test]
fn ten_thousand_atoms() {
    // 715 butane molecules from the reference file on a 9×9×9 lattice 8 Å apart.
    let butane = &load("butane.xyz")[0];
    let mut f = Frame {
        path: "lattice".into(),
        ..Frame::default()
    };
    let mut count = 0;
    'outer: for x in 0..9 {
        for y in 0..9 {
            for z in 0..9 {
                if count == 715 {
                    break 'outer;
                }
                let shift = Vec3::new(x as f64, y as f64, z as f64) * 8.0;
                for (e, c) in butane.elements.iter().zip(&butane.coords) {
                    f.elements.push(*e);
                    f.coords.push(c + shift);
                    f.names.push(String::new());
                    f.charges.push(0);
                }
                count += 1;
            }
        }
    }
    assert_eq!(f.len(), 10_010);
    let t0 = std::time::Instant::now();
    let top = perceive::build(&f).unwrap();
    assert_eq!(top.bonds.len(), 715 * 13);
    assert!(top.rings.is_empty());
    let mut checker = FrameChecker::new(&top);
    for k in 0..20 {
        checker.check(&f, k + 1).unwrap();
    }
    // Generous bound (debug/opt-level 2 test profile on a shared machine):
    // an O(n²) pair search would take far longer than this on 10k atoms × 21.
    assert!(t0.elapsed().as_secs_f64() < 5.0, "{:?}", t0.elapsed());
    assert_eq!(
        f.elements.iter().filter(|&&e| e == Element::C).count(),
        2860
    );
}
