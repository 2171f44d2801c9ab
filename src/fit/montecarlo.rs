//! Seeded Monte Carlo uncertainty of free populations: each observation is
//! resampled as y_k ~ N(y_k, σ_k²), the populations are refitted exactly
//! ([`super::simplex_ls`]), and percentiles of the refitted populations are
//! reported. This is the parametric bootstrap ("synthetic data sets", Press
//! et al., *Numerical Recipes*, 3rd ed., 2007, §15.6); unlike the linearised
//! covariance it handles populations at a bound, whose interval is then
//! one-sided (lower percentiles 0).
//!
//! Reproducible: the normals come from [`super::rng`] (xoshiro256**, seeded
//! through SplitMix64), so a seed gives the same numbers on every platform and
//! crate version. Each refit is warm-started from the previous free set.

use nalgebra::DVector;
use serde::Serialize;

use super::rng::Xoshiro256StarStar;
use super::simplex_ls::SimplexSolver;
use super::Problem;
use crate::error::{Error, Result};

/// Default number of resamples.
pub const DEFAULT_SAMPLES: usize = 1000;

/// Default seed (any fixed number; this one is ours).
pub const DEFAULT_SEED: u64 = 20_240_601;

/// Options of [`monte_carlo_populations`].
#[derive(Debug, Clone, Copy)]
pub struct MonteCarloOptions {
    /// Number of resampled data sets (≥ 2).
    pub n_samples: usize,
    /// Seed of the generator.
    pub seed: u64,
}

impl Default for MonteCarloOptions {
    fn default() -> Self {
        MonteCarloOptions {
            n_samples: DEFAULT_SAMPLES,
            seed: DEFAULT_SEED,
        }
    }
}

/// Spread of one population over the resamples.
#[derive(Debug, Clone, Serialize)]
pub struct PopulationSpread {
    /// State label.
    pub label: String,
    /// Mean over resamples.
    pub mean: f64,
    /// Standard deviation over resamples.
    pub std_dev: f64,
    /// Median.
    pub median: f64,
    /// 2.5th percentile (lower end of the central 95 % interval).
    pub p2_5: f64,
    /// 16th percentile (lower end of the central 68 % interval).
    pub p16: f64,
    /// 84th percentile.
    pub p84: f64,
    /// 97.5th percentile.
    pub p97_5: f64,
    /// Fraction of resamples in which the population came out exactly 0.
    pub fraction_at_zero: f64,
}

/// Result of [`monte_carlo_populations`].
#[derive(Debug, Clone, Serialize)]
pub struct MonteCarloResult {
    /// Number of resamples.
    pub n_samples: usize,
    /// Seed used.
    pub seed: u64,
    /// One entry per state.
    pub populations: Vec<PopulationSpread>,
}

/// Percentile `q` ∈ [0, 1] of `n` values of which the `sorted` ones are the
/// non-zero values in increasing order and the other n − len are zeros
/// (linear interpolation between order statistics, Hyndman & Fan 1996
/// definition 7, the default of R and numpy).
fn percentile_with_zeros(sorted: &[f64], n: usize, q: f64) -> f64 {
    let zeros = n - sorted.len();
    let at = |i: usize| if i < zeros { 0.0 } else { sorted[i - zeros] };
    let h = (n - 1) as f64 * q;
    let lo = h.floor() as usize;
    let hi = (lo + 1).min(n - 1);
    at(lo) + (h - lo as f64) * (at(hi) - at(lo))
}

/// Monte Carlo percentiles of the free populations (module docs). Needs no
/// refusal policy: underdetermined problems are resampled too, and their
/// spread then shows what the data leave open.
pub fn monte_carlo_populations(
    problem: &Problem,
    opts: &MonteCarloOptions,
) -> Result<MonteCarloResult> {
    if opts.n_samples < 2 {
        return Err(Error::Fit(
            "Monte Carlo needs at least 2 resamples".to_string(),
        ));
    }
    let m = problem.n_obs();
    let n = problem.n_states();
    let mut solver = SimplexSolver::new(problem);
    solver.solve()?;
    let mut rng = Xoshiro256StarStar::seed_from_u64(opts.seed);
    let mut delta = vec![0.0; m];
    let mut p = DVector::zeros(n);
    // Sparse storage: most populations are 0 in most resamples.
    let mut nonzero: Vec<Vec<f64>> = vec![Vec::new(); n];
    for _ in 0..opts.n_samples {
        for d in delta.iter_mut() {
            // y_k + σ_k z_k, i.e. c_k + z_k in units of σ.
            *d = rng.next_normal();
        }
        solver.solve_shifted(&delta, &mut p)?;
        for &i in solver.free_set() {
            if p[i] > 0.0 {
                nonzero[i].push(p[i]);
            }
        }
    }
    let ns = opts.n_samples;
    let populations = nonzero
        .into_iter()
        .enumerate()
        .map(|(i, mut v)| {
            v.sort_by(f64::total_cmp);
            let sum: f64 = v.iter().sum();
            let mean = sum / ns as f64;
            let ss: f64 = v.iter().map(|x| (x - mean).powi(2)).sum::<f64>()
                + (ns - v.len()) as f64 * mean * mean;
            PopulationSpread {
                label: problem.state_labels[i].clone(),
                mean,
                std_dev: (ss / (ns - 1) as f64).sqrt(),
                median: percentile_with_zeros(&v, ns, 0.5),
                p2_5: percentile_with_zeros(&v, ns, 0.025),
                p16: percentile_with_zeros(&v, ns, 0.16),
                p84: percentile_with_zeros(&v, ns, 0.84),
                p97_5: percentile_with_zeros(&v, ns, 0.975),
                fraction_at_zero: (ns - v.len()) as f64 / ns as f64,
            }
        })
        .collect();
    Ok(MonteCarloResult {
        n_samples: ns,
        seed: opts.seed,
        populations,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fit::simplex_ls::{fit_populations, FitOptions};
    use nalgebra::DMatrix;

    fn problem() -> Problem {
        let a = DMatrix::from_row_slice(
            5,
            3,
            &[
                2.0, 11.0, 4.5, 3.1, 9.5, 10.2, 10.8, 2.5, 3.3, 4.0, 4.2, 12.0, 8.0, 1.5, 6.0,
            ],
        );
        let truth = DVector::from_vec(vec![0.55, 0.3, 0.15]);
        let y = &a * &truth + DVector::from_vec(vec![0.1, -0.2, 0.05, 0.0, 0.1]);
        Problem::unlabelled(a, y, DVector::from_element(5, 0.3)).unwrap()
    }

    #[test]
    fn percentiles_with_implicit_zeros() {
        // Values 0, 0, 1, 2, 3: numpy.percentile(..., 50) = 1, (…, 25) = 0, (…, 90) = 2.6.
        let v = [1.0, 2.0, 3.0];
        assert_eq!(percentile_with_zeros(&v, 5, 0.5), 1.0);
        assert_eq!(percentile_with_zeros(&v, 5, 0.25), 0.0);
        assert!((percentile_with_zeros(&v, 5, 0.9) - 2.6).abs() < 1e-12);
    }

    #[test]
    fn reproducible_for_a_seed() {
        let p = problem();
        let o = MonteCarloOptions {
            n_samples: 300,
            seed: 42,
        };
        let a = monte_carlo_populations(&p, &o).unwrap();
        let b = monte_carlo_populations(&p, &o).unwrap();
        for (x, y) in a.populations.iter().zip(&b.populations) {
            assert_eq!(x.p16.to_bits(), y.p16.to_bits());
            assert_eq!(x.p97_5.to_bits(), y.p97_5.to_bits());
        }
        let c = monte_carlo_populations(&p, &MonteCarloOptions { seed: 43, ..o }).unwrap();
        assert_ne!(a.populations[0].mean, c.populations[0].mean);
    }

    #[test]
    fn spread_agrees_with_linearised_errors_for_interior_solution() {
        let p = problem();
        let fit = fit_populations(&p, &FitOptions::default()).unwrap();
        let mc = monte_carlo_populations(
            &p,
            &MonteCarloOptions {
                n_samples: 4000,
                seed: 1,
            },
        )
        .unwrap();
        for (f, s) in fit.populations.iter().zip(&mc.populations) {
            let se = f.std_err.unwrap();
            assert!(
                (s.std_dev / se - 1.0).abs() < 0.1,
                "mc {} lin {se}",
                s.std_dev
            );
            assert!((s.mean - f.value).abs() < 0.2 * se);
            assert!(s.fraction_at_zero == 0.0);
        }
    }

    #[test]
    fn bound_state_gets_one_sided_interval() {
        let a = DMatrix::from_row_slice(3, 2, &[2.0, 10.0, 3.0, 11.0, 4.0, 12.0]);
        let y = DVector::from_vec(vec![2.0, 3.0, 4.0]);
        let p = Problem::unlabelled(a, y, DVector::from_element(3, 0.5)).unwrap();
        let mc = monte_carlo_populations(&p, &MonteCarloOptions::default()).unwrap();
        let s = &mc.populations[1];
        assert_eq!(s.p2_5, 0.0);
        assert!(s.fraction_at_zero > 0.3 && s.p97_5 > 0.0);
    }
}
