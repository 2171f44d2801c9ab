//! Fitting populations of conformers (or groups of conformers) to measured
//! couplings. Everything here works on plain numbers: a design matrix A
//! (n_obs × n_states) of predicted couplings in Hz, observed couplings y in Hz
//! and their standard errors σ in Hz, bundled in a [`Problem`].
//!
//! Models:
//! * [`simplex_ls`] — free populations: min χ²(p) subject to p ≥ 0, Σp = 1,
//!   solved exactly (Lawson–Hanson NNLS, [`nnls`]).
//! * [`two_state`] — a two-state equilibrium with K and ΔG and profile
//!   confidence intervals.
//! * [`maxent`] — minimal reweighting of a computed ensemble (Bayesian
//!   ensemble refinement, Hummer & Köfinger 2015).
//! * [`vanthoff`] — ΔH and ΔS of a two-state equilibrium from a temperature
//!   series.
//! * [`montecarlo`] — seeded resampling of the observations ([`rng`]).
//! * [`assign`] — unassigned diastereotopic pairs, tried both ways round.
//! * [`diagnose`] — what the data can and cannot say, in words.
//!
//! χ² = Σ_k ((y_k − (A p)_k)/σ_k)². The σ are the caller's: the uncertainty of
//! the measured coupling and that of the coupling model combined in quadrature
//! ([`combine_sigma`]). Fitted populations are model estimates and inherit the
//! error of the coupling equation; they should be confirmed independently.

pub mod assign;
pub mod diagnose;
pub mod maxent;
pub mod montecarlo;
pub mod nnls;
pub mod rng;
pub mod simplex_ls;
pub mod two_state;
pub mod vanthoff;

use nalgebra::{DMatrix, DVector};
use serde::Serialize;
use statrs::distribution::{ChiSquared, ContinuousCDF};

use crate::error::{Error, Result};

pub use diagnose::{Diagnostic, Severity};

/// Suggested standard error of a measured 3J(H,H) in Hz when the caller has
/// no better figure: 0.2 Hz, typical for couplings read from a resolved
/// first-order multiplet (common practice; the lead sets the default used by
/// the command line).
pub const DEFAULT_MEASUREMENT_SIGMA_HZ: f64 = 0.2;

/// Normalised residuals |r/σ| above this are flagged (2σ, common practice).
pub const RESIDUAL_FLAG_SIGMAS: f64 = 2.0;

/// Default threshold in Hz below which two states' predicted couplings are
/// reported as indistinguishable (every coupling within 0.3 Hz).
pub const DEFAULT_SAME_COUPLINGS_HZ: f64 = 0.3;

/// Molar gas constant R in J/(mol K) (CODATA 2018, exact since the 2019 SI).
pub const GAS_CONSTANT_J_PER_MOL_K: f64 = 8.314_462_618;

/// Joules per thermochemical kilocalorie (exact by definition).
pub const J_PER_KCAL: f64 = 4184.0;

/// Combined standard error σ = √(σ_meas² + σ_model²) in Hz of one
/// observation: the measurement error and the coupling model's error are
/// independent, so their variances add. Typical inputs: σ_meas =
/// [`DEFAULT_MEASUREMENT_SIGMA_HZ`]; σ_model = the published RMS deviation of
/// the Karplus-type equation used (for example about 0.5–0.7 Hz for the
/// Haasnoot–de Leeuw–Altona equation on its training set; the caller takes the
/// number from the equation's parameter file).
pub fn combine_sigma(measurement_hz: f64, model_hz: f64) -> f64 {
    measurement_hz.hypot(model_hz)
}

/// A population-fitting problem: n_obs observed couplings and n_states
/// states (conformers, or groups of conformers already averaged within each
/// group by the caller).
#[derive(Debug, Clone)]
pub struct Problem {
    /// Predicted couplings in Hz: row k = observation, column i = state.
    pub a: DMatrix<f64>,
    /// Observed couplings in Hz.
    pub y: DVector<f64>,
    /// Standard error of each observation in Hz (> 0), already combined.
    pub sigma: DVector<f64>,
    /// One label per state (column of `a`).
    pub state_labels: Vec<String>,
    /// One label per observation (row of `a`).
    pub obs_labels: Vec<String>,
}

impl Problem {
    /// Builds and checks a problem: shapes agree, at least one observation and
    /// one state, every number finite, every σ > 0.
    pub fn new(
        a: DMatrix<f64>,
        y: DVector<f64>,
        sigma: DVector<f64>,
        state_labels: Vec<String>,
        obs_labels: Vec<String>,
    ) -> Result<Self> {
        let (m, n) = a.shape();
        if m == 0 {
            return Err(Error::Fit("no observed couplings to fit".into()));
        }
        if n == 0 {
            return Err(Error::Fit("no states (conformers or groups) to fit".into()));
        }
        if y.len() != m || sigma.len() != m || obs_labels.len() != m {
            return Err(Error::Fit(format!(
                "{m} rows of predicted couplings but {} observed couplings, {} standard errors and {} observation labels",
                y.len(),
                sigma.len(),
                obs_labels.len()
            )));
        }
        if state_labels.len() != n {
            return Err(Error::Fit(format!(
                "{n} states but {} state labels",
                state_labels.len()
            )));
        }
        for k in 0..m {
            if !y[k].is_finite() {
                return Err(Error::Fit(format!(
                    "observed coupling {} is not a number",
                    obs_labels[k]
                )));
            }
            if !(sigma[k].is_finite() && sigma[k] > 0.0) {
                return Err(Error::Fit(format!(
                    "observed coupling {}: standard error must be a positive number of Hz, got {}",
                    obs_labels[k], sigma[k]
                )));
            }
            for i in 0..n {
                if !a[(k, i)].is_finite() {
                    return Err(Error::Fit(format!(
                        "predicted coupling {} of state {} is not a number",
                        obs_labels[k], state_labels[i]
                    )));
                }
            }
        }
        Ok(Problem {
            a,
            y,
            sigma,
            state_labels,
            obs_labels,
        })
    }

    /// Like [`Problem::new`] with labels "state 1", … and "J1", ….
    pub fn unlabelled(a: DMatrix<f64>, y: DVector<f64>, sigma: DVector<f64>) -> Result<Self> {
        let states = (1..=a.ncols()).map(|i| format!("state {i}")).collect();
        let obs = (1..=a.nrows()).map(|k| format!("J{k}")).collect();
        Self::new(a, y, sigma, states, obs)
    }

    /// Number of observed couplings.
    pub fn n_obs(&self) -> usize {
        self.a.nrows()
    }

    /// Number of states.
    pub fn n_states(&self) -> usize {
        self.a.ncols()
    }

    /// The σ-weighted design B = diag(1/σ) A and data c = y/σ (dimensionless).
    pub fn weighted(&self) -> (DMatrix<f64>, DVector<f64>) {
        let mut b = self.a.clone();
        for k in 0..self.n_obs() {
            let s = 1.0 / self.sigma[k];
            b.row_mut(k).scale_mut(s);
        }
        let c = self.y.component_div(&self.sigma);
        (b, c)
    }

    /// Predicted couplings A p in Hz for populations (or weights) `p`.
    pub fn predict(&self, p: &DVector<f64>) -> DVector<f64> {
        &self.a * p
    }

    /// χ² of populations `p`.
    pub fn chi2(&self, p: &DVector<f64>) -> f64 {
        let pred = self.predict(p);
        (0..self.n_obs())
            .map(|k| ((self.y[k] - pred[k]) / self.sigma[k]).powi(2))
            .sum()
    }

    /// A copy with rows `i` and `j` of the design matrix swapped (an
    /// unassigned diastereotopic pair read the other way round).
    pub fn with_prediction_rows_swapped(&self, i: usize, j: usize) -> Problem {
        let mut p = self.clone();
        p.a.swap_rows(i, j);
        p
    }
}

/// One observation after a fit.
#[derive(Debug, Clone, Serialize)]
pub struct Residual {
    /// Observation label.
    pub label: String,
    /// Observed coupling, Hz.
    pub observed_hz: f64,
    /// Fitted (back-calculated) coupling, Hz.
    pub fitted_hz: f64,
    /// Standard error used, Hz.
    pub sigma_hz: f64,
    /// observed − fitted, Hz.
    pub residual_hz: f64,
    /// (observed − fitted)/σ.
    pub normalised: f64,
    /// |normalised| > [`RESIDUAL_FLAG_SIGMAS`].
    pub flagged: bool,
}

/// Goodness of fit.
#[derive(Debug, Clone, Serialize)]
pub struct FitQuality {
    /// χ² = Σ ((y − ŷ)/σ)².
    pub chi2: f64,
    /// Degrees of freedom n_obs − n_free_params (0 if not positive).
    pub dof: usize,
    /// χ²/dof, when dof > 0.
    pub reduced_chi2: Option<f64>,
    /// P(χ²_dof ≥ χ²): the probability of a fit this poor or worse if the
    /// model and σ are right (statrs chi-squared survival function), when
    /// dof > 0.
    pub p_value: Option<f64>,
    /// Root-mean-square residual in Hz.
    pub rmsd_hz: f64,
    /// Each observation.
    pub residuals: Vec<Residual>,
}

impl FitQuality {
    /// Quality of `fitted` (Hz) against the observations of `problem`, for a
    /// model with `n_free_params` adjustable parameters.
    pub fn of(problem: &Problem, fitted: &DVector<f64>, n_free_params: usize) -> FitQuality {
        Self::from_parts(
            &problem.obs_labels,
            problem.y.as_slice(),
            fitted.as_slice(),
            problem.sigma.as_slice(),
            n_free_params,
        )
    }

    /// Quality from parallel slices (labels, observed Hz, fitted Hz, σ Hz).
    pub fn from_parts(
        labels: &[String],
        observed: &[f64],
        fitted: &[f64],
        sigma: &[f64],
        n_free_params: usize,
    ) -> FitQuality {
        let mut chi2 = 0.0;
        let mut ss = 0.0;
        let residuals: Vec<Residual> = (0..observed.len())
            .map(|k| {
                let r = observed[k] - fitted[k];
                let z = r / sigma[k];
                chi2 += z * z;
                ss += r * r;
                Residual {
                    label: labels.get(k).cloned().unwrap_or_default(),
                    observed_hz: observed[k],
                    fitted_hz: fitted[k],
                    sigma_hz: sigma[k],
                    residual_hz: r,
                    normalised: z,
                    flagged: z.abs() > RESIDUAL_FLAG_SIGMAS,
                }
            })
            .collect();
        let n = observed.len();
        let dof = n.saturating_sub(n_free_params);
        let (reduced_chi2, p_value) = if dof > 0 {
            let p = ChiSquared::new(dof as f64)
                .ok()
                .map(|d| d.sf(chi2))
                .filter(|v| v.is_finite());
            (Some(chi2 / dof as f64), p)
        } else {
            (None, None)
        };
        FitQuality {
            chi2,
            dof,
            reduced_chi2,
            p_value,
            rmsd_hz: if n > 0 { (ss / n as f64).sqrt() } else { 0.0 },
            residuals,
        }
    }
}

/// Which bound a fitted fraction sits on.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum Bound {
    /// The fraction is 0: the state is not needed to explain the data.
    Zero,
    /// The fraction is 1: the state alone explains the data best.
    One,
}

/// A two-sided interval [lower, upper] of a quantity.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Interval {
    /// Lower end.
    pub lower: f64,
    /// Upper end.
    pub upper: f64,
}

impl Interval {
    /// Whether `v` lies in the closed interval.
    pub fn contains(&self, v: f64) -> bool {
        self.lower <= v && v <= self.upper
    }
}

/// What to do when there are more free populations than observations.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum WhenUnderdetermined {
    /// Return [`Error::Fit`] with a message saying how to fix the problem
    /// (group the states, add couplings, or use the reweighting model).
    #[default]
    Refuse,
    /// Fit anyway (the solution then is one of many that fit equally well,
    /// usually sparse) and add a warning [`Diagnostic`].
    Warn,
}
