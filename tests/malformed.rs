//! Every file in `tests/data/malformed/` must give one clear error naming the
//! file, the 1-based line (where a line is to blame) and what is wrong. The
//! table below is the specification: file, energy key, line, message text.

use std::path::{Path, PathBuf};

use vicinal::io::{read_all, ReadOptions};

/// (file, energy key, line named in the message, text the message must contain)
const CASES: &[(&str, Option<&str>, Option<usize>, &str)] = &[
    ("empty.xyz", None, None, "empty file: no conformers"),
    ("blank_only.xyz", None, None, "empty file: no conformers"),
    (
        "truncated.xyz",
        None,
        Some(5),
        "truncated frame: count line says 2 atoms, but the file ends after 1 atom line",
    ),
    (
        "badcount.xyz",
        None,
        Some(1),
        "count line is not a number of atoms: 'two'",
    ),
    ("zero_atoms.xyz", None, Some(1), "frame has zero atoms"),
    ("nan.xyz", None, Some(4), "non-finite coordinate y = 'NaN'"),
    ("inf.xyz", None, Some(3), "non-finite coordinate x = 'inf'"),
    ("unknown_element.xyz", None, Some(5), "unknown element 'Xq'"),
    (
        "missing_coordinate.xyz",
        None,
        Some(3),
        "missing z coordinate",
    ),
    (
        "bad_coordinate.xyz",
        None,
        Some(3),
        "bad z coordinate '0.0.1'",
    ),
    (
        "count_too_small.xyz",
        None,
        Some(4),
        "count line is not a number of atoms: 'H 1 0 0'",
    ),
    (
        "bad_energy.xyz",
        Some("E"),
        Some(2),
        "energy key 'E' is not followed by a number",
    ),
    ("empty.sdf", None, None, "empty file: no conformers"),
    (
        "sdf_counts_mismatch.sdf",
        None,
        Some(8),
        "atom count mismatch: counts line (line 4) says 4 atoms",
    ),
    (
        "sdf_bad_bond.sdf",
        None,
        Some(9),
        "bond references atom 4, but the record has 3 atoms",
    ),
    ("sdf_bad_counts.sdf", None, Some(4), "bad counts line"),
    (
        "sdf_unknown_element.sdf",
        None,
        Some(5),
        "unknown element 'Qq'",
    ),
    (
        "sdf_no_m_end.sdf",
        None,
        Some(1),
        "the file ends before 'M  END'",
    ),
    (
        "sdf_energy_not_number.sdf",
        Some("e_kcal"),
        Some(12),
        "SD field 'e_kcal' is not a number: 'low'",
    ),
    (
        "v3000_truncated.sdf",
        None,
        Some(1),
        "V3000 record truncated",
    ),
    (
        "v3000_no_ctab.sdf",
        None,
        Some(5),
        "malformed V3000 record: expected 'BEGIN CTAB'",
    ),
    (
        "v3000_bad_bond.sdf",
        None,
        Some(12),
        "bond references atom 3, which the atom block does not define",
    ),
    (
        "v3000_count_mismatch.sdf",
        None,
        Some(6),
        "atom count mismatch: COUNTS says 2 atoms, but the atom block has 1",
    ),
    ("empty.pdb", None, None, "empty file: no conformers"),
    (
        "pdb_short_line.pdb",
        None,
        Some(2),
        "ATOM/HETATM line too short",
    ),
    (
        "pdb_bad_coordinate.pdb",
        None,
        Some(1),
        "bad y coordinate '0.0x0'",
    ),
    (
        "pdb_unknown_element.pdb",
        None,
        Some(1),
        "unknown element 'XX'",
    ),
    (
        "pdb_bad_conect.pdb",
        None,
        Some(3),
        "CONECT references atom serial 9, which is not in this model",
    ),
    ("pdb_empty_model.pdb", None, Some(1), "model has no atoms"),
];

fn dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/malformed")
}

#[test]
fn each_malformed_file_gives_its_error() {
    let mut failures = Vec::new();
    for &(file, key, line, text) in CASES {
        let path = dir().join(file);
        let opts = ReadOptions {
            energy_key: key.map(str::to_string),
        };
        match read_all(&path, None, &opts) {
            Ok(frames) => failures.push(format!(
                "{file}: read {} frames, expected an error",
                frames.len()
            )),
            Err(e) => {
                let msg = e.to_string();
                let prefix = match line {
                    Some(n) => format!("{}:{n}: ", path.display()),
                    None => format!("{}: ", path.display()),
                };
                if !msg.starts_with(&prefix) || !msg.contains(text) || msg.contains('\n') {
                    failures.push(format!("{file}: got '{msg}', expected '{prefix}…{text}…'"));
                }
            }
        }
    }
    assert!(failures.is_empty(), "\n{}", failures.join("\n"));
}

#[test]
fn every_malformed_file_is_in_the_table() {
    let mut missing = Vec::new();
    for entry in std::fs::read_dir(dir()).unwrap() {
        let name = entry.unwrap().file_name().to_string_lossy().into_owned();
        if !CASES.iter().any(|c| c.0 == name) {
            missing.push(name);
        }
    }
    assert!(
        missing.is_empty(),
        "files without an expected error: {missing:?}"
    );
}
