//! A two-state equilibrium, state 2 ⇌ state 1, fitted to the couplings.
//!
//! With x the fraction of state 1, the predicted couplings are
//! x·a₁ + (1 − x)·a₂, and χ²(x) = ‖x d − r₀‖² with d = (a₁ − a₂)/σ and
//! r₀ = (y − a₂)/σ: a quadratic in x, χ²(x) = χ²(x*) + D (x − x*)², D = dᵀd,
//! x* = dᵀr₀/D. The fitted fraction is x̂ = x* clipped to [0, 1] (pinned at a
//! bound when clipped). The confidence interval is the χ² profile
//! {x ∈ [0, 1] : χ²(x) − χ²(x̂) ≤ Δ}, with Δ = 1 for 68.3 % and Δ = 3.841 for
//! 95 % (the χ²₁ quantiles; Press et al., *Numerical Recipes*, 3rd ed., 2007,
//! §15.6.5), solved in closed form.
//!
//! Conventions: K = x/(1 − x) = [state 1]/[state 2] and
//! ΔG = G(state 1) − G(state 2) = −RT ln K, so ΔG < 0 when state 1 is
//! favoured; R = 8.314462618 J/(mol K) (CODATA 2018), 1 kcal = 4.184 kJ.

use nalgebra::DVector;
use serde::Serialize;

use super::diagnose::{same_couplings, Diagnostic};
use super::simplex_ls::push_quality_diagnostics;
use super::{
    Bound, FitQuality, Interval, Problem, DEFAULT_SAME_COUPLINGS_HZ, GAS_CONSTANT_J_PER_MOL_K,
    J_PER_KCAL,
};
use crate::error::{Error, Result};

/// Δχ² bounding the 68.3 % profile interval of one parameter.
pub const DELTA_CHI2_68: f64 = 1.0;
/// Δχ² bounding the 95 % profile interval of one parameter (χ²₁ quantile).
pub const DELTA_CHI2_95: f64 = 3.841_458_820_694_124;

/// An interval whose ends may be unbounded (`None`: −∞ for `lower`, +∞ for
/// `upper`), for K and ΔG when the fraction reaches 0 or 1.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct OpenInterval {
    /// Lower end, or `None` for −∞.
    pub lower: Option<f64>,
    /// Upper end, or `None` for +∞.
    pub upper: Option<f64>,
}

/// An equilibrium constant, free energy and their intervals.
#[derive(Debug, Clone, Serialize)]
pub struct Thermo {
    /// K = x/(1 − x); `None` when x = 1 (infinite).
    pub k: Option<f64>,
    /// 68.3 % interval of K.
    pub k_68: OpenInterval,
    /// 95 % interval of K.
    pub k_95: OpenInterval,
    /// ΔG = −RT ln K in kcal/mol; `None` when x is 0 or 1.
    pub delta_g_kcal_per_mol: Option<f64>,
    /// 68.3 % interval of ΔG, kcal/mol.
    pub delta_g_68_kcal_per_mol: OpenInterval,
    /// 95 % interval of ΔG, kcal/mol.
    pub delta_g_95_kcal_per_mol: OpenInterval,
    /// ΔG in kJ/mol.
    pub delta_g_kj_per_mol: Option<f64>,
    /// 68.3 % interval of ΔG, kJ/mol.
    pub delta_g_68_kj_per_mol: OpenInterval,
    /// 95 % interval of ΔG, kJ/mol.
    pub delta_g_95_kj_per_mol: OpenInterval,
}

/// K = x/(1 − x), `None` for x ≥ 1.
fn k_of(x: f64) -> Option<f64> {
    (x < 1.0).then(|| x / (1.0 - x))
}

/// ΔG = −RT ln K in J/mol; `None` for K = 0 or ∞.
fn dg_j_of(k: Option<f64>, t: f64) -> Option<f64> {
    k.filter(|&k| k > 0.0)
        .map(|k| -GAS_CONSTANT_J_PER_MOL_K * t * k.ln())
}

/// Fraction x of state 1 for ΔG = G₁ − G₂ in kcal/mol at `temperature_k`:
/// x = 1/(1 + exp(ΔG/RT)).
pub fn fraction_from_delta_g(delta_g_kcal_per_mol: f64, temperature_k: f64) -> f64 {
    let rt = GAS_CONSTANT_J_PER_MOL_K * temperature_k / J_PER_KCAL;
    1.0 / (1.0 + (delta_g_kcal_per_mol / rt).exp())
}

impl Thermo {
    /// K and ΔG at `temperature_k` for fraction `x` of state 1 and its 68 %
    /// and 95 % intervals.
    pub fn from_fraction(x: f64, x68: Interval, x95: Interval, temperature_k: f64) -> Thermo {
        let t = temperature_k;
        let k_int = |i: Interval| OpenInterval {
            lower: k_of(i.lower),
            upper: k_of(i.upper),
        };
        // ΔG falls as K rises: the upper K gives the lower ΔG.
        let dg_int = |i: Interval, scale: f64| OpenInterval {
            lower: dg_j_of(k_of(i.upper), t).map(|v| v / scale),
            upper: dg_j_of(k_of(i.lower), t).map(|v| v / scale),
        };
        let dg = dg_j_of(k_of(x), t);
        Thermo {
            k: k_of(x),
            k_68: k_int(x68),
            k_95: k_int(x95),
            delta_g_kcal_per_mol: dg.map(|v| v / J_PER_KCAL),
            delta_g_68_kcal_per_mol: dg_int(x68, J_PER_KCAL),
            delta_g_95_kcal_per_mol: dg_int(x95, J_PER_KCAL),
            delta_g_kj_per_mol: dg.map(|v| v / 1000.0),
            delta_g_68_kj_per_mol: dg_int(x68, 1000.0),
            delta_g_95_kj_per_mol: dg_int(x95, 1000.0),
        }
    }
}

/// Result of [`fit_two_state`].
#[derive(Debug, Clone, Serialize)]
pub struct TwoStateFit {
    /// Labels of state 1 and state 2.
    pub labels: [String; 2],
    /// Temperature, K.
    pub temperature_k: f64,
    /// Fitted fraction x of state 1 (0–1).
    pub fraction: f64,
    /// Unclipped least-squares fraction x* (may lie outside [0, 1]).
    pub unconstrained_fraction: f64,
    /// Set when x is pinned at 0 or 1.
    pub pinned: Option<Bound>,
    /// Standard error of x from the curvature, 1/√D.
    pub std_err: f64,
    /// 68.3 % profile interval of x (Δχ² = 1), within [0, 1].
    pub fraction_68: Interval,
    /// 95 % profile interval of x (Δχ² = 3.84), within [0, 1].
    pub fraction_95: Interval,
    /// K, ΔG and their intervals.
    pub thermo: Thermo,
    /// Goodness of fit (dof = n_obs − 1).
    pub quality: FitQuality,
    /// Findings worth telling the user.
    pub diagnostics: Vec<Diagnostic>,
}

/// Profile interval {x ∈ [0,1]: D (x − x*)² ≤ D (x̂ − x*)² + Δ}.
fn profile(x_star: f64, x_hat: f64, d: f64, delta: f64) -> Interval {
    let half = ((x_hat - x_star).powi(2) + delta / d).sqrt();
    Interval {
        lower: (x_star - half).clamp(0.0, 1.0),
        upper: (x_star + half).clamp(0.0, 1.0),
    }
}

/// Fits the fraction of state 1 (column 0 of A) against state 2 (column 1)
/// at `temperature_k` (module docs). Errors when A does not have exactly two
/// columns, the temperature is not positive, or the two states predict
/// identical couplings.
pub fn fit_two_state(problem: &Problem, temperature_k: f64) -> Result<TwoStateFit> {
    if problem.n_states() != 2 {
        return Err(Error::Fit(format!(
            "a two-state fit needs exactly 2 states, got {}",
            problem.n_states()
        )));
    }
    if !(temperature_k.is_finite() && temperature_k > 0.0) {
        return Err(Error::Fit(format!(
            "temperature must be a positive number of kelvin, got {temperature_k}"
        )));
    }
    let m = problem.n_obs();
    let (mut dd, mut dr) = (0.0, 0.0);
    for k in 0..m {
        let s = problem.sigma[k];
        let d = (problem.a[(k, 0)] - problem.a[(k, 1)]) / s;
        let r0 = (problem.y[k] - problem.a[(k, 1)]) / s;
        dd += d * d;
        dr += d * r0;
    }
    let mut diagnostics = same_couplings(problem, DEFAULT_SAME_COUPLINGS_HZ);
    if !(dd > 0.0 && dd.is_finite()) {
        return Err(Error::Fit(format!(
            "{} and {} predict exactly the same couplings: the data cannot tell them apart",
            problem.state_labels[0], problem.state_labels[1]
        )));
    }
    let x_star = dr / dd;
    let x = x_star.clamp(0.0, 1.0);
    let pinned = if x_star <= 0.0 {
        Some(Bound::Zero)
    } else if x_star >= 1.0 {
        Some(Bound::One)
    } else {
        None
    };
    let f68 = profile(x_star, x, dd, DELTA_CHI2_68);
    let f95 = profile(x_star, x, dd, DELTA_CHI2_95);
    let p = DVector::from_vec(vec![x, 1.0 - x]);
    let quality = FitQuality::of(problem, &problem.predict(&p), 1);
    match pinned {
        Some(Bound::Zero) => {
            diagnostics.push(Diagnostic::PinnedAtZero {
                states: vec![problem.state_labels[0].clone()],
            });
            diagnostics.push(Diagnostic::PinnedAtOne {
                state: problem.state_labels[1].clone(),
            });
        }
        Some(Bound::One) => diagnostics.push(Diagnostic::PinnedAtOne {
            state: problem.state_labels[0].clone(),
        }),
        None => {}
    }
    push_quality_diagnostics(&quality, &mut diagnostics);
    Ok(TwoStateFit {
        labels: [
            problem.state_labels[0].clone(),
            problem.state_labels[1].clone(),
        ],
        temperature_k,
        fraction: x,
        unconstrained_fraction: x_star,
        pinned,
        std_err: 1.0 / dd.sqrt(),
        fraction_68: f68,
        fraction_95: f95,
        thermo: Thermo::from_fraction(x, f68, f95, temperature_k),
        quality,
        diagnostics,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use nalgebra::DMatrix;
    use statrs::distribution::{ChiSquared, ContinuousCDF};

    fn problem(a: &[f64], y: &[f64], s: &[f64]) -> Problem {
        let m = y.len();
        Problem::unlabelled(
            DMatrix::from_row_slice(m, 2, a),
            DVector::from_column_slice(y),
            DVector::from_column_slice(s),
        )
        .unwrap()
    }

    #[test]
    fn delta_chi2_95_is_the_chi2_quantile() {
        let q = ChiSquared::new(1.0).unwrap().inverse_cdf(0.95);
        assert!((q - DELTA_CHI2_95).abs() < 1e-6);
    }

    /// x = 0.844 ↔ |ΔG| = 1.00 kcal/mol at 298.15 K (common practice: the
    /// 84:16 split of a 1 kcal/mol preference at room temperature).
    #[test]
    fn one_kcal_per_mol_is_84_percent() {
        let x = 0.844;
        let a = [2.0, 11.0, 9.5, 3.0, 4.0, 7.0];
        let y: Vec<f64> = (0..3)
            .map(|k| x * a[2 * k] + (1.0 - x) * a[2 * k + 1])
            .collect();
        let fit = fit_two_state(&problem(&a, &y, &[0.3, 0.3, 0.3]), 298.15).unwrap();
        assert!((fit.fraction - x).abs() < 1e-12);
        let dg = fit.thermo.delta_g_kcal_per_mol.unwrap();
        assert!((dg + 1.000).abs() < 0.002, "{dg}");
        assert!((fit.thermo.delta_g_kj_per_mol.unwrap() - dg * 4.184).abs() < 1e-12);
        assert!((fraction_from_delta_g(-1.0, 298.15) - 0.844).abs() < 0.001);
    }

    #[test]
    fn intervals_in_closed_form() {
        // One coupling, a = (10, 2) Hz, σ = 0.5, y = 6: x = 0.5, D = 256.
        let fit = fit_two_state(&problem(&[10.0, 2.0], &[6.0], &[0.5]), 300.0).unwrap();
        assert!((fit.fraction - 0.5).abs() < 1e-14);
        assert!((fit.std_err - 1.0 / 16.0).abs() < 1e-14);
        assert!((fit.fraction_68.lower - 0.4375).abs() < 1e-12);
        assert!((fit.fraction_68.upper - 0.5625).abs() < 1e-12);
        let h95 = DELTA_CHI2_95.sqrt() / 16.0;
        assert!((fit.fraction_95.upper - (0.5 + h95)).abs() < 1e-12);
        // K and ΔG intervals follow x's ends.
        let k = fit.thermo.k_68;
        assert!((k.lower.unwrap() - 0.4375 / 0.5625).abs() < 1e-12);
        let g = fit.thermo.delta_g_68_kcal_per_mol;
        assert!(g.lower.unwrap() < 0.0 && g.upper.unwrap() > 0.0);
        assert!((g.lower.unwrap() + g.upper.unwrap()).abs() < 1e-12);
    }

    #[test]
    fn pinned_at_one_is_said() {
        // y beyond state 1's couplings.
        let fit = fit_two_state(
            &problem(&[10.0, 2.0, 9.0, 3.0], &[10.5, 9.4], &[0.5, 0.5]),
            298.15,
        )
        .unwrap();
        assert_eq!(fit.pinned, Some(Bound::One));
        assert_eq!(fit.fraction, 1.0);
        assert_eq!(fit.fraction_68.upper, 1.0);
        assert!(fit.fraction_68.lower < 1.0);
        assert!(fit.thermo.k.is_none());
        assert!(fit.thermo.delta_g_kcal_per_mol.is_none());
        assert!(fit.thermo.delta_g_68_kcal_per_mol.lower.is_none());
        assert!(fit.thermo.delta_g_68_kcal_per_mol.upper.is_some());
        assert!(fit
            .diagnostics
            .iter()
            .any(|d| d.message().contains("state 1 alone explains")));
    }

    #[test]
    fn identical_states_refused() {
        let err = fit_two_state(
            &problem(&[5.0, 5.0, 7.0, 7.0], &[5.0, 7.0], &[0.5, 0.5]),
            298.0,
        )
        .unwrap_err();
        assert!(err.to_string().contains("cannot tell them apart"));
    }
}
