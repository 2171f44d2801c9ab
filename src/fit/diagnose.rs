//! What the data can and cannot say about the populations, as structured
//! findings with a plain-language [`Diagnostic::message`].
//!
//! The identifiability of the populations is judged from the σ-weighted
//! design B = diag(1/σ) A restricted to population *changes* that keep
//! Σp = 1: B Z, where the columns of Z are an orthonormal basis of the
//! vectors summing to zero (built from one Householder reflection). The rank
//! of the design augmented with the sum rule, [B; 1ᵀ], equals rank(B Z) + 1,
//! and the singular values of B Z do not depend on how the sum-rule row would
//! be scaled: a change δp of unit length moves the couplings by at least
//! s_min standard errors, so 1/s_min is the standard error of the worst
//! determined combination of populations.

use serde::Serialize;

use super::Problem;

/// Condition numbers of B Z above this earn an [`Diagnostic::IllConditioned`]
/// warning (our choice: beyond it a 0.1 % change in the couplings can move
/// the populations by 10 % or more of their scale).
pub const ILL_CONDITIONED_ABOVE: f64 = 1e4;

/// At most this many pairs of indistinguishable states are listed one by
/// one; the rest are counted.
pub const MAX_LISTED_PAIRS: usize = 10;

/// How serious a finding is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum Severity {
    /// Worth knowing; the result stands.
    Note,
    /// The result needs care (or, under a refusing policy, is refused).
    Warning,
}

/// One finding about a fit or its design.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub enum Diagnostic {
    /// More free populations (n − 1 with the sum rule) than couplings.
    TooFewCouplings {
        /// Number of populations.
        n_populations: usize,
        /// Number of observed couplings.
        n_couplings: usize,
    },
    /// The couplings fix fewer independent combinations of populations than
    /// there are free populations.
    RankDeficient {
        /// Rank of the σ-weighted design augmented with the sum rule.
        rank: usize,
        /// Number of states.
        n_states: usize,
    },
    /// Populations determined only very loosely.
    IllConditioned {
        /// Condition number of the σ-weighted design on the sum-rule plane.
        condition_number: f64,
    },
    /// Two states whose predicted couplings all agree within the threshold.
    SameCouplings {
        /// Label of the first state.
        first: String,
        /// Label of the second state.
        second: String,
        /// Largest difference of their predicted couplings, Hz.
        max_difference_hz: f64,
        /// The threshold used, Hz.
        threshold_hz: f64,
    },
    /// More indistinguishable pairs than listed.
    MoreSameCouplings {
        /// How many further pairs.
        count: usize,
    },
    /// States whose fitted population is 0.
    PinnedAtZero {
        /// Their labels.
        states: Vec<String>,
    },
    /// One state carries the whole population.
    PinnedAtOne {
        /// Its label.
        state: String,
    },
    /// The best fit is statistically poor.
    PoorFit {
        /// χ²/dof.
        reduced_chi2: f64,
        /// P(χ²_dof ≥ χ²).
        p_value: f64,
    },
    /// Observations more than 2σ from the fit.
    LargeResiduals {
        /// Their labels.
        observations: Vec<String>,
    },
    /// As many free parameters as couplings: the fit can be exact and no
    /// goodness-of-fit test is possible.
    NoDegreesOfFreedom,
    /// The reference ensemble already meets the χ² target: no reweighting.
    ReferenceAlreadyFits {
        /// χ²/n_obs of the reference weights.
        reduced_chi2: f64,
    },
    /// No reweighting reaches the χ² target.
    TargetUnreachable {
        /// The target χ²/n_obs.
        target: f64,
        /// The best χ²/n_obs reached.
        best_reduced_chi2: f64,
    },
    /// The reweighted ensemble keeps little of the reference.
    LittleOfReferenceKept {
        /// exp(−S_KL).
        kept_fraction: f64,
    },
}

fn list(names: &[String]) -> String {
    const SHOWN: usize = 8;
    if names.len() <= SHOWN {
        names.join(", ")
    } else {
        format!(
            "{} and {} more",
            names[..SHOWN].join(", "),
            names.len() - SHOWN
        )
    }
}

impl Diagnostic {
    /// How serious the finding is.
    pub fn severity(&self) -> Severity {
        match self {
            Diagnostic::PinnedAtZero { .. }
            | Diagnostic::PinnedAtOne { .. }
            | Diagnostic::NoDegreesOfFreedom
            | Diagnostic::ReferenceAlreadyFits { .. }
            | Diagnostic::MoreSameCouplings { .. } => Severity::Note,
            _ => Severity::Warning,
        }
    }

    /// The finding in words a chemist reads without the manual.
    pub fn message(&self) -> String {
        match self {
            Diagnostic::TooFewCouplings {
                n_populations,
                n_couplings,
            } => format!(
                "{n_populations} populations cannot be fixed by {n_couplings} couplings; \
                 group the conformers (for example by chair) or add couplings"
            ),
            Diagnostic::RankDeficient { rank, n_states } => format!(
                "the couplings fix only {} independent combinations of the {} free populations \
                 (rank {rank} of {n_states} with the sum rule): some populations can be traded \
                 against others without changing any coupling; group such states",
                rank.saturating_sub(1),
                n_states.saturating_sub(1)
            ),
            Diagnostic::IllConditioned { condition_number } => format!(
                "the populations are poorly determined (condition number {condition_number:.3e} \
                 of the weighted couplings): small changes in the couplings move them a lot"
            ),
            Diagnostic::SameCouplings {
                first,
                second,
                max_difference_hz,
                threshold_hz,
            } => format!(
                "conformers/groups {first} and {second} predict the same couplings within \
                 {threshold_hz} Hz (largest difference {max_difference_hz:.2} Hz): the data \
                 cannot tell them apart"
            ),
            Diagnostic::MoreSameCouplings { count } => {
                format!("{count} more pairs of conformers/groups predict the same couplings")
            }
            Diagnostic::PinnedAtZero { states } => format!(
                "fitted population 0 for {}: the data need none of it, and its interval is \
                 one-sided",
                list(states)
            ),
            Diagnostic::PinnedAtOne { state } => {
                format!("{state} alone explains the couplings best: its population is pinned at 1")
            }
            Diagnostic::PoorFit {
                reduced_chi2,
                p_value,
            } => format!(
                "the best fit is poor (reduced chi-squared {reduced_chi2:.2}, p = {p_value:.2e}): \
                 the states, the coupling model or the standard errors do not match the data"
            ),
            Diagnostic::LargeResiduals { observations } => format!(
                "couplings {} are more than 2 standard errors from the fit",
                list(observations)
            ),
            Diagnostic::ReferenceAlreadyFits { reduced_chi2 } => format!(
                "the computed ensemble already fits the couplings (chi-squared per coupling \
                 {reduced_chi2:.2}): its weights are kept as they are"
            ),
            Diagnostic::TargetUnreachable {
                target,
                best_reduced_chi2,
            } => format!(
                "no reweighting of the computed ensemble brings chi-squared per coupling down to \
                 {target} (best {best_reduced_chi2:.2}): the ensemble lacks conformers that \
                 match the data, or the coupling model or standard errors are off"
            ),
            Diagnostic::LittleOfReferenceKept { kept_fraction } => format!(
                "the reweighting keeps only {:.1} % of the computed ensemble: the data ask for \
                 a very different ensemble, so treat the energies behind it with suspicion",
                kept_fraction * 100.0
            ),
            Diagnostic::NoDegreesOfFreedom => "as many free populations as couplings: the fit \
                 can be exact, and its quality cannot be tested"
                .to_string(),
        }
    }
}

/// Rank and conditioning of a problem's design.
#[derive(Debug, Clone, Serialize)]
pub struct DesignReport {
    /// Rank of the σ-weighted design augmented with the sum rule (full:
    /// n_states).
    pub rank: usize,
    /// s_max/s_min of the σ-weighted design on the sum-rule plane; `None`
    /// when rank-deficient (infinite) or with a single state.
    pub condition_number: Option<f64>,
    /// 1/s_min: standard error of the worst-determined unit combination of
    /// populations; `None` when rank-deficient or with a single state.
    pub worst_std_err: Option<f64>,
    /// Singular values of the σ-weighted design on the sum-rule plane,
    /// largest first.
    pub singular_values: Vec<f64>,
}

/// Rank and condition number of the σ-weighted design with the sum rule,
/// by the singular value decomposition (nalgebra) of B Z (module docs).
/// Numerical rank: singular values above max(m, n)·ε·s_max (the LAPACK
/// convention).
pub fn design_report(problem: &Problem) -> DesignReport {
    let (b, _) = problem.weighted();
    let (m, n) = b.shape();
    if n < 2 {
        return DesignReport {
            rank: n,
            condition_number: None,
            worst_std_err: None,
            singular_values: Vec::new(),
        };
    }
    // Householder H = I − 2vvᵀ/(vᵀv), v = u − e₁, u = 1/√n: H e₁ = u, so the
    // columns 2..n of H span the plane Σp = 0.
    let u = 1.0 / (n as f64).sqrt();
    let mut v = vec![u; n];
    v[0] -= 1.0;
    let vv: f64 = v.iter().map(|x| x * x).sum();
    let bv = &b * nalgebra::DVector::from_column_slice(&v);
    let mut bz = nalgebra::DMatrix::zeros(m, n - 1);
    for j in 1..n {
        for k in 0..m {
            bz[(k, j - 1)] = b[(k, j)] - 2.0 * bv[k] * v[j] / vv;
        }
    }
    let mut sv: Vec<f64> = bz.singular_values().iter().copied().collect();
    sv.sort_by(|a, b| b.total_cmp(a));
    let smax = sv.first().copied().unwrap_or(0.0);
    let tol = (m.max(n) as f64) * f64::EPSILON * smax;
    let r = sv.iter().filter(|&&s| s > tol && s > 0.0).count();
    let full = r == n - 1;
    let smin = sv.last().copied().unwrap_or(0.0);
    DesignReport {
        rank: r + 1,
        condition_number: if full { Some(smax / smin) } else { None },
        worst_std_err: if full { Some(1.0 / smin) } else { None },
        singular_values: sv,
    }
}

/// Pairs of states whose predicted couplings all agree within
/// `threshold_hz` (up to [`MAX_LISTED_PAIRS`] listed, the rest counted).
pub fn same_couplings(problem: &Problem, threshold_hz: f64) -> Vec<Diagnostic> {
    let (m, n) = problem.a.shape();
    let a = problem.a.as_slice();
    let mut out = Vec::new();
    let mut extra = 0usize;
    for i in 0..n {
        let ci = &a[i * m..(i + 1) * m];
        for j in i + 1..n {
            let cj = &a[j * m..(j + 1) * m];
            let mut d = 0.0_f64;
            for (x, y) in ci.iter().zip(cj) {
                d = d.max((x - y).abs());
                if d >= threshold_hz {
                    break;
                }
            }
            if d < threshold_hz {
                if out.len() < MAX_LISTED_PAIRS {
                    out.push(Diagnostic::SameCouplings {
                        first: problem.state_labels[i].clone(),
                        second: problem.state_labels[j].clone(),
                        max_difference_hz: d,
                        threshold_hz,
                    });
                } else {
                    extra += 1;
                }
            }
        }
    }
    if extra > 0 {
        out.push(Diagnostic::MoreSameCouplings { count: extra });
    }
    out
}

/// Everything that can be said before fitting free populations: too few
/// couplings, rank deficiency, poor conditioning, indistinguishable states.
pub fn diagnose_design(problem: &Problem, same_hz: f64) -> (DesignReport, Vec<Diagnostic>) {
    let n = problem.n_states();
    let m = problem.n_obs();
    let report = design_report(problem);
    let mut d = Vec::new();
    if n > m + 1 {
        d.push(Diagnostic::TooFewCouplings {
            n_populations: n,
            n_couplings: m,
        });
    } else if report.rank < n {
        d.push(Diagnostic::RankDeficient {
            rank: report.rank,
            n_states: n,
        });
    } else if let Some(c) = report.condition_number {
        if c > ILL_CONDITIONED_ABOVE {
            d.push(Diagnostic::IllConditioned {
                condition_number: c,
            });
        }
    }
    d.extend(same_couplings(problem, same_hz));
    (report, d)
}

#[cfg(test)]
mod tests {
    use super::*;
    use nalgebra::{DMatrix, DVector};

    #[test]
    fn underdetermined_message() {
        let a = DMatrix::from_fn(3, 5, |k, i| (k * 5 + i * i) as f64);
        let p = Problem::unlabelled(
            a,
            DVector::from_element(3, 5.0),
            DVector::from_element(3, 0.5),
        )
        .unwrap();
        let (_, d) = diagnose_design(&p, 0.3);
        assert_eq!(
            d[0].message(),
            "5 populations cannot be fixed by 3 couplings; group the conformers (for example by chair) or add couplings"
        );
    }

    #[test]
    fn degenerate_pair_found_and_rank_deficient() {
        let a = DMatrix::from_row_slice(3, 3, &[2.0, 2.1, 10.0, 3.0, 3.0, 9.0, 11.0, 10.9, 1.0]);
        let p = Problem::unlabelled(
            a,
            DVector::from_element(3, 5.0),
            DVector::from_element(3, 0.5),
        )
        .unwrap();
        let (rep, d) = diagnose_design(&p, 0.3);
        assert_eq!(rep.rank, 3);
        assert!(d.iter().any(|x| x.message()
            == "conformers/groups state 1 and state 2 predict the same couplings within 0.3 Hz (largest difference 0.10 Hz): the data cannot tell them apart"));
        // Exactly identical columns: rank drops.
        let a = DMatrix::from_row_slice(3, 3, &[2.0, 2.0, 10.0, 3.0, 3.0, 9.0, 11.0, 11.0, 1.0]);
        let p = Problem::unlabelled(
            a,
            DVector::from_element(3, 5.0),
            DVector::from_element(3, 0.5),
        )
        .unwrap();
        let (rep, d) = diagnose_design(&p, 0.3);
        assert_eq!(rep.rank, 2);
        assert!(rep.condition_number.is_none());
        assert!(matches!(
            d[0],
            Diagnostic::RankDeficient {
                rank: 2,
                n_states: 3
            }
        ));
    }

    #[test]
    fn condition_of_orthogonal_design() {
        // Two states, one coupling each differing by 2σ: s = |Δ|/√2·... check
        // worst_std_err against the closed form: var(x) = 1/Σ((a1−a2)/σ)².
        let a = DMatrix::from_row_slice(2, 2, &[10.0, 2.0, 4.0, 8.0]);
        let sig = DVector::from_vec(vec![0.5, 1.0]);
        let p = Problem::unlabelled(a, DVector::from_element(2, 6.0), sig).unwrap();
        let rep = design_report(&p);
        let dd: f64 = (8.0f64 / 0.5).powi(2) + (4.0f64).powi(2);
        // Unit change along (1,−1)/√2 moves the couplings by √(dd/2).
        assert!((rep.worst_std_err.unwrap() - (2.0 / dd).sqrt()).abs() < 1e-12);
        assert_eq!(rep.condition_number, Some(1.0));
    }
}
