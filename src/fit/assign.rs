//! Observations whose assignment is open: a pair of diastereotopic protons
//! (for example H-6proR/H-6proS) gives two couplings, but which observed value
//! belongs to which predicted coupling is not known. Each such pair is given
//! as the two row indices; for k pairs all 2^k assignments are fitted (free
//! populations, [`super::simplex_ls`]) by swapping the two rows of the
//! predicted couplings A, and ranked by χ².
//!
//! Δχ² between the best and the next assignment measures the preference: for
//! fits with the same number of parameters, exp(−Δχ²/2) is the likelihood
//! ratio (Δχ² ≥ 4 is a clear preference, common practice).

use serde::Serialize;

use super::simplex_ls::{fit_populations, FitOptions, PopulationFit};
use super::Problem;
use crate::error::{Error, Result};

/// At most this many open pairs (2^10 = 1024 fits).
pub const MAX_OPEN_PAIRS: usize = 10;

/// One assignment of the open pairs.
#[derive(Debug, Clone, Serialize)]
pub struct Assignment {
    /// For each pair in input order: whether its two rows were swapped.
    pub swapped: Vec<bool>,
    /// χ² of the best free-population fit under this assignment.
    pub chi2: f64,
    /// χ²/dof, when dof > 0.
    pub reduced_chi2: Option<f64>,
}

/// Result of [`fit_open_pairs`].
#[derive(Debug, Clone, Serialize)]
pub struct AssignmentReport {
    /// Every assignment, best (lowest χ²) first.
    pub assignments: Vec<Assignment>,
    /// χ² of the second best minus that of the best; `None` with one
    /// assignment only.
    pub delta_chi2_to_next: Option<f64>,
    /// The full fit under the best assignment (its problem has the rows
    /// swapped as `assignments[0].swapped` says).
    pub best_fit: PopulationFit,
}

/// Fits every assignment of the open `pairs` (row indices into the
/// observations) and ranks them (module docs). Errors on more than
/// [`MAX_OPEN_PAIRS`] pairs, a row index out of range, or a row used twice.
pub fn fit_open_pairs(
    problem: &Problem,
    pairs: &[(usize, usize)],
    opts: &FitOptions,
) -> Result<AssignmentReport> {
    if pairs.len() > MAX_OPEN_PAIRS {
        return Err(Error::Fit(format!(
            "{} unassigned pairs would need {} fits; at most {MAX_OPEN_PAIRS} pairs are tried",
            pairs.len(),
            1u64 << pairs.len().min(63)
        )));
    }
    let m = problem.n_obs();
    let mut used = vec![false; m];
    for &(i, j) in pairs {
        if i >= m || j >= m {
            return Err(Error::Fit(format!(
                "unassigned pair ({}, {}) refers to a coupling beyond the {m} given",
                i + 1,
                j + 1
            )));
        }
        if i == j || used[i] || used[j] {
            let k = if i == j || used[i] { i } else { j };
            return Err(Error::Fit(format!(
                "coupling {} appears twice in the unassigned pairs",
                problem.obs_labels[k]
            )));
        }
        used[i] = true;
        used[j] = true;
    }
    let swapped_problem = |mask: u32| {
        let mut p = problem.clone();
        for (b, &(i, j)) in pairs.iter().enumerate() {
            if mask & (1 << b) != 0 {
                p.a.swap_rows(i, j);
            }
        }
        p
    };
    let mut assignments = Vec::with_capacity(1 << pairs.len());
    let mut best: Option<(f64, u32)> = None;
    for mask in 0u32..(1 << pairs.len()) {
        let p = swapped_problem(mask);
        let fit = fit_populations(&p, opts)?;
        let chi2 = fit.quality.chi2;
        if best.is_none_or(|(c, _)| chi2 < c) {
            best = Some((chi2, mask));
        }
        assignments.push(Assignment {
            swapped: (0..pairs.len()).map(|b| mask & (1 << b) != 0).collect(),
            chi2,
            reduced_chi2: fit.quality.reduced_chi2,
        });
    }
    assignments.sort_by(|a, b| a.chi2.total_cmp(&b.chi2));
    let delta = (assignments.len() > 1).then(|| assignments[1].chi2 - assignments[0].chi2);
    let mask = best.map_or(0, |b| b.1);
    let best_fit = fit_populations(&swapped_problem(mask), opts)?;
    Ok(AssignmentReport {
        assignments,
        delta_chi2_to_next: delta,
        best_fit,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use nalgebra::{DMatrix, DVector};

    #[test]
    fn finds_the_right_way_round() {
        // Three states, six couplings; rows (2,3) and (4,5) are open pairs.
        let a = DMatrix::from_row_slice(
            6,
            3,
            &[
                2.0, 10.0, 5.0, 9.0, 3.0, 6.0, 1.5, 4.0, 11.0, 10.5, 2.0, 3.5, 3.0, 8.0, 12.0,
                11.0, 1.0, 4.0,
            ],
        );
        let truth = DVector::from_vec(vec![0.6, 0.3, 0.1]);
        let mut y = &a * &truth;
        // The observer listed the second pair the other way round.
        y.swap_rows(4, 5);
        let p = Problem::unlabelled(a, y, DVector::from_element(6, 0.3)).unwrap();
        let rep = fit_open_pairs(&p, &[(2, 3), (4, 5)], &FitOptions::default()).unwrap();
        assert_eq!(rep.assignments.len(), 4);
        assert_eq!(rep.assignments[0].swapped, vec![false, true]);
        assert!(rep.assignments[0].chi2 < 1e-16);
        assert!(
            rep.delta_chi2_to_next.unwrap() > 4.0,
            "{:?}",
            rep.assignments
        );
        assert!((rep.best_fit.values() - truth).norm() < 1e-9);
    }

    #[test]
    fn bad_pairs_refused() {
        let p = Problem::unlabelled(
            DMatrix::from_element(3, 2, 1.0),
            DVector::from_element(3, 1.0),
            DVector::from_element(3, 1.0),
        )
        .unwrap();
        let o = FitOptions::default();
        assert!(fit_open_pairs(&p, &[(0, 3)], &o).is_err());
        let e = fit_open_pairs(&p, &[(0, 1), (1, 2)], &o).unwrap_err();
        assert!(e.to_string().contains("J2 appears twice"), "{e}");
        let many: Vec<(usize, usize)> = (0..11).map(|i| (i, i + 11)).collect();
        assert!(fit_open_pairs(&p, &many, &o)
            .unwrap_err()
            .to_string()
            .contains("at most 10"));
    }
}
