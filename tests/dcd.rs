//! DCD reader against files written by MDTraj 1.11.1 (tests/reference/make_dcd.py;
//! coordinates as MDTraj reads them back are in tests/data/dcd/*.csv), plus
//! big-endian and 8-byte-marker copies made here, truncation and bad input.

use std::io::Cursor;
use std::path::{Path, PathBuf};

use vicinal::elements::Element;
use vicinal::io::dcd::{ByteOrder, DcdReader};
use vicinal::io::{Frame, FrameReader};

const DIR: &str = concat!(env!("CARGO_MANIFEST_DIR"), "/tests/data/dcd");

struct Reference {
    elements: Vec<Element>,
    /// frames × atoms × [x, y, z]
    coords: Vec<Vec<[f64; 3]>>,
}

fn reference(stem: &str) -> Reference {
    let text = std::fs::read_to_string(Path::new(DIR).join(format!("{stem}.csv"))).unwrap();
    let mut elements = Vec::new();
    let mut coords: Vec<Vec<[f64; 3]>> = Vec::new();
    for line in text.lines().filter(|l| !l.starts_with('#')).skip(1) {
        let f: Vec<&str> = line.split(',').collect();
        let (fr, at): (usize, usize) = (f[0].parse().unwrap(), f[1].parse().unwrap());
        if fr == coords.len() {
            coords.push(Vec::new());
        }
        if fr == 0 {
            elements.push(Element::from_symbol(f[2]).unwrap());
        }
        assert_eq!(at, coords[fr].len());
        let xyz = [f[3], f[4], f[5]].map(|v| v.parse::<f64>().unwrap());
        coords[fr].push(xyz);
    }
    Reference { elements, coords }
}

fn template(r: &Reference) -> Frame {
    Frame {
        path: PathBuf::from("tests/data/dcd/ethane.pdb"),
        elements: r.elements.clone(),
        names: vec![String::new(); r.elements.len()],
        coords: vec![Default::default(); r.elements.len()],
        charges: vec![0; r.elements.len()],
        ..Frame::default()
    }
}

fn read_all<R: std::io::Read>(mut r: DcdReader<R>) -> Vec<Vec<[f64; 3]>> {
    let mut out = Vec::new();
    let mut f = Frame::default();
    while r.read_frame(&mut f).unwrap() {
        assert_eq!(f.index_in_file, out.len());
        out.push(f.coords.iter().map(|c| [c.x, c.y, c.z]).collect());
    }
    out
}

fn bytes(stem: &str) -> Vec<u8> {
    std::fs::read(Path::new(DIR).join(format!("{stem}.dcd"))).unwrap()
}

/// Record kinds of a DCD file, for byte swapping.
#[derive(Clone, Copy)]
enum Kind {
    Header,
    Title,
    Words4,
    Cell,
}

/// Splits a little-endian, 4-byte-marker DCD into (kind, payload) records.
fn records(data: &[u8], has_cell: bool) -> Vec<(Kind, Vec<u8>)> {
    let mut out = Vec::new();
    let mut pos = 0;
    let mut index = 0usize;
    while pos < data.len() {
        let len = u32::from_le_bytes(data[pos..pos + 4].try_into().unwrap()) as usize;
        let payload = data[pos + 4..pos + 4 + len].to_vec();
        let end = u32::from_le_bytes(data[pos + 4 + len..pos + 8 + len].try_into().unwrap());
        assert_eq!(end as usize, len);
        let kind = match index {
            0 => Kind::Header,
            1 => Kind::Title,
            2 => Kind::Words4,
            i if has_cell && (i - 3) % 4 == 0 => Kind::Cell,
            _ => Kind::Words4,
        };
        out.push((kind, payload));
        pos += 8 + len;
        index += 1;
    }
    out
}

/// Rewrites a little-endian DCD in the given byte order and marker width.
fn rewrite(data: &[u8], has_cell: bool, order: ByteOrder, wide: bool) -> Vec<u8> {
    let swap = |chunk: &mut [u8]| {
        if order == ByteOrder::Big {
            chunk.reverse();
        }
    };
    let mut out = Vec::new();
    for (kind, mut p) in records(data, has_cell) {
        match kind {
            Kind::Header => p[4..].chunks_exact_mut(4).for_each(swap),
            Kind::Title => swap(&mut p[..4]),
            Kind::Words4 => p.chunks_exact_mut(4).for_each(swap),
            Kind::Cell => p.chunks_exact_mut(8).for_each(swap),
        }
        let marker: Vec<u8> = match (order, wide) {
            (ByteOrder::Little, false) => (p.len() as u32).to_le_bytes().to_vec(),
            (ByteOrder::Big, false) => (p.len() as u32).to_be_bytes().to_vec(),
            (ByteOrder::Little, true) => (p.len() as u64).to_le_bytes().to_vec(),
            (ByteOrder::Big, true) => (p.len() as u64).to_be_bytes().to_vec(),
        };
        out.extend_from_slice(&marker);
        out.extend_from_slice(&p);
        out.extend_from_slice(&marker);
    }
    out
}

fn reader(data: Vec<u8>, t: &Frame) -> vicinal::Result<DcdReader<Cursor<Vec<u8>>>> {
    DcdReader::new(Cursor::new(data), PathBuf::from("trajectory.dcd"), t)
}

fn error_of(data: Vec<u8>, t: &Frame) -> String {
    match reader(data, t) {
        Err(e) => e.to_string(),
        Ok(mut r) => {
            let mut f = Frame::default();
            loop {
                match r.read_frame(&mut f) {
                    Ok(true) => {}
                    Ok(false) => panic!("no error"),
                    Err(e) => return e.to_string(),
                }
            }
        }
    }
}

#[test]
fn reads_mdtraj_file_with_unit_cell_exactly() {
    let r = reference("ethane_cell");
    let t = template(&r);
    let dcd = DcdReader::open(&Path::new(DIR).join("ethane_cell.dcd"), &t).unwrap();
    assert_eq!(dcd.frames_in_header(), 6);
    assert_eq!(dcd.frames_from_size(), Some(6));
    assert_eq!(dcd.atoms(), 8);
    assert!(dcd.has_unit_cell());
    assert_eq!(dcd.byte_order(), ByteOrder::Little);
    assert!(
        dcd.title().contains("Created by DCD plugin"),
        "{}",
        dcd.title()
    );
    // Exact: the CSV holds the float32 values MDTraj read back.
    assert_eq!(read_all(dcd), r.coords);
}

#[test]
fn unit_cells_match_mdtraj() {
    let text = std::fs::read_to_string(Path::new(DIR).join("ethane_cell_box.csv")).unwrap();
    let boxes: Vec<Vec<f64>> = text
        .lines()
        .filter(|l| !l.starts_with('#'))
        .skip(1)
        .map(|l| l.split(',').skip(1).map(|v| v.parse().unwrap()).collect())
        .collect();
    let r = reference("ethane_cell");
    let t = template(&r);
    let mut dcd = DcdReader::open(&Path::new(DIR).join("ethane_cell.dcd"), &t).unwrap();
    let mut f = Frame::default();
    let mut k = 0;
    while dcd.read_frame(&mut f).unwrap() {
        let c = dcd.unit_cell().unwrap();
        let got = [c.a, c.b, c.c, c.alpha, c.beta, c.gamma];
        for (g, w) in got.iter().zip(&boxes[k]) {
            assert!((g - w).abs() < 1e-5, "frame {k}: {got:?} vs {:?}", boxes[k]);
        }
        assert_eq!(f.elements, r.elements);
        k += 1;
    }
    assert_eq!(k, 6);
}

#[test]
fn reads_file_without_unit_cell() {
    let r = reference("ethane_nocell");
    let t = template(&r);
    let dcd = DcdReader::open(&Path::new(DIR).join("ethane_nocell.dcd"), &t).unwrap();
    assert!(!dcd.has_unit_cell());
    assert_eq!(dcd.frames_from_size(), Some(6));
    assert_eq!(read_all(dcd), r.coords);
}

#[test]
fn big_endian_and_wide_marker_copies_read_identically() {
    for (stem, cell) in [("ethane_cell", true), ("ethane_nocell", false)] {
        let r = reference(stem);
        let t = template(&r);
        let data = bytes(stem);
        // Round trip of the helper itself.
        assert_eq!(rewrite(&data, cell, ByteOrder::Little, false), data);
        for (order, wide) in [
            (ByteOrder::Big, false),
            (ByteOrder::Little, true),
            (ByteOrder::Big, true),
        ] {
            let dcd = reader(rewrite(&data, cell, order, wide), &t).unwrap();
            assert_eq!(dcd.byte_order(), order);
            assert_eq!(dcd.frames_in_header(), 6);
            assert_eq!(read_all(dcd), r.coords, "{stem} {order:?} wide={wide}");
        }
    }
}

#[test]
fn truncated_files_give_the_frame() {
    let r = reference("ethane_cell");
    let t = template(&r);
    let data = bytes("ethane_cell");
    let frame_bytes = (8 + 48) + 3 * (8 + 32);
    let start = data.len() - 6 * frame_bytes;
    // Cut at a frame boundary: a clean, shorter trajectory.
    let dcd = reader(data[..start + 4 * frame_bytes].to_vec(), &t).unwrap();
    assert_eq!(read_all(dcd).len(), 4);
    // Cut inside frame 5's Y record.
    let cut = start + 4 * frame_bytes + 56 + 40 + 10;
    let e = error_of(data[..cut].to_vec(), &t);
    assert_eq!(
        e,
        "trajectory.dcd: frame 5 is truncated (the file ends inside its Y coordinates, \
         a record of 32 bytes)"
    );
    // Cut after frame 3's unit cell.
    let e = error_of(data[..start + 3 * frame_bytes + 56].to_vec(), &t);
    assert!(e.contains("frame 4 is truncated"), "{e}");
    // Cut inside a marker.
    let e = error_of(data[..start + 2 * frame_bytes + 2].to_vec(), &t);
    assert!(e.contains("frame 3 is truncated"), "{e}");
    // Cut in the header.
    let e = error_of(data[..100].to_vec(), &t);
    assert!(e.contains("ends inside the DCD header"), "{e}");
    let e = error_of(data[..5].to_vec(), &t);
    assert!(e.contains("too short to be a DCD file"), "{e}");
}

#[test]
fn atom_count_mismatch_is_reported() {
    let r = reference("ethane_cell");
    let mut t = template(&r);
    t.elements.pop();
    t.names.pop();
    let e = error_of(bytes("ethane_cell"), &t);
    assert_eq!(
        e,
        "trajectory.dcd: the trajectory has 8 atoms but the topology file \
         tests/data/dcd/ethane.pdb has 7"
    );
}

#[test]
fn bad_input_is_reported() {
    let r = reference("ethane_nocell");
    let t = template(&r);
    let data = bytes("ethane_nocell");
    let start = data.len() - 6 * (3 * 40);

    let mut nan = data.clone();
    // Frame 2, y of atom 3.
    let at = start + 120 + 40 + 4 + 2 * 4;
    nan[at..at + 4].copy_from_slice(&f32::NAN.to_le_bytes());
    let e = error_of(nan, &t);
    assert_eq!(
        e,
        "trajectory.dcd: frame 2, atom 3: y is not a finite number"
    );

    let mut bad = data.clone();
    bad[start + 120 + 40..start + 120 + 44].copy_from_slice(&31u32.to_le_bytes());
    let e = error_of(bad, &t);
    assert!(
        e.contains("bad record marker in frame 2 around the Y coordinates (expected 32, found 31)"),
        "{e}"
    );

    let e = error_of(b"HEADER    NOT A DCD FILE AT ALL".to_vec(), &t);
    assert!(e.contains("not a DCD file"), "{e}");

    let mut fixed = data.clone();
    fixed[4 + 4 + 4 * 8..4 + 4 + 4 * 9].copy_from_slice(&3u32.to_le_bytes());
    let e = error_of(fixed, &t);
    assert!(e.contains("3 fixed atoms"), "{e}");
}

#[test]
fn reused_frame_is_overwritten() {
    let r = reference("ethane_nocell");
    let t = template(&r);
    let mut dcd = DcdReader::open(&Path::new(DIR).join("ethane_nocell.dcd"), &t).unwrap();
    let mut f = Frame {
        title: "stale".into(),
        energy: Some(1.0),
        coords: vec![Default::default(); 50],
        ..Frame::default()
    };
    assert!(dcd.read_frame(&mut f).unwrap());
    assert_eq!(f.coords.len(), 8);
    assert_eq!(f.energy, None);
    assert_eq!(f.line, 0);
    assert_ne!(f.title, "stale");
    assert_eq!(f.names.len(), 8);
}

mod properties {
    use super::*;
    use proptest::prelude::*;

    fn outcome(data: Vec<u8>, t: &Frame) -> Result<usize, String> {
        let mut r = reader(data, t).map_err(|e| e.to_string())?;
        let mut f = Frame::default();
        let mut n = 0;
        while r.read_frame(&mut f).map_err(|e| e.to_string())? {
            assert!(f.coords.iter().all(|c| c.iter().all(|v| v.is_finite())));
            n += 1;
        }
        Ok(n)
    }

    proptest! {
        #[test]
        fn any_truncation_is_clean_or_reported(cut in 0usize..1332) {
            let r = reference("ethane_cell");
            let t = template(&r);
            let data = bytes("ethane_cell");
            match outcome(data[..cut.min(data.len())].to_vec(), &t) {
                Ok(n) => prop_assert!(n < 6 || cut >= data.len()),
                Err(e) => prop_assert!(e.starts_with("trajectory.dcd: "), "{}", e),
            }
        }

        #[test]
        fn corrupted_bytes_never_panic(pos in 0usize..996, byte in any::<u8>()) {
            let r = reference("ethane_nocell");
            let t = template(&r);
            let mut data = bytes("ethane_nocell");
            data[pos] = byte;
            if let Err(e) = outcome(data, &t) {
                prop_assert!(!e.is_empty());
            }
        }
    }
}
