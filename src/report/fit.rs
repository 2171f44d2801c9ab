//! Reports of a population fit ([`crate::populations::EnsembleFit`]): an
//! aligned table for people (ending with [`CAUTION`]), a long-form CSV
//! (`section,item,quantity,value,unit`: one number per row, the same layout
//! for every model) and JSON, and two SVG pictures: observed against fitted
//! couplings, and the populations with their intervals.

use std::io::{self, Write};

use serde::Serialize;

use super::table::{Align, Table};
use super::CAUTION;
use crate::fit::two_state::OpenInterval;
use crate::fit::RESIDUAL_FLAG_SIGMAS;
use crate::plot::{LineSeries, Plot, ScatterPoint, ScatterSeries};
use crate::populations::{EnsembleFit, ModelResult};

/// In the table, reweighted ensembles list at most this many conformers
/// (largest weights first); the rest are counted.
pub const REWEIGHT_ROWS_SHOWN: usize = 30;

fn f(v: f64, d: usize) -> String {
    if v.is_finite() {
        format!("{v:.d$}")
    } else {
        "-".into()
    }
}

fn opt(v: Option<f64>, d: usize) -> String {
    v.map_or("-".into(), |x| f(x, d))
}

fn pct(v: f64) -> String {
    f(100.0 * v, 1)
}

fn range_pct(r: Option<(f64, f64)>) -> String {
    r.map_or("-".into(), |(a, b)| format!("{}-{}", pct(a), pct(b)))
}

fn open(i: &OpenInterval, d: usize) -> String {
    let lo = i.lower.map_or("-inf".to_string(), |v| f(v, d));
    let hi = i.upper.map_or("+inf".to_string(), |v| f(v, d));
    format!("{lo} to {hi}")
}

fn pvalue(p: Option<f64>) -> String {
    p.map_or("-".into(), |p| {
        if p < 1e-3 {
            format!("{p:.2e}")
        } else {
            format!("{p:.3}")
        }
    })
}

/// Writes the fit as tables for people.
pub fn write_table(w: &mut dyn Write, fit: &EnsembleFit) -> io::Result<()> {
    let n_obs = fit.observations.len();
    writeln!(
        w,
        "Population fit ({}) of {} state(s) to {n_obs} observed coupling(s)",
        fit.model,
        fit.states.len()
    )?;
    writeln!(w, "States: {}", fit.grouping)?;
    writeln!(
        w,
        "A state's predicted coupling is the mean of its conformers' couplings weighted by {}, renormalised within the state.",
        fit.weighting
    )?;
    writeln!(w)?;

    match &fit.result {
        ModelResult::Free(_) | ModelResult::TwoState(_) => {
            let interval_src = match &fit.result {
                ModelResult::TwoState(_) => "chi2 profile",
                _ => "Monte Carlo",
            };
            writeln!(w, "Populations (%)")?;
            let c68 = format!("68 % ({interval_src})");
            let c95 = format!("95 % ({interval_src})");
            let mut t = Table::new(&[
                ("state", Align::Left),
                ("members", Align::Left),
                ("fitted", Align::Right),
                ("std err", Align::Right),
                (c68.as_str(), Align::Right),
                (c95.as_str(), Align::Right),
                ("reference", Align::Right),
            ]);
            for (p, s) in fit.populations.iter().zip(&fit.states) {
                t.row(vec![
                    p.label.clone(),
                    members(&s.members),
                    pct(p.value),
                    p.std_err.map_or("-".into(), pct),
                    range_pct(p.interval_68),
                    range_pct(p.interval_95),
                    pct(p.reference),
                ]);
            }
            t.write(w, 2)?;
            if let Some(mc) = &fit.monte_carlo {
                writeln!(
                    w,
                    "  Monte Carlo: {} resamples of the observations within their standard errors, seed {}.",
                    mc.n_samples, mc.seed
                )?;
            }
            writeln!(
                w,
                "  std err: {} (none for a population at a bound); reference: the prediction's populations.",
                if interval_src == "Monte Carlo" {
                    "from the covariance of the fit"
                } else {
                    "from the curvature of chi2"
                }
            )?;
            if let ModelResult::TwoState(ts) = &fit.result {
                writeln!(w)?;
                writeln!(
                    w,
                    "Equilibrium {} <=> {} at {} K (K = [{}]/[{}], dG = -RT ln K)",
                    ts.labels[1], ts.labels[0], ts.temperature_k, ts.labels[0], ts.labels[1]
                )?;
                let th = &ts.thermo;
                let mut t = Table::new(&[
                    ("quantity", Align::Left),
                    ("value", Align::Right),
                    ("68 %", Align::Right),
                    ("95 %", Align::Right),
                ]);
                t.row(vec![
                    format!("fraction of {}", ts.labels[0]),
                    f(ts.fraction, 3),
                    format!(
                        "{} to {}",
                        f(ts.fraction_68.lower, 3),
                        f(ts.fraction_68.upper, 3)
                    ),
                    format!(
                        "{} to {}",
                        f(ts.fraction_95.lower, 3),
                        f(ts.fraction_95.upper, 3)
                    ),
                ]);
                t.row(vec![
                    "K".into(),
                    th.k.map_or("+inf".into(), |k| f(k, 3)),
                    open(&th.k_68, 3),
                    open(&th.k_95, 3),
                ]);
                t.row(vec![
                    "dG (kcal/mol)".into(),
                    opt(th.delta_g_kcal_per_mol, 2),
                    open(&th.delta_g_68_kcal_per_mol, 2),
                    open(&th.delta_g_95_kcal_per_mol, 2),
                ]);
                t.row(vec![
                    "dG (kJ/mol)".into(),
                    opt(th.delta_g_kj_per_mol, 2),
                    open(&th.delta_g_68_kj_per_mol, 2),
                    open(&th.delta_g_95_kj_per_mol, 2),
                ]);
                t.write(w, 2)?;
            }
        }
        ModelResult::Reweight(r) => {
            writeln!(
                w,
                "Minimal reweighting of the computed ensemble (Hummer & Koefinger 2015)"
            )?;
            writeln!(
                w,
                "  theta {}; kept fraction of the reference exp(-S) {}; relative entropy S {} nats",
                r.theta
                    .map_or("infinite (reference kept)".to_string(), |t| {
                        if (1e-3..1e4).contains(&t) {
                            format!("{t:.4}")
                        } else {
                            format!("{t:.3e}")
                        }
                    }),
                f(r.kept_fraction, 3),
                f(r.relative_entropy, 4)
            )?;
            let mut order: Vec<usize> = (0..r.weights.len()).collect();
            order.sort_by(|&a, &b| r.weights[b].total_cmp(&r.weights[a]));
            let mut t = Table::new(&[
                ("state", Align::Left),
                ("members", Align::Left),
                ("reweighted %", Align::Right),
                ("reference %", Align::Right),
            ]);
            for &i in order.iter().take(REWEIGHT_ROWS_SHOWN) {
                t.row(vec![
                    fit.states[i].label.clone(),
                    members(&fit.states[i].members),
                    pct(r.weights[i]),
                    pct(r.reference_weights[i]),
                ]);
            }
            t.write(w, 2)?;
            if order.len() > REWEIGHT_ROWS_SHOWN {
                writeln!(
                    w,
                    "  ... {} more states with smaller weights (see --as csv)",
                    order.len() - REWEIGHT_ROWS_SHOWN
                )?;
            }
        }
        ModelResult::VanTHoff(v) => {
            let (a, b) = (
                fit.states.first().map_or("state 1", |s| s.label.as_str()),
                fit.states.get(1).map_or("state 2", |s| s.label.as_str()),
            );
            writeln!(
                w,
                "van 't Hoff fit: {b} <=> {a}, dH = H({a}) - H({b}), dS = S({a}) - S({b})"
            )?;
            let mut t = Table::new(&[
                ("quantity", Align::Left),
                ("value", Align::Right),
                ("std err", Align::Right),
                ("std err (scaled by reduced chi2)", Align::Right),
            ]);
            t.row(vec![
                "dH (kcal/mol)".into(),
                f(v.delta_h_kcal_per_mol, 3),
                f(v.delta_h_std_err, 3),
                opt(v.delta_h_std_err_scaled, 3),
            ]);
            t.row(vec![
                "dS (cal/(mol K))".into(),
                f(v.delta_s_cal_per_mol_k, 3),
                f(v.delta_s_std_err, 3),
                opt(v.delta_s_std_err_scaled, 3),
            ]);
            t.write(w, 2)?;
            writeln!(w, "  correlation of dH and dS: {}", f(v.correlation, 4))?;
            let mut t = Table::new(&[
                ("temperature (K)", Align::Right),
                (&format!("fraction of {a} (%)"), Align::Right),
            ]);
            for (tk, x) in &v.fractions {
                t.row(vec![f(*tk, 2), pct(*x)]);
            }
            t.write(w, 2)?;
        }
    }
    writeln!(w)?;

    writeln!(w, "Couplings (Hz)")?;
    let labelled = fit.observations.iter().any(|o| o.label != o.pair);
    let mut t = Table::new(&[
        (if labelled { "coupling" } else { "pair" }, Align::Left),
        (if labelled { "pair" } else { "" }, Align::Left),
        ("T (K)", Align::Right),
        ("observed", Align::Right),
        ("fitted", Align::Right),
        ("sigma meas", Align::Right),
        ("sigma model", Align::Right),
        ("sigma", Align::Right),
        ("residual", Align::Right),
        ("z", Align::Right),
        ("", Align::Left),
    ]);
    let q = fit.result.quality();
    for (o, r) in fit.observations.iter().zip(&q.residuals) {
        let mut obs = f(o.observed_hz, 2);
        if !o.signed {
            obs = format!("|{obs}|");
        }
        t.row(vec![
            if labelled {
                o.label.clone()
            } else {
                o.pair.clone()
            },
            if labelled {
                o.pair.clone()
            } else {
                String::new()
            },
            o.temperature_k.map_or("-".into(), |v| f(v, 1)),
            obs,
            f(r.fitted_hz, 2),
            f(o.sigma_measurement_hz, 2),
            f(o.sigma_model_hz, 2),
            f(o.sigma_hz, 2),
            f(r.residual_hz, 2),
            f(r.normalised, 2),
            if r.flagged {
                format!("> {RESIDUAL_FLAG_SIGMAS} sigma")
            } else {
                String::new()
            },
        ]);
    }
    t.write(w, 2)?;
    writeln!(
        w,
        "  sigma = sqrt(sigma meas^2 + sigma model^2); |J| where the sign was not measured."
    )?;
    writeln!(
        w,
        "  chi2 {}, degrees of freedom {}, reduced chi2 {}, p-value {}, RMSD {} Hz",
        f(q.chi2, 3),
        q.dof,
        opt(q.reduced_chi2, 3),
        pvalue(q.p_value),
        f(q.rmsd_hz, 3)
    )?;

    if let Some(a) = &fit.assignments {
        writeln!(w)?;
        writeln!(
            w,
            "Unassigned protons: {} (every assignment fitted)",
            a.pairs.join(", ")
        )?;
        let mut t = Table::new(&[
            ("assignment", Align::Left),
            ("chi2", Align::Right),
            ("delta chi2", Align::Right),
        ]);
        let best = a.trials.first().and_then(|t| t.chi2);
        for tr in &a.trials {
            let desc: Vec<String> = a
                .pairs
                .iter()
                .zip(&tr.swapped)
                .map(|(p, &s)| format!("{p} {}", if s { "exchanged" } else { "as given" }))
                .collect();
            t.row(vec![
                desc.join("; "),
                tr.chi2.map_or_else(
                    || tr.failure.clone().unwrap_or_else(|| "not fitted".into()),
                    |c| f(c, 3),
                ),
                match (tr.chi2, best) {
                    (Some(c), Some(b)) => f(c - b, 3),
                    _ => "-".into(),
                },
            ]);
        }
        t.write(w, 2)?;
        match a.delta_chi2_to_next {
            Some(d) if a.clear_preference => writeln!(
                w,
                "  The data prefer the first assignment (delta chi2 {} to the next; the results above use it).",
                f(d, 2)
            )?,
            Some(d) => writeln!(
                w,
                "  The data do not clearly prefer any assignment (delta chi2 {} < 4 to the next); the results above use the lowest chi2.",
                f(d, 2)
            )?,
            None => {}
        }
    }

    if !fit.findings.is_empty() || !fit.notes.is_empty() {
        writeln!(w)?;
        writeln!(w, "Findings")?;
        for (sev, m) in &fit.findings {
            writeln!(w, "  {sev}: {m}")?;
        }
        for m in &fit.notes {
            writeln!(w, "  note: {m}")?;
        }
    }
    writeln!(w)?;
    writeln!(
        w,
        "Fitted populations inherit the error of the coupling model and of the conformer geometries; they are model estimates to be confirmed independently."
    )?;
    writeln!(w, "{CAUTION}")
}

fn members(m: &[usize]) -> String {
    const SHOWN: usize = 6;
    if m.len() == 1 {
        return m[0].to_string();
    }
    // Compact ranges.
    let mut parts = Vec::new();
    let mut i = 0;
    while i < m.len() {
        let mut j = i;
        while j + 1 < m.len() && m[j + 1] == m[j] + 1 {
            j += 1;
        }
        parts.push(if j > i {
            format!("{}-{}", m[i], m[j])
        } else {
            m[i].to_string()
        });
        i = j + 1;
    }
    if parts.len() > SHOWN {
        format!("{} ... ({} conformers)", parts[..SHOWN].join(","), m.len())
    } else {
        parts.join(",")
    }
}

/// Long-form CSV: header `section,item,quantity,value,unit`, one number per
/// row. Sections: `fit` (chi2, dof, reduced_chi2, p_value, rmsd), `population`
/// (value, std_err, lower_68, upper_68, lower_95, upper_95, reference),
/// `two_state`, `reweight`, `van_t_hoff`, `coupling` (observed, fitted,
/// sigma_measurement, sigma_model, sigma, residual, z, flagged), `assignment`
/// (chi2 per assignment), `monte_carlo` (samples, seed).
pub fn write_csv(w: &mut dyn Write, fit: &EnsembleFit) -> io::Result<()> {
    let mut wr = csv::Writer::from_writer(w);
    wr.write_record(["section", "item", "quantity", "value", "unit"])?;
    let mut rec = |s: &str, item: &str, q: &str, v: f64, u: &str| -> io::Result<()> {
        if v.is_finite() {
            wr.write_record([s, item, q, &format!("{v}"), u])?;
        }
        Ok(())
    };
    let q = fit.result.quality();
    rec("fit", &fit.model, "chi2", q.chi2, "")?;
    rec("fit", &fit.model, "dof", q.dof as f64, "")?;
    if let Some(r) = q.reduced_chi2 {
        rec("fit", &fit.model, "reduced_chi2", r, "")?;
    }
    if let Some(p) = q.p_value {
        rec("fit", &fit.model, "p_value", p, "")?;
    }
    rec("fit", &fit.model, "rmsd", q.rmsd_hz, "Hz")?;
    for p in &fit.populations {
        rec("population", &p.label, "value", p.value, "fraction")?;
        if let Some(s) = p.std_err {
            rec("population", &p.label, "std_err", s, "fraction")?;
        }
        if let Some((a, b)) = p.interval_68 {
            rec("population", &p.label, "lower_68", a, "fraction")?;
            rec("population", &p.label, "upper_68", b, "fraction")?;
        }
        if let Some((a, b)) = p.interval_95 {
            rec("population", &p.label, "lower_95", a, "fraction")?;
            rec("population", &p.label, "upper_95", b, "fraction")?;
        }
        rec("population", &p.label, "reference", p.reference, "fraction")?;
    }
    match &fit.result {
        ModelResult::TwoState(t) => {
            let th = &t.thermo;
            let item = &t.labels[0];
            rec("two_state", item, "temperature", t.temperature_k, "K")?;
            if let Some(k) = th.k {
                rec("two_state", item, "K", k, "")?;
            }
            if let Some(g) = th.delta_g_kcal_per_mol {
                rec("two_state", item, "delta_g", g, "kcal/mol")?;
            }
            for (name, i) in [
                ("delta_g_68", &th.delta_g_68_kcal_per_mol),
                ("delta_g_95", &th.delta_g_95_kcal_per_mol),
            ] {
                if let Some(v) = i.lower {
                    rec("two_state", item, &format!("{name}_lower"), v, "kcal/mol")?;
                }
                if let Some(v) = i.upper {
                    rec("two_state", item, &format!("{name}_upper"), v, "kcal/mol")?;
                }
            }
        }
        ModelResult::Reweight(r) => {
            if let Some(t) = r.theta {
                rec("reweight", "", "theta", t, "")?;
            }
            rec("reweight", "", "kept_fraction", r.kept_fraction, "")?;
            rec(
                "reweight",
                "",
                "relative_entropy",
                r.relative_entropy,
                "nats",
            )?;
        }
        ModelResult::VanTHoff(v) => {
            rec(
                "van_t_hoff",
                "",
                "delta_h",
                v.delta_h_kcal_per_mol,
                "kcal/mol",
            )?;
            rec(
                "van_t_hoff",
                "",
                "delta_h_std_err",
                v.delta_h_std_err,
                "kcal/mol",
            )?;
            rec(
                "van_t_hoff",
                "",
                "delta_s",
                v.delta_s_cal_per_mol_k,
                "cal/(mol K)",
            )?;
            rec(
                "van_t_hoff",
                "",
                "delta_s_std_err",
                v.delta_s_std_err,
                "cal/(mol K)",
            )?;
            rec("van_t_hoff", "", "correlation", v.correlation, "")?;
            for (t, x) in &v.fractions {
                rec("van_t_hoff", &format!("{t} K"), "fraction", *x, "fraction")?;
            }
        }
        ModelResult::Free(_) => {}
    }
    for (o, r) in fit.observations.iter().zip(&q.residuals) {
        let item = &r.label;
        rec("coupling", item, "observed", o.observed_hz, "Hz")?;
        rec("coupling", item, "fitted", r.fitted_hz, "Hz")?;
        rec(
            "coupling",
            item,
            "sigma_measurement",
            o.sigma_measurement_hz,
            "Hz",
        )?;
        rec("coupling", item, "sigma_model", o.sigma_model_hz, "Hz")?;
        rec("coupling", item, "sigma", o.sigma_hz, "Hz")?;
        rec("coupling", item, "residual", r.residual_hz, "Hz")?;
        rec("coupling", item, "z", r.normalised, "")?;
        rec(
            "coupling",
            item,
            "flagged",
            f64::from(u8::from(r.flagged)),
            "",
        )?;
    }
    if let Some(a) = &fit.assignments {
        for t in &a.trials {
            let desc: Vec<String> = a
                .pairs
                .iter()
                .zip(&t.swapped)
                .map(|(p, &s)| format!("{p} {}", if s { "exchanged" } else { "as given" }))
                .collect();
            if let Some(c) = t.chi2 {
                rec("assignment", &desc.join("; "), "chi2", c, "")?;
            }
        }
    }
    if let Some(mc) = &fit.monte_carlo {
        rec("monte_carlo", "", "samples", mc.n_samples as f64, "")?;
        rec("monte_carlo", "", "seed", mc.seed as f64, "")?;
    }
    wr.flush()
}

#[derive(Serialize)]
struct JsonReport<'a> {
    caution: &'a str,
    #[serde(flatten)]
    fit: &'a EnsembleFit,
}

/// The whole fit as one JSON document (field names as in
/// [`EnsembleFit`], plus `caution`).
pub fn write_json(w: &mut dyn Write, fit: &EnsembleFit) -> io::Result<()> {
    let text = serde_json::to_string_pretty(&JsonReport {
        caution: CAUTION,
        fit,
    })
    .map_err(io::Error::other)?;
    w.write_all(text.as_bytes())?;
    writeln!(w)
}

/// Observed against fitted couplings (Hz) with the observations' combined
/// standard errors as horizontal bars and the diagonal; couplings more than
/// 2σ from the fit drawn separately.
pub fn couplings_plot(fit: &EnsembleFit) -> Plot {
    let q = fit.result.quality();
    let mut plot = Plot::new(
        format!("Observed and fitted couplings ({} populations)", fit.model),
        "observed 3J(H,H) (Hz)",
        "fitted 3J(H,H) (Hz)",
    );
    plot.identity_line("fitted = observed");
    let (mut ok, mut bad) = (Vec::new(), Vec::new());
    for (o, r) in fit.observations.iter().zip(&q.residuals) {
        let p = ScatterPoint::new(o.observed_hz, r.fitted_hz).x_err(o.sigma_hz);
        if r.flagged {
            bad.push(p);
        } else {
            ok.push(p);
        }
    }
    plot.scatter(ScatterSeries::new("coupling (bar: +-1 sigma)", ok).color("#0072B2"));
    if !bad.is_empty() {
        plot.scatter(ScatterSeries::new("more than 2 sigma off", bad).color("#D55E00"));
    }
    plot
}

/// Fitted populations (%) per state with their 95 % intervals (Monte Carlo
/// or χ² profile) as vertical bars, and the reference populations. States
/// are numbered along x in report order; the legend names up to eight.
pub fn populations_plot(fit: &EnsembleFit) -> Plot {
    if let ModelResult::VanTHoff(v) = &fit.result {
        let mut plot = Plot::new(
            "van 't Hoff fit: fraction against temperature",
            "temperature (K)",
            "population (%)",
        );
        let a = fit.states.first().map_or("state 1", |s| s.label.as_str());
        plot.line(LineSeries::new(
            format!("fitted fraction of {a}"),
            v.fractions.iter().map(|&(t, x)| (t, 100.0 * x)).collect(),
        ));
        plot.y_range(0.0, 100.0);
        return plot;
    }
    let n = fit.populations.len();
    let x_label = if n <= 8 {
        let v: Vec<String> = fit
            .populations
            .iter()
            .enumerate()
            .map(|(i, p)| format!("{} = {}", i + 1, p.label))
            .collect();
        format!("state ({})", v.join("; "))
    } else {
        "state number (report order)".to_string()
    };
    let mut plot = Plot::new(
        format!("Populations ({}), bars: 95 % interval", fit.model),
        x_label,
        "population (%)",
    );
    plot.y_range(0.0, 100.0);
    plot.x_range(0.5, n as f64 + 0.5);
    if n <= 12 {
        let ticks: Vec<f64> = (1..=n).map(|i| i as f64).collect();
        plot.x_ticks(&ticks);
    }
    for (i, p) in fit.populations.iter().enumerate() {
        if let Some((lo, hi)) = p.interval_95 {
            let x = (i + 1) as f64;
            plot.line(LineSeries::new("", vec![(x, 100.0 * lo), (x, 100.0 * hi)]).color("#0072B2"));
        }
    }
    let fitted: Vec<ScatterPoint> = fit
        .populations
        .iter()
        .enumerate()
        .map(|(i, p)| ScatterPoint::new((i + 1) as f64, 100.0 * p.value))
        .collect();
    let reference: Vec<ScatterPoint> = fit
        .populations
        .iter()
        .enumerate()
        .map(|(i, p)| ScatterPoint::new((i + 1) as f64 + 0.15, 100.0 * p.reference))
        .collect();
    plot.scatter(ScatterSeries::new("fitted", fitted).color("#0072B2"));
    plot.scatter(ScatterSeries::new("reference (prediction)", reference).color("#999999"));
    plot
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn members_are_compact() {
        assert_eq!(members(&[1, 2, 3, 5]), "1-3,5");
        assert_eq!(members(&[4]), "4");
    }
}
