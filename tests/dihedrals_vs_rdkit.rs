//! H–X–Y–H paths and their dihedrals against RDKit 2026.09.1
//! (`rdMolTransforms.GetDihedralDeg`), made by tests/reference/dihedrals_rdkit.py
//! into tests/reference/dihedrals_rdkit.csv from ETKDG + MMFF94 conformers
//! written to tests/data/ref/*.xyz with 10 decimals (the coordinates RDKit
//! measured). Checks (a) the set of paths per molecule equals RDKit's and
//! (b) every dihedral agrees within 1e-6 degrees (modulo 360°).

mod common;

use std::collections::{BTreeMap, BTreeSet, HashSet};

use vicinal::fragments::{self, FragmentKind};
use vicinal::geometry::dihedral;
use vicinal::topology::perceive;

type Path4 = (usize, usize, usize, usize);

#[test]
fn paths_and_dihedrals_match_rdkit() {
    let rows = common::read_csv(&common::test_path("reference/dihedrals_rdkit.csv"));
    // file -> conformer -> path -> degrees
    let mut want: BTreeMap<String, BTreeMap<usize, BTreeMap<Path4, f64>>> = BTreeMap::new();
    for r in &rows {
        let idx = |k: usize| r[k].parse::<usize>().unwrap() - 1;
        want.entry(r[0].to_string())
            .or_default()
            .entry(r[1].parse().unwrap())
            .or_default()
            .insert((idx(2), idx(3), idx(4), idx(5)), r[6].parse().unwrap());
    }
    assert_eq!(want.len(), 4);
    let mut n_checked = 0;
    for (file, confs) in &want {
        let frames = common::read_xyz(&common::test_path(&format!("data/ref/{file}")));
        assert_eq!(frames.len(), confs.len(), "{file}");
        let top = perceive::build(&frames[0]).unwrap_or_else(|e| panic!("{file}: {e}"));
        let frags = fragments::enumerate(&top);
        let ours: BTreeSet<Path4> = frags.pairs.iter().map(|p| (p.h1, p.x, p.y, p.h2)).collect();
        assert_eq!(ours.len(), frags.pairs.len(), "{file}: duplicate paths");
        for (k, frame) in frames.iter().enumerate() {
            perceive::check_frame(&top, frame, k + 1).unwrap();
            let expected = &confs[&(k + 1)];
            let theirs: BTreeSet<Path4> = expected.keys().copied().collect();
            assert_eq!(ours, theirs, "{file}: H–X–Y–H paths differ from RDKit's");
            for p in &frags.pairs {
                let c = &frame.coords;
                let t = dihedral(&c[p.h1], &c[p.x], &c[p.y], &c[p.h2])
                    .unwrap()
                    .to_degrees();
                let r = expected[&(p.h1, p.x, p.y, p.h2)];
                let diff = (t - r + 540.0).rem_euclid(360.0) - 180.0;
                assert!(
                    diff.abs() < 1e-6,
                    "{file} conformer {}: {:?} ours {t} RDKit {r}",
                    k + 1,
                    (p.h1 + 1, p.x + 1, p.y + 1, p.h2 + 1)
                );
                n_checked += 1;
            }
        }
        // Kinds are plausible for each molecule.
        let kinds: HashSet<FragmentKind> = frags.pairs.iter().map(|p| p.kind).collect();
        match file.as_str() {
            "butane.xyz" | "methylcyclohexane.xyz" => {
                assert_eq!(kinds, HashSet::from([FragmentKind::HCsp3Csp3H]), "{file}")
            }
            "methyl_beta_glucopyranoside.xyz" => assert_eq!(
                kinds,
                HashSet::from([FragmentKind::HCsp3Csp3H, FragmentKind::HOCH]),
                "{file}"
            ),
            "alanine_dipeptide.xyz" => {
                assert_eq!(
                    kinds,
                    HashSet::from([FragmentKind::HCsp3Csp3H, FragmentKind::HNCH]),
                    "{file}"
                );
                assert!(frags
                    .pairs
                    .iter()
                    .filter(|p| p.kind == FragmentKind::HNCH)
                    .all(|p| p.amide));
            }
            _ => unreachable!(),
        }
    }
    assert_eq!(n_checked, rows.len());
}
