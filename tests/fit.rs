//! Round trips of the population-fitting engine on synthetic data of our
//! own making: choose populations, compute couplings, add seeded noise, fit,
//! and check recovery within the reported intervals at their stated coverage.

use nalgebra::{DMatrix, DVector};
use vicinal::fit::montecarlo::{monte_carlo_populations, MonteCarloOptions};
use vicinal::fit::rng::Xoshiro256StarStar;
use vicinal::fit::simplex_ls::{fit_populations, FitOptions, SimplexSolver};
use vicinal::fit::{Problem, WhenUnderdetermined};

/// A well-conditioned 3-state design with 8 couplings (Hz).
fn design() -> DMatrix<f64> {
    DMatrix::from_row_slice(
        8,
        3,
        &[
            2.1, 10.5, 4.0, //
            9.8, 3.2, 5.5, //
            4.4, 4.9, 11.2, //
            11.0, 2.4, 3.1, //
            3.3, 9.1, 8.7, //
            6.0, 1.8, 10.0, //
            1.5, 6.5, 2.2, //
            8.2, 11.5, 5.0, //
        ],
    )
}

/// The Monte Carlo 16–84 % interval covers the true population about 68 %
/// of the time (100 seeds × 400 resamples; binomial spread ±4.7 %).
#[test]
fn monte_carlo_interval_coverage() {
    let a = design();
    let truth = DVector::from_vec(vec![0.45, 0.35, 0.2]);
    let sigma = DVector::from_element(8, 0.4);
    let y0 = &a * &truth;
    let trials = 100;
    let mut covered = [0usize; 3];
    for seed in 0..trials {
        let mut rng = Xoshiro256StarStar::seed_from_u64(1000 + seed);
        let y = DVector::from_fn(8, |k, _| y0[k] + sigma[k] * rng.next_normal());
        let p = Problem::unlabelled(a.clone(), y, sigma.clone()).unwrap();
        let mc = monte_carlo_populations(
            &p,
            &MonteCarloOptions {
                n_samples: 400,
                seed,
            },
        )
        .unwrap();
        for (i, s) in mc.populations.iter().enumerate() {
            if s.p16 <= truth[i] && truth[i] <= s.p84 {
                covered[i] += 1;
            }
        }
    }
    for c in covered {
        let f = c as f64 / trials as f64;
        assert!((0.54..=0.82).contains(&f), "coverage {f}");
    }
}

/// The large, underdetermined benchmark case (1000 states × 50 couplings)
/// is solved exactly: KKT conditions of min χ² on the simplex hold for the
/// nominal fit and for warm-started refits with shifted data.
#[test]
fn large_problem_is_solved_exactly() {
    let (m, n) = (50, 1000);
    let mut rng = Xoshiro256StarStar::seed_from_u64(99);
    let a = DMatrix::from_fn(m, n, |_, _| 1.0 + 12.0 * rng.next_f64());
    let truth = DVector::from_fn(n, |i, _| if i % 125 == 0 { 0.125 } else { 0.0 });
    let sigma = DVector::from_element(m, 0.5);
    let y = &a * &truth + DVector::from_fn(m, |_, _| 0.5 * rng.next_normal());
    let problem = Problem::unlabelled(a, y, sigma).unwrap();
    let opts = FitOptions {
        when_underdetermined: WhenUnderdetermined::Warn,
        ..FitOptions::default()
    };
    let fit = fit_populations(&problem, &opts).unwrap();
    check_kkt(&problem, &fit.values(), &DVector::zeros(m));
    assert!(fit.populations.iter().filter(|p| p.value > 0.0).count() <= m + 1);
    let mut solver = SimplexSolver::new(&problem);
    solver.solve().unwrap();
    let mut p = DVector::zeros(n);
    for _ in 0..20 {
        let d = DVector::from_fn(m, |_, _| rng.next_normal());
        solver.solve_shifted(d.as_slice(), &mut p).unwrap();
        check_kkt(&problem, &p, &d);
    }
}

/// KKT of min ½‖Bp − (c + δ)‖² on the simplex.
fn check_kkt(problem: &Problem, p: &DVector<f64>, delta: &DVector<f64>) {
    let (b, c) = problem.weighted();
    let c = c + delta;
    assert!((p.sum() - 1.0).abs() < 1e-12);
    let g = b.transpose() * (&b * p - &c);
    let free: Vec<usize> = (0..p.len()).filter(|&i| p[i] > 0.0).collect();
    let mu = free.iter().map(|&i| g[i]).sum::<f64>() / free.len() as f64;
    let scale = 1e-7 * (1.0 + g.amax());
    for i in 0..p.len() {
        if p[i] > 0.0 {
            assert!((g[i] - mu).abs() < scale, "free {i}: {} vs {mu}", g[i]);
        } else {
            assert!(g[i] >= mu - scale, "bound {i}: {} < {mu}", g[i]);
        }
    }
}
