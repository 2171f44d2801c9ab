//! Conformational states along a trajectory: occupancies, transitions,
//! lifetimes and per-state averages, accumulated frame by frame with memory
//! that depends on the number of distinct states, not on the trajectory length.
//!
//! A state is any integer label the caller assigns per frame: a ring-shape id,
//! a rotamer ([`Rotamer`]) or a combination of rotamers ([`combine_rotamers`]).
//!
//! Definitions used by [`StateTracker`]:
//! - **occupancy** — frames spent in a state divided by all frames;
//! - **transitions** — every change of label between consecutive frames;
//! - **committed transitions** — changes that stick: a new state counts once a
//!   run of it reaches `min_dwell` consecutive frames, and then only if it
//!   differs from the last committed state. Short excursions (flicker across a
//!   boundary) are therefore not counted. The committed state starts as the
//!   first state to reach `min_dwell` frames. With `min_dwell` = 1 this equals
//!   the plain transition count;
//! - **run** — a maximal stretch of consecutive frames with one label; the
//!   **mean lifetime** of a state is its frames divided by its runs. The first
//!   and the last run of the trajectory are cut off by its ends, so a second,
//!   unbiased-by-ends figure counts only **complete runs** (runs with a
//!   transition at both ends), `None` when a state has none.

use std::collections::HashMap;

use crate::error::{Error, Result};
use crate::geometry::wrap_angle;
use crate::timeseries::RunningMean;

/// Staggered rotamer of a dihedral angle, by the conventional three 120°
/// windows centred on +60°, 180° and −60° (common practice).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Rotamer {
    /// gauche+: 0° ≤ φ < 120° (centred on +60°).
    GauchePlus,
    /// anti: φ ≥ 120° or φ < −120° (centred on 180°).
    Anti,
    /// gauche−: −120° ≤ φ < 0° (centred on −60°).
    GaucheMinus,
}

impl Rotamer {
    /// All three, in index order.
    pub const ALL: [Rotamer; 3] = [Rotamer::GauchePlus, Rotamer::Anti, Rotamer::GaucheMinus];

    /// Classifies a dihedral angle in radians (any range; wrapped to (−π, π]).
    /// `None` for a non-finite angle.
    pub fn classify(phi: f64) -> Option<Rotamer> {
        if !phi.is_finite() {
            return None;
        }
        let d = wrap_angle(phi);
        let w = std::f64::consts::TAU / 3.0;
        Some(if (0.0..w).contains(&d) {
            Rotamer::GauchePlus
        } else if (-w..0.0).contains(&d) {
            Rotamer::GaucheMinus
        } else {
            Rotamer::Anti
        })
    }

    /// Classifies the dihedral angle φ = atan2(y, x) given as the pair
    /// (y, x) with r = √(x² + y²) > 0 (see [`crate::geometry::dihedral_xy`]),
    /// without the arctangent: anti where cos φ < −1/2 (|φ| > 120°), else
    /// gauche+ for sin φ ≥ 0 and gauche− for sin φ < 0. The same windows as
    /// [`classify`](Self::classify), up to rounding at their edges. `None` for
    /// non-finite input.
    #[inline]
    pub fn classify_xy(y: f64, x: f64, r: f64) -> Option<Rotamer> {
        if !(y.is_finite() && x.is_finite() && r.is_finite() && r > 0.0) {
            return None;
        }
        // φ = +120° is anti and φ = −120° gauche−, as in `classify`.
        Some(if 2.0 * x < -r || (2.0 * x == -r && y >= 0.0) {
            Rotamer::Anti
        } else if y >= 0.0 {
            Rotamer::GauchePlus
        } else {
            Rotamer::GaucheMinus
        })
    }

    /// 0 for gauche+, 1 for anti, 2 for gauche−.
    pub fn index(self) -> u32 {
        match self {
            Rotamer::GauchePlus => 0,
            Rotamer::Anti => 1,
            Rotamer::GaucheMinus => 2,
        }
    }

    /// Inverse of [`index`](Self::index).
    pub fn from_index(i: u32) -> Option<Rotamer> {
        Rotamer::ALL.get(i as usize).copied()
    }

    /// Short label: `g+`, `a`, `g-`.
    pub fn label(self) -> &'static str {
        match self {
            Rotamer::GauchePlus => "g+",
            Rotamer::Anti => "a",
            Rotamer::GaucheMinus => "g-",
        }
    }

    /// Centre of the window in radians (+π/3, π, −π/3).
    pub fn centre(self) -> f64 {
        match self {
            Rotamer::GauchePlus => std::f64::consts::FRAC_PI_3,
            Rotamer::Anti => std::f64::consts::PI,
            Rotamer::GaucheMinus => -std::f64::consts::FRAC_PI_3,
        }
    }
}

/// One state label for a set of rotors: Σ index(rᵢ)·3ⁱ (the first rotor is
/// the least significant digit). Up to 20 rotors fit in a `u32`; `None` beyond.
pub fn combine_rotamers(rotamers: &[Rotamer]) -> Option<u32> {
    if rotamers.len() > 20 {
        return None;
    }
    Some(
        rotamers
            .iter()
            .rev()
            .fold(0u32, |acc, r| acc * 3 + r.index()),
    )
}

/// Inverse of [`combine_rotamers`] for `n` rotors, written into `out`.
pub fn split_rotamers(mut id: u32, n: usize, out: &mut Vec<Rotamer>) {
    out.clear();
    for _ in 0..n {
        out.push(Rotamer::from_index(id % 3).unwrap_or(Rotamer::Anti));
        id /= 3;
    }
}

/// Label of a rotamer combination, rotors separated by `/` (`g+/a/g-`).
pub fn rotamers_label(rotamers: &[Rotamer]) -> String {
    rotamers
        .iter()
        .map(|r| r.label())
        .collect::<Vec<_>>()
        .join("/")
}

/// What has been accumulated for one state.
#[derive(Debug, Clone, PartialEq)]
pub struct StateStats {
    /// The caller's label.
    pub label: u32,
    /// Frames spent in the state.
    pub frames: u64,
    /// Number of visits (maximal runs).
    pub runs: u64,
    /// Runs with a transition at both ends.
    pub complete_runs: u64,
    /// Frames in those complete runs.
    pub complete_run_frames: u64,
    /// Longest run in frames.
    pub longest_run: u64,
    /// Running mean of each tracked value over the state's frames.
    pub values: Vec<RunningMean>,
}

impl StateStats {
    /// Mean run length in frames (all runs, including those cut by the
    /// trajectory's ends).
    pub fn mean_lifetime_frames(&self) -> f64 {
        if self.runs == 0 {
            0.0
        } else {
            self.frames as f64 / self.runs as f64
        }
    }

    /// Mean length in frames of complete runs; `None` if there are none.
    pub fn mean_complete_lifetime_frames(&self) -> Option<f64> {
        (self.complete_runs > 0)
            .then(|| self.complete_run_frames as f64 / self.complete_runs as f64)
    }
}

/// Streaming tracker of state labels along a trajectory (see the module docs
/// for the definitions).
#[derive(Debug, Clone)]
pub struct StateTracker {
    n_values: usize,
    min_dwell: u64,
    index: HashMap<u32, usize>,
    states: Vec<StateStats>,
    frames: u64,
    /// Current run: (state index, run length, is it the first run).
    current: Option<(usize, u64, bool)>,
    transitions: u64,
    pairs: HashMap<(u32, u32), u64>,
    committed: Option<usize>,
    committed_transitions: u64,
}

impl StateTracker {
    /// A tracker following `n_values` values per frame (e.g. the couplings, in
    /// Hz), counting committed transitions with a minimum dwell of `min_dwell`
    /// frames (0 is taken as 1).
    pub fn new(n_values: usize, min_dwell: u64) -> Self {
        StateTracker {
            n_values,
            min_dwell: min_dwell.max(1),
            index: HashMap::new(),
            states: Vec::new(),
            frames: 0,
            current: None,
            transitions: 0,
            pairs: HashMap::new(),
            committed: None,
            committed_transitions: 0,
        }
    }

    /// Records one frame in state `label` with its values (exactly `n_values`
    /// of them; non-finite values are left out of the averages).
    pub fn push(&mut self, label: u32, values: &[f64]) -> Result<()> {
        if values.len() != self.n_values {
            return Err(Error::Usage(format!(
                "state tracker expects {} values per frame, got {}",
                self.n_values,
                values.len()
            )));
        }
        let idx = match self.current {
            Some((i, _, _)) if self.states[i].label == label => i,
            _ => self.state_index(label),
        };
        self.frames += 1;
        let st = &mut self.states[idx];
        st.frames += 1;
        for (acc, &v) in st.values.iter_mut().zip(values) {
            acc.push(v);
        }
        let run = match self.current {
            Some((i, len, first)) if i == idx => {
                self.current = Some((i, len + 1, first));
                len + 1
            }
            Some((i, len, first)) => {
                self.close_run(i, len, first, false);
                self.transitions += 1;
                let from = self.states[i].label;
                *self.pairs.entry((from, label)).or_insert(0) += 1;
                self.states[idx].runs += 1;
                self.current = Some((idx, 1, false));
                1
            }
            None => {
                self.states[idx].runs += 1;
                self.current = Some((idx, 1, true));
                1
            }
        };
        if run == self.min_dwell {
            match self.committed {
                None => self.committed = Some(idx),
                Some(c) if c != idx => {
                    self.committed = Some(idx);
                    self.committed_transitions += 1;
                }
                Some(_) => {}
            }
        }
        Ok(())
    }

    fn state_index(&mut self, label: u32) -> usize {
        if let Some(&i) = self.index.get(&label) {
            return i;
        }
        let i = self.states.len();
        self.states.push(StateStats {
            label,
            frames: 0,
            runs: 0,
            complete_runs: 0,
            complete_run_frames: 0,
            longest_run: 0,
            values: vec![RunningMean::new(); self.n_values],
        });
        self.index.insert(label, i);
        i
    }

    fn close_run(&mut self, i: usize, len: u64, first: bool, at_end: bool) {
        let st = &mut self.states[i];
        st.longest_run = st.longest_run.max(len);
        if !first && !at_end {
            st.complete_runs += 1;
            st.complete_run_frames += len;
        }
    }

    /// Frames recorded.
    pub fn frames(&self) -> u64 {
        self.frames
    }

    /// The states in order of first appearance. `longest_run` includes the run
    /// still open at the last frame.
    pub fn states(&self) -> Vec<StateStats> {
        let mut out = self.states.clone();
        if let Some((i, len, _)) = self.current {
            out[i].longest_run = out[i].longest_run.max(len);
        }
        out
    }

    /// The statistics of one state, if it was visited (without the open run in
    /// `longest_run`; use [`states`](Self::states) for that).
    pub fn state(&self, label: u32) -> Option<&StateStats> {
        self.index.get(&label).map(|&i| &self.states[i])
    }

    /// Fraction of frames spent in `label` (0 if never visited or no frames).
    pub fn occupancy(&self, label: u32) -> f64 {
        match (self.state(label), self.frames) {
            (Some(s), n) if n > 0 => s.frames as f64 / n as f64,
            _ => 0.0,
        }
    }

    /// Number of label changes between consecutive frames.
    pub fn transitions(&self) -> u64 {
        self.transitions
    }

    /// Number of committed transitions (minimum dwell `min_dwell` frames).
    pub fn committed_transitions(&self) -> u64 {
        self.committed_transitions
    }

    /// The minimum dwell used for committed transitions, in frames.
    pub fn min_dwell(&self) -> u64 {
        self.min_dwell
    }

    /// Counts of each observed (from, to) transition, sorted by labels.
    pub fn transition_counts(&self) -> Vec<(u32, u32, u64)> {
        let mut v: Vec<_> = self.pairs.iter().map(|(&(a, b), &n)| (a, b, n)).collect();
        v.sort_unstable();
        v
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rotamer_windows_from_sin_cos_agree_with_the_angle() {
        // Every 0.1° except within 1e-9 rad of a window edge.
        for k in -3600..3600 {
            let phi = (k as f64 * 0.1 + 0.05).to_radians();
            let r = 2.5;
            let (y, x) = (r * phi.sin(), r * phi.cos());
            assert_eq!(
                Rotamer::classify_xy(y, x, (x * x + y * y).sqrt()),
                Rotamer::classify(phi),
                "phi = {} deg",
                phi.to_degrees()
            );
        }
        assert_eq!(
            Rotamer::classify_xy(0.0, 1.0, 1.0),
            Some(Rotamer::GauchePlus)
        );
        assert_eq!(Rotamer::classify_xy(0.0, -1.0, 1.0), Some(Rotamer::Anti));
        assert_eq!(Rotamer::classify_xy(f64::NAN, 1.0, 1.0), None);
    }

    #[test]
    fn rotamer_windows() {
        let c = |deg: f64| Rotamer::classify(deg.to_radians()).unwrap();
        assert_eq!(c(60.0), Rotamer::GauchePlus);
        assert_eq!(c(0.0), Rotamer::GauchePlus);
        assert_eq!(c(119.9), Rotamer::GauchePlus);
        assert_eq!(c(120.001), Rotamer::Anti);
        assert_eq!(c(180.0), Rotamer::Anti);
        assert_eq!(c(-180.0), Rotamer::Anti);
        assert_eq!(c(-120.1), Rotamer::Anti);
        assert_eq!(c(-119.999), Rotamer::GaucheMinus);
        assert_eq!(c(-0.1), Rotamer::GaucheMinus);
        assert_eq!(c(300.0), Rotamer::GaucheMinus);
        assert_eq!(c(420.0), Rotamer::GauchePlus);
        assert_eq!(Rotamer::classify(f64::NAN), None);
        for r in Rotamer::ALL {
            assert_eq!(Rotamer::classify(r.centre()), Some(r));
            assert_eq!(Rotamer::from_index(r.index()), Some(r));
        }
    }

    #[test]
    fn rotamer_combinations_round_trip() {
        let rs = [Rotamer::GaucheMinus, Rotamer::GauchePlus, Rotamer::Anti];
        let id = combine_rotamers(&rs).unwrap();
        assert_eq!(id, 2 + 9);
        let mut back = Vec::new();
        split_rotamers(id, 3, &mut back);
        assert_eq!(back, rs);
        assert_eq!(rotamers_label(&rs), "g-/g+/a");
        assert_eq!(combine_rotamers(&[Rotamer::Anti; 21]), None);
    }

    /// 100 A, 50 B, 100 A, 25 C, 2 A, 23 C; value = 1 in A, 2 in B, 3 in C plus
    /// a second value equal to the frame index.
    #[test]
    fn synthetic_trajectory_exact_counts() {
        let segs = [(0u32, 100u64), (1, 50), (0, 100), (2, 25), (0, 2), (2, 23)];
        let mut t = StateTracker::new(2, 5);
        let mut frame = 0u64;
        for &(lab, len) in &segs {
            for _ in 0..len {
                t.push(lab, &[lab as f64 + 1.0, frame as f64]).unwrap();
                frame += 1;
            }
        }
        assert_eq!(t.frames(), 300);
        assert_eq!(t.transitions(), 5);
        // The 2-frame visit to A is shorter than the 5-frame dwell: A→B, B→A, A→C.
        assert_eq!(t.committed_transitions(), 3);
        assert!((t.occupancy(0) - 202.0 / 300.0).abs() < 1e-15);
        assert!((t.occupancy(1) - 50.0 / 300.0).abs() < 1e-15);
        assert!((t.occupancy(2) - 48.0 / 300.0).abs() < 1e-15);
        assert_eq!(t.occupancy(7), 0.0);
        let st = t.states();
        assert_eq!(st.iter().map(|s| s.label).collect::<Vec<_>>(), [0, 1, 2]);
        let a = &st[0];
        assert_eq!((a.frames, a.runs, a.longest_run), (202, 3, 100));
        assert!((a.mean_lifetime_frames() - 202.0 / 3.0).abs() < 1e-12);
        // Complete A runs: the middle 100 and the 2 (the first is cut by the start).
        assert_eq!(a.mean_complete_lifetime_frames(), Some(51.0));
        let b = &st[1];
        assert_eq!((b.frames, b.runs, b.complete_runs), (50, 1, 1));
        let c = &st[2];
        assert_eq!(
            (c.frames, c.runs, c.complete_runs, c.longest_run),
            (48, 2, 1, 25)
        );
        assert_eq!(c.mean_complete_lifetime_frames(), Some(25.0));
        assert_eq!(c.values[0].mean(), Some(3.0));
        assert_eq!(a.values[0].mean(), Some(1.0));
        // Mean frame index in B: frames 100..150 → 124.5.
        assert_eq!(b.values[1].mean(), Some(124.5));
        assert_eq!(
            t.transition_counts(),
            vec![(0, 1, 1), (0, 2, 2), (1, 0, 1), (2, 0, 1)]
        );
    }

    #[test]
    fn dwell_one_equals_raw_transitions() {
        let labels = [3u32, 3, 4, 3, 4, 4, 9, 3];
        let mut t = StateTracker::new(0, 1);
        labels.iter().for_each(|&l| t.push(l, &[]).unwrap());
        assert_eq!(t.transitions(), 5);
        assert_eq!(t.committed_transitions(), 5);
        assert!(t.push(1, &[1.0]).is_err());
    }

    #[test]
    fn flicker_is_not_committed() {
        // A run of A broken by single-frame B blips: 0 committed transitions.
        let mut t = StateTracker::new(0, 3);
        for i in 0..100 {
            t.push(if i % 10 == 5 { 1 } else { 0 }, &[]).unwrap();
        }
        assert_eq!(t.transitions(), 20);
        assert_eq!(t.committed_transitions(), 0);
    }
}
