//! Timing of the population fit on an invented problem of our own making:
//! 1,000 states (conformers) × 50 couplings, one exact free-population fit
//! followed by 10,000 seeded Monte Carlo refits.
//!
//! Run with `cargo run --release --example fit_speed`. With the environment
//! variable `FIT_PROBE` set it instead prints the active-set work per refit
//! (iterations, columns dropped, full optimality passes, working-set size,
//! and how far the refitted support moves from the nominal one).

use std::time::Instant;

use nalgebra::{DMatrix, DVector};
use vicinal::fit::montecarlo::{monte_carlo_populations, MonteCarloOptions};
use vicinal::fit::rng::Xoshiro256StarStar;
use vicinal::fit::simplex_ls::{fit_populations, FitOptions};
use vicinal::fit::{Problem, WhenUnderdetermined};

fn main() -> vicinal::Result<()> {
    let (m, n) = (50, 1000);
    let mut rng = Xoshiro256StarStar::seed_from_u64(2024);
    // Couplings 1–13 Hz; the "true" ensemble uses 8 of the states.
    let a = DMatrix::from_fn(m, n, |_, _| 1.0 + 12.0 * rng.next_f64());
    let mut truth = DVector::zeros(n);
    for k in 0..8 {
        truth[(k * 97) % n] = 1.0 / 8.0;
    }
    let sigma = DVector::from_element(m, 0.5);
    let y = &a * &truth + DVector::from_fn(m, |_, _| 0.5 * rng.next_normal());
    let problem = Problem::unlabelled(a, y, sigma)?;

    if std::env::var_os("FIT_PROBE").is_some() {
        probe(&problem);
        return Ok(());
    }
    let t0 = Instant::now();
    let opts = FitOptions {
        when_underdetermined: WhenUnderdetermined::Warn,
        ..FitOptions::default()
    };
    let fit = fit_populations(&problem, &opts)?;
    let t_fit = t0.elapsed();
    let t1 = Instant::now();
    let mc = monte_carlo_populations(
        &problem,
        &MonteCarloOptions {
            n_samples: 10_000,
            seed: 7,
        },
    )?;
    let t_mc = t1.elapsed();
    let nonzero = fit.populations.iter().filter(|p| p.value > 0.0).count();
    println!(
        "{n} states x {m} couplings: fit {:.1} ms ({nonzero} non-zero populations, chi2 {:.2}); \
         {} Monte Carlo refits {:.0} ms; total {:.0} ms",
        t_fit.as_secs_f64() * 1e3,
        fit.quality.chi2,
        mc.n_samples,
        t_mc.as_secs_f64() * 1e3,
        (t_fit + t_mc).as_secs_f64() * 1e3
    );
    for d in fit.diagnostics.iter().take(3) {
        println!("  note: {}", d.message());
    }
    Ok(())
}

/// Work per warm-started refit, averaged over 500 resamples.
fn probe(problem: &Problem) {
    use vicinal::fit::simplex_ls::SimplexSolver;
    let mut s = SimplexSolver::new(problem);
    s.solve().unwrap();
    println!("cold: {:?} free {}", s.work(), s.free_set().len());
    let mut rng = Xoshiro256StarStar::seed_from_u64(1);
    let mut p = DVector::zeros(problem.n_states());
    let (mut it, mut rm, mut fc, mut cs) = (0, 0, 0, 0);
    let nominal: Vec<usize> = s.free_set().to_vec();
    let mut symdiff = 0;
    let t = Instant::now();
    for _ in 0..500 {
        let d: Vec<f64> = (0..problem.n_obs()).map(|_| rng.next_normal()).collect();
        s.solve_shifted(&d, &mut p).unwrap();
        let (a, b, c, d) = s.work();
        it += a;
        rm += b;
        fc += c;
        cs += d;
        let now = s.free_set();
        symdiff += now.iter().filter(|j| !nominal.contains(j)).count()
            + nominal.iter().filter(|j| !now.contains(j)).count();
    }
    println!(
        "500 warm: per solve iters {} removals {} full checks {} working set {}; {:?}",
        it as f64 / 500.0,
        rm as f64 / 500.0,
        fc as f64 / 500.0,
        cs as f64 / 500.0,
        t.elapsed()
    );
    println!(
        "support differs from nominal by {} columns",
        symdiff as f64 / 500.0
    );
}
