//! Populations of conformers, or of groups of conformers, from measured
//! couplings: the glue between a [`Prediction`] (per-conformer couplings), the
//! matched observations of [`crate::observed`] and the numerical engine of
//! [`crate::fit`].
//!
//! # States
//!
//! A state is one conformer ([`Grouping::Each`]) or a group of conformers
//! (index ranges, the θ side of a six-membered ring, ring shape names, the
//! rotamer of one H–X–Y–H dihedral, or labels from a CSV file). **A group's
//! predicted coupling is the weighted mean of its member conformers'
//! couplings**, with the conformer weights of the prediction (Boltzmann,
//! equal or user-given, as chosen by the caller) renormalised within the
//! group; for a temperature series with Boltzmann weights the within-group
//! weights are recomputed at each temperature. Conformers dropped by an
//! energy window belong to no state.
//!
//! # Observations and their errors
//!
//! Each observed coupling's standard error combines, in quadrature
//! ([`crate::fit::combine_sigma`]), the measurement error (the row's
//! `sigma_hz`, else [`DEFAULT_MEASUREMENT_SIGMA_HZ`] = 0.2 Hz) and the coupling
//! model's own error (the parameter set's published RMS where known, else
//! [`DEFAULT_MODEL_SIGMA_HZ`] = 0.5 Hz; either can be overridden). Where the
//! sign was not measured, |J| observed is compared with |J| predicted: the
//! sign of the predicted row is taken from the reference-weighted mean
//! prediction and the row is negated when that mean is negative.
//!
//! # Models
//!
//! [`PopulationModel`]: free populations (exact constrained least squares),
//! a two-state equilibrium (fraction, K, ΔG with χ²-profile intervals),
//! minimal reweighting of the computed ensemble (Hummer & Köfinger 2015), and
//! a van 't Hoff fit of ΔH and ΔS to observations at several temperatures.
//! Unassigned diastereotopic protons (`either`) are tried both ways round,
//! all 2^k assignments, each with its χ².
//!
//! Fits that the data cannot decide are refused with a message saying what
//! to change (group the states, add couplings, reweight), unless the caller
//! asks to fit anyway, in which case the diagnostics travel with the result.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use nalgebra::DMatrix;
use serde::Serialize;

use crate::atomref;
use crate::ensemble::predict::Prediction;
use crate::error::{Error, Result};
use crate::fit::diagnose::{diagnose_design, same_couplings, Diagnostic, Severity};
use crate::fit::maxent::{reweight, ReweightFit, ThetaRule};
use crate::fit::montecarlo::{monte_carlo_populations, MonteCarloOptions, MonteCarloResult};
use crate::fit::simplex_ls::{fit_populations, FitOptions, PopulationFit};
use crate::fit::two_state::{fit_two_state, TwoStateFit};
use crate::fit::vanthoff::{fit_vant_hoff, TemperaturePoint, VantHoffFit};
use crate::fit::{
    combine_sigma, FitQuality, Problem, WhenUnderdetermined, DEFAULT_SAME_COUPLINGS_HZ,
    GAS_CONSTANT_J_PER_MOL_K, J_PER_KCAL,
};
use crate::observed::{self, Observation};
use crate::states::Rotamer;

pub use crate::fit::DEFAULT_MEASUREMENT_SIGMA_HZ;

/// Error in Hz of a coupling model whose parameter set states no RMS: 0.5 Hz,
/// our choice at the low end of the 0.5–1 Hz usually quoted for
/// Haasnoot–de Leeuw–Altona-type equations (common practice).
pub const DEFAULT_MODEL_SIGMA_HZ: f64 = 0.5;

/// Δχ² between the best and the next assignment of unassigned protons from
/// which the data are said to prefer the best (a likelihood ratio of about
/// 7.4; common practice).
pub const CLEAR_PREFERENCE_DELTA_CHI2: f64 = 4.0;

/// How conformers are gathered into states.
#[derive(Debug, Clone, PartialEq)]
pub enum Grouping {
    /// Every kept conformer is its own state.
    Each,
    /// Groups of 1-based conformer indices, one list per group.
    Ranges(Vec<Vec<usize>>),
    /// The two sides of a six-membered ring's Cremer–Pople θ: θ < 90° and
    /// θ ≥ 90° (the two chairs and the boats leaning to each). The ring is
    /// 1-based into the molecule's rings; `None`: the first six-membered ring.
    RingTheta(Option<usize>),
    /// By the ring-shape name of a ring (chair, boat, twist-boat, envelope,
    /// …); ring as for [`Grouping::RingTheta`] (`None`: the first ring).
    RingShape(Option<usize>),
    /// By the staggered rotamer (g+, a, g−; [`Rotamer`]) of the dihedral of
    /// the coupling between two atoms (references as `predict` prints them).
    Rotamer(String, String),
    /// Labels read from a CSV file `conformer,group` (1-based conformers).
    Labels {
        /// (conformer 1-based, group label) per row.
        rows: Vec<(usize, String)>,
        /// The file, for messages.
        path: PathBuf,
    },
}

impl Grouping {
    /// Parses a grouping spec: `each`; `ring-theta[:RING]`;
    /// `ring-shape[:RING]`; `rotamer:ATOM1,ATOM2`; `file:PATH` (or the path
    /// of an existing CSV file); otherwise comma-separated groups of 1-based
    /// conformer indices, each a range `a-b` or index `a`, joined by `+`
    /// within one group (`1-12,13-20`, `1-3+7,4-6`).
    pub fn parse(spec: &str) -> Result<Grouping> {
        let s = spec.trim();
        let ring_no = |rest: &str, what: &str| -> Result<Option<usize>> {
            match rest.strip_prefix(':') {
                None if rest.is_empty() => Ok(None),
                Some(n) => n
                    .trim()
                    .parse::<usize>()
                    .ok()
                    .filter(|&n| n >= 1)
                    .map(Some)
                    .ok_or_else(|| {
                        Error::Usage(format!(
                            "{what}:RING takes a ring number (1, 2, ... as `atoms` lists them), got '{n}'"
                        ))
                    }),
                None => Err(Error::Usage(format!("unknown grouping '{s}'"))),
            }
        };
        let lower = s.to_ascii_lowercase();
        if lower == "each" || lower == "conformers" {
            return Ok(Grouping::Each);
        }
        if let Some(rest) = lower.strip_prefix("ring-theta") {
            return Ok(Grouping::RingTheta(ring_no(rest, "ring-theta")?));
        }
        if let Some(rest) = lower.strip_prefix("ring-shape") {
            return Ok(Grouping::RingShape(ring_no(rest, "ring-shape")?));
        }
        if let Some(rest) = s.strip_prefix("rotamer:") {
            return match rest.split_once(',') {
                Some((a, b)) if !a.trim().is_empty() && !b.trim().is_empty() => Ok(
                    Grouping::Rotamer(a.trim().to_string(), b.trim().to_string()),
                ),
                _ => Err(Error::Usage(format!(
                    "rotamer grouping takes two atoms as rotamer:ATOM1,ATOM2, got '{s}'"
                ))),
            };
        }
        if let Some(p) = s.strip_prefix("file:") {
            return read_group_labels(Path::new(p.trim()));
        }
        if Path::new(s).is_file() {
            return read_group_labels(Path::new(s));
        }
        parse_ranges(s).map(Grouping::Ranges)
    }
}

/// Parses `1-12,13-20` / `1-3+7,4-6` into 1-based index lists.
fn parse_ranges(s: &str) -> Result<Vec<Vec<usize>>> {
    let bad = |what: &str| {
        Error::Usage(format!(
            "--groups: '{what}' is not a conformer range; use e.g. 1-12,13-20 (1-based, '+' joins ranges in one group), each, ring-theta, ring-shape, rotamer:A,B or file:GROUPS.csv"
        ))
    };
    let num = |t: &str| -> Result<usize> {
        t.trim()
            .parse::<usize>()
            .ok()
            .filter(|&n| n >= 1)
            .ok_or_else(|| bad(t))
    };
    let mut groups = Vec::new();
    for item in s.split(',') {
        let mut g = Vec::new();
        for part in item.split('+') {
            let part = part.trim();
            if part.is_empty() {
                return Err(bad(item));
            }
            match part.split_once('-') {
                Some((a, b)) => {
                    let (a, b) = (num(a)?, num(b)?);
                    if b < a {
                        return Err(bad(part));
                    }
                    g.extend(a..=b);
                }
                None => g.push(num(part)?),
            }
        }
        groups.push(g);
    }
    if groups.is_empty() {
        return Err(bad(s));
    }
    Ok(groups)
}

/// Reads a `conformer,group` CSV (header required; `#` comments).
pub fn read_group_labels(path: &Path) -> Result<Grouping> {
    let text = std::fs::read_to_string(path).map_err(|e| Error::io(path, e))?;
    let mut rows = Vec::new();
    let mut header: Option<(usize, usize)> = None;
    for (i, line) in text.lines().enumerate() {
        let t = line.trim();
        if t.is_empty() || t.starts_with('#') {
            continue;
        }
        let cells: Vec<&str> = t.split(',').map(str::trim).collect();
        let Some((ci, gi)) = header else {
            let find = |names: &[&str]| {
                cells
                    .iter()
                    .position(|c| names.iter().any(|n| c.eq_ignore_ascii_case(n)))
            };
            match (
                find(&["conformer", "index"]),
                find(&["group", "label", "state"]),
            ) {
                (Some(c), Some(g)) => header = Some((c, g)),
                _ => {
                    return Err(Error::parse(
                        path,
                        i + 1,
                        "the group file needs a header with 'conformer' and 'group' columns",
                    ))
                }
            }
            continue;
        };
        let c = cells
            .get(ci)
            .and_then(|s| s.parse::<usize>().ok())
            .filter(|&c| c >= 1)
            .ok_or_else(|| Error::parse(path, i + 1, "conformer must be a 1-based index"))?;
        let g = cells.get(gi).copied().unwrap_or("");
        if g.is_empty() {
            return Err(Error::parse(path, i + 1, "empty group label"));
        }
        rows.push((c, g.to_string()));
    }
    if rows.is_empty() {
        return Err(Error::file(path, "no conformer,group rows"));
    }
    Ok(Grouping::Labels {
        rows,
        path: path.to_path_buf(),
    })
}

/// One state: a label and its member conformers.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Group {
    /// Label shown in reports.
    pub label: String,
    /// Member conformers, 1-based indices into the ensemble.
    pub members: Vec<usize>,
}

/// The states of a fit.
#[derive(Debug, Clone, Serialize)]
pub struct GroupSet {
    /// States in report order.
    pub groups: Vec<Group>,
    /// Kept conformers in no state (1-based).
    pub left_out: Vec<usize>,
    /// How the states were made, for the report.
    pub basis: String,
}

fn ring_for(pr: &Prediction, ring: Option<usize>, six_only: bool) -> Result<usize> {
    match ring {
        Some(r) => {
            if r > pr.rings.len() {
                return Err(Error::Usage(format!(
                    "ring {r} does not exist: the molecule has {} ring(s)",
                    pr.rings.len()
                )));
            }
            if six_only && pr.rings[r - 1].atoms.len() != 6 {
                return Err(Error::Usage(format!(
                    "ring {r} is {}-membered; grouping by theta needs a six-membered ring",
                    pr.rings[r - 1].atoms.len()
                )));
            }
            Ok(r - 1)
        }
        None => pr
            .rings
            .iter()
            .position(|r| !six_only || r.atoms.len() == 6)
            .ok_or_else(|| {
                Error::Usage(if six_only {
                    "grouping by ring theta needs a six-membered ring; the molecule has none".into()
                } else {
                    "grouping by ring shape needs a ring; the molecule has none".into()
                })
            }),
    }
}

/// Gathers the kept conformers of `pr` into states by `g`. Empty groups are
/// dropped; a conformer named twice, or an index beyond the ensemble, is an
/// error.
pub fn make_groups(pr: &Prediction, g: &Grouping) -> Result<GroupSet> {
    let n = pr.conformers.len();
    let kept: Vec<bool> = pr.conformers.iter().map(|c| c.kept).collect();
    // label -> members, in order of first appearance.
    let mut order: Vec<String> = Vec::new();
    let mut members: BTreeMap<String, Vec<usize>> = BTreeMap::new();
    let mut put = |label: String, c: usize| {
        if !members.contains_key(&label) {
            order.push(label.clone());
        }
        members.entry(label).or_default().push(c);
    };
    let basis;
    match g {
        Grouping::Each => {
            basis = "one state per conformer".to_string();
            for (i, c) in pr.conformers.iter().enumerate() {
                if kept[i] {
                    put(format!("conformer {}", c.index), i + 1);
                }
            }
        }
        Grouping::Ranges(ranges) => {
            basis = "conformer ranges".to_string();
            let mut seen = vec![false; n + 1];
            for r in ranges {
                let label = range_label(r);
                for &c in r {
                    if c > n {
                        return Err(Error::Usage(format!(
                            "--groups names conformer {c}, but the ensemble has {n}"
                        )));
                    }
                    if seen[c] {
                        return Err(Error::Usage(format!(
                            "--groups names conformer {c} more than once"
                        )));
                    }
                    seen[c] = true;
                    if kept[c - 1] {
                        put(label.clone(), c);
                    }
                }
            }
        }
        Grouping::RingTheta(ring) => {
            let r = ring_for(pr, *ring, true)?;
            basis = format!(
                "Cremer-Pople theta of ring {} (atoms {})",
                r + 1,
                join_usize(&pr.rings[r].atoms)
            );
            let lo = format!("ring {} theta<90", r + 1);
            let hi = format!("ring {} theta>90", r + 1);
            // Fix the order: theta<90 first.
            order.push(lo.clone());
            order.push(hi.clone());
            for (i, shape) in pr.rings[r].shapes.iter().enumerate() {
                if !kept.get(i).copied().unwrap_or(false) {
                    continue;
                }
                let t = shape.theta_deg.ok_or_else(|| {
                    Error::Usage(format!(
                        "conformer {}: ring {} has no defined theta (flat ring?)",
                        i + 1,
                        r + 1
                    ))
                })?;
                let key = if t < 90.0 { lo.clone() } else { hi.clone() };
                members.entry(key).or_default().push(i + 1);
            }
        }
        Grouping::RingShape(ring) => {
            let r = ring_for(pr, *ring, false)?;
            basis = format!(
                "shape of ring {} (atoms {})",
                r + 1,
                join_usize(&pr.rings[r].atoms)
            );
            for (i, shape) in pr.rings[r].shapes.iter().enumerate() {
                if kept.get(i).copied().unwrap_or(false) {
                    put(format!("ring {} {}", r + 1, shape.shape), i + 1);
                }
            }
        }
        Grouping::Rotamer(a, b) => {
            let top = &pr.topology;
            let (ia, ib) = (atomref::resolve(top, a)?, atomref::resolve(top, b)?);
            let k = observed::find_coupling(&pr.couplings, ia, ib).ok_or_else(|| {
                Error::Usage(format!(
                    "rotamer grouping: {}-{} is not a vicinal pair; nearest pairs: {}",
                    atomref::label(top, ia),
                    atomref::label(top, ib),
                    observed::nearest_pairs(top, &pr.couplings, ia, ib, 5).join(", ")
                ))
            })?;
            let c = &pr.couplings[k];
            if c.rotor_averaged {
                return Err(Error::Usage(format!(
                    "rotamer grouping: {} is averaged over a rotating group and has no single dihedral",
                    observed::coupling_label(top, c)
                )));
            }
            let pair = observed::coupling_label(top, c);
            basis = format!("staggered rotamer of the {pair} dihedral");
            for r in Rotamer::ALL {
                order.push(format!("{pair} {}", r.label()));
            }
            for (i, d) in c.dihedral_rad.iter().enumerate() {
                if !kept.get(i).copied().unwrap_or(false) {
                    continue;
                }
                let rot = d
                    .first()
                    .and_then(|&phi| Rotamer::classify(phi))
                    .ok_or_else(|| {
                        Error::Usage(format!("conformer {}: {pair} has no dihedral", i + 1))
                    })?;
                members
                    .entry(format!("{pair} {}", rot.label()))
                    .or_default()
                    .push(i + 1);
            }
        }
        Grouping::Labels { rows, path } => {
            basis = format!("labels from {}", path.display());
            let mut seen = vec![false; n + 1];
            for (c, label) in rows {
                if *c > n {
                    return Err(Error::file(
                        path,
                        format!("conformer {c} does not exist (the ensemble has {n})"),
                    ));
                }
                if seen[*c] {
                    return Err(Error::file(
                        path,
                        format!("conformer {c} is given more than once"),
                    ));
                }
                seen[*c] = true;
                if kept[c - 1] {
                    put(label.clone(), *c);
                }
            }
        }
    }
    let mut in_group = vec![false; n + 1];
    let groups: Vec<Group> = order
        .into_iter()
        .filter_map(|label| {
            let m = members.remove(&label)?;
            for &c in &m {
                in_group[c] = true;
            }
            Some(Group { label, members: m })
        })
        .collect();
    let left_out = (1..=n).filter(|&c| kept[c - 1] && !in_group[c]).collect();
    if groups.is_empty() {
        return Err(Error::Usage(
            "no conformer falls into any group (check --groups and the energy window)".into(),
        ));
    }
    Ok(GroupSet {
        groups,
        left_out,
        basis,
    })
}

fn join_usize(v: &[usize]) -> String {
    v.iter()
        .map(|i| i.to_string())
        .collect::<Vec<_>>()
        .join(" ")
}

/// `1-12`, or `1-3+7` for a list of indices.
fn range_label(r: &[usize]) -> String {
    let mut parts = Vec::new();
    let mut i = 0;
    while i < r.len() {
        let mut j = i;
        while j + 1 < r.len() && r[j + 1] == r[j] + 1 {
            j += 1;
        }
        parts.push(if j > i {
            format!("{}-{}", r[i], r[j])
        } else {
            r[i].to_string()
        });
        i = j + 1;
    }
    format!("conformers {}", parts.join("+"))
}

/// How conformers are weighted inside a group.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum MemberWeighting {
    /// The populations of the prediction (Boltzmann at its temperature,
    /// equal, or user-given), renormalised within the group.
    Populations,
    /// Boltzmann weights from the conformers' relative energies, recomputed
    /// at the temperature of each observation (van 't Hoff series); at the
    /// prediction's temperature otherwise.
    Boltzmann {
        /// Default temperature in K (the prediction's).
        temperature_k: f64,
    },
}

/// Normalised weights of a group's members (in member order) at
/// `temperature_k` (used only by [`MemberWeighting::Boltzmann`]).
pub fn member_weights(
    pr: &Prediction,
    group: &Group,
    mw: MemberWeighting,
    temperature_k: Option<f64>,
) -> Result<Vec<f64>> {
    let mut w: Vec<f64> = match mw {
        MemberWeighting::Populations => group
            .members
            .iter()
            .map(|&c| pr.conformers[c - 1].population)
            .collect(),
        MemberWeighting::Boltzmann { temperature_k: t0 } => {
            let t = temperature_k.unwrap_or(t0);
            let rt = GAS_CONSTANT_J_PER_MOL_K * t / J_PER_KCAL;
            let e: Vec<f64> = group
                .members
                .iter()
                .map(|&c| {
                    pr.conformers[c - 1].relative_kcal_mol.ok_or_else(|| {
                        Error::Usage(format!(
                            "conformer {c} has no energy for Boltzmann weights within its group"
                        ))
                    })
                })
                .collect::<Result<_>>()?;
            let emin = e.iter().copied().fold(f64::INFINITY, f64::min);
            e.iter().map(|&x| (-(x - emin) / rt).exp()).collect()
        }
    };
    let s: f64 = w.iter().sum();
    if !(s > 0.0 && s.is_finite()) {
        return Err(Error::Usage(format!(
            "group '{}' carries no weight (all its conformers have population 0)",
            group.label
        )));
    }
    for x in w.iter_mut() {
        *x /= s;
    }
    Ok(w)
}

/// Predicted couplings in Hz of `couplings` (indices into the prediction)
/// for each group: rows = couplings, columns = groups, each entry the
/// weighted mean over the group's members.
pub fn group_design(
    pr: &Prediction,
    groups: &[Group],
    weights: &[Vec<f64>],
    couplings: &[usize],
) -> DMatrix<f64> {
    DMatrix::from_fn(couplings.len(), groups.len(), |k, g| {
        let j = &pr.couplings[couplings[k]].j_hz;
        groups[g]
            .members
            .iter()
            .zip(&weights[g])
            .map(|(&c, &w)| w * j[c - 1])
            .sum()
    })
}

/// Where the standard errors come from.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SigmaOptions {
    /// Measurement error in Hz for rows without `sigma_hz`.
    pub measurement_hz: f64,
    /// Coupling-model error in Hz for every row; `None`: the parameter set's
    /// published RMS, else [`DEFAULT_MODEL_SIGMA_HZ`].
    pub model_hz: Option<f64>,
}

impl Default for SigmaOptions {
    fn default() -> Self {
        SigmaOptions {
            measurement_hz: DEFAULT_MEASUREMENT_SIGMA_HZ,
            model_hz: None,
        }
    }
}

/// One observation as fitted.
#[derive(Debug, Clone, Serialize)]
pub struct ObservedRow {
    /// Label (the row's `label`, else the pair).
    pub label: String,
    /// The predicted coupling it was matched to, as `H7-H9`.
    pub pair: String,
    /// `file:line` of the row.
    pub origin: String,
    /// J as given, Hz.
    pub given_hz: f64,
    /// J as compared, Hz (|J| when the sign was not measured).
    pub observed_hz: f64,
    /// Whether the sign was measured.
    pub signed: bool,
    /// True when the predicted couplings were negated to compare |J|.
    pub sign_flipped: bool,
    /// Measurement error, Hz.
    pub sigma_measurement_hz: f64,
    /// Coupling-model error, Hz.
    pub sigma_model_hz: f64,
    /// Combined standard error, Hz.
    pub sigma_hz: f64,
    /// Temperature of the measurement, K.
    pub temperature_k: Option<f64>,
    /// Index of the coupling in the prediction (0-based).
    #[serde(skip)]
    pub coupling: usize,
}

/// Builds the fitting problem for the observations `rows` (indices into
/// `obs`), matched to the couplings `coupling_of` (one per observation),
/// for the given states and within-group weights. `reference` (one per
/// state) sets the sign of predicted rows compared as |J|.
#[allow(clippy::too_many_arguments)]
pub fn build_problem(
    pr: &Prediction,
    obs: &[Observation],
    rows: &[usize],
    coupling_of: &[usize],
    groups: &[Group],
    weights: &[Vec<f64>],
    reference: &[f64],
    sigma: &SigmaOptions,
) -> Result<(Problem, Vec<ObservedRow>)> {
    let couplings: Vec<usize> = rows.iter().map(|&r| coupling_of[r]).collect();
    let mut a = group_design(pr, groups, weights, &couplings);
    let mut y = Vec::with_capacity(rows.len());
    let mut s = Vec::with_capacity(rows.len());
    let mut out = Vec::with_capacity(rows.len());
    for (k, &r) in rows.iter().enumerate() {
        let o = &obs[r];
        let c = &pr.couplings[couplings[k]];
        let pair = observed::coupling_label(&pr.topology, c);
        let mut flipped = false;
        let observed_hz = if o.signed {
            o.j_hz
        } else {
            let mean: f64 = (0..groups.len()).map(|g| reference[g] * a[(k, g)]).sum();
            if mean < 0.0 {
                a.row_mut(k).neg_mut();
                flipped = true;
            }
            o.j_hz.abs()
        };
        let sm = o.sigma_hz.unwrap_or(sigma.measurement_hz);
        let smod = sigma
            .model_hz
            .or(c.model_rms_hz)
            .unwrap_or(DEFAULT_MODEL_SIGMA_HZ);
        let sig = combine_sigma(sm, smod);
        y.push(observed_hz);
        s.push(sig);
        out.push(ObservedRow {
            label: if o.label.is_empty() {
                pair.clone()
            } else {
                o.label.clone()
            },
            pair,
            origin: o.origin(),
            given_hz: o.j_hz,
            observed_hz,
            signed: o.signed,
            sign_flipped: flipped,
            sigma_measurement_hz: sm,
            sigma_model_hz: smod,
            sigma_hz: sig,
            temperature_k: o.temperature_k,
            coupling: couplings[k],
        });
    }
    let labels_obs: Vec<String> = out.iter().map(|r| r.label.clone()).collect();
    let labels_states: Vec<String> = groups.iter().map(|g| g.label.clone()).collect();
    let problem = Problem::new(
        a,
        nalgebra::DVector::from_vec(y),
        nalgebra::DVector::from_vec(s),
        labels_states,
        labels_obs,
    )?;
    Ok((problem, out))
}

/// Which population model is fitted.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum PopulationModel {
    /// Free populations ≥ 0 summing to 1.
    Free,
    /// Two states (exactly two groups): fraction, K, ΔG.
    TwoState,
    /// Minimal reweighting of the computed ensemble, θ by the rule.
    Reweight(ThetaRule),
    /// ΔH and ΔS of two states from observations at several temperatures.
    VantHoff,
}

impl PopulationModel {
    /// Short name used in reports (`free`, `two-state`, `reweight`,
    /// `van-t-hoff`).
    pub fn name(&self) -> &'static str {
        match self {
            PopulationModel::Free => "free",
            PopulationModel::TwoState => "two-state",
            PopulationModel::Reweight(_) => "reweight",
            PopulationModel::VantHoff => "van-t-hoff",
        }
    }
}

/// Everything a fit needs besides the prediction and the observations.
#[derive(Debug, Clone)]
pub struct FitRequest {
    /// The model.
    pub model: PopulationModel,
    /// How conformers form states.
    pub grouping: Grouping,
    /// How members are weighted within a group.
    pub member_weighting: MemberWeighting,
    /// A sentence saying how conformers are weighted (for the report).
    pub weighting_note: String,
    /// Standard errors.
    pub sigma: SigmaOptions,
    /// Temperature in K of the two-state ΔG when the observations state none.
    pub temperature_k: f64,
    /// Monte Carlo resampling of free populations (`None`: none).
    pub monte_carlo: Option<MonteCarloOptions>,
    /// Fit even when the data cannot decide (diagnostics say why).
    pub fit_anyway: bool,
    /// Threshold in Hz for "same predicted couplings".
    pub same_couplings_hz: f64,
}

impl FitRequest {
    /// A free-population fit of every conformer with default errors, no
    /// Monte Carlo, at 298.15 K.
    pub fn new(model: PopulationModel, grouping: Grouping) -> Self {
        FitRequest {
            model,
            grouping,
            member_weighting: MemberWeighting::Populations,
            weighting_note: "the conformer populations of the prediction".into(),
            sigma: SigmaOptions::default(),
            temperature_k: 298.15,
            monte_carlo: None,
            fit_anyway: false,
            same_couplings_hz: DEFAULT_SAME_COUPLINGS_HZ,
        }
    }
}

/// The result of the chosen model.
#[derive(Debug, Clone, Serialize)]
#[serde(tag = "model", rename_all = "kebab-case")]
#[allow(clippy::large_enum_variant)] // made once per fit; boxing buys nothing
pub enum ModelResult {
    /// Free populations.
    Free(PopulationFit),
    /// Two-state fraction.
    TwoState(TwoStateFit),
    /// Reweighted ensemble.
    Reweight(ReweightFit),
    /// van 't Hoff ΔH, ΔS.
    VanTHoff(VantHoffFit),
}

impl ModelResult {
    /// Goodness of fit.
    pub fn quality(&self) -> &FitQuality {
        match self {
            ModelResult::Free(f) => &f.quality,
            ModelResult::TwoState(f) => &f.quality,
            ModelResult::Reweight(f) => &f.quality,
            ModelResult::VanTHoff(f) => &f.quality,
        }
    }

    /// The engine's findings.
    pub fn diagnostics(&self) -> &[Diagnostic] {
        match self {
            ModelResult::Free(f) => &f.diagnostics,
            ModelResult::TwoState(f) => &f.diagnostics,
            ModelResult::Reweight(f) => &f.diagnostics,
            ModelResult::VanTHoff(_) => &[],
        }
    }
}

/// One assignment of the unassigned proton pairs.
#[derive(Debug, Clone, Serialize)]
pub struct AssignmentTrial {
    /// For each open pair (in [`Assignments::pairs`] order): exchanged?
    pub swapped: Vec<bool>,
    /// χ² of the fit under this assignment; `None` when it could not be fitted.
    pub chi2: Option<f64>,
    /// Why it could not be fitted.
    pub failure: Option<String>,
}

/// All assignments of the unassigned diastereotopic protons.
#[derive(Debug, Clone, Serialize)]
pub struct Assignments {
    /// The open pairs as `H22/H23`.
    pub pairs: Vec<String>,
    /// Every assignment, best (lowest χ²) first, failures last.
    pub trials: Vec<AssignmentTrial>,
    /// χ² of the second best minus the best.
    pub delta_chi2_to_next: Option<f64>,
    /// True when Δχ² ≥ [`CLEAR_PREFERENCE_DELTA_CHI2`].
    pub clear_preference: bool,
}

/// One state in the result.
#[derive(Debug, Clone, Serialize)]
pub struct StateInfo {
    /// Label.
    pub label: String,
    /// Member conformers (1-based).
    pub members: Vec<usize>,
    /// Sum of the members' populations in the prediction (reference).
    pub reference_population: f64,
    /// Predicted coupling of the state for each observation, Hz (as
    /// compared, i.e. negated where |J| is compared and the sign flipped).
    pub predicted_hz: Vec<f64>,
}

/// A fitted population with its intervals, whatever the model.
#[derive(Debug, Clone, Serialize)]
pub struct PopulationEstimate {
    /// State label.
    pub label: String,
    /// Fitted population (fraction 0–1).
    pub value: f64,
    /// Standard error from the covariance of the fit (free) or the χ²
    /// curvature (two-state); `None` at a bound or when not determined.
    pub std_err: Option<f64>,
    /// 68 % interval: Monte Carlo 16–84th percentiles (free) or χ² profile
    /// (two-state).
    pub interval_68: Option<(f64, f64)>,
    /// 95 % interval: Monte Carlo 2.5–97.5th percentiles or χ² profile.
    pub interval_95: Option<(f64, f64)>,
    /// Reference population (the prediction's), for comparison.
    pub reference: f64,
}

/// A complete population fit of an ensemble.
#[derive(Debug, Clone, Serialize)]
pub struct EnsembleFit {
    /// Model name.
    pub model: String,
    /// How the states were made.
    pub grouping: String,
    /// How conformers are weighted within a state, in words.
    pub weighting: String,
    /// Kept conformers left out of every state (1-based).
    pub left_out: Vec<usize>,
    /// The states.
    pub states: Vec<StateInfo>,
    /// The observations (under the best assignment).
    pub observations: Vec<ObservedRow>,
    /// The model's result (under the best assignment).
    pub result: ModelResult,
    /// Populations with intervals, one per state (for van 't Hoff: the
    /// fractions at each temperature are in the result instead; empty).
    pub populations: Vec<PopulationEstimate>,
    /// Monte Carlo resampling (free populations).
    pub monte_carlo: Option<MonteCarloResult>,
    /// Assignments tried for unassigned protons.
    pub assignments: Option<Assignments>,
    /// Findings, as (severity, message).
    pub findings: Vec<(String, String)>,
    /// Notes about the setup (temperatures, left-out conformers, ...).
    pub notes: Vec<String>,
}

fn refuse_free(problem: &Problem, same_hz: f64) -> Option<String> {
    let (_, d) = diagnose_design(problem, same_hz);
    let bad: Vec<String> = d
        .iter()
        .filter(|x| {
            matches!(
                x,
                Diagnostic::TooFewCouplings { .. }
                    | Diagnostic::RankDeficient { .. }
                    | Diagnostic::IllConditioned { .. }
                    | Diagnostic::SameCouplings { .. }
                    | Diagnostic::MoreSameCouplings { .. }
            )
        })
        .map(|x| x.message())
        .collect();
    (!bad.is_empty()).then(|| {
        format!(
            "the couplings cannot decide these free populations: {}. Group the states (--groups, e.g. ring-theta, rotamer:A,B or 1-12,13-20), use --populations reweight (minimal reweighting of the computed ensemble), or pass --fit-anyway to see one of the equally good answers",
            bad.join("; ")
        )
    })
}

struct Setup<'a> {
    pr: &'a Prediction,
    obs: &'a [Observation],
    req: &'a FitRequest,
    groups: Vec<Group>,
    weights: Vec<Vec<f64>>,
    reference: Vec<f64>,
}

impl Setup<'_> {
    /// Runs the model for one assignment (couplings per observation).
    fn run(&self, coupling_of: &[usize]) -> Result<(ModelResult, Problem, Vec<ObservedRow>)> {
        let all: Vec<usize> = (0..self.obs.len()).collect();
        let req = self.req;
        match req.model {
            PopulationModel::VantHoff => {
                let mut temps: Vec<f64> = Vec::new();
                for o in self.obs {
                    let t = o.temperature_k.ok_or_else(|| {
                        Error::Usage(format!(
                            "{}: a van 't Hoff fit needs the temperature_k of every observation",
                            o.origin()
                        ))
                    })?;
                    if !temps.contains(&t) {
                        temps.push(t);
                    }
                }
                temps.sort_by(f64::total_cmp);
                let mut points = Vec::new();
                let mut rows_all = Vec::new();
                let mut first_problem = None;
                for &t in &temps {
                    let rows: Vec<usize> = all
                        .iter()
                        .copied()
                        .filter(|&r| self.obs[r].temperature_k == Some(t))
                        .collect();
                    let w: Vec<Vec<f64>> = self
                        .groups
                        .iter()
                        .map(|g| member_weights(self.pr, g, req.member_weighting, Some(t)))
                        .collect::<Result<_>>()?;
                    let (p, r) = build_problem(
                        self.pr,
                        self.obs,
                        &rows,
                        coupling_of,
                        &self.groups,
                        &w,
                        &self.reference,
                        &req.sigma,
                    )?;
                    self.check_two_state(&p)?;
                    if first_problem.is_none() {
                        first_problem = Some(p.clone());
                    }
                    points.push(TemperaturePoint {
                        temperature_k: t,
                        problem: p,
                    });
                    rows_all.extend(r);
                }
                let fit = fit_vant_hoff(&points)?;
                let problem =
                    first_problem.ok_or_else(|| Error::Usage("no observations to fit".into()))?;
                Ok((ModelResult::VanTHoff(fit), problem, rows_all))
            }
            _ => {
                let (p, rows) = build_problem(
                    self.pr,
                    self.obs,
                    &all,
                    coupling_of,
                    &self.groups,
                    &self.weights,
                    &self.reference,
                    &req.sigma,
                )?;
                let res = match req.model {
                    PopulationModel::Free => {
                        if !req.fit_anyway {
                            if let Some(msg) = refuse_free(&p, req.same_couplings_hz) {
                                return Err(Error::Fit(msg));
                            }
                        }
                        ModelResult::Free(fit_populations(
                            &p,
                            &FitOptions {
                                when_underdetermined: WhenUnderdetermined::Warn,
                                same_couplings_hz: req.same_couplings_hz,
                            },
                        )?)
                    }
                    PopulationModel::TwoState => {
                        self.check_two_state(&p)?;
                        ModelResult::TwoState(fit_two_state(&p, self.temperature()?)?)
                    }
                    PopulationModel::Reweight(rule) => {
                        ModelResult::Reweight(reweight(&p, &self.reference, rule)?)
                    }
                    PopulationModel::VantHoff => unreachable!("handled above"),
                };
                Ok((res, p, rows))
            }
        }
    }

    fn check_two_state(&self, p: &Problem) -> Result<()> {
        if p.n_states() != 2 {
            return Err(Error::Usage(format!(
                "a two-state fit needs exactly two groups of conformers; there are {} ({}). Choose them with --groups (e.g. ring-theta, 1-12,13-20 or file:GROUPS.csv)",
                p.n_states(),
                truncate_list(&p.state_labels, 6)
            )));
        }
        if !self.req.fit_anyway {
            if let Some(d) = same_couplings(p, self.req.same_couplings_hz).first() {
                return Err(Error::Fit(format!(
                    "{}; a two-state fraction would mean nothing. Choose other groups, add couplings that differ between them, or pass --fit-anyway",
                    d.message()
                )));
            }
        }
        Ok(())
    }

    /// The temperature of a single-temperature fit: that of the
    /// observations if they state one, else the request's.
    fn temperature(&self) -> Result<f64> {
        let t = observation_temperatures(self.obs);
        match t.len() {
            0 => Ok(self.req.temperature_k),
            1 => Ok(t[0]),
            _ => Err(Error::Usage(format!(
                "the observations were measured at several temperatures ({} K): fit them together with --populations van-t-hoff, or one temperature at a time",
                t.iter().map(|x| x.to_string()).collect::<Vec<_>>().join(", ")
            ))),
        }
    }
}

/// Distinct temperatures of the observations (K), ascending.
pub fn observation_temperatures(obs: &[Observation]) -> Vec<f64> {
    let mut t: Vec<f64> = obs.iter().filter_map(|o| o.temperature_k).collect();
    t.sort_by(f64::total_cmp);
    t.dedup();
    t
}

fn truncate_list(v: &[String], k: usize) -> String {
    if v.len() <= k {
        v.join(", ")
    } else {
        format!("{}, ... {} in all", v[..k].join(", "), v.len())
    }
}

/// Fits the populations of the states of `pr` to the observations `obs`
/// (module docs): matches them, tries every assignment of unassigned
/// protons, runs the model, adds Monte Carlo intervals for free populations.
pub fn fit_ensemble(pr: &Prediction, obs: &[Observation], req: &FitRequest) -> Result<EnsembleFit> {
    let matched = observed::match_observations(obs, &pr.topology, &pr.couplings)?;
    let gs = make_groups(pr, &req.grouping)?;
    let groups = gs.groups;
    let mut notes = Vec::new();
    if !gs.left_out.is_empty() {
        notes.push(format!(
            "conformer(s) {} belong to no group and are left out",
            join_usize(&gs.left_out)
        ));
    }
    let weights: Vec<Vec<f64>> = groups
        .iter()
        .map(|g| member_weights(pr, g, req.member_weighting, None))
        .collect::<Result<_>>()?;
    let mut reference: Vec<f64> = groups
        .iter()
        .map(|g| {
            g.members
                .iter()
                .map(|&c| pr.conformers[c - 1].population)
                .sum()
        })
        .collect();
    let rs: f64 = reference.iter().sum();
    if rs > 0.0 {
        reference.iter_mut().for_each(|r| *r /= rs);
    } else {
        let n = reference.len() as f64;
        reference.iter_mut().for_each(|r| *r = 1.0 / n);
    }
    if req.model != PopulationModel::VantHoff {
        let temps = observation_temperatures(obs);
        if temps.len() > 1 {
            return Err(Error::Usage(format!(
                "the observations were measured at several temperatures ({} K): fit them together with --populations van-t-hoff, or one temperature at a time",
                temps.iter().map(|x| x.to_string()).collect::<Vec<_>>().join(", ")
            )));
        }
        if let (Some(&t), MemberWeighting::Boltzmann { temperature_k }) =
            (temps.first(), req.member_weighting)
        {
            if (t - temperature_k).abs() > 0.5 {
                notes.push(format!(
                    "the observations were measured at {t} K but conformers are weighted at {temperature_k} K (set --temperature {t} to match)"
                ));
            }
        }
    }
    let setup = Setup {
        pr,
        obs,
        req,
        groups,
        weights,
        reference,
    };

    let k = matched.swaps.len();
    if k > crate::fit::assign::MAX_OPEN_PAIRS {
        return Err(Error::Usage(format!(
            "{k} unassigned proton pairs would need {} fits; at most {} are tried",
            1u64 << k.min(63),
            crate::fit::assign::MAX_OPEN_PAIRS
        )));
    }
    let mut best: Option<(f64, usize, ModelResult, Problem, Vec<ObservedRow>)> = None;
    let mut trials = Vec::new();
    let mut first_err = None;
    for mask in 0..(1u32 << k) {
        let swapped: Vec<bool> = (0..k).map(|b| mask & (1 << b) != 0).collect();
        let Some(coupling_of) = observed::couplings_under_swap(&matched, &pr.couplings, mask)
        else {
            trials.push(AssignmentTrial {
                swapped,
                chi2: None,
                failure: Some("an exchanged proton names no predicted coupling".into()),
            });
            continue;
        };
        match setup.run(&coupling_of) {
            Ok((res, p, rows)) => {
                let chi2 = res.quality().chi2;
                trials.push(AssignmentTrial {
                    swapped,
                    chi2: Some(chi2),
                    failure: None,
                });
                if best.as_ref().is_none_or(|b| chi2 < b.0) {
                    best = Some((chi2, trials.len() - 1, res, p, rows));
                }
            }
            Err(e) => {
                // Refusals and usage errors do not depend on the assignment.
                if k == 0 || matches!(e, Error::Usage(_)) {
                    return Err(e);
                }
                trials.push(AssignmentTrial {
                    swapped,
                    chi2: None,
                    failure: Some(e.to_string()),
                });
                first_err.get_or_insert(e);
            }
        }
    }
    let Some((_, _, result, problem, rows)) = best else {
        return Err(first_err.unwrap_or_else(|| {
            Error::Fit("no assignment of the unassigned protons could be fitted".into())
        }));
    };
    let assignments = (k > 0).then(|| {
        trials.sort_by(|a, b| match (a.chi2, b.chi2) {
            (Some(x), Some(y)) => x.total_cmp(&y),
            (Some(_), None) => std::cmp::Ordering::Less,
            (None, Some(_)) => std::cmp::Ordering::Greater,
            (None, None) => std::cmp::Ordering::Equal,
        });
        let delta = match (
            trials.first().and_then(|t| t.chi2),
            trials.get(1).and_then(|t| t.chi2),
        ) {
            (Some(a), Some(b)) => Some(b - a),
            _ => None,
        };
        Assignments {
            pairs: matched
                .swaps
                .iter()
                .map(|&(a, b)| {
                    format!(
                        "{}/{}",
                        atomref::label(&pr.topology, a),
                        atomref::label(&pr.topology, b)
                    )
                })
                .collect(),
            clear_preference: delta.is_some_and(|d| d >= CLEAR_PREFERENCE_DELTA_CHI2),
            delta_chi2_to_next: delta,
            trials,
        }
    });

    let monte_carlo = match (&result, req.monte_carlo) {
        (ModelResult::Free(_), Some(o)) => Some(monte_carlo_populations(&problem, &o)?),
        _ => None,
    };
    let populations = estimates(
        &result,
        monte_carlo.as_ref(),
        &setup.reference,
        &problem.state_labels,
    );
    let states: Vec<StateInfo> = setup
        .groups
        .iter()
        .enumerate()
        .map(|(g, grp)| StateInfo {
            label: grp.label.clone(),
            members: grp.members.clone(),
            reference_population: setup.reference[g],
            predicted_hz: problem.a.column(g).iter().copied().collect(),
        })
        .collect();
    if let ModelResult::VanTHoff(_) = result {
        notes.push(
            "predicted couplings of the states are shown at the lowest temperature".to_string(),
        );
    }
    let findings = result
        .diagnostics()
        .iter()
        .map(|d| {
            (
                match d.severity() {
                    Severity::Note => "note".to_string(),
                    Severity::Warning => "warning".to_string(),
                },
                d.message(),
            )
        })
        .collect();
    Ok(EnsembleFit {
        model: req.model.name().to_string(),
        grouping: gs.basis,
        weighting: req.weighting_note.clone(),
        left_out: gs.left_out,
        states,
        observations: rows,
        result,
        populations,
        monte_carlo,
        assignments,
        findings,
        notes,
    })
}

fn estimates(
    result: &ModelResult,
    mc: Option<&MonteCarloResult>,
    reference: &[f64],
    labels: &[String],
) -> Vec<PopulationEstimate> {
    match result {
        ModelResult::Free(f) => f
            .populations
            .iter()
            .enumerate()
            .map(|(i, p)| {
                let s = mc.and_then(|m| m.populations.get(i));
                PopulationEstimate {
                    label: p.label.clone(),
                    value: p.value,
                    std_err: p.std_err,
                    interval_68: s.map(|s| (s.p16, s.p84)),
                    interval_95: s.map(|s| (s.p2_5, s.p97_5)),
                    reference: reference[i],
                }
            })
            .collect(),
        ModelResult::TwoState(t) => vec![
            PopulationEstimate {
                label: t.labels[0].clone(),
                value: t.fraction,
                std_err: t.pinned.is_none().then_some(t.std_err),
                interval_68: Some((t.fraction_68.lower, t.fraction_68.upper)),
                interval_95: Some((t.fraction_95.lower, t.fraction_95.upper)),
                reference: reference[0],
            },
            PopulationEstimate {
                label: t.labels[1].clone(),
                value: 1.0 - t.fraction,
                std_err: t.pinned.is_none().then_some(t.std_err),
                interval_68: Some((1.0 - t.fraction_68.upper, 1.0 - t.fraction_68.lower)),
                interval_95: Some((1.0 - t.fraction_95.upper, 1.0 - t.fraction_95.lower)),
                reference: reference[1],
            },
        ],
        ModelResult::Reweight(r) => r
            .weights
            .iter()
            .enumerate()
            .map(|(i, &w)| PopulationEstimate {
                label: labels.get(i).cloned().unwrap_or_default(),
                value: w,
                std_err: None,
                interval_68: None,
                interval_95: None,
                reference: reference[i],
            })
            .collect(),
        ModelResult::VanTHoff(_) => Vec::new(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parses_group_specs() {
        assert_eq!(Grouping::parse("each").unwrap(), Grouping::Each);
        assert_eq!(
            Grouping::parse("1-3, 4+6-7").unwrap(),
            Grouping::Ranges(vec![vec![1, 2, 3], vec![4, 6, 7]])
        );
        assert_eq!(
            Grouping::parse("ring-theta:2").unwrap(),
            Grouping::RingTheta(Some(2))
        );
        assert_eq!(
            Grouping::parse("ring-shape").unwrap(),
            Grouping::RingShape(None)
        );
        assert_eq!(
            Grouping::parse("rotamer:H5,H6a").unwrap(),
            Grouping::Rotamer("H5".into(), "H6a".into())
        );
        let e = Grouping::parse("1-x").unwrap_err().to_string();
        assert!(e.contains("'x' is not a conformer range"), "{e}");
        assert!(Grouping::parse("3-1").is_err());
        assert!(Grouping::parse("ring-theta:0").is_err());
    }

    #[test]
    fn range_labels_are_compact() {
        assert_eq!(range_label(&[1, 2, 3, 7]), "conformers 1-3+7");
        assert_eq!(range_label(&[5]), "conformers 5");
    }
}
