//! Test helpers shared by the integration tests.

#![allow(dead_code)]

use std::path::{Path, PathBuf};

use vicinal::io::Frame;

/// Path of a file under `tests/`.
pub fn test_path(rel: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests")
        .join(rel)
}

/// Reads every frame of a multi-frame XYZ file with the library's reader.
pub fn read_xyz(path: &Path) -> Vec<Frame> {
    vicinal::io::read_all(path, None, &vicinal::io::ReadOptions::default()).unwrap()
}

/// CSV records of a reference file, `#` lines skipped.
pub fn read_csv(path: &Path) -> Vec<csv::StringRecord> {
    let mut rdr = csv::ReaderBuilder::new()
        .comment(Some(b'#'))
        .from_path(path)
        .unwrap();
    rdr.records().map(|r| r.unwrap()).collect()
}
