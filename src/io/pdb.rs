//! PDB reader: one conformer per `MODEL … ENDMDL` record, or the whole file
//! as one conformer when it has no MODEL records.
//!
//! Columns follow the wwPDB format description v3.3 (`ATOM`/`HETATM`: serial
//! 7–11, name 13–16, altLoc 17, resName 18–20, chain 22, resSeq 23–26, x 31–38,
//! y 39–46, z 47–54, element 77–78, charge 79–80 as `1+`/`2-`). An atom line
//! must reach column 54.
//!
//! * Atom names (trimmed) are kept in [`Frame::names`].
//! * The element comes from columns 77–78 when present. Otherwise it is
//!   guessed from the name field (common practice): a name starting in column
//!   14 (blank or digit in column 13, as in `" CA "`, `"1HB2"`) gives its first
//!   letter after the digits; a name starting in column 13 that begins with `H`
//!   is hydrogen (4-character hydrogen names such as `HD21`); otherwise its
//!   first two letters if they are an element symbol (`FE1 `, `CL2 `, `CA  ` =
//!   calcium, as the format prescribes), else its first letter.
//! * Alternate locations: only atoms with altLoc blank or `A` are read; other
//!   locations are skipped (and CONECT references to them ignored).
//! * Formal charges from columns 79–80; zero where blank.
//! * Energy: with [`ReadOptions::energy_key`] set, `REMARK` lines of the model
//!   (or before it) are searched for `key=value` / `key: value`, as in the XYZ
//!   comment line. Without a key, PDB records have no energy.
//! * Title: the text of the file's `TITLE` records (all frames).
//!
//! CONECT and streaming: bonds from `CONECT` records go to the frame in whose
//! stretch of the file they appear, and serial numbers are looked up in that
//! frame's atoms. For a single model (CONECT after the atoms, before `END`)
//! the frame has them. CONECT records right after an `ENDMDL` (up to the next
//! `MODEL`, `ATOM`/`HETATM` or other record) belong to the model just ended:
//! so a multi-model file whose CONECT block follows the last `ENDMDL` gives its
//! bonds to the *last* frame only, since a streaming reader cannot look ahead
//! to the end of the file. [`Frame::has_bonds`] is true exactly for frames
//! that received CONECT records; the topology layer should use file bonds only
//! when the frame it builds from has them, and perceive bonds otherwise.
//! Repeated CONECT entries (used by some writers for bond orders) are merged
//! into one bond of [`BondOrder::Unknown`] order.

use std::collections::{HashMap, HashSet};
use std::io::BufRead;
use std::path::PathBuf;

use super::lines::{cols, fields, show, trim, Lines};
use super::number::parse_f64;
use super::xyz::keyed_number;
use super::{
    element_from_bytes, finish_names, set_name, Bond, BondOrder, Frame, FrameReader, ReadOptions,
};
use crate::elements::Element;
use crate::error::{Error, Result};
use crate::geometry::Vec3;

/// Streaming PDB reader.
pub struct PdbReader {
    lines: Lines,
    st: State,
    key: Option<Vec<u8>>,
    frames: usize,
    /// File title from TITLE records.
    title: String,
}

/// Per-frame bookkeeping, apart from the line source so both can be borrowed.
struct State {
    path: PathBuf,
    /// Atom serial → 0-based index in the current frame.
    serials: HashMap<i64, usize>,
    /// Serials of skipped alternate-location atoms in the current frame.
    skipped: HashSet<i64>,
    /// Bonds already added to the current frame.
    seen_bonds: HashSet<(usize, usize)>,
}

impl PdbReader {
    /// A reader over `input`, naming `path` in errors.
    pub fn new(input: Box<dyn BufRead>, path: PathBuf, opts: ReadOptions) -> Self {
        PdbReader {
            lines: Lines::new(input, path.clone()),
            st: State {
                path,
                serials: HashMap::new(),
                skipped: HashSet::new(),
                seen_bonds: HashSet::new(),
            },
            key: opts.energy_key.map(|k| k.trim().as_bytes().to_vec()),
            frames: 0,
            title: String::new(),
        }
    }
}

fn record(line: &[u8]) -> &[u8] {
    line.get(..6).unwrap_or(line).trim_ascii_end()
}

fn parse_serial(t: &[u8]) -> Option<i64> {
    std::str::from_utf8(trim(t)).ok()?.parse().ok()
}

/// Element guessed from a 4-column PDB atom name (see the module docs).
pub(crate) fn element_from_name(name: &[u8]) -> Option<Element> {
    let first = *name.first()?;
    if first.is_ascii_alphabetic() {
        if first.eq_ignore_ascii_case(&b'H') {
            return Some(Element::H);
        }
        if let Some(&second) = name.get(1) {
            if second.is_ascii_alphabetic() {
                if let Some(e) = element_from_bytes(&[first, second]) {
                    return Some(e);
                }
            }
        }
        return element_from_bytes(&[first]);
    }
    let c = name
        .iter()
        .copied()
        .find(|b| !(b.is_ascii_digit() || *b == b' '))?;
    if c.is_ascii_alphabetic() {
        element_from_bytes(&[c])
    } else {
        None
    }
}

/// Formal charge from columns 79–80 (`1+`, `2-`, also `+1`); 0 when blank.
fn parse_charge(t: &[u8]) -> Option<i8> {
    let t = trim(t);
    match t {
        [] => Some(0),
        [d, s] | [s, d] if d.is_ascii_digit() && (*s == b'+' || *s == b'-') => {
            let v = (d - b'0') as i8;
            Some(if *s == b'-' { -v } else { v })
        }
        [d] if d.is_ascii_digit() => Some((d - b'0') as i8),
        _ => None,
    }
}

impl State {
    fn atom(&mut self, frame: &mut Frame, no: usize, line: &[u8]) -> Result<()> {
        let err = |m: String| Error::parse(&self.path, no, m);
        if line.len() < 54 {
            return Err(err(format!(
                "ATOM/HETATM line too short ({} characters; coordinates need columns 31-54)",
                line.len()
            )));
        }
        let serial = parse_serial(cols(line, 6, 11));
        let alt = line.get(16).copied().unwrap_or(b' ');
        if alt != b' ' && alt != b'A' {
            if let Some(s) = serial {
                self.skipped.insert(s);
            }
            return Ok(());
        }
        let mut xyz = [0.0; 3];
        for ((slot, axis), from) in xyz.iter_mut().zip(["x", "y", "z"]).zip([30, 38, 46]) {
            let t = trim(cols(line, from, from + 8));
            *slot = match parse_f64(t) {
                Some(v) if v.is_finite() => v,
                Some(_) => {
                    return Err(err(format!("non-finite coordinate {axis} = '{}'", show(t))))
                }
                None if t.is_empty() => return Err(err(format!("missing {axis} coordinate"))),
                None => return Err(err(format!("bad {axis} coordinate '{}'", show(t)))),
            };
        }
        let raw_name = cols(line, 12, 16);
        let el_col = trim(cols(line, 76, 78));
        let el = if el_col.is_empty() {
            element_from_name(raw_name).ok_or_else(|| {
                err(format!(
                    "unknown element: cannot tell it from atom name '{}' and columns 77-78 are blank",
                    show(raw_name)
                ))
            })?
        } else {
            element_from_bytes(el_col)
                .ok_or_else(|| err(format!("unknown element '{}'", show(el_col))))?
        };
        let q = parse_charge(cols(line, 78, 80)).ok_or_else(|| {
            err(format!(
                "bad charge '{}' in columns 79-80 (expected e.g. '1+' or '2-')",
                show(cols(line, 78, 80))
            ))
        })?;
        let k = frame.elements.len();
        if let Some(s) = serial {
            self.serials.insert(s, k);
        }
        let name = String::from_utf8_lossy(trim(raw_name));
        set_name(&mut frame.names, k, &name);
        frame.elements.push(el);
        frame.coords.push(Vec3::new(xyz[0], xyz[1], xyz[2]));
        frame.charges.push(q);
        Ok(())
    }

    fn conect(&mut self, frame: &mut Frame, no: usize, line: &[u8]) -> Result<()> {
        let err = |m: String| Error::parse(&self.path, no, m);
        // Fixed 5-column fields first; blank-separated fields as a fallback.
        let mut serials = [None; 5];
        let mut ok = true;
        for (i, s) in serials.iter_mut().enumerate() {
            let t = trim(cols(line, 6 + 5 * i, 11 + 5 * i));
            if !t.is_empty() {
                *s = parse_serial(t);
                ok &= s.is_some();
            }
        }
        if !ok || serials[0].is_none() || line.len() > 31 && !trim(&line[31..]).is_empty() {
            let mut f = fields(line.get(6..).unwrap_or_default());
            serials = [None; 5];
            for s in serials.iter_mut() {
                match f.next() {
                    Some(t) => {
                        *s = Some(parse_serial(t).ok_or_else(|| {
                            err(format!("bad atom serial '{}' in CONECT record", show(t)))
                        })?)
                    }
                    None => break,
                }
            }
        }
        let Some(from) = serials[0] else {
            return Err(err("CONECT record without an atom serial".into()));
        };
        if self.skipped.contains(&from) {
            return Ok(());
        }
        let Some(&a) = self.serials.get(&from) else {
            return Err(err(format!(
                "CONECT references atom serial {from}, which is not in this model"
            )));
        };
        for to in serials[1..].iter().flatten() {
            if self.skipped.contains(to) {
                continue;
            }
            let Some(&b) = self.serials.get(to) else {
                return Err(err(format!(
                    "CONECT references atom serial {to}, which is not in this model"
                )));
            };
            if a != b && self.seen_bonds.insert((a.min(b), a.max(b))) {
                frame.bonds.push(Bond::new(a, b, BondOrder::Unknown));
            }
        }
        frame.has_bonds = true;
        Ok(())
    }
}

impl FrameReader for PdbReader {
    fn read_frame(&mut self, frame: &mut Frame) -> Result<bool> {
        frame.clear();
        self.st.serials.clear();
        self.st.skipped.clear();
        self.st.seen_bonds.clear();
        let mut started = false;
        let mut start_line = 0;
        let mut energy: Option<f64> = None;
        while let Some((no, line)) = self.lines.next_line()? {
            match record(line) {
                b"MODEL" => {
                    if started {
                        self.lines.push_back();
                        break;
                    }
                    started = true;
                    start_line = no;
                }
                b"ATOM" | b"HETATM" => {
                    if !started {
                        started = true;
                        start_line = no;
                    }
                    self.st.atom(frame, no, line)?;
                }
                b"CONECT" => {
                    self.st.conect(frame, no, line)?;
                }
                b"REMARK" => {
                    if let Some(key) = &self.key {
                        if energy.is_none() {
                            energy = keyed_number(line.get(6..).unwrap_or_default(), key)
                                .map_err(|m| Error::parse(&self.st.path, no, m))?;
                        }
                    }
                }
                b"TITLE" if self.frames == 0 && !started => {
                    let t = String::from_utf8_lossy(trim(cols(line, 10, 80)));
                    if !self.title.is_empty() && !t.is_empty() {
                        self.title.push(' ');
                    }
                    self.title.push_str(&t);
                }
                b"ENDMDL" if started => {
                    // CONECT records right after ENDMDL belong to this model.
                    while let Some((no, line)) = self.lines.next_line()? {
                        match record(line) {
                            b"CONECT" => {
                                self.st.conect(frame, no, line)?;
                            }
                            b"END" | b"MASTER" | b"" => {}
                            _ => {
                                self.lines.push_back();
                                break;
                            }
                        }
                    }
                    break;
                }
                b"END" if started => break,
                _ => {}
            }
        }
        if !started {
            if self.frames == 0 {
                return Err(Error::file(&self.st.path, "empty file: no conformers"));
            }
            return Ok(false);
        }
        let n = frame.elements.len();
        if n == 0 {
            return Err(Error::parse(
                &self.st.path,
                start_line,
                "model has no atoms",
            ));
        }
        finish_names(&mut frame.names, n, n);
        if frame.path != self.st.path {
            frame.path.clone_from(&self.st.path);
        }
        frame.line = start_line;
        frame.index_in_file = self.frames;
        frame.title.push_str(&self.title);
        frame.energy = energy;
        self.frames += 1;
        Ok(true)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::{read_str, Format};

    fn opts(key: Option<&str>) -> ReadOptions {
        ReadOptions {
            energy_key: key.map(str::to_string),
        }
    }

    const ETHANOL_2: &str = "\
TITLE     ETHANOL TEST
MODEL        1
REMARK   1 ENERGY= -3.5
HETATM    1  C1  EOH A   1       0.000   0.000   0.000  1.00  0.00           C
HETATM    2  C2  EOH A   1       1.520   0.000   0.000  1.00  0.00           C
HETATM    3  O   EOH A   1       2.000   1.350   0.000  1.00  0.00           O1-
HETATM    4 1H1  EOH A   1      -0.360   1.030   0.000  1.00  0.00
HETATM    5 FE1  EOH A   1       5.000   5.000   5.000  1.00  0.00
HETATM    6  O  BEOH A   1       2.100   1.350   0.000  1.00  0.00           O
ENDMDL
MODEL        2
REMARK   1 ENERGY= -2.0
HETATM    1  C1  EOH A   1       0.100   0.000   0.000  1.00  0.00           C
HETATM    2  C2  EOH A   1       1.520   0.000   0.000  1.00  0.00           C
HETATM    3  O   EOH A   1       2.000   1.350   0.000  1.00  0.00           O1-
HETATM    4 1H1  EOH A   1      -0.360   1.030   0.000  1.00  0.00
HETATM    5 FE1  EOH A   1       5.000   5.000   5.000  1.00  0.00
ENDMDL
CONECT    1    2    4    4
CONECT    2    1    3
CONECT    3    2
END
";

    #[test]
    fn two_models_conect_after_last() {
        let f = read_str(ETHANOL_2, Format::Pdb, &opts(Some("energy"))).unwrap();
        assert_eq!(f.len(), 2);
        assert_eq!(f[0].title, "ETHANOL TEST");
        assert_eq!(f[0].line, 2);
        assert_eq!(f[1].line, 11);
        assert_eq!(f[0].energy, Some(-3.5));
        assert_eq!(f[1].energy, Some(-2.0));
        assert_eq!(
            f[0].elements,
            vec![
                Element::C,
                Element::C,
                Element::O,
                Element::H,
                Element::from_symbol("Fe").unwrap()
            ]
        );
        assert_eq!(f[0].names, vec!["C1", "C2", "O", "1H1", "FE1"]);
        assert_eq!(f[0].charges, vec![0, 0, -1, 0, 0]);
        assert!(!f[0].has_bonds && f[0].bonds.is_empty());
        assert!(f[1].has_bonds);
        assert_eq!(f[1].coords[0], Vec3::new(0.1, 0.0, 0.0));
        assert_eq!(
            f[1].bonds,
            vec![
                Bond::new(0, 1, BondOrder::Unknown),
                Bond::new(0, 3, BondOrder::Unknown),
                Bond::new(1, 2, BondOrder::Unknown)
            ]
        );
        assert_eq!(
            read_str(ETHANOL_2, Format::Pdb, &opts(None)).unwrap()[0].energy,
            None
        );
    }

    #[test]
    fn single_model_without_model_records() {
        let text = "ATOM      1  N   GLY A   1      -1.000   0.000   0.000  1.00  0.00\r\n\
                    ATOM      2  CA  GLY A   1       0.000   0.000   0.000  1.00  0.00\r\n\
                    ATOM      3 HA2  GLY A   1       0.000   1.000   0.000\r\n\
                    ATOM      4 CA   CA  B   2       9.000   9.000   9.000\r\n\
                    TER\r\nCONECT    1    2\r\nCONECT    2    1    3\r\nEND\r\n";
        let f = read_str(text, Format::Pdb, &opts(None)).unwrap();
        assert_eq!(f.len(), 1);
        let ca = Element::from_symbol("Ca").unwrap();
        assert_eq!(f[0].elements, vec![Element::N, Element::C, Element::H, ca]);
        assert!(f[0].has_bonds);
        assert_eq!(f[0].bonds.len(), 2);
    }

    #[test]
    fn element_guessing() {
        let g = |s: &[u8]| element_from_name(s);
        assert_eq!(g(b" CA "), Some(Element::C));
        assert_eq!(g(b"1HB2"), Some(Element::H));
        assert_eq!(g(b"HD21"), Some(Element::H));
        assert_eq!(g(b" HB2"), Some(Element::H));
        assert_eq!(g(b"CL1 "), Some(Element::CL));
        assert_eq!(g(b"C12 "), Some(Element::C));
        assert_eq!(g(b" OXT"), Some(Element::O));
        assert_eq!(g(b"    "), None);
    }

    #[test]
    fn errors() {
        let e = |t: &str| {
            read_str(t, Format::Pdb, &opts(None))
                .unwrap_err()
                .to_string()
        };
        assert_eq!(
            e("REMARK nothing\nEND\n"),
            "<string>: empty file: no conformers"
        );
        assert!(e("ATOM      1  N   GLY A   1      -1.000   0.000\n")
            .contains(":1: ATOM/HETATM line too short"));
        assert!(
            e("ATOM      1  N   GLY A   1      -1.000   0.000     nan\n")
                .contains(":1: non-finite coordinate z")
        );
        assert!(e(
            "ATOM      1  N   GLY A   1      -1.000   0.000   0.000  1.00  0.00          XQ\n"
        )
        .contains(":1: unknown element 'XQ'"));
        assert!(
            e("ATOM      1  N   GLY A   1      -1.000   0.000   0.000\nCONECT    1    7\n")
                .contains(":2: CONECT references atom serial 7")
        );
        assert!(e("MODEL 1\nENDMDL\n").contains(":1: model has no atoms"));
    }
}
