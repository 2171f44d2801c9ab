//! Does any single conformer explain the measured couplings, or is a
//! mixture required?
//!
//! For one ensemble and a set of observations: each conformer's χ² =
//! Σ ((J_obs − J_pred)/σ)² with σ the combined measurement and model error
//! of [`crate::rank::ErrorModel`] (Gaussian here, whatever ν the model
//! carries: χ² needs Gaussian errors), its p-value P(χ²_n ≥ χ²) with n
//! degrees of freedom (the number of observations; a single conformer has no
//! adjustable parameter), and the observations it fails (|r| > 2σ). The same
//! for each ring-shape family ([`crate::assign::families`], couplings
//! population-weighted within the family), for the Boltzmann-weighted
//! ensemble, and for the best free mixture of conformers
//! ([`crate::fit::simplex_ls`], dof n − (k − 1) for k conformers with
//! non-zero fitted population).
//!
//! Verdict: "a single conformer explains the data" when some conformer has
//! p ≥ the threshold (default 0.05, common practice for a goodness-of-fit
//! test); otherwise "a mixture is required" when the Boltzmann average or
//! the fitted mixture reaches it; otherwise "nothing in the ensemble fits".

use serde::Serialize;
use statrs::distribution::{ChiSquared, ContinuousCDF};

use crate::assign;
use crate::atomref;
use crate::ensemble::predict::Prediction;
use crate::error::Result;
use crate::fit::{simplex_ls, Problem, WhenUnderdetermined, RESIDUAL_FLAG_SIGMAS};
use crate::observed::Observation;
use crate::rank::{self, ErrorModel, MatchedRow};

/// Default p-value threshold of the verdict (common practice).
pub const DEFAULT_P_THRESHOLD: f64 = 0.05;

/// Fit of one state (conformer, family, average, mixture) to the data.
#[derive(Debug, Clone, Serialize)]
pub struct StateFit {
    /// Name, e.g. `conformer 3`, `chair (theta < 90)`, `Boltzmann average`.
    pub name: String,
    /// Population (ensemble weight) of the state, where meaningful.
    pub population: Option<f64>,
    /// Predicted couplings per observation, Hz.
    pub predicted_hz: Vec<f64>,
    /// χ².
    pub chi2: f64,
    /// Degrees of freedom.
    pub dof: usize,
    /// P(χ²_dof ≥ χ²), when dof > 0.
    pub p_value: Option<f64>,
    /// Observations with |r| > 2σ.
    pub fails: Vec<String>,
}

/// Result of [`check`].
#[derive(Debug, Clone, Serialize)]
pub struct Check {
    /// Observation labels.
    pub observations: Vec<String>,
    /// Observed couplings, Hz.
    pub observed_hz: Vec<f64>,
    /// σ per observation, Hz.
    pub sigma_hz: Vec<f64>,
    /// Error model (its scale and measurement default are used; Gaussian).
    pub error: ErrorModel,
    /// p-value threshold.
    pub p_threshold: f64,
    /// Per conformer.
    pub conformers: Vec<StateFit>,
    /// Per ring-shape family of each six-membered ring (ring index, family).
    pub families: Vec<(usize, StateFit)>,
    /// Boltzmann-weighted ensemble.
    pub ensemble: StateFit,
    /// Best free mixture, if the fit ran.
    pub mixture: Option<StateFit>,
    /// Fitted populations (conformer 1-based, value > 0.001).
    pub mixture_populations: Vec<(usize, f64)>,
    /// Best single conformer (1-based).
    pub best_conformer: usize,
    /// `single conformer`, `mixture required` or `nothing fits`.
    pub verdict: String,
    /// The verdict in words.
    pub reason: String,
    /// Warnings.
    pub warnings: Vec<String>,
}

fn state(
    name: String,
    population: Option<f64>,
    rows: &[MatchedRow],
    predicted: Vec<f64>,
    sigma: &[f64],
    n_free: usize,
) -> StateFit {
    let mut chi2 = 0.0;
    let mut fails = Vec::new();
    for ((r, p), s) in rows.iter().zip(&predicted).zip(sigma) {
        let z = (r.observed_hz - p) / s;
        chi2 += z * z;
        if z.abs() > RESIDUAL_FLAG_SIGMAS {
            fails.push(r.label.clone());
        }
    }
    let dof = rows.len().saturating_sub(n_free);
    let p_value = if dof > 0 {
        ChiSquared::new(dof as f64)
            .ok()
            .map(|d| d.sf(chi2))
            .filter(|v| v.is_finite())
    } else {
        None
    };
    StateFit {
        name,
        population,
        predicted_hz: predicted,
        chi2,
        dof,
        p_value,
        fails,
    }
}

/// Checks every conformer, family, the ensemble and the best mixture
/// against `obs` (module docs).
pub fn check(
    pr: &Prediction,
    obs: &[Observation],
    em: &ErrorModel,
    p_threshold: f64,
) -> Result<Check> {
    em.validate()?;
    let mut warnings = Vec::new();
    let rows = rank::match_rows(
        obs,
        pr,
        |r| atomref::resolve(&pr.topology, r),
        &mut warnings,
    )?;
    let sigma: Vec<f64> = rows.iter().map(|r| em.sigma_hz(r.sigma_hz)).collect();
    let pop: Vec<f64> = pr.conformers.iter().map(|c| c.population).collect();
    let n = pop.len();
    let conformers: Vec<StateFit> = (0..n)
        .map(|c| {
            let pred = rows.iter().map(|r| rank::conformer_j(pr, r, c)).collect();
            state(
                format!("conformer {}", c + 1),
                Some(pop[c]),
                &rows,
                pred,
                &sigma,
                0,
            )
        })
        .collect();
    let mut families = Vec::new();
    for (ri, ring) in pr.rings.iter().enumerate() {
        if ring.atoms.len() != 6 {
            continue;
        }
        for (name, members) in assign::families(pr, ri) {
            let w: Vec<f64> = members.iter().map(|&c| pop[c]).collect();
            let pred = rows
                .iter()
                .map(|r| rank::weighted_j(pr, r, &members, &w))
                .collect();
            families.push((
                ri + 1,
                state(
                    format!("{name} ({} conformers)", members.len()),
                    Some(w.iter().sum()),
                    &rows,
                    pred,
                    &sigma,
                    0,
                ),
            ));
        }
    }
    let all: Vec<usize> = (0..n).collect();
    let ens_pred = rows
        .iter()
        .map(|r| rank::weighted_j(pr, r, &all, &pop))
        .collect();
    let ensemble = state("Boltzmann average".into(), None, &rows, ens_pred, &sigma, 0);
    let (mixture, mixture_populations) = match mixture_fit(pr, &rows, &sigma) {
        Ok((pred, pops)) => {
            let k = pops.len().max(1);
            (
                Some(state(
                    "best free mixture (fitted)".into(),
                    None,
                    &rows,
                    pred,
                    &sigma,
                    k - 1,
                )),
                pops,
            )
        }
        Err(e) => {
            warnings.push(format!("the free-mixture fit did not run: {e}"));
            (None, Vec::new())
        }
    };
    let best_conformer = conformers
        .iter()
        .enumerate()
        .min_by(|a, b| a.1.chi2.total_cmp(&b.1.chi2))
        .map(|(i, _)| i)
        .unwrap_or(0);
    let ok = |s: &StateFit| s.p_value.is_some_and(|p| p >= p_threshold);
    let explaining: Vec<&StateFit> = conformers.iter().filter(|s| ok(s)).collect();
    let (verdict, reason) = if !explaining.is_empty() {
        (
            "single conformer",
            format!(
                "{} conformer(s) explain the data alone (p >= {p_threshold}); best: {} (chi2 = {:.2}, p = {})",
                explaining.len(),
                conformers[best_conformer].name,
                conformers[best_conformer].chi2,
                fmt_p(conformers[best_conformer].p_value)
            ),
        )
    } else if ok(&ensemble) || mixture.as_ref().is_some_and(ok) {
        let which = if ok(&ensemble) {
            format!(
                "the Boltzmann average fits (chi2 = {:.2}, p = {})",
                ensemble.chi2,
                fmt_p(ensemble.p_value)
            )
        } else {
            let m = mixture.as_ref();
            format!(
                "the fitted mixture fits (chi2 = {:.2}, p = {})",
                m.map_or(0.0, |m| m.chi2),
                fmt_p(m.and_then(|m| m.p_value))
            )
        };
        (
            "mixture required",
            format!(
                "no single conformer reaches p >= {p_threshold} (best: {}, chi2 = {:.2}, p = {}), but {which}",
                conformers[best_conformer].name,
                conformers[best_conformer].chi2,
                fmt_p(conformers[best_conformer].p_value)
            ),
        )
    } else {
        (
            "nothing fits",
            format!(
                "neither a single conformer nor the Boltzmann average nor the best mixture reaches p >= {p_threshold}: the ensemble, the assignment of the observations or the coupling model is wrong"
            ),
        )
    };
    Ok(Check {
        observations: rows.iter().map(|r| r.label.clone()).collect(),
        observed_hz: rows.iter().map(|r| r.observed_hz).collect(),
        sigma_hz: sigma,
        error: *em,
        p_threshold,
        conformers,
        families,
        ensemble,
        mixture,
        mixture_populations,
        best_conformer: best_conformer + 1,
        verdict: verdict.to_string(),
        reason,
        warnings,
    })
}

/// Formats a p-value for the reports.
pub fn fmt_p(p: Option<f64>) -> String {
    match p {
        None => "-".to_string(),
        Some(p) if p < 1e-4 => format!("{p:.1e}"),
        Some(p) => format!("{p:.4}"),
    }
}

type MixtureResult = (Vec<f64>, Vec<(usize, f64)>);

fn mixture_fit(pr: &Prediction, rows: &[MatchedRow], sigma: &[f64]) -> Result<MixtureResult> {
    let n = pr.conformers.len();
    let m = rows.len();
    let a = nalgebra::DMatrix::from_fn(m, n, |k, c| rank::conformer_j(pr, &rows[k], c));
    let y = nalgebra::DVector::from_iterator(m, rows.iter().map(|r| r.observed_hz));
    let s = nalgebra::DVector::from_column_slice(sigma);
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
    let pred = problem.predict(&p).iter().copied().collect();
    let pops = p
        .iter()
        .enumerate()
        .filter(|(_, &v)| v > 0.001)
        .map(|(i, &v)| (i + 1, v))
        .collect();
    Ok((pred, pops))
}
