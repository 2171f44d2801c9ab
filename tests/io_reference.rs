//! The readers against reference libraries: files written by RDKit 2026.09.1,
//! and the values RDKit (SDF) and MDTraj 1.11.1 (PDB) read from them, produced
//! by `tests/reference/io_readers.py` and stored in
//! `tests/reference/io_readers.json`.

use std::path::Path;

use serde_json::Value;
use vicinal::io::{read_all, BondOrder, ReadOptions};

fn reference() -> Value {
    let p = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/reference/io_readers.json");
    serde_json::from_str(&std::fs::read_to_string(p).unwrap()).unwrap()
}

fn data(name: &str) -> std::path::PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data/reference")
        .join(name)
}

fn order_as_double(o: BondOrder) -> f64 {
    match o {
        BondOrder::Single => 1.0,
        BondOrder::Double => 2.0,
        BondOrder::Triple => 3.0,
        BondOrder::Aromatic => 1.5,
        BondOrder::Unknown => 0.0,
    }
}

fn check_sdf(file: &str) {
    let r = reference();
    let want = r[file].as_array().unwrap();
    let got = read_all(&data(file), None, &ReadOptions::default()).unwrap();
    assert_eq!(got.len(), want.len(), "{file}: record count");
    for (k, (f, w)) in got.iter().zip(want).enumerate() {
        assert_eq!(f.title, w["title"].as_str().unwrap(), "{file} #{k} title");
        let z: Vec<u64> = f
            .elements
            .iter()
            .map(|e| e.atomic_number() as u64)
            .collect();
        let wz: Vec<u64> = w["atomic_numbers"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_u64().unwrap())
            .collect();
        assert_eq!(z, wz, "{file} #{k} elements");
        let q: Vec<i64> = f.charges.iter().map(|&c| c as i64).collect();
        let wq: Vec<i64> = w["charges"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_i64().unwrap())
            .collect();
        assert_eq!(q, wq, "{file} #{k} charges");
        let mut b: Vec<(u64, u64, f64)> = f
            .bonds
            .iter()
            .map(|b| (b.a as u64, b.b as u64, order_as_double(b.order)))
            .collect();
        b.sort_by(|x, y| x.partial_cmp(y).unwrap());
        let wb: Vec<(u64, u64, f64)> = w["bonds"]
            .as_array()
            .unwrap()
            .iter()
            .map(|t| {
                (
                    t[0].as_u64().unwrap(),
                    t[1].as_u64().unwrap(),
                    t[2].as_f64().unwrap(),
                )
            })
            .collect();
        assert_eq!(b, wb, "{file} #{k} bonds");
        for (i, (p, wp)) in f
            .coords
            .iter()
            .zip(w["coords"].as_array().unwrap())
            .enumerate()
        {
            for a in 0..3 {
                let d = (p[a] - wp[a].as_f64().unwrap()).abs();
                assert!(
                    d < 1e-9,
                    "{file} #{k} atom {i} axis {a}: {} vs {}",
                    p[a],
                    wp[a]
                );
            }
        }
        assert_eq!(
            f.energy,
            w["energy"].as_f64(),
            "{file} #{k} energy (field 'conf_energy')"
        );
        assert!(f.has_bonds);
    }
}

#[test]
fn v2000_matches_rdkit() {
    check_sdf("charged_v2000.sdf");
}

#[test]
fn v3000_matches_rdkit() {
    check_sdf("charged_v3000.sdf");
}

#[test]
fn multi_model_pdb_matches_mdtraj() {
    let r = reference();
    let w = &r["cyclohexanol_models.pdb"];
    let got = read_all(
        &data("cyclohexanol_models.pdb"),
        None,
        &ReadOptions::default(),
    )
    .unwrap();
    let wc = w["coords"].as_array().unwrap();
    assert_eq!(got.len(), wc.len());
    let syms: Vec<&str> = w["elements"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_str().unwrap())
        .collect();
    let names: Vec<&str> = w["names"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_str().unwrap())
        .collect();
    for (f, wf) in got.iter().zip(wc) {
        let s: Vec<&str> = f.elements.iter().map(|e| e.symbol()).collect();
        assert_eq!(s, syms);
        assert_eq!(f.names, names);
        for (p, wp) in f.coords.iter().zip(wf.as_array().unwrap()) {
            for a in 0..3 {
                // MDTraj stores nm as float32: about 1e-6 relative.
                assert!((p[a] - wp[a].as_f64().unwrap()).abs() < 1e-4);
            }
        }
    }
    // CONECT follows the last ENDMDL, so the last frame carries the bonds.
    assert!(!got[0].has_bonds);
    let last = got.last().unwrap();
    assert!(last.has_bonds);
    let mut b: Vec<(u64, u64)> = last
        .bonds
        .iter()
        .map(|b| (b.a as u64, b.b as u64))
        .collect();
    b.sort();
    let wb: Vec<(u64, u64)> = w["bonds"]
        .as_array()
        .unwrap()
        .iter()
        .map(|t| (t[0].as_u64().unwrap(), t[1].as_u64().unwrap()))
        .collect();
    assert_eq!(b, wb);
}
