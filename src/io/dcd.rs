//! Reader for DCD binary trajectories (the CHARMM/NAMD/X-PLOR layout, also
//! written by MDTraj and VMD), streamed frame by frame into a [`Frame`].
//!
//! Layout (Fortran unformatted records, each framed by a record-length marker
//! before and after the payload):
//! 1. 84-byte header: `CORD`, then 20 32-bit integers ICNTRL — `[0]` NSET
//!    (frames), `[1]` ISTART, `[2]` NSAVC, `[8]` NAMNF (fixed atoms), `[9]` DELTA
//!    (time step; float32 in CHARMM files), `[10]` unit-cell flag, `[11]`
//!    four-dimensional flag, `[19]` CHARMM version (non-zero ⇒ CHARMM layout;
//!    zero ⇒ X-PLOR layout, where DELTA is a float64 in `[9..11]` and there is
//!    no unit cell);
//! 2. title record: a 32-bit count then that many 80-character lines;
//! 3. atom-count record: NATOM;
//! 4. per frame: the unit-cell record (6 float64) if flagged, then the X, Y and
//!    Z records (NATOM float32 each, in Å), and a W record if four-dimensional
//!    (skipped).
//!
//! The byte order is detected from the first record marker (84), which also
//! tells 4-byte from 8-byte markers (both are read). Files with fixed atoms
//! (NAMNF > 0), which store only the free atoms after the first frame, are
//! refused with a clear message.
//!
//! DCD holds no elements or names; they come from a topology [`Frame`] read
//! from a PDB or SDF file, which must have the same atoms in the same order.

use std::fs::File;
use std::io::{BufReader, Read};
use std::path::{Path, PathBuf};

use super::{Frame, FrameReader};
use crate::error::{Error, Result};
use crate::geometry::Vec3;

/// Largest atom count accepted from a header (guards against allocating for a
/// corrupt count).
const MAX_ATOMS: usize = 1 << 27;

/// Names of the per-frame coordinate records, for messages.
const AXIS_RECORDS: [&str; 4] = [
    "X coordinates",
    "Y coordinates",
    "Z coordinates",
    "W values",
];

/// Byte order of a DCD file.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ByteOrder {
    /// Little-endian (x86 writers).
    Little,
    /// Big-endian (older workstation writers).
    Big,
}

/// Unit cell of one frame: edge lengths in Å, angles in degrees.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct UnitCell {
    /// Edge length a (Å).
    pub a: f64,
    /// Edge length b (Å).
    pub b: f64,
    /// Edge length c (Å).
    pub c: f64,
    /// Angle between b and c (degrees).
    pub alpha: f64,
    /// Angle between a and c (degrees).
    pub beta: f64,
    /// Angle between a and b (degrees).
    pub gamma: f64,
}

impl UnitCell {
    /// From the six stored values in CHARMM order (A, γ, B, β, α, C). Writers
    /// store the angles either in degrees or as cosines; when all three lie in
    /// [−1, 1] they are taken as cosines (the convention of VMD's DCD reader;
    /// common practice).
    fn from_charmm(raw: [f64; 6]) -> UnitCell {
        let [a, g, b, be, al, c] = raw;
        let cosines = [g, be, al].iter().all(|x| (-1.0..=1.0).contains(x));
        let ang = |x: f64| {
            if cosines {
                90.0 - x.asin().to_degrees()
            } else {
                x
            }
        };
        UnitCell {
            a,
            b,
            c,
            alpha: ang(al),
            beta: ang(be),
            gamma: ang(g),
        }
    }
}

/// Streaming DCD reader; see the module docs.
pub struct DcdReader<R: Read> {
    input: R,
    path: PathBuf,
    order: ByteOrder,
    wide_markers: bool,
    natoms: usize,
    nset: usize,
    istart: i32,
    nsavc: i32,
    timestep: f64,
    charmm: bool,
    has_cell: bool,
    four_dims: bool,
    title: String,
    template: Frame,
    buf: Vec<u8>,
    cell: Option<UnitCell>,
    frames_read: usize,
    header_bytes: u64,
    data_start: u64,
    file_len: Option<u64>,
}

impl DcdReader<BufReader<File>> {
    /// Opens a DCD file, with `template` giving the atoms (elements, names,
    /// bonds) of the topology file. Knows the file size, so that
    /// [`frames_from_size`](DcdReader::frames_from_size) is available.
    pub fn open(path: &Path, template: &Frame) -> Result<Self> {
        let f = File::open(path).map_err(|e| Error::io(path, e))?;
        let len = f.metadata().map_err(|e| Error::io(path, e))?.len();
        let mut r = DcdReader::new(
            BufReader::with_capacity(1 << 20, f),
            path.to_path_buf(),
            template,
        )?;
        r.file_len = Some(len);
        Ok(r)
    }
}

impl<R: Read> DcdReader<R> {
    /// Reads the DCD header from `input` (named `path` in errors) and checks
    /// its atom count against `template`, whose elements, names, charges and
    /// bonds are copied into every frame.
    pub fn new(input: R, path: PathBuf, template: &Frame) -> Result<Self> {
        let mut r = DcdReader {
            input,
            path,
            order: ByteOrder::Little,
            wide_markers: false,
            natoms: 0,
            nset: 0,
            istart: 0,
            nsavc: 0,
            timestep: 0.0,
            charmm: false,
            has_cell: false,
            four_dims: false,
            title: String::new(),
            template: Frame::default(),
            buf: Vec::new(),
            cell: None,
            frames_read: 0,
            header_bytes: 0,
            data_start: 0,
            file_len: None,
        };
        r.read_header()?;
        if r.natoms != template.len() {
            return Err(r.err(format!(
                "the trajectory has {} atoms but the topology file {} has {}",
                r.natoms,
                template.path.display(),
                template.len()
            )));
        }
        r.template.elements.clone_from(&template.elements);
        r.template.names.clone_from(&template.names);
        r.template.names.resize(r.natoms, String::new());
        r.template.charges.clone_from(&template.charges);
        r.template.charges.resize(r.natoms, 0);
        r.template.bonds.clone_from(&template.bonds);
        r.template.has_bonds = template.has_bonds;
        r.buf = vec![0; 4 * r.natoms];
        Ok(r)
    }

    fn err(&self, msg: impl Into<String>) -> Error {
        Error::file(&self.path, msg)
    }

    /// Reads up to `buf.len()` bytes, returning how many were read (fewer only
    /// at the end of the input).
    fn fill(input: &mut R, path: &Path, buf: &mut [u8]) -> Result<usize> {
        let mut got = 0;
        while got < buf.len() {
            match input.read(&mut buf[got..]) {
                Ok(0) => break,
                Ok(n) => got += n,
                Err(e) if e.kind() == std::io::ErrorKind::Interrupted => {}
                Err(e) => return Err(Error::io(path, e)),
            }
        }
        Ok(got)
    }

    fn u32_at(&self, b: &[u8]) -> u32 {
        let a = [b[0], b[1], b[2], b[3]];
        match self.order {
            ByteOrder::Little => u32::from_le_bytes(a),
            ByteOrder::Big => u32::from_be_bytes(a),
        }
    }

    fn f64_at(&self, b: &[u8]) -> f64 {
        let a = [b[0], b[1], b[2], b[3], b[4], b[5], b[6], b[7]];
        match self.order {
            ByteOrder::Little => f64::from_le_bytes(a),
            ByteOrder::Big => f64::from_be_bytes(a),
        }
    }

    fn marker_len(&self) -> usize {
        if self.wide_markers {
            8
        } else {
            4
        }
    }

    /// Reads one record marker. `Ok(None)` at a clean end of input.
    fn read_marker(&mut self, what: &str, record_len: usize) -> Result<Option<u64>> {
        let mut m = [0u8; 8];
        let len = self.marker_len();
        let got = Self::fill(&mut self.input, &self.path, &mut m[..len])?;
        if got == 0 {
            return Ok(None);
        }
        if got < len {
            return Err(self.truncated(what, record_len));
        }
        let v = if self.wide_markers {
            match self.order {
                ByteOrder::Little => u64::from_le_bytes(m),
                ByteOrder::Big => u64::from_be_bytes(m),
            }
        } else {
            u64::from(self.u32_at(&m))
        };
        self.header_bytes += len as u64;
        Ok(Some(v))
    }

    fn truncated(&self, what: &str, expected: usize) -> Error {
        if self.natoms == 0 || what.starts_with("header") {
            self.err(format!(
                "the file ends inside the DCD header ({what}); it is truncated or not a DCD file"
            ))
        } else {
            self.err(format!(
                "frame {} is truncated (the file ends inside its {what}, a record of {expected} bytes)",
                self.frames_read + 1
            ))
        }
    }

    fn bad_marker(&self, what: &str, expected: u64, found: u64) -> Error {
        let place = if self.natoms == 0 || what.starts_with("header") {
            "in the header".to_string()
        } else {
            format!("in frame {}", self.frames_read + 1)
        };
        self.err(format!(
            "bad record marker {place} around the {what} (expected {expected}, found {found}); \
             the file is corrupt or not a DCD file"
        ))
    }

    /// Reads a whole record of exactly `len` payload bytes into `self.buf`.
    /// Returns false at a clean end of input before the record starts.
    fn read_record(&mut self, what: &str, len: usize) -> Result<bool> {
        let Some(m) = self.read_marker(what, len)? else {
            return Ok(false);
        };
        if m != len as u64 {
            return Err(self.bad_marker(what, len as u64, m));
        }
        self.read_payload_and_end(what, len)?;
        Ok(true)
    }

    fn read_payload_and_end(&mut self, what: &str, len: usize) -> Result<()> {
        if self.buf.len() < len {
            self.buf.resize(len, 0);
        }
        let got = Self::fill(&mut self.input, &self.path, &mut self.buf[..len])?;
        if got < len {
            return Err(self.truncated(what, len));
        }
        self.header_bytes += len as u64;
        match self.read_marker(what, len)? {
            None => Err(self.truncated(what, len)),
            Some(m) if m != len as u64 => Err(self.bad_marker(what, len as u64, m)),
            Some(_) => Ok(()),
        }
    }

    fn read_header(&mut self) -> Result<()> {
        let mut head = [0u8; 12];
        let got = Self::fill(&mut self.input, &self.path, &mut head)?;
        if got < 12 {
            return Err(self.err("too short to be a DCD file"));
        }
        let le32 = u32::from_le_bytes([head[0], head[1], head[2], head[3]]);
        let be32 = u32::from_be_bytes([head[0], head[1], head[2], head[3]]);
        let mut h8 = [0u8; 8];
        h8.copy_from_slice(&head[..8]);
        let (order, wide) = if le32 == 84 && &head[4..8] == b"CORD" {
            (ByteOrder::Little, false)
        } else if be32 == 84 && &head[4..8] == b"CORD" {
            (ByteOrder::Big, false)
        } else if u64::from_le_bytes(h8) == 84 && &head[8..12] == b"CORD" {
            (ByteOrder::Little, true)
        } else if u64::from_be_bytes(h8) == 84 && &head[8..12] == b"CORD" {
            (ByteOrder::Big, true)
        } else {
            return Err(self.err(
                "not a DCD file (it does not start with an 84-byte record holding \"CORD\")",
            ));
        };
        self.order = order;
        self.wide_markers = wide;
        // Rest of the 84-byte header record: the 4 bytes of CORD already read
        // when markers are 4 bytes wide; for 8-byte markers 12 bytes were read.
        let ml = self.marker_len();
        let already = 12 - ml; // payload bytes consumed so far
        self.buf.resize(84, 0);
        self.buf[..already].copy_from_slice(&head[ml..12]);
        let got = Self::fill(&mut self.input, &self.path, &mut self.buf[already..84])?;
        if got < 84 - already {
            return Err(self.truncated("header", 84));
        }
        self.header_bytes = (ml + 84) as u64;
        match self.read_marker("header", 84)? {
            Some(84) => {}
            None => return Err(self.truncated("header", 84)),
            Some(m) => return Err(self.bad_marker("header", 84, m)),
        }
        let hdr = self.buf[..84].to_vec();
        let order = self.order;
        let icntrl = |i: usize| {
            let w = [
                hdr[4 + 4 * i],
                hdr[5 + 4 * i],
                hdr[6 + 4 * i],
                hdr[7 + 4 * i],
            ];
            match order {
                ByteOrder::Little => u32::from_le_bytes(w),
                ByteOrder::Big => u32::from_be_bytes(w),
            }
        };
        self.nset = icntrl(0) as usize;
        self.istart = icntrl(1) as i32;
        self.nsavc = icntrl(2) as i32;
        let namnf = icntrl(8);
        self.charmm = icntrl(19) != 0;
        if self.charmm {
            let bits = icntrl(9);
            self.timestep = f64::from(f32::from_bits(bits));
            self.has_cell = icntrl(10) != 0;
            self.four_dims = icntrl(11) != 0;
        } else {
            self.timestep = self.f64_at(&hdr[40..48]);
        }
        if !self.timestep.is_finite() {
            self.timestep = 0.0;
        }

        // Title record.
        let tlen = match self.read_marker("header (title)", 84)? {
            Some(m) => m as usize,
            None => return Err(self.truncated("header (title)", 4)),
        };
        if !(4..=(1 << 20)).contains(&tlen) {
            return Err(self.bad_marker("header (title)", 84, tlen as u64));
        }
        self.read_payload_and_end("header (title)", tlen)?;
        let ntitle = self.u32_at(&self.buf[..4]) as usize;
        let mut lines = Vec::new();
        for k in 0..ntitle {
            let start = 4 + 80 * k;
            let end = (start + 80).min(tlen);
            if start >= end {
                break;
            }
            let raw = &self.buf[start..end];
            let raw = raw.split(|&c| c == 0).next().unwrap_or(&[]);
            let line = String::from_utf8_lossy(raw).trim().to_string();
            if !line.is_empty() {
                lines.push(line);
            }
        }
        self.title = lines.join(" | ");

        // Atom count.
        if !self.read_record("header (atom count)", 4)? {
            return Err(self.truncated("header (atom count)", 4));
        }
        self.natoms = self.u32_at(&self.buf[..4]) as usize;
        if self.natoms == 0 || self.natoms > MAX_ATOMS {
            return Err(self.err(format!(
                "the DCD header gives {} atoms; the file is corrupt or not a DCD file",
                self.natoms
            )));
        }
        if namnf > 0 {
            return Err(self.err(format!(
                "the trajectory has {namnf} fixed atoms; DCD files with fixed atoms are not \
                 supported (write the trajectory without fixed atoms)"
            )));
        }
        self.data_start = self.header_bytes;
        Ok(())
    }

    /// Number of frames stated in the header (NSET). Some writers leave it 0
    /// or stale when a run is cut short; prefer
    /// [`frames_from_size`](Self::frames_from_size) when it is known.
    pub fn frames_in_header(&self) -> usize {
        self.nset
    }

    /// Number of complete frames implied by the file size, when the reader was
    /// made by [`DcdReader::open`] (otherwise `None`).
    pub fn frames_from_size(&self) -> Option<usize> {
        let len = self.file_len?;
        let data = len.checked_sub(self.data_start)?;
        Some((data / self.frame_bytes()) as usize)
    }

    /// Best known total: the size-based count if known, else the header's.
    pub fn frame_count_hint(&self) -> usize {
        self.frames_from_size().unwrap_or(self.nset)
    }

    /// Bytes of one frame on disk.
    pub fn frame_bytes(&self) -> u64 {
        let ml = self.marker_len() as u64;
        let coord = 2 * ml + 4 * self.natoms as u64;
        let dims = if self.four_dims { 4 } else { 3 };
        let cell = if self.has_cell { 2 * ml + 48 } else { 0 };
        cell + dims * coord
    }

    /// Number of atoms in each frame.
    pub fn atoms(&self) -> usize {
        self.natoms
    }

    /// Title lines of the file, joined with ` | `.
    pub fn title(&self) -> &str {
        &self.title
    }

    /// Byte order of the file.
    pub fn byte_order(&self) -> ByteOrder {
        self.order
    }

    /// Time step between saved frames as stored (DELTA × NSAVC), in the
    /// writer's time unit (CHARMM/NAMD: AKMA units of 48.888 fs); 0 if absent.
    pub fn timestep_raw(&self) -> f64 {
        self.timestep * f64::from(self.nsavc.max(1))
    }

    /// Step number of the first frame (ISTART) and the steps between saves
    /// (NSAVC), as stored.
    pub fn steps(&self) -> (i32, i32) {
        (self.istart, self.nsavc)
    }

    /// True if each frame carries a unit cell.
    pub fn has_unit_cell(&self) -> bool {
        self.has_cell
    }

    /// Unit cell of the last frame read, if the file has them.
    pub fn unit_cell(&self) -> Option<UnitCell> {
        self.cell
    }

    /// Frames read so far.
    pub fn frames_read(&self) -> usize {
        self.frames_read
    }

    fn read_axis(&mut self, axis: usize, frame: &mut Frame) -> Result<bool> {
        const NAMES: [&str; 4] = [
            "X coordinates",
            "Y coordinates",
            "Z coordinates",
            "W values",
        ];
        let what = NAMES[axis];
        let len = 4 * self.natoms;
        if !self.read_record(what, len)? {
            return Ok(false);
        }
        if axis == 3 {
            return Ok(true);
        }
        for (i, c) in self.buf[..len].chunks_exact(4).enumerate() {
            let v = f32::from_bits(self.u32_at(c));
            if !v.is_finite() {
                return Err(self.err(format!(
                    "frame {}, atom {}: {} is not a finite number",
                    self.frames_read + 1,
                    i + 1,
                    ["x", "y", "z"][axis]
                )));
            }
            frame.coords[i][axis] = f64::from(v);
        }
        Ok(true)
    }
}

impl<R: Read> FrameReader for DcdReader<R> {
    fn read_frame(&mut self, frame: &mut Frame) -> Result<bool> {
        frame.coords.clear();
        frame.coords.resize(self.natoms, Vec3::zeros());
        let mut started = false;
        if self.has_cell {
            if !self.read_record("unit cell", 48)? {
                return Ok(false);
            }
            started = true;
            let mut raw = [0.0; 6];
            for (k, r) in raw.iter_mut().enumerate() {
                *r = self.f64_at(&self.buf[8 * k..8 * k + 8]);
            }
            self.cell = Some(UnitCell::from_charmm(raw));
        }
        let dims = if self.four_dims { 4 } else { 3 };
        for (axis, what) in AXIS_RECORDS.iter().enumerate().take(dims) {
            if !self.read_axis(axis, frame)? {
                if !started {
                    return Ok(false);
                }
                return Err(self.truncated(what, 4 * self.natoms));
            }
            started = true;
        }
        frame.path.clone_from(&self.path);
        frame.line = 0;
        frame.index_in_file = self.frames_read;
        frame.title.clear();
        frame.title.push_str(&self.title);
        frame.energy = None;
        frame.elements.clone_from(&self.template.elements);
        frame.names.clone_from(&self.template.names);
        frame.charges.clone_from(&self.template.charges);
        frame.bonds.clone_from(&self.template.bonds);
        frame.has_bonds = self.template.has_bonds;
        self.frames_read += 1;
        Ok(true)
    }
}
