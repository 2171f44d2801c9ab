//! Conformer readers. Each format has a streaming reader that fills a caller's
//! [`Frame`] one conformer at a time, reusing its buffers, so a trajectory is
//! never held in memory whole.

use std::fs::File;
use std::io::{BufRead, BufReader};
use std::path::{Path, PathBuf};

use crate::elements::Element;
use crate::error::{Error, Result};
use crate::geometry::Vec3;

pub mod dcd;
pub(crate) mod lines;
pub mod number;
pub mod pdb;
pub mod sdf;
pub(crate) mod window;
pub mod xyz;

/// A conformer file format.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Format {
    /// Multi-frame XYZ: count line, comment line, `Element x y z` lines.
    Xyz,
    /// MDL molfile or SD file (V2000 or V3000), one record per conformer.
    Sdf,
    /// PDB, one MODEL per conformer (or a single model without MODEL records).
    Pdb,
}

impl Format {
    /// The format implied by a file name's extension (`.xyz`, `.sdf`/`.sd`/`.mol`,
    /// `.pdb`/`.ent`), case-insensitive.
    pub fn from_path(path: &Path) -> Option<Format> {
        let ext = path.extension()?.to_str()?.to_ascii_lowercase();
        match ext.as_str() {
            "xyz" => Some(Format::Xyz),
            "sdf" | "sd" | "mol" | "mdl" => Some(Format::Sdf),
            "pdb" | "ent" => Some(Format::Pdb),
            _ => None,
        }
    }

    /// Parses a format name as given on the command line (`xyz`, `sdf`, `mol`, `pdb`).
    pub fn from_name(name: &str) -> Option<Format> {
        match name.to_ascii_lowercase().as_str() {
            "xyz" => Some(Format::Xyz),
            "sdf" | "sd" | "mol" | "mdl" => Some(Format::Sdf),
            "pdb" => Some(Format::Pdb),
            _ => None,
        }
    }

    /// Lower-case name of the format.
    pub fn name(self) -> &'static str {
        match self {
            Format::Xyz => "xyz",
            Format::Sdf => "sdf",
            Format::Pdb => "pdb",
        }
    }
}

/// Bond order as written in a file (or perceived).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum BondOrder {
    /// Single bond.
    Single,
    /// Double bond.
    Double,
    /// Triple bond.
    Triple,
    /// Aromatic bond (SDF order 4).
    Aromatic,
    /// Connectivity without an order (PDB CONECT, distance perception).
    Unknown,
}

/// A bond between two atoms, 0-based indices with `a < b`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct Bond {
    /// First atom (0-based), the smaller index.
    pub a: usize,
    /// Second atom (0-based), the larger index.
    pub b: usize,
    /// Bond order.
    pub order: BondOrder,
}

impl Bond {
    /// A bond with its atoms put in order.
    pub fn new(i: usize, j: usize, order: BondOrder) -> Bond {
        Bond {
            a: i.min(j),
            b: i.max(j),
            order,
        }
    }
}

/// One conformer as read from a file. Readers overwrite every field on each
/// frame and reuse the vectors' storage.
#[derive(Debug, Clone, Default)]
pub struct Frame {
    /// The file it came from (`-` for standard input).
    pub path: PathBuf,
    /// 1-based line where the record starts (for DCD-like binary input, 0).
    pub line: usize,
    /// 0-based index of this frame within its file.
    pub index_in_file: usize,
    /// Title or comment line of the record.
    pub title: String,
    /// Energy as read from the file, in the unit the user states (see
    /// [`ReadOptions::energy_key`]); `None` if the record has none.
    pub energy: Option<f64>,
    /// Element of each atom.
    pub elements: Vec<Element>,
    /// Atom names (PDB atom name, SDF alias); empty strings where the file has
    /// none. Same length as `elements`.
    pub names: Vec<String>,
    /// Cartesian coordinates in Å.
    pub coords: Vec<Vec3>,
    /// Formal charges as written (SDF); zeros where the file has none.
    pub charges: Vec<i8>,
    /// Bonds as written in the file (SDF bond block, PDB CONECT).
    pub bonds: Vec<Bond>,
    /// True when the file format carries bonds for this record (SDF always; PDB
    /// when CONECT records are present). When false, bonds are perceived.
    pub has_bonds: bool,
}

impl Frame {
    /// Number of atoms.
    pub fn len(&self) -> usize {
        self.elements.len()
    }

    /// True if the frame has no atoms.
    pub fn is_empty(&self) -> bool {
        self.elements.is_empty()
    }

    /// Clears the per-record contents, keeping allocated storage.
    pub fn clear(&mut self) {
        self.title.clear();
        self.energy = None;
        self.elements.clear();
        for n in &mut self.names {
            n.clear();
        }
        self.coords.clear();
        self.charges.clear();
        self.bonds.clear();
        self.has_bonds = false;
    }
}

/// Sets atom `i`'s name in `names`, reusing the string storage already there.
/// Readers call it for atoms `0..n` in order, then [`finish_names`].
#[inline]
pub(crate) fn set_name(names: &mut Vec<String>, i: usize, name: &str) {
    if let Some(s) = names.get_mut(i) {
        s.clear();
        s.push_str(name);
    } else {
        names.push(name.to_string());
    }
}

/// Makes `names` hold exactly `n` entries, empty where no name was set this
/// frame (entries `set` and above are cleared).
pub(crate) fn finish_names(names: &mut Vec<String>, set: usize, n: usize) {
    names.truncate(n);
    for s in names.iter_mut().skip(set) {
        s.clear();
    }
    names.resize_with(n, String::new);
}

/// The element for a symbol or an atomic number written as bytes
/// (case-insensitive; `D`, `T` are hydrogen). Uses a lookup table built once,
/// so it is cheap enough for the per-atom hot path of the readers; the common
/// organic symbols are matched byte by byte first, without the table.
#[inline(always)]
pub(crate) fn element_from_bytes(tok: &[u8]) -> Option<Element> {
    // `x | 0x20` lower-cases ASCII letters and maps no other byte to a letter.
    match *tok {
        [a] => match a | 0x20 {
            b'c' => return Some(Element::C),
            b'h' | b'd' | b't' => return Some(Element::H),
            b'o' => return Some(Element::O),
            b'n' => return Some(Element::N),
            b's' => return Some(Element::S),
            b'p' => return Some(Element::P),
            b'f' => return Some(Element::F),
            b'i' => return Some(Element::I),
            _ => {}
        },
        [a, b] => match (a | 0x20, b | 0x20) {
            (b'c', b'l') => return Some(Element::CL),
            (b'b', b'r') => return Some(Element::BR),
            _ => {}
        },
        _ => {}
    }
    element_from_table(tok)
}

/// [`element_from_bytes`] for everything but the common organic symbols.
fn element_from_table(tok: &[u8]) -> Option<Element> {
    use std::sync::OnceLock;
    static TABLE: OnceLock<Vec<Option<Element>>> = OnceLock::new();
    fn slot(a: u8, b: Option<u8>) -> Option<usize> {
        let a = a.to_ascii_uppercase();
        if !a.is_ascii_uppercase() {
            return None;
        }
        let b = match b {
            None => 26,
            Some(b) => {
                let b = b.to_ascii_uppercase();
                if !b.is_ascii_uppercase() {
                    return None;
                }
                (b - b'A') as usize
            }
        };
        Some((a - b'A') as usize * 27 + b)
    }
    match tok {
        [a] if a.is_ascii_alphabetic() || a.is_ascii_digit() => {}
        [a, b] if a.is_ascii_alphabetic() && b.is_ascii_alphabetic() => {}
        _ => {
            if !tok.is_empty() && tok.len() <= 3 && tok.iter().all(u8::is_ascii_digit) {
                let z: u32 = std::str::from_utf8(tok).ok()?.parse().ok()?;
                return u8::try_from(z).ok().and_then(Element::from_atomic_number);
            }
            return Element::from_symbol(std::str::from_utf8(tok).ok()?);
        }
    }
    if tok[0].is_ascii_digit() {
        return Element::from_atomic_number(tok[0] - b'0');
    }
    let table = TABLE.get_or_init(|| {
        let mut t = vec![None; 26 * 27];
        for z in 1..=255u8 {
            if let Some(e) = Element::from_atomic_number(z) {
                let s = e.symbol().as_bytes();
                if let (Some(&a), true) = (s.first(), s.len() <= 2) {
                    if let Some(i) = slot(a, s.get(1).copied()) {
                        t[i] = Some(e);
                    }
                }
            }
        }
        for c in [b'D', b'T'] {
            if let Some(i) = slot(c, None) {
                t[i] = Some(Element::H);
            }
        }
        t
    });
    slot(tok[0], tok.get(1).copied()).and_then(|i| table[i])
}

/// Options that affect reading.
#[derive(Debug, Clone, Default)]
pub struct ReadOptions {
    /// Where the energy is: for XYZ, a key in the comment line (`E=-12.3`,
    /// `energy: -12.3`); for SDF, the name of an SD data field. With `None`, an
    /// XYZ comment line that is a bare number is taken as the energy, and the SDF
    /// fields are searched for a field whose name contains "energy" (case-insensitive).
    pub energy_key: Option<String>,
}

/// A streaming source of conformers.
pub trait FrameReader {
    /// Reads the next conformer into `frame`, reusing its storage. Returns
    /// `Ok(false)` at the clean end of the input.
    fn read_frame(&mut self, frame: &mut Frame) -> Result<bool>;
}

/// Opens a file (or standard input for `-`) for reading; large buffers.
pub fn open_input(path: &Path) -> Result<Box<dyn BufRead>> {
    if path.as_os_str() == "-" {
        Ok(Box::new(BufReader::with_capacity(
            1 << 20,
            std::io::stdin(),
        )))
    } else {
        let f = File::open(path).map_err(|e| Error::io(path, e))?;
        Ok(Box::new(BufReader::with_capacity(1 << 20, f)))
    }
}

/// Opens a conformer reader for a file, choosing the format from `format` or
/// else the file extension.
pub fn open(
    path: &Path,
    format: Option<Format>,
    opts: &ReadOptions,
) -> Result<Box<dyn FrameReader>> {
    let fmt = match format.or_else(|| Format::from_path(path)) {
        Some(f) => f,
        None => {
            return Err(Error::file(
                path,
                "cannot tell the file format from its name; give the format explicitly (xyz, sdf or pdb)",
            ))
        }
    };
    let input = open_input(path)?;
    Ok(reader_for(fmt, input, path.to_path_buf(), opts))
}

/// A reader of the given format over any buffered input.
pub fn reader_for(
    format: Format,
    input: Box<dyn BufRead>,
    path: PathBuf,
    opts: &ReadOptions,
) -> Box<dyn FrameReader> {
    match format {
        Format::Xyz => Box::new(xyz::XyzReader::new(input, path, opts.clone())),
        Format::Sdf => Box::new(sdf::SdfReader::new(input, path, opts.clone())),
        Format::Pdb => Box::new(pdb::PdbReader::new(input, path, opts.clone())),
    }
}

/// Reads every frame of a file into memory (for small files and tests).
pub fn read_all(path: &Path, format: Option<Format>, opts: &ReadOptions) -> Result<Vec<Frame>> {
    let mut r = open(path, format, opts)?;
    let mut out = Vec::new();
    loop {
        let mut f = Frame::default();
        if !r.read_frame(&mut f)? {
            break;
        }
        out.push(f);
    }
    Ok(out)
}

/// Reads every frame from an in-memory string (for tests and embedded data).
pub fn read_str(text: &str, format: Format, opts: &ReadOptions) -> Result<Vec<Frame>> {
    let input: Box<dyn BufRead> = Box::new(std::io::Cursor::new(text.as_bytes().to_vec()));
    let mut r = reader_for(format, input, PathBuf::from("<string>"), opts);
    let mut out = Vec::new();
    loop {
        let mut f = Frame::default();
        if !r.read_frame(&mut f)? {
            break;
        }
        out.push(f);
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn element_byte_match_agrees_with_table() {
        let mut toks: Vec<Vec<u8>> = (0..=255u8).map(|a| vec![a]).collect();
        for a in 0..=255u8 {
            for b in [b'l', b'L', b'r', b'R', b'a', b'1', b' ', 0x4c | 0x80, a] {
                toks.push(vec![a, b]);
                toks.push(vec![b, a]);
            }
        }
        for t in &toks {
            assert_eq!(element_from_bytes(t), element_from_table(t), "{t:?}");
        }
        assert_eq!(element_from_bytes(b"cL"), Some(Element::CL));
        assert_eq!(element_from_bytes(b"d"), Some(Element::H));
        assert_eq!(element_from_bytes(b"@"), None);
    }
}
