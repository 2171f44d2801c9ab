//! Test-local helpers: a minimal multi-frame XYZ parser, so these tests do not
//! depend on the library's readers (to be switched to `vicinal::io` later).

#![allow(dead_code)]

use std::path::{Path, PathBuf};

use vicinal::elements::Element;
use vicinal::geometry::Vec3;
use vicinal::io::Frame;

/// Path of a file under `tests/`.
pub fn test_path(rel: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests")
        .join(rel)
}

/// Reads every frame of a multi-frame XYZ file (count, comment, `El x y z`).
pub fn read_xyz(path: &Path) -> Vec<Frame> {
    let text = std::fs::read_to_string(path).unwrap();
    let lines: Vec<&str> = text.lines().collect();
    let mut frames = Vec::new();
    let mut k = 0;
    while k < lines.len() && !lines[k].trim().is_empty() {
        let n: usize = lines[k].trim().parse().unwrap();
        let mut f = Frame {
            path: path.to_path_buf(),
            line: k + 1,
            index_in_file: frames.len(),
            title: lines[k + 1].to_string(),
            ..Frame::default()
        };
        for l in &lines[k + 2..k + 2 + n] {
            let t: Vec<&str> = l.split_whitespace().collect();
            f.elements.push(Element::from_symbol(t[0]).unwrap());
            let c: Vec<f64> = t[1..4].iter().map(|s| s.parse().unwrap()).collect();
            f.coords.push(Vec3::new(c[0], c[1], c[2]));
            f.names.push(String::new());
            f.charges.push(0);
        }
        frames.push(f);
        k += 2 + n;
    }
    frames
}

/// CSV records of a reference file, `#` lines skipped.
pub fn read_csv(path: &Path) -> Vec<csv::StringRecord> {
    let mut rdr = csv::ReaderBuilder::new()
        .comment(Some(b'#'))
        .from_path(path)
        .unwrap();
    rdr.records().map(|r| r.unwrap()).collect()
}
