//! MDL molfile / SD file reader, V2000 and V3000 connection tables.
//!
//! Each record is a molfile (three header lines, a counts line, the connection
//! table, `M  END`), then optional SD data fields (`> <name>` header, value
//! lines up to a blank line), then `$$$$`. A lone molfile without `$$$$` is one
//! record. The format follows the published CTFile description (BIOVIA/MDL,
//! "CTFile Formats"; column layout from memory).
//!
//! * V2000: atom lines give x, y, z (columns 1–30), the symbol (32–34) and the
//!   old charge code (37–39: 1=+3, 2=+2, 3=+1, 4=doublet radical (charge 0),
//!   5=−1, 6=−2, 7=−3). Lines whose columns do not parse are read again as
//!   blank-separated fields. `M  CHG` lines supersede all atom-block charges
//!   of the record (as the format prescribes). `A  nnn` plus the next line
//!   gives atom nnn an alias, kept as its name. Bond orders 1, 2, 3, 4
//!   (aromatic); any other type is [`BondOrder::Unknown`].
//! * V3000: `M  V30 BEGIN CTAB`, `COUNTS`, `BEGIN ATOM … END ATOM` (atom lines
//!   `idx type x y z aamap [CHG=n] …`), `BEGIN BOND … END BOND` (`idx type a1
//!   a2 …`), other blocks skipped; lines ending in `-` continue on the next.
//!
//! Energy: with [`ReadOptions::energy_key`] naming an SD data field
//! (case-insensitive), the first value line of that field must be a number (an
//! error otherwise). Without a key, the first field whose name contains
//! "energy" (case-insensitive) and whose value is a number gives the energy.
//! The title is the first header line; bonds are always present (`has_bonds`).

use std::io::BufRead;
use std::path::PathBuf;

use super::lines::{cols, fields, show, trim, Lines};
use super::number::parse_f64;
use super::{element_from_bytes, finish_names, Bond, BondOrder, Frame, FrameReader, ReadOptions};
use crate::error::{Error, Result};
use crate::geometry::Vec3;

/// Largest atom index accepted in a V3000 atom block.
const MAX_V3000_INDEX: usize = 10_000_000;

/// Streaming SD file reader.
pub struct SdfReader {
    lines: Lines,
    path: PathBuf,
    key: Option<String>,
    records: usize,
    /// Assembled V3000 logical line (continuations joined).
    v30: Vec<u8>,
    /// V3000 atom index → 0-based position (`usize::MAX` for none).
    index_map: Vec<usize>,
}

impl SdfReader {
    /// A reader over `input`, naming `path` in errors.
    pub fn new(input: Box<dyn BufRead>, path: PathBuf, opts: ReadOptions) -> Self {
        SdfReader {
            lines: Lines::new(input, path.clone()),
            path,
            key: opts.energy_key.map(|k| k.trim().to_string()),
            records: 0,
            v30: Vec::new(),
            index_map: Vec::new(),
        }
    }
}

fn parse_usize(t: &[u8]) -> Option<usize> {
    let t = trim(t);
    if t.is_empty() || t.len() > 15 || !t.iter().all(u8::is_ascii_digit) {
        return None;
    }
    std::str::from_utf8(t).ok()?.parse().ok()
}

fn parse_i64(t: &[u8]) -> Option<i64> {
    std::str::from_utf8(trim(t)).ok()?.parse().ok()
}

fn starts_with_ci(line: &[u8], p: &[u8]) -> bool {
    line.len() >= p.len() && line[..p.len()].eq_ignore_ascii_case(p)
}

fn is_m_end(line: &[u8]) -> bool {
    line.starts_with(b"M  END")
}

fn is_record_end(line: &[u8]) -> bool {
    trim(line) == b"$$$$"
}

/// Parses a finite coordinate, naming the axis in the error.
fn coord(tok: &[u8], axis: &str) -> std::result::Result<f64, String> {
    let t = trim(tok);
    if t.is_empty() {
        return Err(format!("missing {axis} coordinate"));
    }
    match parse_f64(t) {
        Some(v) if v.is_finite() => Ok(v),
        Some(_) => Err(format!("non-finite coordinate {axis} = '{}'", show(t))),
        None => Err(format!("bad {axis} coordinate '{}'", show(t))),
    }
}

/// One V2000 atom line: coordinates, element, charge from the old charge code.
fn v2000_atom(line: &[u8]) -> std::result::Result<(Vec3, super::Element, i8), String> {
    // Fixed columns first.
    let fixed = (|| {
        let x = coord(cols(line, 0, 10), "x").ok()?;
        let y = coord(cols(line, 10, 20), "y").ok()?;
        let z = coord(cols(line, 20, 30), "z").ok()?;
        let sym = trim(cols(line, 31, 34));
        let code = trim(cols(line, 36, 39));
        Some((x, y, z, sym, code))
    })();
    let (x, y, z, sym, code) = match fixed {
        Some(v) if !v.3.is_empty() => v,
        _ => {
            let mut f = fields(line);
            let x = coord(f.next().unwrap_or_default(), "x")?;
            let y = coord(f.next().unwrap_or_default(), "y")?;
            let z = coord(f.next().unwrap_or_default(), "z")?;
            let sym = f.next().unwrap_or_default();
            let _mass = f.next();
            let code = f.next().unwrap_or_default();
            (x, y, z, sym, code)
        }
    };
    if sym.is_empty() {
        return Err("missing element symbol".into());
    }
    let el = element_from_bytes(sym).ok_or_else(|| format!("unknown element '{}'", show(sym)))?;
    let charge = match parse_usize(code).unwrap_or(0) {
        1 => 3,
        2 => 2,
        3 => 1,
        5 => -1,
        6 => -2,
        7 => -3,
        _ => 0,
    };
    Ok((Vec3::new(x, y, z), el, charge))
}

fn bond_order(t: i64) -> BondOrder {
    match t {
        1 => BondOrder::Single,
        2 => BondOrder::Double,
        3 => BondOrder::Triple,
        4 => BondOrder::Aromatic,
        _ => BondOrder::Unknown,
    }
}

/// Three integers of a V2000 bond line: columns 1–3, 4–6, 7–9, else the first
/// three blank-separated fields.
fn v2000_bond(line: &[u8]) -> Option<(usize, usize, i64)> {
    let fixed = (|| {
        Some((
            parse_usize(cols(line, 0, 3))?,
            parse_usize(cols(line, 3, 6))?,
            parse_i64(cols(line, 6, 9))?,
        ))
    })();
    fixed.or_else(|| {
        let mut f = fields(line);
        Some((
            parse_usize(f.next()?)?,
            parse_usize(f.next()?)?,
            parse_i64(f.next()?)?,
        ))
    })
}

impl FrameReader for SdfReader {
    fn read_frame(&mut self, frame: &mut Frame) -> Result<bool> {
        // Header: three lines, then the counts line. Blank lines at the end of
        // the file are not a record.
        let mut header_lines = 0;
        let mut all_blank = true;
        let mut start = 0;
        let mut counts_no = 0;
        frame.clear();
        while header_lines < 4 {
            match self.lines.next_line()? {
                None => {
                    if all_blank {
                        if self.records == 0 {
                            return Err(Error::file(&self.path, "empty file: no conformers"));
                        }
                        return Ok(false);
                    }
                    return Err(Error::parse(&self.path,
                        start,
                        "truncated record: the file ends inside the molfile header (expected 3 header lines and a counts line)",
                    ));
                }
                Some((no, line)) => {
                    if header_lines == 0 {
                        start = no;
                        frame
                            .title
                            .push_str(String::from_utf8_lossy(trim(line)).as_ref());
                    }
                    if !trim(line).is_empty() {
                        all_blank = false;
                    }
                    header_lines += 1;
                    counts_no = no;
                }
            }
        }
        if all_blank {
            // Four blank lines: only blank lines to the end of the file are
            // acceptable here (no molfile has a blank counts line).
            while let Some((no, line)) = self.lines.next_line()? {
                if !trim(line).is_empty() {
                    return Err(Error::parse(
                        &self.path,
                        no,
                        format!(
                            "expected a molfile header, found blank lines and then '{}'",
                            show(line)
                        ),
                    ));
                }
            }
            if self.records == 0 {
                return Err(Error::file(&self.path, "empty file: no conformers"));
            }
            return Ok(false);
        }
        if frame.path.as_os_str() != self.path.as_os_str() {
            frame.path.clone_from(&self.path);
        }
        frame.line = start;
        frame.index_in_file = self.records;
        frame.has_bonds = true;

        // Re-read the counts line (it was the last line returned).
        self.lines.push_back();
        let (_, counts) = self
            .lines
            .next_line()?
            .ok_or_else(|| Error::parse(&self.path, counts_no, "truncated record"))?;
        let v3000 = counts.windows(5).any(|w| w.eq_ignore_ascii_case(b"V3000"));
        if v3000 {
            self.read_v3000(frame, counts_no)?;
        } else {
            let counts_fields = (|| {
                Some((
                    parse_usize(cols(counts, 0, 3))?,
                    parse_usize(cols(counts, 3, 6))?,
                ))
            })()
            .or_else(|| {
                let mut f = fields(counts);
                Some((parse_usize(f.next()?)?, parse_usize(f.next()?)?))
            });
            let (na, nb) = counts_fields.ok_or_else(|| {
                Error::parse(
                    &self.path,
                    counts_no,
                    format!(
                        "bad counts line '{}' (expected the atom and bond counts in columns 1-6)",
                        show(counts)
                    ),
                )
            })?;
            self.read_v2000(frame, counts_no, na, nb)?;
        }
        self.read_data(frame, start)?;
        self.records += 1;
        Ok(true)
    }
}

impl SdfReader {
    fn read_v2000(
        &mut self,
        frame: &mut Frame,
        counts_no: usize,
        na: usize,
        nb: usize,
    ) -> Result<()> {
        if na == 0 {
            return Err(Error::parse(
                &self.path,
                counts_no,
                "record has zero atoms (counts line)",
            ));
        }
        for k in 0..na {
            let (no, line) = match self.lines.next_line()? {
                Some(x) => x,
                None => {
                    return Err(Error::parse(&self.path,
                        counts_no,
                        format!("truncated record: counts line says {na} atoms, but the file ends after {k} atom lines"),
                    ))
                }
            };
            if line.starts_with(b"M  ") || is_record_end(line) {
                return Err(Error::parse(&self.path,
                    no,
                    format!("atom count mismatch: counts line (line {counts_no}) says {na} atoms, but the atom block has {k}"),
                ));
            }
            let looks_like_bond =
                fields(line).count() >= 3 && fields(line).all(|t| parse_i64(t).is_some());
            if looks_like_bond {
                return Err(Error::parse(
                    &self.path,
                    no,
                    format!("atom count mismatch: counts line (line {counts_no}) says {na} atoms, but the atom block has {k} (this line looks like a bond line)"),
                ));
            }
            let (p, el, q) = v2000_atom(line).map_err(|m| {
                Error::parse(
                    &self.path,
                    no,
                    format!(
                        "{m} in atom line {} of {na} (counts line {counts_no} says {na} atoms)",
                        k + 1
                    ),
                )
            })?;
            frame.coords.push(p);
            frame.elements.push(el);
            frame.charges.push(q);
        }
        finish_names(&mut frame.names, 0, na);
        for k in 0..nb {
            let (no, line) = match self.lines.next_line()? {
                Some(x) => x,
                None => {
                    return Err(Error::parse(&self.path,
                        counts_no,
                        format!("truncated record: counts line says {nb} bonds, but the file ends after {k} bond lines"),
                    ))
                }
            };
            let (a1, a2, t) = match v2000_bond(line) {
                Some(b) if !line.starts_with(b"M  ") => b,
                _ => {
                    return Err(Error::parse(&self.path,
                        no,
                        format!(
                            "bad bond line '{}' (bond {} of {nb}; counts line {counts_no} says {na} atoms and {nb} bonds)",
                            show(line),
                            k + 1
                        ),
                    ))
                }
            };
            for a in [a1, a2] {
                if a == 0 || a > na {
                    return Err(Error::parse(
                        &self.path,
                        no,
                        format!("bond references atom {a}, but the record has {na} atoms"),
                    ));
                }
            }
            if a1 == a2 {
                return Err(Error::parse(
                    &self.path,
                    no,
                    format!("bond joins atom {a1} to itself"),
                ));
            }
            frame.bonds.push(Bond::new(a1 - 1, a2 - 1, bond_order(t)));
        }
        // Properties block up to M  END.
        let mut chg_seen = false;
        loop {
            let (no, line) = match self.lines.next_line()? {
                Some(x) => x,
                None => {
                    return Err(Error::parse(
                        &self.path,
                        frame.line,
                        "truncated record: the file ends before 'M  END'",
                    ))
                }
            };
            if is_m_end(line) {
                return Ok(());
            }
            if is_record_end(line) {
                // Old writers may omit M  END; the record ends here.
                self.lines.push_back();
                return Ok(());
            }
            if line.starts_with(b"M  CHG") {
                let mut f = fields(line.get(6..).unwrap_or_default());
                let n = f.next().and_then(parse_usize).ok_or_else(|| {
                    Error::parse(&self.path, no, "bad 'M  CHG' line: missing entry count")
                })?;
                if !chg_seen {
                    frame.charges.iter_mut().for_each(|c| *c = 0);
                    chg_seen = true;
                }
                for _ in 0..n {
                    let a = f.next().and_then(parse_usize);
                    let v = f.next().and_then(parse_i64);
                    match (a, v) {
                        (Some(a), Some(v)) if a >= 1 && a <= na && (-15..=15).contains(&v) => {
                            frame.charges[a - 1] = v as i8;
                        }
                        (Some(a), Some(_)) if a == 0 || a > na => {
                            return Err(Error::parse(
                                &self.path,
                                no,
                                format!(
                                    "'M  CHG' references atom {a}, but the record has {na} atoms"
                                ),
                            ))
                        }
                        _ => {
                            return Err(Error::parse(
                                &self.path,
                                no,
                                format!("bad 'M  CHG' line '{}'", show(line)),
                            ))
                        }
                    }
                }
            } else if line.starts_with(b"A  ") {
                let a = parse_usize(cols(line, 3, 6)).filter(|&a| a >= 1 && a <= na);
                let a = a.ok_or_else(|| {
                    Error::parse(
                        &self.path,
                        no,
                        format!("bad atom alias line '{}'", show(line)),
                    )
                })?;
                let alias = match self.lines.next_line()? {
                    Some((_, l)) => String::from_utf8_lossy(trim(l)).into_owned(),
                    None => {
                        return Err(Error::parse(
                            &self.path,
                            no,
                            "file ends after an atom alias line",
                        ))
                    }
                };
                if let Some(s) = frame.names.get_mut(a - 1) {
                    s.clear();
                    s.push_str(&alias);
                }
            } else if line.starts_with(b"G  ") {
                // Group abbreviation: the next line belongs to it.
                let _ = self.lines.next_line()?;
            }
        }
    }

    /// Next V3000 logical line (prefix `M  V30 ` removed, continuations
    /// joined) into `self.v30`; returns its first line number.
    fn v30_line(&mut self, record: usize) -> Result<usize> {
        self.v30.clear();
        let mut first = 0;
        loop {
            let (no, line) = match self.lines.next_line()? {
                Some(x) => x,
                None => {
                    return Err(Error::parse(
                        &self.path,
                        record,
                        "V3000 record truncated: the file ends inside the connection table",
                    ))
                }
            };
            if first == 0 {
                first = no;
            }
            let body = match line.strip_prefix(b"M  V30") {
                Some(b) => b,
                None => {
                    return Err(Error::parse(
                        &self.path,
                        no,
                        format!(
                        "malformed V3000 connection table: expected an 'M  V30' line, found '{}'",
                        show(line)
                    ),
                    ))
                }
            };
            let body = body.trim_ascii_end();
            match body.strip_suffix(b"-") {
                Some(head) => {
                    self.v30.extend_from_slice(head);
                }
                None => {
                    self.v30.extend_from_slice(body);
                    return Ok(first);
                }
            }
        }
    }

    fn read_v3000(&mut self, frame: &mut Frame, counts_no: usize) -> Result<()> {
        let record = frame.line;
        let no = self.v30_line(record)?;
        if !starts_with_ci(trim(&self.v30), b"BEGIN CTAB") {
            return Err(Error::parse(
                &self.path,
                no,
                format!(
                    "malformed V3000 record: expected 'BEGIN CTAB', found '{}'",
                    show(&self.v30)
                ),
            ));
        }
        let mut counts: Option<(usize, usize, usize)> = None; // (atoms, bonds, line)
        let mut atoms_read = false;
        let mut bonds_read = 0usize;
        loop {
            let no = self.v30_line(record)?;
            let body = trim(&self.v30).to_vec();
            let mut f = fields(&body);
            let word = f.next().unwrap_or_default();
            if word.eq_ignore_ascii_case(b"COUNTS") {
                let na = f.next().and_then(parse_usize);
                let nb = f.next().and_then(parse_usize);
                match (na, nb) {
                    (Some(a), Some(b)) => counts = Some((a, b, no)),
                    _ => {
                        return Err(Error::parse(
                            &self.path,
                            no,
                            format!("malformed V3000 COUNTS line '{}'", show(&body)),
                        ))
                    }
                }
            } else if word.eq_ignore_ascii_case(b"BEGIN") {
                let what = f.next().unwrap_or_default();
                if what.eq_ignore_ascii_case(b"ATOM") {
                    let (na, _, cno) = counts.ok_or_else(|| {
                        Error::parse(
                            &self.path,
                            no,
                            "malformed V3000 record: atom block before COUNTS",
                        )
                    })?;
                    self.v3000_atoms(frame, na, cno, record)?;
                    atoms_read = true;
                } else if what.eq_ignore_ascii_case(b"BOND") {
                    if !atoms_read {
                        return Err(Error::parse(
                            &self.path,
                            no,
                            "malformed V3000 record: bond block before the atom block",
                        ));
                    }
                    bonds_read = self.v3000_bonds(frame, record)?;
                } else {
                    // Skip any other block (SGROUP, COLLECTION, …) to its END.
                    loop {
                        self.v30_line(record)?;
                        let t = trim(&self.v30);
                        if starts_with_ci(t, b"END ")
                            && t[4..].trim_ascii().eq_ignore_ascii_case(trim(what))
                        {
                            break;
                        }
                    }
                }
            } else if word.eq_ignore_ascii_case(b"END")
                && f.next().is_some_and(|w| w.eq_ignore_ascii_case(b"CTAB"))
            {
                break;
            }
        }
        let (na, nb, cno) = counts.ok_or_else(|| {
            Error::parse(
                &self.path,
                counts_no,
                "malformed V3000 record: no COUNTS line",
            )
        })?;
        if !atoms_read {
            return Err(Error::parse(
                &self.path,
                cno,
                "malformed V3000 record: no atom block",
            ));
        }
        if bonds_read != nb {
            return Err(Error::parse(&self.path, cno, format!("bond count mismatch: COUNTS says {nb} bonds, but the bond block has {bonds_read}")));
        }
        let _ = na;
        // Up to M  END.
        loop {
            match self.lines.next_line()? {
                None => {
                    return Err(Error::parse(
                        &self.path,
                        record,
                        "V3000 record truncated: the file ends before 'M  END'",
                    ))
                }
                Some((_, l)) if is_m_end(l) => return Ok(()),
                Some((no, l)) if is_record_end(l) => {
                    return Err(Error::parse(
                        &self.path,
                        no,
                        "malformed V3000 record: '$$$$' before 'M  END'",
                    ))
                }
                Some(_) => {}
            }
        }
    }

    fn v3000_atoms(
        &mut self,
        frame: &mut Frame,
        na: usize,
        cno: usize,
        record: usize,
    ) -> Result<()> {
        self.index_map.clear();
        loop {
            let no = self.v30_line(record)?;
            let body = trim(&self.v30);
            if starts_with_ci(body, b"END ATOM") {
                break;
            }
            let k = frame.elements.len();
            let mut f = fields(body);
            let bad = |what: &str| {
                Error::parse(
                    &self.path,
                    no,
                    format!("malformed V3000 atom line: {what}: '{}'", show(body)),
                )
            };
            let idx = f
                .next()
                .and_then(parse_usize)
                .ok_or_else(|| bad("bad atom index"))?;
            if idx == 0 || idx > MAX_V3000_INDEX {
                return Err(bad("atom index out of range"));
            }
            let sym = f.next().ok_or_else(|| bad("missing atom type"))?;
            let el = element_from_bytes(sym).ok_or_else(|| {
                Error::parse(&self.path, no, format!("unknown element '{}'", show(sym)))
            })?;
            let mut xyz = [0.0; 3];
            for (slot, axis) in xyz.iter_mut().zip(["x", "y", "z"]) {
                *slot = coord(f.next().unwrap_or_default(), axis)
                    .map_err(|m| Error::parse(&self.path, no, m))?;
            }
            let _aamap = f.next();
            let mut charge = 0i8;
            for prop in f {
                if prop.len() > 4 && prop[..4].eq_ignore_ascii_case(b"CHG=") {
                    charge = parse_i64(&prop[4..])
                        .filter(|v| (-15..=15).contains(v))
                        .map(|v| v as i8)
                        .ok_or_else(|| bad("bad CHG value"))?;
                }
            }
            if self.index_map.len() <= idx {
                self.index_map.resize(idx + 1, usize::MAX);
            }
            if self.index_map[idx] != usize::MAX {
                return Err(bad("atom index used twice"));
            }
            self.index_map[idx] = k;
            frame.elements.push(el);
            frame.coords.push(Vec3::new(xyz[0], xyz[1], xyz[2]));
            frame.charges.push(charge);
        }
        let k = frame.elements.len();
        if k != na {
            return Err(Error::parse(
                &self.path,
                cno,
                format!("atom count mismatch: COUNTS says {na} atoms, but the atom block has {k}"),
            ));
        }
        if k == 0 {
            return Err(Error::parse(&self.path, cno, "record has zero atoms"));
        }
        finish_names(&mut frame.names, 0, k);
        Ok(())
    }

    fn v3000_bonds(&mut self, frame: &mut Frame, record: usize) -> Result<usize> {
        let mut n = 0;
        loop {
            let no = self.v30_line(record)?;
            let body = trim(&self.v30);
            if starts_with_ci(body, b"END BOND") {
                return Ok(n);
            }
            let mut f = fields(body);
            let bad = |what: &str| {
                Error::parse(
                    &self.path,
                    no,
                    format!("malformed V3000 bond line: {what}: '{}'", show(body)),
                )
            };
            let _idx = f
                .next()
                .and_then(parse_usize)
                .ok_or_else(|| bad("bad bond index"))?;
            let t = f
                .next()
                .and_then(parse_i64)
                .ok_or_else(|| bad("bad bond type"))?;
            let mut ends = [0usize; 2];
            for e in &mut ends {
                let a = f
                    .next()
                    .and_then(parse_usize)
                    .ok_or_else(|| bad("bad atom index"))?;
                *e = match self.index_map.get(a) {
                    Some(&p) if p != usize::MAX => p,
                    _ => {
                        return Err(Error::parse(
                            &self.path,
                            no,
                            format!(
                                "bond references atom {a}, which the atom block does not define"
                            ),
                        ))
                    }
                };
            }
            if ends[0] == ends[1] {
                return Err(bad("bond joins an atom to itself"));
            }
            frame.bonds.push(Bond::new(ends[0], ends[1], bond_order(t)));
            n += 1;
        }
    }

    /// SD data fields after `M  END`, up to `$$$$` or the end of the file.
    fn read_data(&mut self, frame: &mut Frame, _start: usize) -> Result<()> {
        let mut in_field: Option<(bool, bool)> = None; // (wanted, first value line pending)
        loop {
            let (no, line) = match self.lines.next_line()? {
                None => return Ok(()),
                Some(x) => x,
            };
            if is_record_end(line) {
                return Ok(());
            }
            if let Some((wanted, pending)) = in_field {
                if trim(line).is_empty() {
                    if wanted && pending && self.key.is_some() {
                        return Err(Error::parse(
                            &self.path,
                            no,
                            format!(
                                "SD field '{}' has no value",
                                self.key.as_deref().unwrap_or("")
                            ),
                        ));
                    }
                    in_field = None;
                    continue;
                }
                if wanted && pending {
                    let tok = fields(line).next().unwrap_or_default();
                    let v = parse_f64(tok).filter(|v| v.is_finite());
                    match (&self.key, v) {
                        (_, Some(v)) => frame.energy = Some(v),
                        (Some(k), None) => {
                            return Err(Error::parse(
                                &self.path,
                                no,
                                format!("SD field '{k}' is not a number: '{}'", show(line)),
                            ))
                        }
                        (None, None) => {}
                    }
                }
                in_field = Some((wanted, false));
                continue;
            }
            if line.first() == Some(&b'>') {
                let name = match (
                    line.iter().position(|&b| b == b'<'),
                    line.iter().rposition(|&b| b == b'>'),
                ) {
                    (Some(a), Some(b)) if b > a => &line[a + 1..b],
                    _ => trim(line.get(1..).unwrap_or_default()),
                };
                let name = trim(name);
                let wanted = frame.energy.is_none()
                    && match &self.key {
                        Some(k) => name.eq_ignore_ascii_case(k.as_bytes()),
                        None => name.windows(6).any(|w| w.eq_ignore_ascii_case(b"energy")),
                    };
                in_field = Some((wanted, true));
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::elements::Element;
    use crate::io::{read_str, Format};

    fn opts(key: Option<&str>) -> ReadOptions {
        ReadOptions {
            energy_key: key.map(str::to_string),
        }
    }

    const ACETATE: &str = "\
acetate
  test 3D

  4  3  0  0  0  0  0  0  0  0999 V2000
    0.0000    0.0000    0.0000 C   0  0  0  0  0  0  0  0  0  0  0  0
    1.5000    0.0000    0.0000 C   0  0  0  0  0  0  0  0  0  0  0  0
    2.1000    1.0000    0.0000 O   0  0  0  0  0  0  0  0  0  0  0  0
    2.1000   -1.0000    0.0000 O   0  5  0  0  0  0  0  0  0  0  0  0
  1  2  1  0
  2  3  2  0
  2  4  1  0
A    1
CH3
M  END
> <MMFF_Energy>
-12.5

> <other>
x

$$$$
second
  test 3D

  4  3  0  0  0  0  0  0  0  0999 V2000
    0.0000    0.0000    0.1000 C   0  0
    1.5000    0.0000    0.0000 C   0  0
    2.1000    1.0000    0.0000 O   0  0
    2.1000   -1.0000    0.0000 O   0  0
  1  2  1  0
  2  3  4  0
  2  4  8  0
M  CHG  1   3  -1
M  END
> <MMFF_Energy>
-11.0

$$$$
";

    #[test]
    fn v2000_two_records_charges_alias_energy() {
        let f = read_str(ACETATE, Format::Sdf, &opts(None)).unwrap();
        assert_eq!(f.len(), 2);
        assert_eq!(f[0].title, "acetate");
        assert_eq!(
            f[0].elements,
            vec![Element::C, Element::C, Element::O, Element::O]
        );
        assert_eq!(f[0].charges, vec![0, 0, 0, -1]);
        assert_eq!(
            f[0].names,
            vec![
                "CH3".to_string(),
                String::new(),
                String::new(),
                String::new()
            ]
        );
        assert_eq!(f[0].energy, Some(-12.5));
        assert_eq!(f[0].bonds[1], Bond::new(1, 2, BondOrder::Double));
        assert!(f[0].has_bonds);
        assert_eq!(f[1].line, 22);
        assert_eq!(f[1].index_in_file, 1);
        assert_eq!(f[1].coords[0], Vec3::new(0.0, 0.0, 0.1));
        assert_eq!(f[1].charges, vec![0, 0, -1, 0]);
        assert_eq!(f[1].names, vec![String::new(); 4]);
        assert_eq!(f[1].bonds[1].order, BondOrder::Aromatic);
        assert_eq!(f[1].bonds[2].order, BondOrder::Unknown);
        assert_eq!(f[1].energy, Some(-11.0));
        let g = read_str(ACETATE, Format::Sdf, &opts(Some("OTHER")))
            .unwrap_err()
            .to_string();
        assert_eq!(g, "<string>:19: SD field 'OTHER' is not a number: 'x'");
        let crlf = ACETATE.replace('\n', "\r\n");
        assert_eq!(
            read_str(&crlf, Format::Sdf, &opts(Some("mmff_energy"))).unwrap()[1].energy,
            Some(-11.0)
        );
    }

    #[test]
    fn lone_molfile_without_terminator() {
        let text = "w\n\n\n  1  0  0  0  0  0  0  0  0  0999 V2000\n    0.0000    0.0000    0.0000 O   0  3\nM  END\n\n\n";
        let f = read_str(text, Format::Sdf, &opts(None)).unwrap();
        assert_eq!(f.len(), 1);
        assert_eq!(f[0].charges, vec![1]);
        let many_blank = format!("{text}$$$$\n\n\n\n\n\n");
        assert_eq!(
            read_str(&many_blank, Format::Sdf, &opts(None))
                .unwrap()
                .len(),
            1
        );
        assert_eq!(f[0].energy, None);
    }

    const V3000: &str = "\
methylammonium
  test

  0  0  0     0  0            999 V3000
M  V30 BEGIN CTAB
M  V30 COUNTS 3 2 0 0 0
M  V30 BEGIN ATOM
M  V30 1 C 0.0 0.0 0.0 0
M  V30 2 N 1.47 0.0 0.0 0 -
M  V30 CHG=1
M  V30 5 H -0.36 1.03 0.0 0
M  V30 END ATOM
M  V30 BEGIN BOND
M  V30 1 1 1 2
M  V30 2 1 1 5
M  V30 END BOND
M  V30 END CTAB
M  END
> <energy>
3.25

$$$$
";

    #[test]
    fn v3000_with_continuation_and_sparse_indices() {
        let f = read_str(V3000, Format::Sdf, &opts(None)).unwrap();
        assert_eq!(f.len(), 1);
        assert_eq!(f[0].elements, vec![Element::C, Element::N, Element::H]);
        assert_eq!(f[0].charges, vec![0, 1, 0]);
        assert_eq!(
            f[0].bonds,
            vec![
                Bond::new(0, 1, BondOrder::Single),
                Bond::new(0, 2, BondOrder::Single)
            ]
        );
        assert_eq!(f[0].coords[1].x, 1.47);
        assert_eq!(f[0].energy, Some(3.25));
    }

    #[test]
    fn errors() {
        let e = |t: &str| {
            read_str(t, Format::Sdf, &opts(None))
                .unwrap_err()
                .to_string()
        };
        assert_eq!(e(""), "<string>: empty file: no conformers");
        let short = "t\n\n\n  3  0  0  0  0  0  0  0  0  0999 V2000\n    0.0000    0.0000    0.0000 O   0  0\nM  END\n";
        assert!(e(short).contains(":6: atom count mismatch: counts line (line 4) says 3 atoms, but the atom block has 1"), "{}", e(short));
        let bad_bond = "t\n\n\n  2  1  0  0  0  0  0  0  0  0999 V2000\n    0.0000    0.0000    0.0000 O   0  0\n    1.0000    0.0000    0.0000 H   0  0\n  1  3  1  0\nM  END\n";
        assert!(e(bad_bond).contains(":7: bond references atom 3, but the record has 2 atoms"));
        let trunc = V3000.lines().take(9).collect::<Vec<_>>().join("\n");
        assert!(
            e(&trunc).contains(":1: V3000 record truncated"),
            "{}",
            e(&trunc)
        );
        let nan = ACETATE.replace(
            "    1.5000    0.0000    0.0000 C",
            "       nan    0.0000    0.0000 C",
        );
        assert!(
            e(&nan).contains(":6: non-finite coordinate x"),
            "{}",
            e(&nan)
        );
        let v3bad = V3000.replace("M  V30 1 1 1 2", "M  V30 1 1 1 9");
        assert!(
            e(&v3bad).contains(":14: bond references atom 9"),
            "{}",
            e(&v3bad)
        );
    }
}
