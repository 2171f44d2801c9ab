//! Ranking candidate structures against measured couplings.
//!
//! Each candidate is one structure (a stereoisomer, a constitutional
//! alternative) with its own conformer ensemble. Its Boltzmann-averaged
//! couplings are compared with the observations, and a probability over the
//! candidates comes from an explicit error model: the errors
//! e_k = J_obs,k − J_pred,k are taken as independent draws from a Student-t
//! distribution with ν degrees of freedom and scale s_k, as in the DP4
//! treatment of chemical shifts (Smith & Goodman, J. Am. Chem. Soc. 2010,
//! 132, 12946–12959), here applied to couplings:
//!
//! ln L_i = Σ_k ln t_ν(e_ik / s_k) − ln s_k, P_i = π_i L_i / Σ_j π_j L_j,
//!
//! with priors π (equal by default). The scale combines the model error and
//! the measurement error in quadrature, s_k = √(s_model² + σ_k²)
//! ([`crate::fit::combine_sigma`]).
//!
//! Defaults ([`ErrorModel::default`], our choice): s_model = 1.0 Hz and
//! ν = 4. The Haasnoot–de Leeuw–Altona equation reproduces its training
//! couplings to about 0.5–0.7 Hz RMS (Haasnoot, de Leeuw & Altona,
//! Tetrahedron 1980, 36, 2783–2792); force-field geometries and Boltzmann
//! weights add to that, so 1 Hz is a modest total. ν = 4 gives heavier tails
//! than a Gaussian, so one badly predicted coupling (a wrong conformer
//! energy, a coupling outside the equation's domain) does not by itself
//! decide the ranking. Because the probabilities depend on these choices,
//! every ranking is recomputed for s ×0.5 and ×2 and for ν = 2 and 10
//! ([`Ranking::sensitivity`]).
//!
//! Observations name protons by labels (`atom1`, `atom2` of the
//! observations CSV). For each candidate a label is resolved through the
//! candidate's mapping (a CSV `label,atom`) if it has one, otherwise as an
//! atom name in its files (SDF alias, PDB atom name): candidates may number
//! their atoms differently. A label that names no atom, or more than one,
//! is an error naming the candidate and the label.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use serde::Serialize;
use statrs::function::gamma::ln_gamma;

use crate::atomref;
use crate::ensemble::predict::Prediction;
use crate::error::{Error, Result};
use crate::fit::{self, simplex_ls, Problem, WhenUnderdetermined};
use crate::observed::{self, Observation};
use crate::topology::Topology;

/// Default model part of the error scale in Hz (our choice; module docs).
pub const DEFAULT_SCALE_HZ: f64 = 1.0;

/// Default degrees of freedom of the Student-t error model (our choice;
/// module docs).
pub const DEFAULT_NU: f64 = 4.0;

/// Likelihood ratio at or above which a choice between two alternatives is
/// called; below it the verdict is "cannot tell" (our choice: 10, the
/// lower edge of "strong" evidence on Jeffreys' scale, H. Jeffreys, Theory of
/// Probability, 3rd ed., Oxford 1961, Appendix B). With two alternatives and
/// equal priors it is a probability of 10/11 ≈ 0.91.
pub const DEFAULT_DECISIVE_RATIO: f64 = 10.0;

/// Distribution of the errors between observed and predicted couplings.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct ErrorModel {
    /// Model part of the scale in Hz, combined in quadrature with each
    /// observation's measurement error.
    pub scale_hz: f64,
    /// Degrees of freedom of the Student-t; `None` for a Gaussian.
    pub nu: Option<f64>,
    /// Measurement error in Hz used for rows without `sigma_hz`.
    pub default_measurement_hz: f64,
}

impl Default for ErrorModel {
    fn default() -> Self {
        ErrorModel {
            scale_hz: DEFAULT_SCALE_HZ,
            nu: Some(DEFAULT_NU),
            default_measurement_hz: fit::DEFAULT_MEASUREMENT_SIGMA_HZ,
        }
    }
}

impl ErrorModel {
    /// Checks the parameters: scale and measurement error positive and
    /// finite, ν (if any) at least 1 and finite.
    pub fn validate(&self) -> Result<()> {
        if !(self.scale_hz.is_finite() && self.scale_hz > 0.0) {
            return Err(Error::Usage(format!(
                "the error scale must be a positive number of Hz, got {}",
                self.scale_hz
            )));
        }
        if !(self.default_measurement_hz.is_finite() && self.default_measurement_hz >= 0.0) {
            return Err(Error::Usage(format!(
                "the measurement error must be a non-negative number of Hz, got {}",
                self.default_measurement_hz
            )));
        }
        if let Some(nu) = self.nu {
            if !(nu.is_finite() && nu >= 1.0) {
                return Err(Error::Usage(format!(
                    "the degrees of freedom must be a number >= 1 (or 'gauss'), got {nu}"
                )));
            }
        }
        Ok(())
    }

    /// Combined scale s = √(scale² + σ²) in Hz for an observation with
    /// measurement error `sigma_hz` (the default when `None`).
    pub fn sigma_hz(&self, sigma_hz: Option<f64>) -> f64 {
        fit::combine_sigma(
            sigma_hz.unwrap_or(self.default_measurement_hz),
            self.scale_hz,
        )
    }

    /// Natural log of the density (per Hz) of an error `error_hz` with scale
    /// `s_hz`: Student-t
    /// ln Γ((ν+1)/2) − ln Γ(ν/2) − ½ ln(νπ) − ln s − (ν+1)/2 · ln(1 + (e/s)²/ν),
    /// or the Gaussian −½ ln(2π) − ln s − ½ (e/s)².
    pub fn ln_density(&self, error_hz: f64, s_hz: f64) -> f64 {
        let z = error_hz / s_hz;
        match self.nu {
            Some(nu) => {
                ln_gamma((nu + 1.0) / 2.0)
                    - ln_gamma(nu / 2.0)
                    - 0.5 * (nu * std::f64::consts::PI).ln()
                    - s_hz.ln()
                    - (nu + 1.0) / 2.0 * (z * z / nu).ln_1p()
            }
            None => -0.5 * (2.0 * std::f64::consts::PI).ln() - s_hz.ln() - 0.5 * z * z,
        }
    }

    /// A short description for reports, e.g. `Student-t, nu = 4, scale 1.00 Hz (+ measurement error in quadrature)`.
    pub fn describe(&self) -> String {
        let d = match self.nu {
            Some(nu) => format!("Student-t, nu = {nu}"),
            None => "Gaussian".to_string(),
        };
        format!(
            "{d}, scale {:.2} Hz combined in quadrature with each row's measurement error (default {:.2} Hz)",
            self.scale_hz, self.default_measurement_hz
        )
    }
}

/// Log-sum-exp normalisation: probabilities ∝ exp(ln_w), never NaN (all
/// −∞ gives equal probabilities).
pub fn normalise_log(ln_w: &[f64]) -> Vec<f64> {
    let m = ln_w.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if !m.is_finite() {
        let n = ln_w.len().max(1) as f64;
        return vec![1.0 / n; ln_w.len()];
    }
    let e: Vec<f64> = ln_w.iter().map(|&v| (v - m).exp()).collect();
    let s: f64 = e.iter().sum();
    e.into_iter().map(|v| v / s).collect()
}

/// How a candidate's labels map to its atoms.
#[derive(Debug, Clone, Default)]
pub struct LabelMap {
    /// label → atom reference (index, `H7`, or atom name) from a mapping
    /// CSV; empty to use the atom names in the files.
    pub entries: BTreeMap<String, String>,
    /// The mapping file, for messages.
    pub path: Option<PathBuf>,
}

impl LabelMap {
    /// Reads a mapping CSV with columns `label,atom` (header required, `#`
    /// comments). A label given twice is an error naming the file, line and
    /// label.
    pub fn read(path: &Path) -> Result<LabelMap> {
        let text = std::fs::read_to_string(path).map_err(|e| Error::io(path, e))?;
        Self::parse(&text, path)
    }

    /// Parses a mapping CSV from text; `path` names the source in errors.
    pub fn parse(text: &str, path: &Path) -> Result<LabelMap> {
        let mut entries = BTreeMap::new();
        let mut header_seen = false;
        let (mut cl, mut ca) = (0usize, 1usize);
        for (i, raw) in text.lines().enumerate() {
            let line = raw.trim();
            if line.is_empty() || line.starts_with('#') {
                continue;
            }
            let cells: Vec<&str> = line.split(',').map(str::trim).collect();
            if !header_seen {
                header_seen = true;
                let pos = |n: &str| cells.iter().position(|c| c.eq_ignore_ascii_case(n));
                match (pos("label"), pos("atom")) {
                    (Some(l), Some(a)) => {
                        cl = l;
                        ca = a;
                        continue;
                    }
                    _ => {
                        return Err(Error::parse(
                            path,
                            i + 1,
                            "the label mapping needs a header with columns label,atom",
                        ))
                    }
                }
            }
            let (Some(l), Some(a)) = (cells.get(cl), cells.get(ca)) else {
                return Err(Error::parse(path, i + 1, "expected label,atom"));
            };
            if l.is_empty() || a.is_empty() {
                return Err(Error::parse(path, i + 1, "empty label or atom"));
            }
            if entries.insert(l.to_string(), a.to_string()).is_some() {
                return Err(Error::parse(
                    path,
                    i + 1,
                    format!("label '{l}' is mapped twice"),
                ));
            }
        }
        Ok(LabelMap {
            entries,
            path: Some(path.to_path_buf()),
        })
    }

    /// The atom (0-based) that `label` names in candidate `candidate` with
    /// topology `top`. Without a mapping the label must be the name of
    /// exactly one atom; with a mapping the label must be in it.
    pub fn resolve(&self, top: &Topology, candidate: &str, label: &str) -> Result<usize> {
        if let Some(path) = &self.path {
            let r = self.entries.get(label).ok_or_else(|| {
                Error::Usage(format!(
                    "candidate '{candidate}': label '{label}' is missing from the mapping {}",
                    path.display()
                ))
            })?;
            return atomref::resolve(top, r).map_err(|e| {
                Error::Usage(format!(
                    "candidate '{candidate}': label '{label}' (mapped to '{r}' in {}): {e}",
                    path.display()
                ))
            });
        }
        let hits: Vec<usize> = (0..top.len())
            .filter(|&i| top.atoms[i].name.as_deref() == Some(label))
            .collect();
        match hits.len() {
            1 => Ok(hits[0]),
            0 => Err(Error::Usage(format!(
                "candidate '{candidate}': label '{label}' names no atom (no atom has that name in its files; give the atoms names or a --labels mapping)"
            ))),
            n => Err(Error::Usage(format!(
                "candidate '{candidate}': label '{label}' is doubled: {n} atoms ({}) carry that name",
                hits.iter()
                    .map(|&i| atomref::label(top, i))
                    .collect::<Vec<_>>()
                    .join(", ")
            ))),
        }
    }
}

/// One observation matched to a coupling of one ensemble.
#[derive(Debug, Clone, Serialize)]
pub struct MatchedRow {
    /// `atom1-atom2` as written in the observations.
    pub label: String,
    /// Resolved atoms (0-based).
    pub atoms: (usize, usize),
    /// Index of the coupling in the prediction.
    pub coupling: usize,
    /// Observed J in Hz.
    pub observed_hz: f64,
    /// Measurement error in Hz, if given.
    pub sigma_hz: Option<f64>,
    /// Compare signed values (else |J| with |J|).
    pub signed: bool,
    /// `file:line` of the row.
    pub origin: String,
}

/// Matches observations to the couplings of `pr`, resolving each atom
/// reference with `resolve`. Rows with an `either` column are taken as
/// written (a warning is added to `warnings`).
pub fn match_rows<F>(
    obs: &[Observation],
    pr: &Prediction,
    mut resolve: F,
    warnings: &mut Vec<String>,
) -> Result<Vec<MatchedRow>>
where
    F: FnMut(&str) -> Result<usize>,
{
    let mut out = Vec::with_capacity(obs.len());
    let mut warned = false;
    for o in obs {
        let a = resolve(&o.atom1).map_err(|e| with_origin(e, o))?;
        let b = resolve(&o.atom2).map_err(|e| with_origin(e, o))?;
        let k = observed::find_coupling(&pr.couplings, a, b).ok_or_else(|| {
            Error::Usage(format!(
                "{}: {}-{} ({}-{}) is not a vicinal pair with a predicted coupling; nearest pairs: {}",
                o.origin(),
                o.atom1,
                o.atom2,
                atomref::label(&pr.topology, a),
                atomref::label(&pr.topology, b),
                observed::nearest_pairs(&pr.topology, &pr.couplings, a, b, 5).join(", ")
            ))
        })?;
        if o.either.is_some() && !warned {
            warned = true;
            warnings.push(format!(
                "{}: the 'either' column is not used here; rows are taken as written",
                o.origin()
            ));
        }
        out.push(MatchedRow {
            label: format!("{}-{}", o.atom1, o.atom2),
            atoms: (a, b),
            coupling: k,
            observed_hz: o.j_hz,
            sigma_hz: o.sigma_hz,
            signed: o.signed,
            origin: o.origin(),
        });
    }
    Ok(out)
}

fn with_origin(e: Error, o: &Observation) -> Error {
    match e {
        Error::Usage(m) => Error::Usage(format!("{}: {m}", o.origin())),
        e => e,
    }
}

/// Predicted J in Hz of `row` in conformer `c` (|J| unless the row is signed).
pub fn conformer_j(pr: &Prediction, row: &MatchedRow, c: usize) -> f64 {
    let j = pr.couplings[row.coupling]
        .j_hz
        .get(c)
        .copied()
        .unwrap_or(0.0);
    if row.signed {
        j
    } else {
        j.abs()
    }
}

/// Population-weighted J in Hz of `row` over conformers `members` with
/// weights `w` (same length; normalised here; equal if they sum to 0).
pub fn weighted_j(pr: &Prediction, row: &MatchedRow, members: &[usize], w: &[f64]) -> f64 {
    let total: f64 = w.iter().sum();
    let n = members.len().max(1) as f64;
    members
        .iter()
        .zip(w)
        .map(|(&c, &wc)| {
            let f = if total > 0.0 { wc / total } else { 1.0 / n };
            f * conformer_j(pr, row, c)
        })
        .sum()
}

/// One candidate structure: its name, prediction and label mapping.
#[derive(Debug, Clone)]
pub struct Candidate {
    /// Name given on the command line.
    pub name: String,
    /// Its ensemble prediction.
    pub prediction: Prediction,
    /// How observation labels map to its atoms.
    pub labels: LabelMap,
    /// Prior probability (any positive number; normalised over candidates).
    pub prior: f64,
}

/// Options of [`rank`].
#[derive(Debug, Clone, Copy)]
pub struct RankOptions {
    /// Error model.
    pub error: ErrorModel,
    /// Likelihood ratio winner/runner-up needed to call a winner.
    pub decisive_ratio: f64,
    /// Also fit free conformer populations per candidate (reported apart).
    pub fit_populations: bool,
}

impl Default for RankOptions {
    fn default() -> Self {
        RankOptions {
            error: ErrorModel::default(),
            decisive_ratio: DEFAULT_DECISIVE_RATIO,
            fit_populations: false,
        }
    }
}

/// Score of predicted couplings against the observations.
#[derive(Debug, Clone, Serialize)]
pub struct Score {
    /// Predicted J per observation, Hz.
    pub predicted_hz: Vec<f64>,
    /// observed − predicted per observation, Hz.
    pub error_hz: Vec<f64>,
    /// Root-mean-square error, Hz.
    pub rmsd_hz: f64,
    /// Largest |error|, Hz.
    pub max_abs_error_hz: f64,
    /// Observation with the largest |error| (its label).
    pub max_error_at: String,
    /// ln L under the error model (density per Hz^n).
    pub ln_likelihood: f64,
    /// Probability over the candidates.
    pub probability: f64,
}

fn score(rows: &[MatchedRow], predicted: Vec<f64>, em: &ErrorModel) -> Score {
    let error_hz: Vec<f64> = rows
        .iter()
        .zip(&predicted)
        .map(|(r, p)| r.observed_hz - p)
        .collect();
    let n = error_hz.len().max(1) as f64;
    let rmsd_hz = (error_hz.iter().map(|e| e * e).sum::<f64>() / n).sqrt();
    let (mut max_abs, mut at) = (0.0f64, String::new());
    for (r, e) in rows.iter().zip(&error_hz) {
        if e.abs() >= max_abs {
            max_abs = e.abs();
            at = r.label.clone();
        }
    }
    let ln_likelihood = ln_likelihood(rows, &error_hz, em);
    Score {
        predicted_hz: predicted,
        error_hz,
        rmsd_hz,
        max_abs_error_hz: max_abs,
        max_error_at: at,
        ln_likelihood,
        probability: 0.0,
    }
}

/// ln L = Σ ln density(e_k, s_k) of the errors `error_hz` of `rows`.
pub fn ln_likelihood(rows: &[MatchedRow], error_hz: &[f64], em: &ErrorModel) -> f64 {
    rows.iter()
        .zip(error_hz)
        .map(|(r, &e)| em.ln_density(e, em.sigma_hz(r.sigma_hz)))
        .sum()
}

/// One candidate's result.
#[derive(Debug, Clone, Serialize)]
pub struct CandidateResult {
    /// Name.
    pub name: String,
    /// Its files.
    pub files: Vec<PathBuf>,
    /// Number of conformers.
    pub conformers: usize,
    /// Effective number of conformers.
    pub effective_conformers: f64,
    /// Normalised prior.
    pub prior: f64,
    /// Atom pair of each observation in this candidate, as `H7-H9`.
    pub pairs: Vec<String>,
    /// Boltzmann-averaged (ensemble-weighted) couplings and their score.
    pub boltzmann: Score,
    /// Couplings with fitted free populations and their score (optional;
    /// the probabilities from fitted couplings favour flexible candidates
    /// and are shown apart, never mixed with the Boltzmann ones).
    pub fitted: Option<Score>,
    /// Fitted populations (conformer, value) with value > 0.001.
    pub fitted_populations: Vec<(usize, f64)>,
    /// Warnings (from prediction and fitting).
    pub warnings: Vec<String>,
}

/// The winner's probability under one alternative error model.
#[derive(Debug, Clone, Serialize)]
pub struct Sensitivity {
    /// What was changed, e.g. `scale x0.5`.
    pub setting: String,
    /// The error model used.
    pub error: ErrorModel,
    /// Probability of each candidate (Boltzmann couplings).
    pub probabilities: Vec<f64>,
    /// Index of the most probable candidate.
    pub winner: usize,
}

/// Result of [`rank`].
#[derive(Debug, Clone, Serialize)]
pub struct Ranking {
    /// Observation labels (`atom1-atom2`).
    pub observations: Vec<String>,
    /// Observed couplings, Hz.
    pub observed_hz: Vec<f64>,
    /// Combined scale per observation under the default model, Hz.
    pub scale_hz: Vec<f64>,
    /// The error model.
    pub error: ErrorModel,
    /// Candidates in input order.
    pub candidates: Vec<CandidateResult>,
    /// Index of the most probable candidate (Boltzmann couplings).
    pub winner: usize,
    /// Likelihood ratio (with priors) of the winner over the runner-up;
    /// `None` with a single candidate.
    pub ratio_to_runner_up: Option<f64>,
    /// The ratio needed to call a winner.
    pub decisive_ratio: f64,
    /// True when the ratio reaches `decisive_ratio` (else: cannot tell).
    pub decisive: bool,
    /// Probabilities under other error models.
    pub sensitivity: Vec<Sensitivity>,
    /// Lowest and highest probability of the winner over the sensitivity runs (default included).
    pub winner_probability_range: (f64, f64),
    /// True if some alternative model picks another winner.
    pub winner_changes: bool,
    /// Warnings for the reader.
    pub warnings: Vec<String>,
}

/// The alternative error models of the sensitivity check: scale ×0.5 and
/// ×2, ν = 2 and 10, each with the other parameters at their values in `em`.
pub fn sensitivity_models(em: &ErrorModel) -> Vec<(String, ErrorModel)> {
    let mut v = vec![
        (
            "scale x0.5".to_string(),
            ErrorModel {
                scale_hz: em.scale_hz * 0.5,
                ..*em
            },
        ),
        (
            "scale x2".to_string(),
            ErrorModel {
                scale_hz: em.scale_hz * 2.0,
                ..*em
            },
        ),
    ];
    for nu in [2.0, 10.0] {
        if em.nu != Some(nu) {
            v.push((
                format!("nu = {nu}"),
                ErrorModel {
                    nu: Some(nu),
                    ..*em
                },
            ));
        }
    }
    v
}

/// Probabilities of candidates from their ln L and priors.
fn probabilities(ln_l: &[f64], priors: &[f64]) -> Vec<f64> {
    let w: Vec<f64> = ln_l.iter().zip(priors).map(|(l, p)| l + p.ln()).collect();
    normalise_log(&w)
}

fn argmax(v: &[f64]) -> usize {
    v.iter()
        .enumerate()
        .max_by(|a, b| a.1.total_cmp(b.1))
        .map(|(i, _)| i)
        .unwrap_or(0)
}

/// Ranks `candidates` against `obs` (module docs).
pub fn rank(candidates: &[Candidate], obs: &[Observation], opts: &RankOptions) -> Result<Ranking> {
    opts.error.validate()?;
    if candidates.is_empty() {
        return Err(Error::Usage("no candidates to rank".into()));
    }
    if obs.is_empty() {
        return Err(Error::Usage("no observations to rank against".into()));
    }
    let mut seen = BTreeMap::new();
    for c in candidates {
        if seen.insert(c.name.as_str(), ()).is_some() {
            return Err(Error::Usage(format!(
                "two candidates are named '{}'; give each a different name",
                c.name
            )));
        }
        if !(c.prior.is_finite() && c.prior > 0.0) {
            return Err(Error::Usage(format!(
                "candidate '{}': the prior must be a positive number, got {}",
                c.name, c.prior
            )));
        }
    }
    let prior_sum: f64 = candidates.iter().map(|c| c.prior).sum();
    let priors: Vec<f64> = candidates.iter().map(|c| c.prior / prior_sum).collect();
    let mut warnings = Vec::new();
    let mut matched = Vec::with_capacity(candidates.len());
    for c in candidates {
        let rows = match_rows(
            obs,
            &c.prediction,
            |l| c.labels.resolve(&c.prediction.topology, &c.name, l),
            &mut warnings,
        )?;
        matched.push(rows);
    }
    let mut results = Vec::with_capacity(candidates.len());
    for ((c, rows), &prior) in candidates.iter().zip(&matched).zip(&priors) {
        let pr = &c.prediction;
        let pop: Vec<f64> = pr.conformers.iter().map(|k| k.population).collect();
        let all: Vec<usize> = (0..pop.len()).collect();
        let predicted: Vec<f64> = rows.iter().map(|r| weighted_j(pr, r, &all, &pop)).collect();
        let boltzmann = score(rows, predicted, &opts.error);
        let mut cw = pr.warnings.clone();
        let (fitted, fitted_populations) = if opts.fit_populations {
            match fit_candidate(pr, rows, &opts.error) {
                Ok((s, p)) => (Some(s), p),
                Err(e) => {
                    cw.push(format!("population fit failed: {e}"));
                    (None, Vec::new())
                }
            }
        } else {
            (None, Vec::new())
        };
        results.push(CandidateResult {
            name: c.name.clone(),
            files: pr.files.clone(),
            conformers: pr.conformers.len(),
            effective_conformers: pr.effective_conformers,
            prior,
            pairs: rows
                .iter()
                .map(|r| {
                    format!(
                        "{}-{}",
                        atomref::label(&pr.topology, r.atoms.0),
                        atomref::label(&pr.topology, r.atoms.1)
                    )
                })
                .collect(),
            boltzmann,
            fitted,
            fitted_populations,
            warnings: cw,
        });
    }
    let ln_l: Vec<f64> = results.iter().map(|r| r.boltzmann.ln_likelihood).collect();
    let p = probabilities(&ln_l, &priors);
    for (r, &pi) in results.iter_mut().zip(&p) {
        r.boltzmann.probability = pi;
    }
    if results.iter().all(|r| r.fitted.is_some()) {
        let lf: Vec<f64> = results
            .iter()
            .map(|r| r.fitted.as_ref().map_or(0.0, |s| s.ln_likelihood))
            .collect();
        let pf = probabilities(&lf, &priors);
        for (r, &pi) in results.iter_mut().zip(&pf) {
            if let Some(s) = r.fitted.as_mut() {
                s.probability = pi;
            }
        }
    }
    let winner = argmax(&p);
    let ratio_to_runner_up = if p.len() > 1 {
        let w = ln_l[winner] + priors[winner].ln();
        let second = (0..p.len())
            .filter(|&i| i != winner)
            .map(|i| ln_l[i] + priors[i].ln())
            .fold(f64::NEG_INFINITY, f64::max);
        Some(finite_ratio(w - second))
    } else {
        None
    };
    let decisive = ratio_to_runner_up.is_some_and(|r| r >= opts.decisive_ratio);
    let mut sensitivity = Vec::new();
    let (mut lo, mut hi) = (p[winner], p[winner]);
    let mut winner_changes = false;
    for (setting, em) in sensitivity_models(&opts.error) {
        let ln_l: Vec<f64> = matched
            .iter()
            .zip(&results)
            .map(|(rows, r)| ln_likelihood(rows, &r.boltzmann.error_hz, &em))
            .collect();
        let ps = probabilities(&ln_l, &priors);
        let w = argmax(&ps);
        winner_changes |= w != winner;
        lo = lo.min(ps[winner]);
        hi = hi.max(ps[winner]);
        sensitivity.push(Sensitivity {
            setting,
            error: em,
            probabilities: ps,
            winner: w,
        });
    }
    let first = matched.first().map(Vec::as_slice).unwrap_or(&[]);
    Ok(Ranking {
        observations: first.iter().map(|r| r.label.clone()).collect(),
        observed_hz: first.iter().map(|r| r.observed_hz).collect(),
        scale_hz: first
            .iter()
            .map(|r| opts.error.sigma_hz(r.sigma_hz))
            .collect(),
        error: opts.error,
        candidates: results,
        winner,
        ratio_to_runner_up,
        decisive_ratio: opts.decisive_ratio,
        decisive,
        sensitivity,
        winner_probability_range: (lo, hi),
        winner_changes,
        warnings,
    })
}

/// exp(x) capped at 1e300 so that no infinity reaches an output.
pub fn finite_ratio(ln_ratio: f64) -> f64 {
    if ln_ratio.is_nan() {
        1.0
    } else {
        ln_ratio.min(690.0).exp()
    }
}

/// Free-population fit of one candidate's conformers to the observations
/// (σ = the error model's combined scale), and the score of the fitted
/// couplings.
fn fit_candidate(
    pr: &Prediction,
    rows: &[MatchedRow],
    em: &ErrorModel,
) -> Result<(Score, Vec<(usize, f64)>)> {
    let n = pr.conformers.len();
    let m = rows.len();
    let a = nalgebra::DMatrix::from_fn(m, n, |k, c| conformer_j(pr, &rows[k], c));
    let y = nalgebra::DVector::from_iterator(m, rows.iter().map(|r| r.observed_hz));
    let s = nalgebra::DVector::from_iterator(m, rows.iter().map(|r| em.sigma_hz(r.sigma_hz)));
    let problem = Problem::new(
        a,
        y,
        s,
        (1..=n).map(|i| format!("conformer {i}")).collect(),
        rows.iter().map(|r| r.label.clone()).collect(),
    )?;
    let fit = simplex_ls::fit_populations(
        &problem,
        &simplex_ls::FitOptions {
            when_underdetermined: WhenUnderdetermined::Warn,
            ..Default::default()
        },
    )?;
    let p = fit.values();
    let predicted = problem.predict(&p);
    let sc = score(rows, predicted.iter().copied().collect(), em);
    let pops = p
        .iter()
        .enumerate()
        .filter(|(_, &v)| v > 0.001)
        .map(|(i, &v)| (i + 1, v))
        .collect();
    Ok((sc, pops))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn student_t_density_matches_statrs() {
        use statrs::distribution::{Continuous, StudentsT};
        let em = ErrorModel {
            scale_hz: 1.3,
            nu: Some(4.0),
            default_measurement_hz: 0.0,
        };
        let t = StudentsT::new(0.0, 1.3, 4.0).unwrap();
        for e in [-3.0, -0.4, 0.0, 0.7, 5.0] {
            assert!((em.ln_density(e, 1.3) - t.ln_pdf(e)).abs() < 1e-12);
        }
        let g = ErrorModel { nu: None, ..em };
        let n = statrs::distribution::Normal::new(0.0, 1.3).unwrap();
        assert!((g.ln_density(0.9, 1.3) - n.ln_pdf(0.9)).abs() < 1e-12);
    }

    #[test]
    fn normalise_is_safe() {
        let p = normalise_log(&[-1e6, -1e6 - 2.0_f64.ln()]);
        assert!((p[0] - 2.0 / 3.0).abs() < 1e-9);
        let p = normalise_log(&[f64::NEG_INFINITY, f64::NEG_INFINITY]);
        assert_eq!(p, vec![0.5, 0.5]);
    }

    #[test]
    fn mapping_csv() {
        let m = LabelMap::parse("# x\nlabel,atom\nH1,7\nH2ax,H9\n", Path::new("m.csv")).unwrap();
        assert_eq!(m.entries.len(), 2);
        let e = LabelMap::parse("label,atom\nH1,7\nH1,8\n", Path::new("m.csv")).unwrap_err();
        assert_eq!(e.to_string(), "m.csv:3: label 'H1' is mapped twice");
        assert!(LabelMap::parse("a,b\n", Path::new("m.csv")).is_err());
    }

    #[test]
    fn sensitivity_models_skip_the_default_nu() {
        let em = ErrorModel {
            nu: Some(10.0),
            ..ErrorModel::default()
        };
        let v = sensitivity_models(&em);
        assert_eq!(v.len(), 3);
    }
}
