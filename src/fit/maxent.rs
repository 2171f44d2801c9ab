//! Minimal reweighting of a computed ensemble: Bayesian ensemble refinement
//! in the form of Hummer & Köfinger, "Bayesian ensemble refinement by replica
//! simulations and reweighting", J. Chem. Phys. 143 (2015) 243150 (the
//! EROS/BioEn functional; see also Köfinger et al., J. Chem. Theory Comput.
//! 15 (2019) 3390 for its efficient optimisation).
//!
//! Given reference weights w⁰ (for example Boltzmann weights from conformer
//! energies), find weights w on the simplex minimising
//!
//! ```text
//!     L(w) = θ S_KL(w ‖ w⁰) + χ²(w)/2,   S_KL = Σ w_i ln(w_i / w⁰_i),
//! ```
//!
//! where θ > 0 says how much the reference is trusted.
//!
//! # Solution by the dual
//!
//! L is strictly convex on the simplex. Its Fenchel dual in ν ∈ ℝ^{n_obs} is
//! the unconstrained, smooth, strictly convex problem
//!
//! ```text
//!     min_ν φ(ν) = θ ln Σ_i w⁰_i exp(−(Aᵀν)_i / θ) + Σ_k (ν_k y_k + σ_k² ν_k² / 2),
//! ```
//!
//! and the weights follow as w_i ∝ w⁰_i exp(−(Aᵀν)_i/θ). At the optimum
//! ∇φ = y − A w + σ² ν = 0, i.e. ν_k = ((A w)_k − y_k)/σ_k², which is the
//! exact optimality condition w_i ∝ w⁰_i exp(−Σ_k λ_k A_ki) with
//! λ = (A w − y)/(θ σ²) (Hummer & Köfinger 2015, the EROS/BioEn optimum).
//! φ is minimised by Newton's method, Hessian Cov_w(A)/θ + diag(σ²) (always
//! positive definite), with backtracking (Armijo) line search, log-sum-exp
//! evaluation, and a continuation in θ from large to small (each stage
//! warm-started) so that small θ converge as reliably as large ones.
//!
//! # Choosing θ
//!
//! [`ThetaRule::ReducedChi2`]: the largest θ (the gentlest reweighting) for
//! which χ²/n_obs ≤ target (default 1): χ² grows with θ, so θ is bracketed on
//! a logarithmic grid and then bisected. If the reference already meets the
//! target, the reference weights are returned unchanged; if no θ does, the
//! smallest θ of the grid is used and a diagnostic says so.
//!
//! The fraction of the reference ensemble kept is exp(−S_KL) (1 for no
//! reweighting, 1/n when all weight is moved onto one of n equally weighted
//! conformers).

use nalgebra::{DMatrix, DVector};
use serde::Serialize;

use super::diagnose::Diagnostic;
use super::{FitQuality, Problem};
use crate::error::{Error, Result};

/// Default target χ²/n_obs for [`ThetaRule::ReducedChi2`].
pub const DEFAULT_TARGET_REDUCED_CHI2: f64 = 1.0;

/// Below this fraction of the reference kept, a diagnostic warns.
pub const LITTLE_KEPT_BELOW: f64 = 0.1;

/// How θ is set.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ThetaRule {
    /// A fixed θ > 0.
    Fixed(f64),
    /// The largest θ with χ²/n_obs ≤ the given target (module docs).
    ReducedChi2(f64),
}

impl Default for ThetaRule {
    fn default() -> Self {
        ThetaRule::ReducedChi2(DEFAULT_TARGET_REDUCED_CHI2)
    }
}

/// Result of [`reweight`].
#[derive(Debug, Clone, Serialize)]
pub struct ReweightFit {
    /// θ used; `None` when the reference weights were kept (θ = ∞).
    pub theta: Option<f64>,
    /// Refined weights (sum 1), one per state.
    pub weights: Vec<f64>,
    /// Reference weights, normalised.
    pub reference_weights: Vec<f64>,
    /// S_KL(w ‖ w⁰) = Σ w ln(w/w⁰) (≥ 0, nats).
    pub relative_entropy: f64,
    /// Fraction of the reference ensemble kept, exp(−S_KL).
    pub kept_fraction: f64,
    /// Value of the functional θ S_KL + χ²/2 (0·S when θ = ∞ is omitted).
    pub functional: f64,
    /// Lagrange multipliers λ_k = ((A w)_k − y_k)/(θ σ_k²), 1/Hz.
    pub lambda: Vec<f64>,
    /// Goodness of fit; dof = n_obs (no parameters are counted).
    pub quality: FitQuality,
    /// Findings worth telling the user.
    pub diagnostics: Vec<Diagnostic>,
}

/// Checks and normalises reference weights.
fn normalise_reference(w0: &[f64], n: usize) -> Result<DVector<f64>> {
    if w0.len() != n {
        return Err(Error::Fit(format!(
            "{n} states but {} reference weights",
            w0.len()
        )));
    }
    if w0.iter().any(|&v| !(v.is_finite() && v >= 0.0)) {
        return Err(Error::Fit(
            "reference weights must be non-negative numbers".into(),
        ));
    }
    let s: f64 = w0.iter().sum();
    if s.is_nan() || s <= 0.0 {
        return Err(Error::Fit("reference weights are all zero".into()));
    }
    Ok(DVector::from_iterator(n, w0.iter().map(|v| v / s)))
}

/// The dual problem for one θ.
struct Dual<'a> {
    a: &'a DMatrix<f64>,
    y: &'a DVector<f64>,
    s2: DVector<f64>,
    ln_w0: Vec<f64>,
}

impl Dual<'_> {
    /// φ(ν) and the weights w(ν).
    fn eval(&self, nu: &DVector<f64>, theta: f64, w: &mut DVector<f64>) -> f64 {
        let atn = self.a.tr_mul(nu);
        let mut mx = f64::NEG_INFINITY;
        for i in 0..w.len() {
            let s = self.ln_w0[i] - atn[i] / theta;
            w[i] = s;
            if s > mx {
                mx = s;
            }
        }
        let mut z = 0.0;
        for wi in w.iter_mut() {
            *wi = if wi.is_finite() {
                (*wi - mx).exp()
            } else {
                0.0
            };
            z += *wi;
        }
        w.unscale_mut(z);
        let lse = mx + z.ln();
        let quad: f64 = (0..nu.len())
            .map(|k| nu[k] * self.y[k] + 0.5 * self.s2[k] * nu[k] * nu[k])
            .sum();
        theta * lse + quad
    }

    /// Newton with backtracking from `nu` (updated in place); returns the
    /// iterations, or `None` without convergence.
    fn minimise(&self, nu: &mut DVector<f64>, theta: f64, w: &mut DVector<f64>) -> Option<usize> {
        let m = nu.len();
        let scale_hz = 1.0 + self.y.amax();
        // θ·ln Σ w⁰ exp(…) is evaluated as θ·(max + ln z): its rounding error
        // grows with θ·|ln w⁰|, which for large θ and skewed reference
        // weights exceeds a relative allowance on φ alone.
        let max_ln_w0 = self
            .ln_w0
            .iter()
            .filter(|v| v.is_finite())
            .map(|v| v.abs())
            .fold(0.0, f64::max);
        let rounding = 1e-13 * theta * (1.0 + max_ln_w0);
        let mut phi = self.eval(nu, theta, w);
        for it in 0..200 {
            let mean = self.a * &*w;
            let grad = self.y - &mean + self.s2.component_mul(nu);
            if grad.amax() <= 1e-10 * scale_hz {
                return Some(it);
            }
            // Hessian Cov_w(A)/θ + diag(σ²).
            let mut centred = self.a.clone();
            for (i, mut col) in centred.column_iter_mut().enumerate() {
                let sw = w[i].sqrt();
                col -= &mean;
                col *= sw;
            }
            let mut h = (&centred * centred.transpose()) / theta;
            for k in 0..m {
                h[(k, k)] += self.s2[k];
            }
            let step = h.cholesky()?.solve(&(-&grad));
            let slope = grad.dot(&step);
            let mut t = 1.0;
            let mut trial = w.clone();
            loop {
                let cand = &*nu + &step * t;
                let p = self.eval(&cand, theta, &mut trial);
                // Armijo, with an allowance for rounding in φ itself.
                if p.is_finite() && p <= phi + 1e-4 * t * slope + 1e-14 * phi.abs() + rounding {
                    *nu = cand;
                    phi = p;
                    std::mem::swap(w, &mut trial);
                    break;
                }
                t *= 0.5;
                if t < 1e-12 {
                    // No descent possible at this precision: accept if the
                    // gradient is small in a looser sense.
                    return (grad.amax() <= 1e-7 * scale_hz).then_some(it);
                }
            }
        }
        None
    }
}

/// Kullback–Leibler divergence Σ w ln(w/w⁰).
fn kl(w: &DVector<f64>, w0: &DVector<f64>) -> f64 {
    w.iter()
        .zip(w0.iter())
        .filter(|(&a, _)| a > 0.0)
        .map(|(&a, &b)| a * (a / b).ln())
        .sum::<f64>()
        .max(0.0)
}

struct Solver<'a> {
    dual: Dual<'a>,
    w0: DVector<f64>,
    nu: DVector<f64>,
    theta_done: f64,
}

impl<'a> Solver<'a> {
    fn new(problem: &'a Problem, w0: DVector<f64>) -> Self {
        let s2 = problem.sigma.map(|s| s * s);
        let ln_w0 = w0.iter().map(|v| v.ln()).collect();
        Solver {
            dual: Dual {
                a: &problem.a,
                y: &problem.y,
                s2,
                ln_w0,
            },
            w0,
            nu: DVector::zeros(problem.n_obs()),
            theta_done: f64::INFINITY,
        }
    }

    /// Weights at θ, by continuation from the last θ solved (or from a
    /// large θ) in steps of at most a factor 10 downwards.
    fn solve(&mut self, theta: f64) -> Result<DVector<f64>> {
        let mut w = self.w0.clone();
        let mut stages = Vec::new();
        let mut t = theta;
        let start = if self.theta_done.is_finite() && self.theta_done >= theta {
            self.theta_done
        } else {
            // A θ at which w ≈ w⁰: well above the χ² scale.
            self.nu.fill(0.0);
            let c0 = chi2_of(self.dual.a, self.dual.y, &self.dual.s2, &self.w0);
            (1e3 * (1.0 + c0)).max(theta)
        };
        while t < start {
            stages.push(t);
            t *= 10.0;
        }
        stages.reverse();
        if stages.is_empty() {
            stages.push(theta);
        }
        for &th in &stages {
            self.dual
                .minimise(&mut self.nu, th, &mut w)
                .ok_or_else(|| {
                    Error::Fit(format!(
                        "the reweighting did not converge at theta = {th:.3e}"
                    ))
                })?;
        }
        self.dual.eval(&self.nu, theta, &mut w);
        self.theta_done = theta;
        Ok(w)
    }
}

fn chi2_of(a: &DMatrix<f64>, y: &DVector<f64>, s2: &DVector<f64>, w: &DVector<f64>) -> f64 {
    let pred = a * w;
    (0..y.len()).map(|k| (y[k] - pred[k]).powi(2) / s2[k]).sum()
}

fn finish(
    problem: &Problem,
    w0: &DVector<f64>,
    w: DVector<f64>,
    theta: Option<f64>,
) -> ReweightFit {
    let pred = problem.predict(&w);
    let quality = FitQuality::of(problem, &pred, 0);
    let s = kl(&w, w0);
    let lambda = match theta {
        Some(t) => (0..problem.n_obs())
            .map(|k| (pred[k] - problem.y[k]) / (t * problem.sigma[k].powi(2)))
            .collect(),
        None => vec![0.0; problem.n_obs()],
    };
    let mut diagnostics = Vec::new();
    let kept = (-s).exp();
    if kept < LITTLE_KEPT_BELOW {
        diagnostics.push(Diagnostic::LittleOfReferenceKept {
            kept_fraction: kept,
        });
    }
    ReweightFit {
        theta,
        functional: theta.map_or(0.0, |t| t * s) + 0.5 * quality.chi2,
        weights: w.iter().copied().collect(),
        reference_weights: w0.iter().copied().collect(),
        relative_entropy: s,
        kept_fraction: kept,
        lambda,
        quality,
        diagnostics,
    }
}

/// Reweights the ensemble of `problem` (one state per conformer) from the
/// reference weights `w0` (any positive scale; normalised here) by the rule
/// for θ (module docs).
pub fn reweight(problem: &Problem, w0: &[f64], rule: ThetaRule) -> Result<ReweightFit> {
    let w0 = normalise_reference(w0, problem.n_states())?;
    let m = problem.n_obs() as f64;
    let mut solver = Solver::new(problem, w0.clone());
    match rule {
        ThetaRule::Fixed(theta) => {
            if !(theta.is_finite() && theta > 0.0) {
                return Err(Error::Fit(format!(
                    "theta must be a positive number, got {theta}"
                )));
            }
            let w = solver.solve(theta)?;
            Ok(finish(problem, &w0, w, Some(theta)))
        }
        ThetaRule::ReducedChi2(target) => {
            if !(target.is_finite() && target > 0.0) {
                return Err(Error::Fit(format!(
                    "the target chi-squared per coupling must be positive, got {target}"
                )));
            }
            let c0 = problem.chi2(&w0);
            if c0 / m <= target {
                let mut fit = finish(problem, &w0, w0.clone(), None);
                fit.diagnostics.push(Diagnostic::ReferenceAlreadyFits {
                    reduced_chi2: c0 / m,
                });
                return Ok(fit);
            }
            // Descending grid θ = (1 + χ²₀)·10^k, k = 2, 1, …, −10.
            let base = 1.0 + c0;
            let mut fail = None;
            let mut pass = None;
            let mut last = (0.0, DVector::zeros(0));
            for k in (-10..=2).rev() {
                let th = base * 10f64.powi(k);
                let w = solver.solve(th)?;
                let r = problem.chi2(&w) / m;
                if r <= target {
                    pass = Some((th, w));
                    break;
                }
                fail = Some(th);
                last = (th, w);
            }
            let Some((mut th_pass, mut w_pass)) = pass else {
                let (th, w) = last;
                let mut fit = finish(problem, &w0, w, Some(th));
                fit.diagnostics.insert(
                    0,
                    Diagnostic::TargetUnreachable {
                        target,
                        best_reduced_chi2: fit.quality.chi2 / m,
                    },
                );
                return Ok(fit);
            };
            if let Some(mut th_fail) = fail {
                // Bisect ln θ between th_pass (χ²/m ≤ target) and th_fail.
                for _ in 0..60 {
                    if th_fail / th_pass < 1.0 + 1e-6 {
                        break;
                    }
                    let mid = (th_pass * th_fail).sqrt();
                    solver.theta_done = f64::INFINITY;
                    let w = solver.solve(mid)?;
                    if problem.chi2(&w) / m <= target {
                        th_pass = mid;
                        w_pass = w;
                    } else {
                        th_fail = mid;
                    }
                }
            }
            Ok(finish(problem, &w0, w_pass, Some(th_pass)))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fit::rng::Xoshiro256StarStar;
    use crate::fit::simplex_ls::solve_populations;

    fn ensemble(seed: u64, m: usize, n: usize) -> (Problem, Vec<f64>) {
        let mut rng = Xoshiro256StarStar::seed_from_u64(seed);
        let a = DMatrix::from_fn(m, n, |_, _| 1.0 + 12.0 * rng.next_f64());
        // "True" weights differ from the reference.
        let truth = DVector::from_fn(n, |i, _| if i % 3 == 0 { 3.0 } else { 0.5 });
        let truth = &truth / truth.sum();
        let y = &a * &truth;
        let w0: Vec<f64> = (0..n).map(|_| 0.2 + rng.next_f64()).collect();
        let p = Problem::unlabelled(a, y, DVector::from_element(m, 0.3)).unwrap();
        (p, w0)
    }

    /// ln(w_i/w⁰_i) + Σ_k λ_k A_ki is the same for every i (the exact
    /// optimum form, Hummer & Köfinger 2015).
    fn check_optimality(p: &Problem, fit: &ReweightFit) {
        let lam = DVector::from_column_slice(&fit.lambda);
        let at = p.a.tr_mul(&lam);
        // Weights that underflowed to 0 are left out; the tolerance follows
        // the size of the terms (λ grows as 1/θ).
        let vals: Vec<f64> = (0..p.n_states())
            .filter(|&i| fit.weights[i] > 1e-200)
            .map(|i| (fit.weights[i] / fit.reference_weights[i]).ln() + at[i])
            .collect();
        let tol = 1e-5 * (1.0 + at.amax());
        let mean = vals.iter().sum::<f64>() / vals.len() as f64;
        for v in vals {
            assert!((v - mean).abs() < tol, "{v} vs {mean}");
        }
        assert!((fit.weights.iter().sum::<f64>() - 1.0).abs() < 1e-12);
    }

    #[test]
    fn optimality_condition_and_primal_minimum() {
        let (p, w0) = ensemble(1, 6, 30);
        let theta = 2.0;
        let fit = reweight(&p, &w0, ThetaRule::Fixed(theta)).unwrap();
        check_optimality(&p, &fit);
        // Random moves on the simplex never lower L.
        let w = DVector::from_column_slice(&fit.weights);
        let w0n = DVector::from_column_slice(&fit.reference_weights);
        let l = |w: &DVector<f64>| theta * kl(w, &w0n) + 0.5 * p.chi2(w);
        let base = l(&w);
        assert!((base - fit.functional).abs() < 1e-9 * (1.0 + base));
        let mut rng = Xoshiro256StarStar::seed_from_u64(2);
        for _ in 0..200 {
            let d = DVector::from_fn(w.len(), |_, _| rng.next_normal() * 1e-3);
            let mut w2 = w.component_mul(&d.map(f64::exp));
            w2 /= w2.sum();
            assert!(l(&w2) >= base - 1e-12);
        }
    }

    #[test]
    fn large_theta_keeps_reference() {
        let (p, w0) = ensemble(3, 5, 20);
        let fit = reweight(&p, &w0, ThetaRule::Fixed(1e9)).unwrap();
        for (a, b) in fit.weights.iter().zip(&fit.reference_weights) {
            assert!((a - b).abs() < 1e-6);
        }
        assert!(fit.kept_fraction > 0.999_999);
    }

    #[test]
    fn small_theta_approaches_chi2_minimum() {
        let (p, w0) = ensemble(4, 6, 25);
        let best = p.chi2(&solve_populations(&p).unwrap());
        let mut last = f64::INFINITY;
        for theta in [1.0, 1e-2, 1e-4, 1e-6] {
            let fit = reweight(&p, &w0, ThetaRule::Fixed(theta)).unwrap();
            check_optimality(&p, &fit);
            assert!(fit.quality.chi2 <= last + 1e-9);
            last = fit.quality.chi2;
        }
        assert!(last - best < 1e-3, "chi2 {last} vs minimum {best}");
    }

    #[test]
    fn theta_rule_hits_target() {
        let (p, w0) = ensemble(5, 8, 40);
        let fit = reweight(&p, &w0, ThetaRule::ReducedChi2(1.0)).unwrap();
        let r = fit.quality.chi2 / 8.0;
        assert!(r <= 1.0 && r > 0.999, "reduced chi2 {r}");
        assert!(fit.theta.is_some());
        assert!(fit.kept_fraction < 1.0 && fit.kept_fraction > 0.0);
        // Already fitting: reference kept.
        let w_true: Vec<f64> = (0..40)
            .map(|i| if i % 3 == 0 { 3.0 } else { 0.5 })
            .collect();
        let fit = reweight(&p, &w_true, ThetaRule::ReducedChi2(1.0)).unwrap();
        assert!(fit.theta.is_none());
        assert!(matches!(
            fit.diagnostics[0],
            Diagnostic::ReferenceAlreadyFits { .. }
        ));
    }

    #[test]
    fn unreachable_target_is_said() {
        // Every conformer predicts 5 Hz, the observation is 9 Hz.
        let p = Problem::unlabelled(
            DMatrix::from_element(1, 3, 5.0),
            DVector::from_element(1, 9.0),
            DVector::from_element(1, 0.5),
        )
        .unwrap();
        let fit = reweight(&p, &[1.0, 1.0, 1.0], ThetaRule::default()).unwrap();
        assert!(matches!(
            fit.diagnostics[0],
            Diagnostic::TargetUnreachable { .. }
        ));
        assert!(fit.diagnostics[0].message().starts_with("no reweighting"));
    }
}
