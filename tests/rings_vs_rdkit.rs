//! Ring perception against RDKit 2026.09.1 (tests/reference/rings_rdkit.py and
//! its output rings_rdkit.csv): SSSR count and sizes equal `Chem.GetSSSR`, and
//! every ring found is one of RDKit's `GetRingInfo().AtomRings()` rings.

mod common;

use std::collections::BTreeSet;

use vicinal::topology::perceive;

#[test]
fn rings_match_rdkit() {
    let rows = common::read_csv(&common::test_path("reference/rings_rdkit.csv"));
    assert_eq!(rows.len(), 8);
    for r in rows {
        let file = &r[0];
        let frames = common::read_xyz(&common::test_path(&format!("data/ref/rings/{file}")));
        let top = perceive::build(&frames[0]).unwrap_or_else(|e| panic!("{file}: {e}"));
        assert_eq!(top.len(), r[1].parse::<usize>().unwrap(), "{file}");
        let n_rings: usize = r[2].parse().unwrap();
        let sizes: Vec<usize> = r[3].split(' ').map(|s| s.parse().unwrap()).collect();
        let got_sizes: Vec<usize> = top.rings.iter().map(|x| x.len()).collect();
        assert_eq!(top.rings.len(), n_rings, "{file}: ring count");
        assert_eq!(got_sizes, sizes, "{file}: ring sizes");
        // Cyclomatic number (one connected molecule).
        assert_eq!(n_rings, top.bonds.len() + 1 - top.len(), "{file}");
        let symm: Vec<BTreeSet<usize>> = r[4]
            .split(';')
            .map(|ring| {
                ring.split(' ')
                    .map(|s| s.parse::<usize>().unwrap() - 1)
                    .collect()
            })
            .collect();
        for ring in &top.rings {
            let set: BTreeSet<usize> = ring.iter().copied().collect();
            assert!(
                symm.contains(&set),
                "{file}: ring {ring:?} not among RDKit's rings"
            );
            // Ring order: consecutive atoms bonded, start at the smallest index.
            for k in 0..ring.len() {
                assert!(
                    top.bonded(ring[k], ring[(k + 1) % ring.len()]),
                    "{file}: {ring:?}"
                );
            }
            assert_eq!(ring[0], *ring.iter().min().unwrap());
            assert!(ring[1] < ring[ring.len() - 1]);
        }
    }
}

#[test]
fn pyranose_ring_contains_its_oxygen() {
    let frames = common::read_xyz(&common::test_path(
        "data/ref/rings/methyl_beta_glucopyranoside.xyz",
    ));
    let top = perceive::build(&frames[0]).unwrap();
    assert_eq!(top.rings.len(), 1);
    let oxygens = top.rings[0]
        .iter()
        .filter(|&&i| top.atoms[i].element == vicinal::elements::Element::O)
        .count();
    assert_eq!(oxygens, 1);
}
