//! Time averages of every vicinal coupling along a molecular-dynamics
//! trajectory, with their statistical errors, and the conformational states
//! visited (ring shapes, rotamers of exocyclic bonds) with their occupancies,
//! transitions, lifetimes and per-state couplings.
//!
//! Frames are streamed once, from one or more files read in sequence as one
//! trajectory ([`TrajectorySource`]): XYZ, PDB or SDF files, or DCD files
//! with a topology file of the same atoms. Memory does not depend on the
//! trajectory length: each coupling keeps a [`BlockAverager`] (O(log n) plus a
//! fixed store), each state tracker O(states), the running-average record at
//! most [`TrajectoryOptions::checkpoints`] points, and the optional per-frame
//! time series is written to its file while streaming.
//!
//! # What is computed
//!
//! * **Couplings** — every H–X–Y–H pair with a model (see [`crate::karplus`]),
//!   evaluated in every used frame and averaged with equal weights. A pair
//!   with a fast-rotating CH3 or NH3+ group on one side is averaged over the
//!   group's three protons within each frame, as for conformer ensembles.
//! * **Errors** — per coupling, the blocked standard error of the mean with
//!   Jonsson's plateau rule, the integrated autocorrelation time and the
//!   first-half/second-half check ([`crate::timeseries`]).
//! * **Ring states** — every five- and six-membered ring is classified per
//!   frame from its Cremer–Pople coordinates ([`crate::pucker`]). A
//!   six-membered ring is in one of: chair with θ < 90°, chair with θ > 90°
//!   (θ read in the ring order listed), boat, twist-boat, or other
//!   (envelope, half-chair, flat); a five-membered ring is an envelope, a twist
//!   or flat. A **ring inversion** is a change between the two chairs, however
//!   many non-chair frames lie between them; it is counted once the new chair
//!   has lasted `ring_min_dwell` consecutive frames.
//! * **Rotamers** — every exocyclic single bond X–Y across which a coupling
//!   is evaluated, plus any bond the user names, is classified per frame as
//!   gauche+, anti or gauche− ([`Rotamer`]) from the dihedral A–X–Y–B, where A
//!   is the lowest-numbered non-hydrogen neighbour of X other than Y (a
//!   hydrogen when X has none) and B likewise on Y. Bonds to a CH3 or NH3+
//!   rotor are skipped unless named (their three rotamers are equivalent).
//! * Per state: occupancy, runs, mean lifetime, and the mean of each coupling
//!   across the bond (rotamers) or within the ring (rings) over the frames in
//!   that state ([`StateTracker`]).

use std::fs::File;
use std::io::{BufReader, BufWriter, Write};
use std::path::{Path, PathBuf};

use serde::Serialize;

use crate::atomref;
use crate::ensemble::source::EnsembleSource;
use crate::error::{Error, Result};
use crate::fragments::{self, FragmentKind};
use crate::geometry::{dihedral_xy, Vec3};
use crate::io::dcd::DcdReader;
use crate::io::{self, BondOrder, Format, Frame, FrameReader, ReadOptions};
use crate::karplus::{self, ModelChoice, NotEvaluated, PairBatch, ParamLibrary, PreparedPair};
use crate::pucker::{Pucker, Shape};
use crate::states::{Rotamer, StateTracker};
use crate::timeseries::{BlockAverager, BlockingAnalysis, HalvesCheck, Plateau};
use crate::topology::perceive::{self, FrameChecker};
use crate::topology::{Hybridization, Topology};

/// The progress callback is called every this many frames read (and once at
/// the end).
pub const PROGRESS_EVERY: usize = 1024;

/// Default bound on the number of running-average checkpoints.
pub const DEFAULT_CHECKPOINTS: usize = 500;

/// How to analyse a trajectory.
#[derive(Debug, Clone)]
pub struct TrajectoryOptions {
    /// 0-based index (in the whole trajectory, all files in sequence) of the
    /// first frame used.
    pub first: usize,
    /// 0-based index of the last frame used (inclusive); `None` for the end.
    pub last: Option<usize>,
    /// Use every `stride`-th frame from `first` (0 is taken as 1).
    pub stride: usize,
    /// Minimum dwell in used frames for a rotamer change to count as a
    /// committed transition (see [`StateTracker`]); 1 counts every change.
    pub rotor_min_dwell: u64,
    /// Minimum dwell in used frames for ring-state changes and ring
    /// inversions.
    pub ring_min_dwell: u64,
    /// Further bonds whose rotamers to follow, as pairs of 0-based atom
    /// indices (the CLI converts from 1-based).
    pub bonds: Vec<(usize, usize)>,
    /// Time between consecutive frames of the files, in ps (before the
    /// stride); enables times in ps in the report.
    pub timestep_ps: Option<f64>,
    /// Parameter sets available.
    pub library: ParamLibrary,
    /// Which set for which fragment.
    pub choice: ModelChoice,
    /// Write a per-frame CSV time series (frame, time, every coupling, every
    /// state label) to this file while streaming.
    pub timeseries_csv: Option<PathBuf>,
    /// Most running-average checkpoints kept (for the plot); 0 for none.
    pub checkpoints: usize,
    /// Check the bonding of every used frame against the first (broken or
    /// new bonds are errors). With `false` only the atoms are checked (count,
    /// elements, finite coordinates), for trajectories with close contacts
    /// that the distance rule would read as bonds.
    pub check_bonding: bool,
}

impl Default for TrajectoryOptions {
    fn default() -> Self {
        TrajectoryOptions {
            first: 0,
            last: None,
            stride: 1,
            rotor_min_dwell: 1,
            ring_min_dwell: 1,
            bonds: Vec::new(),
            timestep_ps: None,
            library: ParamLibrary::builtin(),
            choice: ModelChoice::default(),
            timeseries_csv: None,
            checkpoints: DEFAULT_CHECKPOINTS,
            check_bonding: true,
        }
    }
}

/// XYZ, PDB or SDF files read in sequence as one trajectory; the topology is
/// perceived from the first frame and every used frame is checked against it.
pub struct FileStream {
    files: Vec<PathBuf>,
    format: Option<Format>,
    read: ReadOptions,
    next_file: usize,
    reader: Option<Box<dyn FrameReader>>,
}

impl FileStream {
    fn next(&mut self, frame: &mut Frame) -> Result<bool> {
        loop {
            if self.reader.is_none() {
                let Some(path) = self.files.get(self.next_file) else {
                    return Ok(false);
                };
                self.next_file += 1;
                self.reader = Some(io::open(path, self.format, &self.read)?);
            }
            if let Some(r) = self.reader.as_mut() {
                if r.read_frame(frame)? {
                    return Ok(true);
                }
            }
            self.reader = None;
        }
    }
}

/// DCD files read in sequence as one trajectory, with the atoms and the
/// topology taken from the first frame of a PDB, SDF or XYZ file of the same
/// atoms in the same order.
pub struct DcdStream {
    template: Frame,
    topology: Topology,
    files: Vec<PathBuf>,
    next_file: usize,
    reader: Option<DcdReader<BufReader<File>>>,
    frames_hint: usize,
}

impl DcdStream {
    fn next(&mut self, frame: &mut Frame) -> Result<bool> {
        loop {
            if self.reader.is_none() {
                let Some(path) = self.files.get(self.next_file) else {
                    return Ok(false);
                };
                self.next_file += 1;
                self.reader = Some(DcdReader::open(path, &self.template)?);
            }
            if let Some(r) = self.reader.as_mut() {
                if r.read_frame(frame)? {
                    return Ok(true);
                }
            }
            self.reader = None;
        }
    }
}

/// Where the frames of a trajectory come from.
pub enum TrajectorySource {
    /// The lead's ensemble stream (checks every frame against the topology
    /// itself).
    Ensemble(Box<EnsembleSource>),
    /// XYZ, PDB or SDF files (the fast path: frames are checked with a
    /// reusable [`FrameChecker`]).
    Files(FileStream),
    /// DCD files with a topology file.
    Dcd(Box<DcdStream>),
}

impl From<EnsembleSource> for TrajectorySource {
    fn from(s: EnsembleSource) -> Self {
        TrajectorySource::Ensemble(Box::new(s))
    }
}

impl TrajectorySource {
    /// XYZ, PDB or SDF `files` read in order as one trajectory. `format`
    /// applies to every file (`None`: by extension).
    pub fn files(
        files: Vec<PathBuf>,
        format: Option<Format>,
        read: ReadOptions,
    ) -> Result<TrajectorySource> {
        if files.is_empty() {
            return Err(Error::Usage("no trajectory files given".into()));
        }
        Ok(TrajectorySource::Files(FileStream {
            files,
            format,
            read,
            next_file: 0,
            reader: None,
        }))
    }

    /// DCD `files` read in order as one trajectory, with the atoms, names and
    /// bonds of the first frame of `topology_file` (PDB, SDF or XYZ; format by
    /// extension unless given). Every DCD header is read here, so that a file
    /// with the wrong number of atoms is refused before any frame is
    /// analysed and the total frame count is known.
    pub fn dcd(
        topology_file: &Path,
        format: Option<Format>,
        files: Vec<PathBuf>,
    ) -> Result<TrajectorySource> {
        if files.is_empty() {
            return Err(Error::Usage("no DCD files given".into()));
        }
        let mut reader = io::open(topology_file, format, &ReadOptions::default())?;
        let mut template = Frame::default();
        if !reader.read_frame(&mut template)? {
            return Err(Error::file(
                topology_file,
                "holds no structure to take the atoms from",
            ));
        }
        let topology = perceive::build(&template)?;
        let mut frames_hint = 0;
        for f in &files {
            frames_hint += DcdReader::open(f, &template)?.frame_count_hint();
        }
        Ok(TrajectorySource::Dcd(Box::new(DcdStream {
            template,
            topology,
            files,
            next_file: 0,
            reader: None,
            frames_hint,
        })))
    }

    /// Total number of frames, where the files tell it (DCD: header or file
    /// size); `None` for text formats.
    pub fn frames_hint(&self) -> Option<usize> {
        match self {
            TrajectorySource::Dcd(d) => Some(d.frames_hint),
            _ => None,
        }
    }

    /// The input files, in reading order.
    pub fn paths(&self) -> &[PathBuf] {
        match self {
            TrajectorySource::Ensemble(e) => e.files(),
            TrajectorySource::Files(f) => &f.files,
            TrajectorySource::Dcd(d) => &d.files,
        }
    }

    /// Total size of the input files in bytes (standard input and unreadable
    /// files count 0).
    pub fn input_bytes(&self) -> u64 {
        self.paths()
            .iter()
            .filter_map(|p| std::fs::metadata(p).ok())
            .map(|m| m.len())
            .sum()
    }

    fn next(&mut self, frame: &mut Frame) -> Result<bool> {
        match self {
            TrajectorySource::Ensemble(e) => e.read_frame(frame),
            TrajectorySource::Files(f) => f.next(frame),
            TrajectorySource::Dcd(d) => d.next(frame),
        }
    }
}

// ---------------------------------------------------------------------------
// Report types

/// A coupling's time average and its statistics.
#[derive(Debug, Clone, Serialize)]
pub struct TrajCoupling {
    /// Label such as `H8/H9/H10(rotor)-H11`.
    pub label: String,
    /// Proton(s) on the first side, 0-based (three for a rotor group).
    pub side1: Vec<usize>,
    /// Proton(s) on the second side, 0-based.
    pub side2: Vec<usize>,
    /// Heavy atom carrying side 1 (0-based).
    pub x: usize,
    /// Heavy atom carrying side 2 (0-based).
    pub y: usize,
    /// Fragment kind.
    pub kind: FragmentKind,
    /// Parameter set id.
    pub model: String,
    /// Published RMS of the set in Hz, where known.
    pub model_rms_hz: Option<f64>,
    /// True when averaged over the protons of a rotor group in each frame.
    pub rotor_averaged: bool,
    /// Smallest per-frame value, Hz.
    pub min_hz: f64,
    /// Largest per-frame value, Hz.
    pub max_hz: f64,
    /// Blocking analysis of the per-frame values (mean, errors in Hz; τ in
    /// used frames).
    pub blocking: BlockingAnalysis,
    /// First half against second half; `None` below 32 frames.
    pub halves: Option<HalvesCheck>,
}

/// One state of a ring or a bond.
#[derive(Debug, Clone, Serialize)]
pub struct StateSummary {
    /// Name of the state (`chair (theta<90)`, `g+`, ...).
    pub name: String,
    /// Used frames in the state.
    pub frames: u64,
    /// Fraction of used frames in the state.
    pub occupancy: f64,
    /// Visits (maximal runs).
    pub runs: u64,
    /// Mean run length in used frames (runs cut by the ends included).
    pub mean_lifetime_frames: f64,
    /// Mean length of runs with a transition at both ends, used frames.
    pub mean_complete_lifetime_frames: Option<f64>,
    /// Longest run in used frames.
    pub longest_run_frames: u64,
    /// Mean coupling in Hz within the state, one per entry of the owner's
    /// `couplings` (`None` when no finite value was seen).
    pub mean_j_hz: Vec<Option<f64>>,
}

/// States of one ring or one bond along the trajectory.
#[derive(Debug, Clone, Serialize)]
pub struct StateSeries {
    /// `ring` or `rotamer`.
    pub what: &'static str,
    /// Label: ring atoms (`C1-C2-...`) or the dihedral atoms (`C1-C2-C3-C4`).
    pub label: String,
    /// Ring atoms in ring order, or the four dihedral atoms A, X, Y, B
    /// (0-based).
    pub atoms: Vec<usize>,
    /// True for a bond the user named.
    pub user_named: bool,
    /// Indices into [`TrajectoryReport::couplings`] of the couplings
    /// averaged per state.
    pub couplings: Vec<usize>,
    /// States in order of first appearance.
    pub states: Vec<StateSummary>,
    /// Every change of state between consecutive used frames.
    pub transitions: u64,
    /// Changes that lasted the minimum dwell.
    pub committed_transitions: u64,
    /// Minimum dwell used, in used frames.
    pub min_dwell_frames: u64,
    /// Chair-to-chair inversions (six-membered rings only).
    pub ring_inversions: Option<u64>,
}

/// The running averages at one point of the trajectory.
#[derive(Debug, Clone, Serialize)]
pub struct Checkpoint {
    /// Used frames so far.
    pub frames: u64,
    /// Running mean of each coupling, Hz.
    pub mean_hz: Vec<f64>,
    /// Blocked standard error of each running mean, Hz (0 while too short).
    pub sem_hz: Vec<f64>,
}

/// Everything [`analyse`] reports.
#[derive(Debug, Clone, Serialize)]
pub struct TrajectoryReport {
    /// Input files in reading order.
    pub files: Vec<PathBuf>,
    /// The molecule (for atom labels).
    #[serde(skip)]
    pub topology: Topology,
    /// Frames read from the files.
    pub frames_read: usize,
    /// Frames used (after first/last/stride).
    pub frames_used: usize,
    /// 0-based index of the first frame used.
    pub first: usize,
    /// 0-based index of the last frame used.
    pub last_used: Option<usize>,
    /// Stride.
    pub stride: usize,
    /// Time between consecutive used frames in ps (time step × stride), when
    /// a time step was given.
    pub frame_interval_ps: Option<f64>,
    /// Couplings in pair order.
    pub couplings: Vec<TrajCoupling>,
    /// Pairs without a model (written by the report's own JSON code).
    #[serde(skip)]
    pub not_evaluated: Vec<NotEvaluated>,
    /// Ring shapes, then rotamers.
    pub states: Vec<StateSeries>,
    /// Running averages at up to [`TrajectoryOptions::checkpoints`] points.
    pub checkpoints: Vec<Checkpoint>,
    /// Warnings for the reader.
    pub warnings: Vec<String>,
}

// ---------------------------------------------------------------------------
// Coupling groups

struct Group {
    members: Vec<usize>,
    side1: Vec<usize>,
    side2: Vec<usize>,
    x: usize,
    y: usize,
}

fn group_pairs(frags: &fragments::Fragments, pairs: &[PreparedPair]) -> Vec<Group> {
    use std::collections::BTreeMap;
    #[derive(PartialEq, Eq, PartialOrd, Ord, Clone, Copy)]
    enum Side {
        Proton(usize),
        Rotor(usize),
    }
    let rotor_of: BTreeMap<(usize, usize), (Option<usize>, Option<usize>)> = frags
        .pairs
        .iter()
        .map(|v| ((v.h1, v.h2), (v.rotor1, v.rotor2)))
        .collect();
    let mut groups: BTreeMap<(usize, usize, Side, Side), Vec<usize>> = BTreeMap::new();
    for (k, p) in pairs.iter().enumerate() {
        let (r1, r2) = rotor_of.get(&(p.h1, p.h2)).copied().unwrap_or((None, None));
        let s1 = r1.map_or(Side::Proton(p.h1), Side::Rotor);
        let s2 = r2.map_or(Side::Proton(p.h2), Side::Rotor);
        groups.entry((p.x, p.y, s1, s2)).or_default().push(k);
    }
    let mut out: Vec<Group> = groups
        .into_values()
        .filter_map(|members| {
            let first = pairs.get(*members.first()?)?;
            let mut side1: Vec<usize> = members.iter().map(|&k| pairs[k].h1).collect();
            let mut side2: Vec<usize> = members.iter().map(|&k| pairs[k].h2).collect();
            side1.sort_unstable();
            side1.dedup();
            side2.sort_unstable();
            side2.dedup();
            Some(Group {
                x: first.x,
                y: first.y,
                members,
                side1,
                side2,
            })
        })
        .collect();
    out.sort_by_key(|g| (g.side1[0].min(g.side2[0]), g.side1[0].max(g.side2[0])));
    out
}

/// Label of a coupling from its two sides (`H7-H9`, `H8/H9/H10(rotor)-H11`).
pub fn coupling_label(top: &Topology, side1: &[usize], side2: &[usize]) -> String {
    let side = |s: &[usize]| {
        let l: Vec<String> = s.iter().map(|&i| atomref::label(top, i)).collect();
        if s.len() > 1 {
            format!("{}(rotor)", l.join("/"))
        } else {
            l.join("/")
        }
    };
    format!("{}-{}", side(side1), side(side2))
}

// ---------------------------------------------------------------------------
// States

const RING_CHAIR_LOW: u32 = 0;
const RING_CHAIR_HIGH: u32 = 1;
const RING_BOAT: u32 = 2;
const RING_TWIST_BOAT: u32 = 3;
const RING_OTHER: u32 = 4;
const RING_ENVELOPE5: u32 = 5;
const RING_TWIST5: u32 = 6;
const RING_FLAT5: u32 = 7;
const STATE_UNDEFINED: u32 = 99;

fn ring_state_name(label: u32) -> &'static str {
    match label {
        RING_CHAIR_LOW => "chair (theta<90)",
        RING_CHAIR_HIGH => "chair (theta>90)",
        RING_BOAT => "boat",
        RING_TWIST_BOAT => "twist-boat",
        RING_OTHER => "other (envelope/half-chair/flat)",
        RING_ENVELOPE5 => "envelope",
        RING_TWIST5 => "twist",
        RING_FLAT5 => "flat",
        _ => "undefined",
    }
}

fn rotamer_state_name(label: u32) -> &'static str {
    Rotamer::from_index(label).map_or("undefined", |r| r.label())
}

/// Counts chair-to-chair changes of a six-membered ring, ignoring the
/// non-chair frames between them; a chair counts once it has lasted
/// `min_dwell` consecutive frames.
#[derive(Debug, Clone)]
struct ChairFlips {
    min_dwell: u64,
    run: Option<(u32, u64)>,
    committed: Option<u32>,
    count: u64,
}

impl ChairFlips {
    fn push(&mut self, label: u32) {
        let len = match self.run {
            Some((l, n)) if l == label => n + 1,
            _ => 1,
        };
        self.run = Some((label, len));
        if (label == RING_CHAIR_LOW || label == RING_CHAIR_HIGH) && len == self.min_dwell {
            match self.committed {
                Some(c) if c != label => {
                    self.count += 1;
                    self.committed = Some(label);
                }
                None => self.committed = Some(label),
                _ => {}
            }
        }
    }
}

struct RingWatch {
    atoms: Vec<usize>,
    pts: Vec<Vec3>,
    pucker: Option<Pucker>,
    flips: Option<ChairFlips>,
}

impl RingWatch {
    fn classify(&mut self, coords: &[Vec3]) -> u32 {
        self.pts.clear();
        for &i in &self.atoms {
            match coords.get(i) {
                Some(p) => self.pts.push(*p),
                None => return STATE_UNDEFINED,
            }
        }
        let ok = match self.pucker.as_mut() {
            Some(p) => p.update(&self.pts).is_ok(),
            None => match Pucker::new(&self.pts) {
                Ok(p) => {
                    self.pucker = Some(p);
                    true
                }
                Err(_) => false,
            },
        };
        let Some(p) = self.pucker.as_ref().filter(|_| ok) else {
            return STATE_UNDEFINED;
        };
        let label = match p.shape() {
            Shape::Chair => match p.theta() {
                Some(t) if t < std::f64::consts::FRAC_PI_2 => RING_CHAIR_LOW,
                Some(_) => RING_CHAIR_HIGH,
                None => STATE_UNDEFINED,
            },
            Shape::Boat => RING_BOAT,
            Shape::TwistBoat => RING_TWIST_BOAT,
            Shape::Envelope5 => RING_ENVELOPE5,
            Shape::Twist5 => RING_TWIST5,
            Shape::Planar if self.atoms.len() == 5 => RING_FLAT5,
            _ => RING_OTHER,
        };
        if let Some(f) = self.flips.as_mut() {
            f.push(label);
        }
        label
    }
}

struct BondWatch {
    atoms: [usize; 4],
    user_named: bool,
}

impl BondWatch {
    fn classify(&self, coords: &[Vec3]) -> u32 {
        let [a, x, y, b] = self.atoms;
        match (coords.get(a), coords.get(x), coords.get(y), coords.get(b)) {
            (Some(pa), Some(px), Some(py), Some(pb)) => dihedral_xy(pa, px, py, pb)
                .and_then(|(y, x, r)| Rotamer::classify_xy(y, x, r))
                .map_or(STATE_UNDEFINED, Rotamer::index),
            _ => STATE_UNDEFINED,
        }
    }
}

/// The reference neighbour of `x` for a rotamer dihedral about x–y: its
/// lowest-numbered non-hydrogen neighbour other than `y`, else its
/// lowest-numbered hydrogen.
fn reference_atom(top: &Topology, x: usize, y: usize) -> Option<usize> {
    let nb = top.neighbors.get(x)?;
    nb.iter()
        .copied()
        .find(|&n| n != y && !top.atoms[n].element.is_hydrogen())
        .or_else(|| nb.iter().copied().find(|&n| n != y))
}

fn bond_in_ring(top: &Topology, x: usize, y: usize) -> bool {
    top.rings.iter().any(|r| {
        let n = r.len();
        (0..n).any(|k| {
            let (a, b) = (r[k], r[(k + 1) % n]);
            (a == x && b == y) || (a == y && b == x)
        })
    })
}

fn is_single(top: &Topology, x: usize, y: usize) -> bool {
    match top.bond_order(x, y) {
        Some(BondOrder::Single) => true,
        Some(BondOrder::Unknown) => {
            let h = |i: usize| top.hybridization.get(i).copied();
            !matches!(
                (h(x), h(y)),
                (
                    Some(Hybridization::Sp2 | Hybridization::Sp),
                    Some(Hybridization::Sp2 | Hybridization::Sp)
                )
            )
        }
        _ => false,
    }
}

// ---------------------------------------------------------------------------
// Running-average checkpoints

struct Checkpoints {
    cap: usize,
    every: u64,
    points: Vec<Checkpoint>,
}

impl Checkpoints {
    fn new(cap: usize) -> Self {
        Checkpoints {
            cap: if cap == 0 { 0 } else { cap.max(4) },
            every: 1,
            points: Vec::new(),
        }
    }

    fn due(&self, frames: u64) -> bool {
        self.cap > 0 && frames % self.every == 0
    }

    fn record(&mut self, frames: u64, averagers: &[BlockAverager]) {
        let mut mean_hz = Vec::with_capacity(averagers.len());
        let mut sem_hz = Vec::with_capacity(averagers.len());
        for a in averagers {
            let b = a.analyze();
            mean_hz.push(b.mean);
            sem_hz.push(b.sem);
        }
        self.points.push(Checkpoint {
            frames,
            mean_hz,
            sem_hz,
        });
        if self.points.len() >= self.cap {
            // Keep the points at multiples of 2·every.
            let every2 = 2 * self.every;
            self.points.retain(|p| p.frames % every2 == 0);
            self.every = every2;
        }
    }
}

// ---------------------------------------------------------------------------
// The loop

fn frame_error(frame: &Frame, index: usize, e: Error) -> Error {
    match e {
        Error::Model(m) | Error::Structure(m) => Error::Conformer {
            path: frame.path.clone(),
            line: frame.line,
            conformer: index + 1,
            msg: m,
        },
        e => e,
    }
}

struct Analysis<'t> {
    top: &'t Topology,
    /// The pairs, made ready for evaluation frame after frame.
    batch: PairBatch,
    groups: Vec<Group>,
    j_pair: Vec<f64>,
    j_group: Vec<f64>,
    averagers: Vec<BlockAverager>,
    rings: Vec<RingWatch>,
    bonds: Vec<BondWatch>,
    trackers: Vec<(StateTracker, Vec<usize>)>,
    labels: Vec<u32>,
    scratch: Vec<f64>,
    checkpoints: Checkpoints,
    csv: Option<(PathBuf, BufWriter<File>)>,
    csv_time: Option<f64>,
}

impl<'t> Analysis<'t> {
    fn new(
        top: &'t Topology,
        opts: &TrajectoryOptions,
        not_evaluated: &mut Vec<NotEvaluated>,
        warnings: &mut Vec<String>,
    ) -> Result<Self> {
        let frags = fragments::enumerate(top);
        let prepared = karplus::prepare_all(&frags.pairs, top, &opts.library, &opts.choice)?;
        warnings.extend(prepared.warnings.iter().map(|w| w.to_string()));
        *not_evaluated = prepared.not_evaluated;
        let pairs = prepared.pairs;
        let groups = group_pairs(&frags, &pairs);
        let n = groups.len();

        // Rings of five and six atoms.
        let mut rings = Vec::new();
        let mut trackers = Vec::new();
        for r in &top.rings {
            if !(5..=6).contains(&r.len()) {
                continue;
            }
            let inside: Vec<usize> = (0..n)
                .filter(|&g| r.contains(&groups[g].x) && r.contains(&groups[g].y))
                .collect();
            trackers.push((StateTracker::new(inside.len(), opts.ring_min_dwell), inside));
            rings.push(RingWatch {
                atoms: r.clone(),
                pts: Vec::with_capacity(r.len()),
                pucker: None,
                flips: (r.len() == 6).then_some(ChairFlips {
                    min_dwell: opts.ring_min_dwell.max(1),
                    run: None,
                    committed: None,
                    count: 0,
                }),
            });
        }

        // Bonds: exocyclic single bonds carrying a coupling, then the user's.
        let rotor_centres: Vec<usize> = frags.rotors.iter().map(|r| r.center).collect();
        let mut bonds: Vec<BondWatch> = Vec::new();
        let mut seen: Vec<(usize, usize)> = Vec::new();
        for g in &groups {
            let key = (g.x.min(g.y), g.x.max(g.y));
            if seen.contains(&key)
                || bond_in_ring(top, g.x, g.y)
                || !is_single(top, g.x, g.y)
                || rotor_centres.contains(&g.x)
                || rotor_centres.contains(&g.y)
            {
                continue;
            }
            if let (Some(a), Some(b)) =
                (reference_atom(top, g.x, g.y), reference_atom(top, g.y, g.x))
            {
                seen.push(key);
                bonds.push(BondWatch {
                    atoms: [a, g.x, g.y, b],
                    user_named: false,
                });
            }
        }
        for &(x, y) in &opts.bonds {
            if x >= top.len() || y >= top.len() {
                return Err(Error::Usage(format!(
                    "bond {}-{}: atom index out of range (the molecule has {} atoms)",
                    x + 1,
                    y + 1,
                    top.len()
                )));
            }
            if !top.bonded(x, y) {
                return Err(Error::Usage(format!(
                    "{} and {} are not bonded, so they name no rotatable bond",
                    atomref::label(top, x),
                    atomref::label(top, y)
                )));
            }
            let key = (x.min(y), x.max(y));
            if seen.contains(&key) {
                if let Some(b) = bonds
                    .iter_mut()
                    .find(|b| (b.atoms[1].min(b.atoms[2]), b.atoms[1].max(b.atoms[2])) == key)
                {
                    b.user_named = true;
                }
                continue;
            }
            let (Some(a), Some(b)) = (reference_atom(top, x, y), reference_atom(top, y, x)) else {
                return Err(Error::Usage(format!(
                    "bond {}-{}: an end atom has no other neighbour to define a dihedral",
                    atomref::label(top, x),
                    atomref::label(top, y)
                )));
            };
            seen.push(key);
            bonds.push(BondWatch {
                atoms: [a, x, y, b],
                user_named: true,
            });
        }
        for b in &bonds {
            let (x, y) = (b.atoms[1], b.atoms[2]);
            let across: Vec<usize> = (0..n)
                .filter(|&g| {
                    (groups[g].x == x && groups[g].y == y) || (groups[g].x == y && groups[g].y == x)
                })
                .collect();
            trackers.push((
                StateTracker::new(across.len(), opts.rotor_min_dwell),
                across,
            ));
        }

        let csv_time = opts.timestep_ps.filter(|t| t.is_finite() && *t > 0.0);
        let csv = match &opts.timeseries_csv {
            None => None,
            Some(path) => {
                let f = File::create(path).map_err(|e| Error::io(path, e))?;
                let mut w = BufWriter::with_capacity(1 << 16, f);
                let mut head = String::from("frame");
                if csv_time.is_some() {
                    head.push_str(",time_ps");
                }
                for g in &groups {
                    head.push_str(&format!(
                        ",J {} Hz",
                        coupling_label(top, &g.side1, &g.side2)
                    ));
                }
                for r in &rings {
                    head.push_str(&format!(",ring {}", atom_list(top, &r.atoms)));
                }
                for b in &bonds {
                    head.push_str(&format!(",rotamer {}", atom_list(top, &b.atoms)));
                }
                writeln!(w, "{head}").map_err(|e| Error::io(path, e))?;
                Some((path.clone(), w))
            }
        };

        Ok(Analysis {
            top,
            j_pair: vec![0.0; pairs.len()],
            j_group: vec![0.0; n],
            averagers: (0..n).map(|_| BlockAverager::new()).collect(),
            labels: vec![0; rings.len() + bonds.len()],
            scratch: Vec::with_capacity(n),
            checkpoints: Checkpoints::new(opts.checkpoints),
            batch: PairBatch::new(pairs),
            groups,
            rings,
            bonds,
            trackers,
            csv,
            csv_time,
        })
    }

    #[inline]
    fn add(&mut self, frame: &Frame, index: usize, used: u64) -> Result<()> {
        let c = &frame.coords;
        self.batch
            .evaluate(c, &mut self.j_pair)
            .map_err(|e| frame_error(frame, index, e))?;
        for ((g, jg), avg) in self
            .groups
            .iter()
            .zip(self.j_group.iter_mut())
            .zip(self.averagers.iter_mut())
        {
            *jg = match g.members[..] {
                [k] => self.j_pair[k],
                _ => {
                    let s: f64 = g.members.iter().map(|&k| self.j_pair[k]).sum();
                    s / g.members.len() as f64
                }
            };
            avg.push(*jg);
        }
        let nr = self.rings.len();
        for (l, r) in self.labels.iter_mut().zip(self.rings.iter_mut()) {
            *l = r.classify(c);
        }
        for (l, b) in self.labels[nr..].iter_mut().zip(&self.bonds) {
            *l = b.classify(c);
        }
        for ((t, which), &l) in self.trackers.iter_mut().zip(&self.labels) {
            self.scratch.clear();
            self.scratch.extend(which.iter().map(|&g| self.j_group[g]));
            t.push(l, &self.scratch)?;
        }
        if self.checkpoints.due(used) {
            self.checkpoints.record(used, &self.averagers);
        }
        if self.csv.is_some() {
            self.write_csv_row(index)?;
        }
        Ok(())
    }

    fn write_csv_row(&mut self, index: usize) -> Result<()> {
        let Some((path, w)) = self.csv.as_mut() else {
            return Ok(());
        };
        let nr = self.rings.len();
        let res = (|| -> std::io::Result<()> {
            write!(w, "{}", index + 1)?;
            if let Some(dt) = self.csv_time {
                write!(w, ",{:.4}", index as f64 * dt)?;
            }
            for j in &self.j_group {
                write!(w, ",{j:.3}")?;
            }
            for (k, &l) in self.labels.iter().enumerate() {
                let name = if k < nr {
                    ring_state_name(l)
                } else {
                    rotamer_state_name(l)
                };
                write!(w, ",{name}")?;
            }
            writeln!(w)
        })();
        res.map_err(|e| Error::io(path.as_path(), e))
    }

    fn finish(mut self, used: u64, warnings: &mut Vec<String>) -> Result<Finished> {
        if let Some((path, mut w)) = self.csv.take() {
            w.flush().map_err(|e| Error::io(&path, e))?;
        }
        if self.checkpoints.cap > 0
            && self
                .checkpoints
                .points
                .last()
                .is_none_or(|p| p.frames != used)
            && used > 0
        {
            self.checkpoints.record(used, &self.averagers);
            // `record` may have thinned the list; make sure the end stays.
            if self
                .checkpoints
                .points
                .last()
                .is_none_or(|p| p.frames != used)
            {
                self.checkpoints.record(used, &self.averagers);
            }
        }
        let top = self.top;
        let mut couplings = Vec::with_capacity(self.groups.len());
        for (g, avg) in self.groups.iter().zip(&self.averagers) {
            let first = &self.batch.pairs()[g.members[0]];
            let blocking = avg.analyze();
            let halves = avg.halves();
            let label = coupling_label(top, &g.side1, &g.side2);
            if avg.skipped() > 0 {
                warnings.push(format!(
                    "{label}: {} frame(s) gave no finite coupling and were left out",
                    avg.skipped()
                ));
            }
            if blocking.plateau == Plateau::NotReached {
                warnings.push(format!(
                    "{label}: the blocked error found no plateau; the trajectory is short for its correlation time and the error given is a lower bound"
                ));
            }
            if halves.is_some_and(|h| h.drifted) {
                warnings.push(format!(
                    "{label}: the two halves of the trajectory disagree beyond their errors (not converged)"
                ));
            }
            couplings.push(TrajCoupling {
                label,
                side1: g.side1.clone(),
                side2: g.side2.clone(),
                x: g.x,
                y: g.y,
                kind: first.kind,
                model: first.set_id.clone(),
                model_rms_hz: first.rms_hz,
                rotor_averaged: g.members.len() > 1,
                min_hz: avg.stats().min().unwrap_or(0.0),
                max_hz: avg.stats().max().unwrap_or(0.0),
                blocking,
                halves,
            });
        }
        let mut states = Vec::new();
        let nr = self.rings.len();
        for (k, (tracker, which)) in self.trackers.iter().enumerate() {
            let (what, label, atoms, user_named, inversions, name): (
                _,
                _,
                Vec<usize>,
                _,
                _,
                fn(u32) -> &'static str,
            ) = if k < nr {
                let r = &self.rings[k];
                (
                    "ring",
                    atom_list(top, &r.atoms),
                    r.atoms.clone(),
                    false,
                    r.flips.as_ref().map(|f| f.count),
                    ring_state_name,
                )
            } else {
                let b = &self.bonds[k - nr];
                (
                    "rotamer",
                    atom_list(top, &b.atoms),
                    b.atoms.to_vec(),
                    b.user_named,
                    None,
                    rotamer_state_name,
                )
            };
            let total = tracker.frames().max(1) as f64;
            let summaries = tracker
                .states()
                .into_iter()
                .map(|s| StateSummary {
                    name: name(s.label).to_string(),
                    frames: s.frames,
                    occupancy: s.frames as f64 / total,
                    runs: s.runs,
                    mean_lifetime_frames: s.mean_lifetime_frames(),
                    mean_complete_lifetime_frames: s.mean_complete_lifetime_frames(),
                    longest_run_frames: s.longest_run,
                    mean_j_hz: s.values.iter().map(|v| v.mean()).collect(),
                })
                .collect();
            states.push(StateSeries {
                what,
                label,
                atoms,
                user_named,
                couplings: which.clone(),
                states: summaries,
                transitions: tracker.transitions(),
                committed_transitions: tracker.committed_transitions(),
                min_dwell_frames: tracker.min_dwell(),
                ring_inversions: inversions,
            });
        }
        Ok(Finished {
            couplings,
            states,
            checkpoints: self.checkpoints.points,
        })
    }
}

struct Finished {
    couplings: Vec<TrajCoupling>,
    states: Vec<StateSeries>,
    checkpoints: Vec<Checkpoint>,
}

fn atom_list(top: &Topology, atoms: &[usize]) -> String {
    atoms
        .iter()
        .map(|&i| atomref::label(top, i))
        .collect::<Vec<_>>()
        .join("-")
}

/// Streams the trajectory once and analyses it (see the module docs).
/// `progress` is called with the number of frames read every
/// [`PROGRESS_EVERY`] frames and once at the end; compare with
/// [`TrajectorySource::frames_hint`] for a bar.
///
/// Errors: unreadable or truncated files, a frame whose atoms or bonding
/// differ from the first (naming the frame), a coupling that cannot be
/// evaluated in a frame, a selection that leaves no frame.
pub fn analyse(
    mut source: TrajectorySource,
    opts: &TrajectoryOptions,
    progress: &mut dyn FnMut(usize),
) -> Result<TrajectoryReport> {
    let stride = opts.stride.max(1);
    if let Some(last) = opts.last {
        if last < opts.first {
            return Err(Error::Usage(format!(
                "the last frame ({}) comes before the first ({})",
                last + 1,
                opts.first + 1
            )));
        }
    }
    let files = source.paths().to_vec();
    let mut frame = Frame::default();
    if !source.next(&mut frame)? {
        return Err(Error::Usage("the trajectory holds no frames".into()));
    }
    let topology = match &source {
        TrajectorySource::Ensemble(e) => e
            .topology()
            .cloned()
            .ok_or_else(|| Error::Structure("no topology after the first frame".into()))?,
        TrajectorySource::Files(_) => perceive::build(&frame)?,
        TrajectorySource::Dcd(d) => d.topology.clone(),
    };
    let self_checked = matches!(source, TrajectorySource::Ensemble(_));
    let mut checker = FrameChecker::new(&topology);
    let mut not_evaluated = Vec::new();
    let mut warnings = Vec::new();
    let mut an = Analysis::new(&topology, opts, &mut not_evaluated, &mut warnings)?;

    let mut index = 0usize;
    let mut used = 0u64;
    let mut last_used = None;
    loop {
        let selected = index >= opts.first && (index - opts.first) % stride == 0;
        if selected {
            if !self_checked && !matches!(source, TrajectorySource::Files(_) if index == 0) {
                if opts.check_bonding {
                    checker.check(&frame, index + 1)?;
                } else {
                    checker.check_atoms(&frame, index + 1)?;
                }
            }
            used += 1;
            an.add(&frame, index, used)?;
            last_used = Some(index);
        }
        index += 1;
        if index % PROGRESS_EVERY == 0 {
            progress(index);
        }
        if opts.last.is_some_and(|l| index > l) {
            break;
        }
        if !source.next(&mut frame)? {
            break;
        }
    }
    progress(index);
    if used == 0 {
        return Err(Error::Usage(format!(
            "no frame selected: the trajectory has {index} frame(s) and the first frame asked for is {}",
            opts.first + 1
        )));
    }
    if an.groups.is_empty() {
        warnings.push("no vicinal pair with a coupling model was found".into());
    }
    let Finished {
        couplings,
        states,
        checkpoints,
    } = an.finish(used, &mut warnings)?;
    let frame_interval_ps = opts
        .timestep_ps
        .filter(|t| t.is_finite() && *t > 0.0)
        .map(|t| t * stride as f64);
    Ok(TrajectoryReport {
        files,
        topology,
        frames_read: index,
        frames_used: used as usize,
        first: opts.first,
        last_used,
        stride,
        frame_interval_ps,
        couplings,
        not_evaluated,
        states,
        checkpoints,
        warnings,
    })
}
