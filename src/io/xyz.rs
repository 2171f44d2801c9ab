//! Multi-frame XYZ reader and writer.
//!
//! Each frame is a count line (the number of atoms), a comment line, and one
//! `Element x y z` line per atom, coordinates in Å. The reader accepts tabs or
//! any run of blanks between fields, extra columns after `z` (ignored), CRLF
//! line ends, leading and trailing whitespace, blank lines between frames and
//! at the end of the file. The element may be a symbol in any case (`c`, `CL`,
//! `Cl`; `D` and `T` read as hydrogen) or an atomic number (`6`).
//!
//! Energy: with [`ReadOptions::energy_key`] set to `key`, the comment line is
//! searched (case-insensitively, at a word boundary) for `key=value` or
//! `key: value` (blanks allowed around `=`/`:`); the value is the number at the
//! start of what follows, so `E=-12.5kcal/mol` gives -12.5. Without a key, a
//! comment line that is a single bare number is the energy. Otherwise the
//! frame has no energy. XYZ carries no atom names, charges or bonds.
//!
//! Speed: lines are cut from a 1 MiB block buffer; the common atom line is
//! read in place with byte-class masks (`io::window`): on x86-64 machines with
//! AVX2 and SSSE3 (checked once per reader), a line in the columns of the
//! previous one is checked by mask tests alone and its numbers read in SIMD
//! registers (`WideDecimal`), to the same bits; the rest is parsed from
//! bytes by [`crate::io::number::parse_f64`], and the frame's vectors are
//! cleared and refilled, so reading allocates nothing per frame once the first
//! frame has sized the buffers (the title `String` and the `names` entries keep
//! their capacity; `names` holds empty strings, which own no memory).

use std::io::{BufRead, Write};
use std::path::PathBuf;

use super::lines::{show, trim, Lines};
use super::number::{
    masked_decimal, number_prefix_len, parse_f64, parse_f64_field, plain_decimal_at,
    plain_decimal_before_newline, FixedDecimal, WideDecimal,
};
use super::window::Classes;
use super::{element_from_bytes, finish_names, Element, Frame, FrameReader, ReadOptions};
use crate::error::{Error, Result};
use crate::geometry::Vec3;
use crate::isa::{Baseline, Isa, Wide};

/// Streaming reader of multi-frame XYZ files.
pub struct XyzReader {
    lines: Lines,
    path: PathBuf,
    key: Option<Vec<u8>>,
    frames: usize,
    layouts: Layouts,
    /// Set when this CPU runs [`fast_run_wide`].
    wide: Option<Wide>,
}

/// With layouts off, they are tried again on one frame in this many.
const LAYOUT_PROBE_FRAMES: u32 = 256;

impl XyzReader {
    /// A reader over `input`, naming `path` in errors.
    pub fn new(input: Box<dyn BufRead>, path: PathBuf, opts: ReadOptions) -> Self {
        XyzReader {
            lines: Lines::new(input, path.clone()),
            path,
            key: opts.energy_key.map(|k| k.trim().as_bytes().to_vec()),
            frames: 0,
            layouts: Layouts {
                current: None,
                on: true,
                misses: 0,
                off_frames: 0,
            },
            wide: Wide::detect(),
        }
    }
}

#[inline]
fn is_blank(b: u8) -> bool {
    b == b' ' || b == b'\t' || b == b'\r' || b == b'\x0c' || b == b'\x0b'
}

/// The index of the first non-blank byte of `line` at or after `i` (or the
/// line length). Runs of spaces are skipped eight bytes at a time.
#[inline(always)]
fn skip_blanks(line: &[u8], mut i: usize) -> usize {
    const SPACES: u64 = 0x2020_2020_2020_2020;
    const LOW7: u64 = 0x7f7f_7f7f_7f7f_7f7f;
    while let Some(c) = line.get(i..i + 8) {
        let mut w = [0u8; 8];
        w.copy_from_slice(c);
        let x = u64::from_le_bytes(w) ^ SPACES;
        // High bit of each byte set where that byte is not a space (exact per
        // byte: no carry crosses bytes).
        let t = (((x & LOW7).wrapping_add(LOW7)) | x) & !LOW7;
        if t != 0 {
            i += (t.trailing_zeros() / 8) as usize;
            break;
        }
        i += 8;
    }
    while i < line.len() && is_blank(line[i]) {
        i += 1;
    }
    i
}

/// The next blank-separated field of `line` starting at `*i`; empty at the end.
#[inline]
fn next_field<'a>(line: &'a [u8], i: &mut usize) -> &'a [u8] {
    let n = line.len();
    let mut j = *i;
    while j < n && is_blank(line[j]) {
        j += 1;
    }
    let start = j;
    while j < n && !is_blank(line[j]) {
        j += 1;
    }
    *i = j;
    &line[start..j]
}

/// The fixed-column layouts of a reader: the one learned last, and whether
/// layouts are worth trying on this file.
#[derive(Debug)]
struct Layouts {
    /// The layout of the last atom line read by [`masked_atom_line`].
    current: Option<Layout>,
    /// Whether layouts are learned and tried: off for files whose lines
    /// change columns (free format), where the attempts would only cost.
    on: bool,
    /// Atom lines of this frame that the layout did not read.
    misses: u32,
    /// Frames read with layouts off.
    off_frames: u32,
}

impl Layouts {
    /// At the end of a frame of `atoms` atoms: layouts stay on while they
    /// read most atom lines, and are probed again now and then once off.
    fn review(&mut self, atoms: usize) {
        if self.on {
            if 2 * self.misses as usize > atoms {
                self.on = false;
                self.current = None;
                self.off_frames = 0;
            }
        } else {
            self.off_frames += 1;
            if self.off_frames >= LAYOUT_PROBE_FRAMES {
                self.on = true;
            }
        }
        self.misses = 0;
    }
}

impl FrameReader for XyzReader {
    fn read_frame(&mut self, frame: &mut Frame) -> Result<bool> {
        // Count line (blank lines before it are skipped).
        let (count_line, n) = loop {
            match self.lines.next_line()? {
                None => {
                    if self.frames == 0 {
                        return Err(Error::file(&self.path, "empty file: no conformers"));
                    }
                    return Ok(false);
                }
                Some((no, line)) => {
                    let t = trim(line);
                    if t.is_empty() {
                        continue;
                    }
                    let n = parse_count(t).ok_or_else(|| {
                        Error::parse(
                            &self.path,
                            no,
                            format!(
                                "count line is not a number of atoms: '{}' (expected the atom count of an XYZ frame)",
                                show(t)
                            ),
                        )
                    })?;
                    if n == 0 {
                        return Err(Error::parse(
                            &self.path,
                            no,
                            "frame has zero atoms (count line is 0)",
                        ));
                    }
                    break (no, n);
                }
            }
        };
        if frame.path.as_os_str() != self.path.as_os_str() {
            frame.path.clone_from(&self.path);
        }
        frame.line = count_line;
        frame.index_in_file = self.frames;
        frame.title.clear();
        frame.energy = None;
        frame.charges.clear();
        frame.bonds.clear();
        frame.has_bonds = false;

        // Comment line.
        let (cno, comment) = match self.lines.next_line()? {
            Some(x) => x,
            None => {
                return Err(Error::parse(
                    &self.path,
                    count_line,
                    format!("truncated frame: count line says {n} atoms, but the file ends before the comment line"),
                ))
            }
        };
        match std::str::from_utf8(comment) {
            Ok(s) => frame.title.push_str(s.trim()),
            Err(_) => frame
                .title
                .push_str(String::from_utf8_lossy(comment).trim()),
        }
        frame.energy = comment_energy(comment, self.key.as_deref())
            .map_err(|m| Error::parse(&self.path, cno, m))?;

        // Sized once; every slot is written below before the frame is whole.
        frame.elements.resize(n, Element::H);
        frame.coords.resize(n, Vec3::zeros());
        let mut k = 0;
        while k < n {
            // As many lines as the in-place paths take, counted at once.
            let (buf, layouts) = (self.lines.rest(), &mut self.layouts);
            let (elements, coords) = (&mut frame.elements[k..], &mut frame.coords[k..]);
            let run = match self.wide {
                // SAFETY: `wide` proves the CPU has the features that
                // `fast_run_wide` is compiled for.
                #[cfg(target_arch = "x86_64")]
                Some(wide) => unsafe { fast_run_wide(wide, buf, layouts, elements, coords) },
                _ => fast_run(Baseline, buf, layouts, elements, coords),
            };
            if run.lines > 0 {
                self.lines.consume_run(run.bytes, run.lines, run.last);
                k += run.lines;
                continue;
            }
            let (no, line) = match self.lines.next_line()? {
                Some(x) => x,
                None => {
                    return Err(Error::parse(
                        &self.path,
                        count_line,
                        format!(
                            "truncated frame: count line says {n} atoms, but the file ends after {k} atom line{}",
                            if k == 1 { "" } else { "s" }
                        ),
                    ))
                }
            };
            let mut i = 0;
            let sym = next_field(line, &mut i);
            if sym.is_empty() {
                return Err(Error::parse(
                    &self.path,
                    no,
                    format!("blank line where atom {} of {n} was expected (count line {count_line} says {n} atoms)", k + 1),
                ));
            }
            let el = match element_from_bytes(sym) {
                Some(e) => e,
                None => {
                    return Err(Error::parse(
                        &self.path,
                        no,
                        format!("unknown element '{}'", show(sym)),
                    ))
                }
            };
            let mut xyz = [0.0f64; 3];
            for (axis, slot) in xyz.iter_mut().enumerate() {
                i = skip_blanks(line, i);
                if let Some((v, end)) = plain_decimal_at(line, i) {
                    *slot = v;
                    i = end;
                    continue;
                }
                let rest = line.get(i..).unwrap_or_default();
                *slot =
                    coordinate(rest, axis, &mut i).map_err(|m| Error::parse(&self.path, no, m))?;
            }
            frame.elements[k] = el;
            frame.coords[k] = Vec3::new(xyz[0], xyz[1], xyz[2]);
            k += 1;
        }
        frame.charges.resize(n, 0);
        finish_names(&mut frame.names, 0, n);
        self.frames += 1;
        self.layouts.review(n);
        Ok(true)
    }
}

/// What [`fast_run`] read: whole lines, their bytes with the `\n`s, and the
/// length of the last.
struct Run {
    lines: usize,
    bytes: usize,
    last: usize,
}

/// Reads atom lines from the start of `buf` into `elements` and `coords`
/// (as many as they hold, at most) by the
/// in-place paths (the learned layout, then [`masked_atom_line`], then
/// [`plain_atom_line`]), stopping at the first line none of them takes,
/// which the caller reads by the general path.
#[inline(always)]
fn fast_run<I: Isa>(
    isa: I,
    buf: &[u8],
    layouts: &mut Layouts,
    elements: &mut [Element],
    coords: &mut [Vec3],
) -> Run {
    let max = elements.len().min(coords.len());
    let mut run = Run {
        lines: 0,
        bytes: 0,
        last: 0,
    };
    while run.lines < max {
        let rest = buf.get(run.bytes..).unwrap_or_default();
        let fixed = match (layouts.current.as_ref(), rest.first_chunk::<72>()) {
            (Some(l), Some(w)) => l.read(isa, w),
            _ => None,
        };
        let atom = match fixed {
            Some(a) => Some(a),
            None => masked_or_plain(rest, layouts),
        };
        let Some((el, xyz, len)) = atom else {
            break;
        };
        elements[run.lines] = el;
        coords[run.lines] = xyz;
        run.lines += 1;
        run.bytes += len;
        run.last = len;
    }
    run
}

/// The atom line at the start of `rest` by [`masked_atom_line`] (learning
/// its layout when layouts are on) or else [`plain_atom_line`]: the lines
/// the learned layout did not read.
#[inline(never)]
fn masked_or_plain(rest: &[u8], layouts: &mut Layouts) -> Option<(Element, Vec3, usize)> {
    if let Some(window) = rest.first_chunk::<64>() {
        let c = super::window::classify(window);
        layouts.misses += 1;
        if let Some(a) = masked_atom_line(rest, &c) {
            if layouts.on {
                layouts.current = Layout::learn(&c, a.2 as u32 - 1);
            }
            return Some(a);
        }
    }
    plain_atom_line(rest)
}

/// [`fast_run`] compiled with the features that [`Wide`] proves (SSSE3
/// for the numbers, LZCNT and BMI for the masks' bit operations): the same
/// lines and the same bits, in fewer instructions.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,ssse3,popcnt,lzcnt,bmi1,bmi2")]
fn fast_run_wide(
    isa: Wide,
    buf: &[u8],
    layouts: &mut Layouts,
    elements: &mut [Element],
    coords: &mut [Vec3],
) -> Run {
    fast_run(isa, buf, layouts, elements, coords)
}

/// The column layout of a fixed-format atom line, learned from one line and
/// checked whole on the next by mask tests alone: writers of trajectories
/// print every line with the same widths, so the element, the decimal points
/// and the ends of the fractions stay in the same columns, and only the
/// integer digits and signs before each point vary. The line is cut into the
/// element, the bytes that must be spaces (leading blanks, one gap after each
/// field, trailing blanks), each number's integer zone (from the second byte
/// after the previous field up to the point), the points and the fraction
/// digits.
#[derive(Debug, Clone, Copy)]
struct Layout {
    /// Position of the line's `\n`.
    len: u32,
    /// First and last byte of the element field, and its bits.
    elem: (u32, u32),
    elem_bits: u64,
    /// Positions of the three points.
    point: [u32; 3],
    /// Bits of the fraction digits, and of the bytes that must be spaces.
    fraction: u64,
    spaces: u64,
    /// The three integer zones, together, and each alone.
    zones: u64,
    zone: [u64; 3],
    /// The lowest column of each zone.
    zone_bottoms: u64,
    /// Zone columns too far from the point for [`WideDecimal`] (more than
    /// 15 digits in all): they must not hold a digit.
    over: u64,
    /// Each number's columns, ready for its value.
    number: [FixedDecimal; 3],
    /// The same for the wide path (x86-64 only).
    #[cfg_attr(not(target_arch = "x86_64"), allow(dead_code))]
    wide: [WideDecimal; 3],
}

impl Layout {
    /// The layout of an atom line that [`masked_atom_line`] read, from its
    /// byte classes `c` and the position `len` of its `\n`; `None` unless
    /// every number has a point and 1 to 8 fraction digits.
    fn learn(c: &Classes, len: u32) -> Option<Layout> {
        // Bits from..to (to excluded).
        let span = |from: u32, to: u32| (u64::MAX << from) & !(u64::MAX << to);
        let mut fields = Fields::new(span(0, len) & !c.space);
        let elem = fields.next()?;
        let (mut point, mut end) = ([0u32; 3], [0u32; 3]);
        let (mut fraction, mut spaces) = (0u64, span(0, elem.0) | 1u64 << (elem.1 + 1));
        for k in 0..3 {
            let (s, e) = fields.next()?;
            let dot = c.dot & span(s, e + 1);
            let p = dot.trailing_zeros();
            if dot == 0 || e == p || e - p > 8 {
                return None;
            }
            (point[k], end[k]) = (p, e);
            fraction |= span(p + 1, e + 1);
            // The gap after the first two numbers, the trailing blanks
            // after the last.
            spaces |= if k < 2 {
                1u64 << (e + 1)
            } else {
                span(e + 1, len)
            };
        }
        let bottoms = [elem.1 + 2, end[0] + 2, end[1] + 2];
        let (mut zone, mut over) = ([0u64; 3], 0u64);
        for k in 0..3 {
            zone[k] = span(bottoms[k], point[k]);
            let digits_max = WideDecimal::MAX_DIGITS - (end[k] - point[k]);
            let reach = point[k].saturating_sub(digits_max).max(bottoms[k]);
            over |= span(bottoms[k], reach);
        }
        let fixed = |k: usize| FixedDecimal::new(point[k], end[k]);
        let wide = |k: usize| WideDecimal::new(bottoms[k], point[k], end[k]);
        Some(Layout {
            len,
            elem,
            elem_bits: span(elem.0, elem.1 + 1),
            point,
            fraction,
            spaces,
            zones: zone[0] | zone[1] | zone[2],
            zone,
            zone_bottoms: bottoms.iter().fold(0, |m, &b| m | 1u64 << b),
            over,
            number: [fixed(0)?, fixed(1)?, fixed(2)?],
            wide: [wide(0)?, wide(1)?, wide(2)?],
        })
    }

    /// The atom line at the start of `window` (the next 72 bytes of input)
    /// if it has this layout: exactly the bytes [`masked_atom_line`] would
    /// accept there, with the same element and values. `None` for any other
    /// line.
    ///
    /// The masks come from AVX2 and the numbers from [`WideDecimal`]s for a
    /// [`Wide`] `isa`; else from SSE2 (or portable code) and
    /// [`FixedDecimal`]s. The checks are the same; the tests compare the two.
    #[inline(always)]
    fn read<I: Isa>(&self, isa: I, window: &[u8; 72]) -> Option<(super::Element, Vec3, usize)> {
        let w = window.first_chunk::<64>()?;
        let len = self.len;
        if w[(len & 63) as usize] != b'\n' {
            return None;
        }
        let (space, digit, minus) = super::window::space_digit_minus(isa, w);
        if digit & self.fraction != self.fraction
            || space & self.spaces != self.spaces
            || space & self.elem_bits != 0
            || digit & self.over != 0
            || self.point.iter().any(|&p| w[(p & 63) as usize] != b'.')
        {
            return None;
        }
        // The zones' non-digits must sit below their digits (each non-digit
        // above a zone's bottom has a non-digit under it) and be spaces but
        // for the top one, which may be the sign.
        let nondigit = self.zones & !digit;
        let top = nondigit & !(nondigit >> 1);
        if ((nondigit & !self.zone_bottoms) >> 1) & !nondigit != 0
            || nondigit & !space & !(top & minus) != 0
        {
            return None;
        }
        let el = element_from_bytes(w.get(self.elem.0 as usize..=self.elem.1 as usize)?)?;
        let mut v = [0.0f64; 3];
        for (k, slot) in v.iter_mut().enumerate() {
            let neg = minus & self.zone[k] != 0;
            #[cfg(target_arch = "x86_64")]
            if I::WIDE {
                // SAFETY: a value of an `Isa` type with WIDE is a `Wide`,
                // made only by `Wide::detect` on a CPU with SSSE3; the zone
                // and fraction were checked as `WideDecimal::value` needs.
                *slot = unsafe { self.wide[k].value(w, neg) };
                continue;
            }
            // The integer digits run from the zone's lowest digit up to the
            // point.
            let ints = digit & self.zone[k];
            let k_int = if ints == 0 {
                0
            } else {
                self.point[k] - ints.trailing_zeros()
            };
            *slot = self.number[k].value(window, k_int, neg)?;
        }
        Some((el, Vec3::new(v[0], v[1], v[2]), len as usize + 1))
    }
}

/// The common atom line found with the byte-class masks `c` of `buf[..64]`
/// ([`super::window::classify`]) when the line and its `\n` lie within
/// those 64 bytes: exactly four space-separated fields (blanks other than the
/// space are left to [`plain_atom_line`]), an element symbol or number of one
/// or two bytes and three [`masked_decimal`]s. Returns the element, the
/// coordinates in Å and the line's length with its `\n`; `None` for anything
/// else.
#[inline(always)]
fn masked_atom_line(buf: &[u8], c: &Classes) -> Option<(super::Element, Vec3, usize)> {
    if c.newline == 0 {
        return None;
    }
    let len = c.newline.trailing_zeros();
    let mut fields = Fields::new(((1u64 << len) - 1) & !c.space);
    let (s0, e0) = fields.next()?;
    if e0 - s0 > 1 {
        return None;
    }
    let el = element_from_bytes(buf.get(s0 as usize..e0 as usize + 1)?)?;
    let (s, e) = fields.next()?;
    let x = masked_decimal(buf, c, s, e)?;
    let (s, e) = fields.next()?;
    let y = masked_decimal(buf, c, s, e)?;
    let (s, e) = fields.next()?;
    let z = masked_decimal(buf, c, s, e)?;
    if fields.next().is_some() {
        return None;
    }
    Some((el, Vec3::new(x, y, z), len as usize + 1))
}

/// The fields (runs of set bits) of a mask of non-blank bytes, in order, as
/// the positions of their first and last bytes.
struct Fields {
    starts: u64,
    ends: u64,
}

impl Fields {
    #[inline(always)]
    fn new(solid: u64) -> Fields {
        Fields {
            starts: solid & !(solid << 1),
            ends: solid & !(solid >> 1),
        }
    }
}

impl Iterator for Fields {
    type Item = (u32, u32);

    #[inline(always)]
    fn next(&mut self) -> Option<(u32, u32)> {
        if self.starts == 0 {
            return None;
        }
        let f = (self.starts.trailing_zeros(), self.ends.trailing_zeros());
        self.starts &= self.starts - 1;
        self.ends &= self.ends - 1;
        Some(f)
    }
}

/// The common atom line, read in place from the buffered input `buf` in one
/// pass: blanks, an element symbol of one or two letters, three plain
/// decimals ([`plain_decimal_at`]) separated by blanks, blanks, and the `\n`.
/// Returns the element, the coordinates in Å and the length of the line with
/// its `\n`; `None` for anything else (extra columns, exponents, atomic
/// numbers, a line not wholly buffered, bad input), which the general path
/// then reads and, where needed, reports.
#[inline(always)]
fn plain_atom_line(buf: &[u8]) -> Option<(super::Element, Vec3, usize)> {
    let mut i = skip_blanks(buf, 0);
    let start = i;
    while buf.get(i).is_some_and(u8::is_ascii_alphabetic) {
        i += 1;
    }
    if i == start || i - start > 2 || !buf.get(i).copied().is_some_and(is_blank) {
        return None;
    }
    let el = element_from_bytes(&buf[start..i])?;
    let mut xyz = [0.0f64; 3];
    for slot in &mut xyz {
        i = skip_blanks(buf, i);
        let (v, end) = plain_decimal_before_newline(buf, i)?;
        *slot = v;
        i = end;
    }
    i = skip_blanks(buf, i);
    (buf.get(i) == Some(&b'\n')).then(|| (el, Vec3::new(xyz[0], xyz[1], xyz[2]), i + 1))
}

/// Parses the coordinate field at the start of `rest` (`axis` 0, 1, 2 for x,
/// y, z) in Å, advancing `*i` past it.
#[inline]
fn coordinate(rest: &[u8], axis: usize, i: &mut usize) -> std::result::Result<f64, String> {
    match parse_f64_field(rest) {
        Some((v, len)) if v.is_finite() => {
            *i += len;
            Ok(v)
        }
        other => Err(coordinate_error(rest, axis, other.is_some())),
    }
}

#[cold]
fn coordinate_error(rest: &[u8], axis: usize, parsed: bool) -> String {
    const AXES: [&str; 3] = ["x", "y", "z"];
    let name = AXES.get(axis).copied().unwrap_or("?");
    let mut j = 0;
    let tok = next_field(rest, &mut j);
    if tok.is_empty() {
        format!("missing {name} coordinate (expected 'Element x y z')")
    } else if parsed {
        format!("non-finite coordinate {name} = '{}'", show(tok))
    } else {
        format!("bad {name} coordinate '{}'", show(tok))
    }
}

fn parse_count(t: &[u8]) -> Option<usize> {
    if t.is_empty() || t.len() > 12 || !t.iter().all(u8::is_ascii_digit) {
        return None;
    }
    t.iter().try_fold(0usize, |acc, &d| {
        acc.checked_mul(10)?.checked_add((d - b'0') as usize)
    })
}

/// The energy in a comment line: see the module documentation. `Err` when the
/// key is present but no finite number follows it.
pub(crate) fn comment_energy(
    comment: &[u8],
    key: Option<&[u8]>,
) -> std::result::Result<Option<f64>, String> {
    match key {
        None => {
            let t = trim(comment);
            if t.is_empty() || !(t[0].is_ascii_digit() || matches!(t[0], b'-' | b'+' | b'.')) {
                return Ok(None);
            }
            Ok(parse_f64(t).filter(|v| v.is_finite()))
        }
        Some(key) => keyed_number(comment, key),
    }
}

/// Finds `key=value` or `key: value` in `text` (key case-insensitive, at a word
/// boundary) and parses the number at the start of the value.
pub(crate) fn keyed_number(text: &[u8], key: &[u8]) -> std::result::Result<Option<f64>, String> {
    if key.is_empty() || text.len() < key.len() {
        return Ok(None);
    }
    let word = |b: u8| b.is_ascii_alphanumeric() || b == b'_';
    for s in 0..=text.len() - key.len() {
        if !text[s..s + key.len()].eq_ignore_ascii_case(key) {
            continue;
        }
        if s > 0 && word(text[s - 1]) && key.first().is_some_and(|&k| word(k)) {
            continue;
        }
        let mut j = s + key.len();
        while j < text.len() && is_blank(text[j]) {
            j += 1;
        }
        if j >= text.len() || !(text[j] == b'=' || text[j] == b':') {
            continue;
        }
        j += 1;
        while j < text.len() && is_blank(text[j]) {
            j += 1;
        }
        let rest = &text[j..];
        let len = number_prefix_len(rest);
        let key_s = String::from_utf8_lossy(key);
        return match parse_f64(&rest[..len]) {
            Some(v) if v.is_finite() && len > 0 => Ok(Some(v)),
            _ => Err(format!(
                "energy key '{key_s}' is not followed by a number: '{}'",
                show(rest)
            )),
        };
    }
    Ok(None)
}

/// Writes one frame as XYZ: count line, comment line (the title with line
/// breaks turned into blanks; the bare energy if the title is empty and an
/// energy is set), and `Symbol x y z` lines. Coordinates use `f64`'s `Display`,
/// which prints the shortest decimal that reads back to the same value, so
/// [`XyzReader`] returns bit-identical coordinates.
pub fn write_frame(w: &mut impl Write, frame: &Frame) -> std::io::Result<()> {
    writeln!(w, "{}", frame.coords.len())?;
    if frame.title.is_empty() {
        match frame.energy {
            Some(e) if e.is_finite() => writeln!(w, "{e}")?,
            _ => writeln!(w)?,
        }
    } else {
        let title: String = frame
            .title
            .chars()
            .map(|c| if c == '\n' || c == '\r' { ' ' } else { c })
            .collect();
        writeln!(w, "{title}")?;
    }
    for (el, c) in frame.elements.iter().zip(&frame.coords) {
        writeln!(w, "{} {} {} {}", el.symbol(), c.x, c.y, c.z)?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::elements::Element;
    use crate::io::{read_str, reader_for, Format};
    use std::io::Cursor;

    fn opts(key: Option<&str>) -> ReadOptions {
        ReadOptions {
            energy_key: key.map(str::to_string),
        }
    }

    #[test]
    fn two_frames_with_crlf_tabs_extra_columns_and_trailing_blanks() {
        let text = "3\r\n-12.5\r\nO\t0.0\t0.0\t0.117\r\nh 0.0 0.757 -0.467 0.1 extra\r\n  1  0.0 -0.757 -0.467  \r\n\
                    3\nsecond frame\nO 0 0 0.1\nH 0 0.7 -0.4\nH 0 -0.7 -0.4\n\n\n  \n";
        let f = read_str(text, Format::Xyz, &opts(None)).unwrap();
        assert_eq!(f.len(), 2);
        assert_eq!(f[0].elements, vec![Element::O, Element::H, Element::H]);
        assert_eq!(f[0].coords[1], Vec3::new(0.0, 0.757, -0.467));
        assert_eq!(f[0].energy, Some(-12.5));
        assert_eq!(f[0].line, 1);
        assert_eq!(f[1].line, 6);
        assert_eq!(f[1].index_in_file, 1);
        assert_eq!(f[1].title, "second frame");
        assert_eq!(f[1].energy, None);
        assert_eq!(f[1].names, vec![String::new(); 3]);
        assert_eq!(f[1].charges, vec![0; 3]);
        assert!(!f[1].has_bonds);
    }

    #[test]
    fn energy_keys() {
        let c = |s: &str, k: &str| comment_energy(s.as_bytes(), Some(k.as_bytes()));
        assert_eq!(
            c(" energy: -12.345 gnorm: 0.001", "energy"),
            Ok(Some(-12.345))
        );
        assert_eq!(c("Properties=x E=-3.5e1kcal/mol", "e"), Ok(Some(-35.0)));
        assert_eq!(c("SCF_E=1 E = 2.5", "E"), Ok(Some(2.5)));
        assert_eq!(c("no energy here", "E"), Ok(None));
        assert!(c("E=abc", "E").is_err());
        assert_eq!(comment_energy(b"  -42.1  ", None), Ok(Some(-42.1)));
        assert_eq!(comment_energy(b"-42.1 kcal", None), Ok(None));
        assert_eq!(comment_energy(b"title", None), Ok(None));
        let f = read_str(
            "1\nEnergy= -7.25\nC 0 0 0\n",
            Format::Xyz,
            &opts(Some("energy")),
        )
        .unwrap();
        assert_eq!(f[0].energy, Some(-7.25));
    }

    #[test]
    fn errors_name_the_line() {
        let e = |t: &str| {
            read_str(t, Format::Xyz, &opts(None))
                .unwrap_err()
                .to_string()
        };
        assert_eq!(e(""), "<string>: empty file: no conformers");
        assert_eq!(e("\n  \n"), "<string>: empty file: no conformers");
        assert!(
            e("2\nc\nC 0 0 0\n").starts_with("<string>:1: truncated frame"),
            "{}",
            e("2\nc\nC 0 0 0\n")
        );
        assert!(e("x\n").starts_with("<string>:1: count line is not a number"));
        assert!(e("0\n\n").contains(":1: frame has zero atoms"));
        assert!(e("1\n\nC 0 0 nan\n").contains(":3: non-finite coordinate"));
        assert!(e("1\n\nC 0 0 inf\n").contains(":3: non-finite coordinate"));
        assert!(e("1\n\nXq 0 0 0\n").contains(":3: unknown element 'Xq'"));
        assert!(e("1\n\nC 0 0\n").contains(":3: missing z coordinate"));
        assert!(e("1\n\nC 0 1,0 0\n").contains(":3: bad y coordinate '1,0'"));
        assert!(e("1\n\n999 0 0 0\n").contains("unknown element '999'"));
    }

    #[test]
    fn reads_standard_input_style_source() {
        let input: Box<dyn BufRead> = Box::new(Cursor::new(b"1\n\n8 1 2 3\n".to_vec()));
        let mut r = reader_for(Format::Xyz, input, PathBuf::from("-"), &opts(None));
        let mut f = Frame::default();
        assert!(r.read_frame(&mut f).unwrap());
        assert_eq!(f.elements, vec![Element::O]);
        assert_eq!(f.path, PathBuf::from("-"));
        assert!(!r.read_frame(&mut f).unwrap());
    }

    /// Every frame of `text`, read by the reader as made, or with the wide
    /// path turned off.
    fn frames_of(text: &str, wide: bool) -> Vec<(Vec<Element>, Vec<[u64; 3]>)> {
        let input: Box<dyn BufRead> = Box::new(Cursor::new(text.as_bytes().to_vec()));
        let mut r = XyzReader::new(input, PathBuf::from("t.xyz"), opts(None));
        if !wide {
            r.wide = None;
        }
        let mut out = Vec::new();
        let mut f = Frame::default();
        while r.read_frame(&mut f).unwrap() {
            let c = f.coords.iter().map(|c| [c.x, c.y, c.z].map(f64::to_bits));
            out.push((f.elements.clone(), c.collect()));
        }
        out
    }

    #[test]
    fn wide_and_baseline_readers_give_the_same_frames() {
        // Fixed columns with integer parts of every width and sign, lines in
        // other columns now and then, a free-format stretch, CRLF ends.
        let mut text = String::new();
        let mut x: u64 = 0x9e37_79b9_7f4a_7c15;
        let mut next = || {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            x
        };
        for frame in 0..400 {
            text.push_str("5\nframe\n");
            for atom in 0..5 {
                let mut v = [0.0f64; 3];
                for c in &mut v {
                    let scale = [0.5, 5.0, 50.0, 5e4, 5e8, 5e9][(next() % 6) as usize];
                    *c = ((next() % 2_000_001) as f64 / 1e6 - 1.0) * scale;
                }
                let el = ["C", "H", "O", "Cl", "8"][atom];
                let line = match frame % 40 {
                    7 => format!("{el} {:.4} {:.4} {:.4}", v[0], v[1], v[2]),
                    20..=25 => format!("{el}\t{} {} {}", v[0], v[1], v[2]),
                    30 => format!("{el}{:19.6}{:19.6}{:19.6}\r", v[0], v[1], v[2]),
                    _ => format!("{el:<2}{:19.6}{:19.6}{:19.6}", v[0], v[1], v[2]),
                };
                text.push_str(&line);
                text.push('\n');
            }
        }
        let wide = frames_of(&text, true);
        assert_eq!(wide.len(), 400);
        assert_eq!(wide, frames_of(&text, false));
    }

    #[test]
    fn write_then_read_is_exact() {
        let mut f = Frame {
            title: "a\nb".into(),
            elements: vec![Element::C, Element::CL],
            coords: vec![
                Vec3::new(0.1 + 0.2, -1e-300, 1.0 / 3.0),
                Vec3::new(1e21, -0.0, 123456.789),
            ],
            ..Frame::default()
        };
        let mut out = Vec::new();
        write_frame(&mut out, &f).unwrap();
        f.title.clear();
        f.energy = Some(-1.5);
        write_frame(&mut out, &f).unwrap();
        let back = read_str(std::str::from_utf8(&out).unwrap(), Format::Xyz, &opts(None)).unwrap();
        assert_eq!(back[0].title, "a b");
        assert_eq!(back[1].energy, Some(-1.5));
        for b in &back {
            assert_eq!(b.elements, f.elements);
            for (p, q) in b.coords.iter().zip(&f.coords) {
                for k in 0..3 {
                    assert_eq!(p[k].to_bits(), q[k].to_bits());
                }
            }
        }
    }

    /// What a line means by the general definition (whitespace-separated
    /// fields, std's float parser): the element and coordinates of a line of
    /// exactly four fields, or `None`.
    fn by_definition(line: &str) -> Option<(Element, [u64; 3])> {
        let t: Vec<&str> = line.split_ascii_whitespace().collect();
        if t.len() != 4 {
            return None;
        }
        let el = element_from_bytes(t[0].as_bytes())?;
        let mut v = [0u64; 3];
        for (slot, tok) in v.iter_mut().zip(&t[1..]) {
            *slot = tok.parse::<f64>().ok()?.to_bits();
        }
        Some((el, v))
    }

    type Bits = Option<(Element, [u64; 3], usize)>;

    fn bits(a: Option<(Element, Vec3, usize)>) -> Bits {
        a.map(|(el, c, len)| (el, [c.x.to_bits(), c.y.to_bits(), c.z.to_bits()], len))
    }

    /// The line followed by more input, as in the reader's buffer.
    fn buffered(line: &str) -> Vec<u8> {
        format!("{line}\nC 1.0 2.0 3.0\n{}", " ".repeat(64)).into_bytes()
    }

    fn classes(buf: &[u8]) -> Classes {
        crate::io::window::classify(buf[..64].try_into().unwrap())
    }

    fn masked(line: &str) -> Bits {
        let buf = buffered(line);
        bits(masked_atom_line(&buf, &classes(&buf)))
    }

    /// The layout learned from `first`, applied to `second` by the
    /// instructions of `isa`.
    fn by_layout_in<I: Isa>(isa: I, first: &str, second: &str) -> Bits {
        let a = buffered(first);
        let (_, _, len) = masked_atom_line(&a, &classes(&a))?;
        let layout = Layout::learn(&classes(&a), len as u32 - 1)?;
        let b = buffered(second);
        bits(layout.read(isa, b[..72].try_into().unwrap()))
    }

    /// [`by_layout_in`] by both paths; the baseline's answer. They must
    /// agree where both read the line; the wide path must read every line
    /// the baseline reads but those past its 15 digits, and may read more
    /// (integer parts past the baseline's 8 digits), as the general
    /// definition does.
    fn by_layout(first: &str, second: &str) -> Bits {
        let base = by_layout_in(Baseline, first, second);
        if let Some(wide) = Wide::detect() {
            let w = by_layout_in(wide, first, second);
            match (w, base) {
                (Some(_), Some(_)) => assert_eq!(w, base, "paths differ on {second:?}"),
                (None, Some(_)) => assert!(too_long_for_wide(second), "{second:?}"),
                (Some((el, v, _)), None) => {
                    assert_eq!(Some((el, v)), by_definition(second), "{second:?}")
                }
                (None, None) => {}
            }
        }
        base
    }

    /// True when a field of the line has more than the 15 digits the wide
    /// path reads (the baseline reads up to 16).
    fn too_long_for_wide(line: &str) -> bool {
        line.split_ascii_whitespace()
            .any(|t| t.bytes().filter(u8::is_ascii_digit).count() > 15)
    }

    #[test]
    fn layout_reads_lines_of_the_same_columns_only() {
        let first = "C     2.665123     0.572493    -0.778180";
        let row = |el: &str, x: &str, y: &str, z: &str| format!("{el}{x:>13}{y:>13}{z:>13}");
        for second in [
            row("H", "-2.019797", "11.444917", "-1.003094"),
            row("O", "-12.000000", "0.000000", "0.000001"),
            row("6", ".500000", "-.500000", "-0.000000"),
            row("C", "12.665123", "0.572493", "-0.778180"),
            row("C", "12345.000000", "-1234.000000", "0.000000"),
        ] {
            assert_eq!(by_layout(first, &second), masked(&second), "{second}");
            assert!(by_layout(first, &second).is_some(), "{second}");
        }
        for second in [
            "C     2.66512     0.572493    -0.778180",
            "C     2.665123     0.572493    -0.77818 ",
            "C     2.665123  5  0.572493    -0.778180",
            "C     2.665123    10.572493-1  -0.778180",
            "C     2.665123   --0.572493    -0.778180",
            "C     2.665123     0.572493    -0.778180 ",
            "C     2.665123\t    0.572493    -0.778180",
            "Cl    2.665123     0.572493    -0.778180",
            "  C   2.665123     0.572493    -0.778180",
        ] {
            assert_eq!(by_layout(first, second), None, "{second}");
        }
    }

    #[test]
    fn masked_path_takes_the_common_layouts() {
        for line in [
            "C     2.665123     0.572493    -0.778180",
            "H    -0.000000    12.345678  -123.456789",
            "Cl 1 -2 3.",
            "  o   .5   -.25   7",
            "6   12345678.12345678   -0.1 0.2",
        ] {
            let (el, v, len) = masked(line).unwrap_or_else(|| panic!("not taken: {line}"));
            assert_eq!(Some((el, v)), by_definition(line), "{line}");
            assert_eq!(len, line.len() + 1);
        }
        // Left to the general path: tabs, CR, extra columns, long or signed
        // fields, exponents, lines that do not end within 64 bytes.
        for line in [
            "C\t1.0 2.0 3.0",
            "C 1.0 2.0 3.0\r",
            "C 1.0 2.0 3.0 4.0",
            "C 123456789.0 2.0 3.0",
            "C 1.123456789 2.0 3.0",
            "C +1.0 2.0 3.0",
            "C 1e3 2.0 3.0",
            "C - 2.0 3.0",
            "C . 2.0 3.0",
            "C 1..0 2.0 3.0",
            "C 1.0- 2.0 3.0",
            "Cxx 1.0 2.0 3.0",
            "C 1.0 2.0",
            "C                              1.0             2.0                3.0",
        ] {
            assert_eq!(masked(line), None, "{line}");
        }
    }

    #[test]
    fn wide_layout_reads_long_integer_parts_and_checks_the_zones() {
        let first = "C          2.665123          0.572493         -0.778180";
        let row = |x: &str, y: &str, z: &str| format!("H{x:>18}{y:>18}{z:>18}");
        // 9 integer digits and 6 fraction digits: 15, the wide path's most.
        let long = row("123456789.000001", "-987654321.999999", "0.000000");
        assert_eq!(by_layout(first, &long), masked(&long));
        if let Some(wide) = Wide::detect() {
            assert!(by_layout_in(wide, first, &long).is_some());
            // 10 integer digits: left to the other paths.
            let longer = row("1234567890.000001", "0.0", "0.000000");
            assert_eq!(by_layout_in(wide, first, &longer), None);
            // A sign anywhere but just before the digits, two signs, a sign
            // alone, a blank among the digits: none is read.
            for bad in [
                row("- 1.000000", "2.000000", "3.000000"),
                row("--1.000000", "2.000000", "3.000000"),
                row("1-1.000000", "2.000000", "3.000000"),
                row("1 1.000000", "2.000000", "3.000000"),
                row("+1.000000", "2.000000", "3.000000"),
            ] {
                assert_eq!(by_layout_in(wide, first, &bad), None, "{bad}");
            }
            // A sign alone before the point is a number ("-.5").
            let bare = row("-.000001", "2.000000", "3.000000");
            assert_eq!(by_layout_in(wide, first, &bare), masked(&bare));
        }
    }

    proptest::proptest! {
        /// Lines in the columns of a learned layout, some with one byte
        /// changed: the wide path and the baseline read the same lines to
        /// the same bits (but for fields past the wide path's 15 digits), and
        /// what they read is what the general definition gives.
        #[test]
        fn wide_and_baseline_layouts_agree(
            fields in proptest::collection::vec(
                (proptest::bool::ANY, "[0-9]{0,9}", "[0-9]{6}"),
                3,
            ),
            change in proptest::option::of((
                0usize..48,
                proptest::sample::select(b" -+.09eE\tCx".to_vec()),
            )),
        ) {
            let first = "C       2.665123       0.572493      -0.778180";
            let mut line = String::from("C");
            for (neg, int, frac) in &fields {
                let f = format!("{}{int}.{frac}", if *neg { "-" } else { "" });
                line.push_str(&format!("{f:>15}"));
            }
            let mut bytes = line.into_bytes();
            if let Some((at, b)) = change {
                if at < bytes.len() {
                    bytes[at] = b;
                }
            }
            let line = String::from_utf8(bytes).unwrap();
            // `by_layout` asserts the two paths agree.
            if let Some((el, v, len)) = by_layout(first, &line) {
                proptest::prop_assert_eq!(Some((el, v)), by_definition(&line), "{}", line);
                proptest::prop_assert_eq!(len, line.len() + 1);
            }
            if let Some(wide) = Wide::detect() {
                if let Some((el, v, _)) = by_layout_in(wide, first, &line) {
                    proptest::prop_assert_eq!(Some((el, v)), by_definition(&line), "{}", line);
                }
            }
        }

        /// Wherever the masked path takes a line, it gives exactly what the
        /// general definition gives (bit for bit), and the line's length.
        #[test]
        fn masked_path_agrees_with_the_definition(
            lead in "[ ]{0,4}",
            sym in proptest::sample::select(vec!["C", "h", "Cl", "BR", "6", "17", "Xx", "C1", "-"]),
            fields in proptest::collection::vec(
                ("[-+]?", "[0-9]{0,10}", proptest::option::of("[0-9]{0,10}"), "( |  |\t|     )"),
                2..5,
            ),
            tail in "( |\r)?",
        ) {
            let mut line = format!("{lead}{sym}");
            for (sign, int, frac, sep) in &fields {
                line.push_str(sep);
                line.push_str(sign);
                line.push_str(int);
                if let Some(f) = frac {
                    line.push('.');
                    line.push_str(f);
                }
            }
            line.push_str(&tail);
            // The layout of a fixed-format line reads this line as the
            // definition does, or not at all.
            let fixed = "C     2.665123     0.572493    -0.778180";
            if let Some((el, v, len)) = by_layout(fixed, &line) {
                proptest::prop_assert_eq!(Some((el, v)), by_definition(&line), "{}", line);
                proptest::prop_assert_eq!(len, line.len() + 1);
            }
            if let Some((el, v, len)) = masked(&line) {
                proptest::prop_assert_eq!(Some((el, v)), by_definition(&line), "{}", line);
                proptest::prop_assert_eq!(len, line.len() + 1);
            }
        }
    }
}
