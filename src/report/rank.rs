//! Reports of `rank` (candidate structures against the observations) and
//! `check` (single conformers against the observations): tables for people,
//! CSV and JSON for scripts, and the predicted-against-observed plot.

use std::io::{self, Write};

use super::table::{Align, Table};
use super::CAUTION;
use crate::check::{fmt_p, Check, StateFit};
use crate::plot::{Plot, ScatterPoint, ScatterSeries};
use crate::rank::Ranking;

fn pct(p: f64) -> String {
    if p > 0.0 && p < 1e-4 {
        format!("{:.1e} %", 100.0 * p)
    } else {
        format!("{:.2} %", 100.0 * p)
    }
}

fn ratio(r: f64) -> String {
    if r >= 1e4 {
        format!("{r:.2e}")
    } else {
        format!("{r:.2}")
    }
}

/// Writes the ranking as a table for people, ending with [`CAUTION`].
pub fn write_table(w: &mut dyn Write, r: &Ranking) -> io::Result<()> {
    writeln!(
        w,
        "Candidate structures against {} observed couplings",
        r.observations.len()
    )?;
    writeln!(w, "Error model: {}", r.error.describe())?;
    writeln!(w)?;
    let mut t = Table::new(&[
        ("candidate", Align::Left),
        ("conformers", Align::Right),
        ("prior", Align::Right),
        ("RMSD Hz", Align::Right),
        ("max |err| Hz", Align::Right),
        ("at", Align::Left),
        ("ln L", Align::Right),
        ("probability", Align::Right),
    ]);
    for c in &r.candidates {
        t.row(vec![
            c.name.clone(),
            format!("{} (eff {:.1})", c.conformers, c.effective_conformers),
            format!("{:.3}", c.prior),
            format!("{:.2}", c.boltzmann.rmsd_hz),
            format!("{:.2}", c.boltzmann.max_abs_error_hz),
            c.boltzmann.max_error_at.clone(),
            format!("{:.2}", c.boltzmann.ln_likelihood),
            pct(c.boltzmann.probability),
        ]);
    }
    t.write(w, 2)?;
    writeln!(w)?;
    let win = &r.candidates[r.winner];
    match r.ratio_to_runner_up {
        Some(x) if r.decisive => writeln!(
            w,
            "Verdict: '{}' ({} ; {} times as likely as the runner-up, >= {} needed)",
            win.name,
            pct(win.boltzmann.probability),
            ratio(x),
            r.decisive_ratio
        )?,
        Some(x) => writeln!(
            w,
            "Verdict: cannot tell. '{}' leads ({}) but is only {} times as likely as the runner-up (>= {} needed).",
            win.name,
            pct(win.boltzmann.probability),
            ratio(x),
            r.decisive_ratio
        )?,
        None => writeln!(w, "Verdict: a single candidate; its probability is 1 by construction.")?,
    }
    writeln!(w)?;
    writeln!(w, "Couplings (Boltzmann-averaged predictions, Hz):")?;
    let mut cols: Vec<(String, Align)> = vec![
        ("observation".into(), Align::Left),
        ("observed".into(), Align::Right),
        ("scale".into(), Align::Right),
    ];
    for c in &r.candidates {
        cols.push((format!("{} pred", c.name), Align::Right));
        cols.push((format!("{} err", c.name), Align::Right));
    }
    let colref: Vec<(&str, Align)> = cols.iter().map(|(s, a)| (s.as_str(), *a)).collect();
    let mut t = Table::new(&colref);
    for (k, o) in r.observations.iter().enumerate() {
        let mut row = vec![
            o.clone(),
            format!("{:.2}", r.observed_hz[k]),
            format!("{:.2}", r.scale_hz[k]),
        ];
        for c in &r.candidates {
            row.push(format!("{:.2}", c.boltzmann.predicted_hz[k]));
            row.push(format!("{:+.2}", c.boltzmann.error_hz[k]));
        }
        t.row(row);
    }
    t.write(w, 2)?;
    if r.candidates.iter().any(|c| c.fitted.is_some()) {
        writeln!(w)?;
        writeln!(
            w,
            "With FITTED free populations (not Boltzmann; every candidate gets its best mixture,"
        )?;
        writeln!(
            w,
            "which favours flexible candidates: for comparison only, not the ranking above):"
        )?;
        let mut t = Table::new(&[
            ("candidate", Align::Left),
            ("RMSD Hz", Align::Right),
            ("max |err| Hz", Align::Right),
            ("probability (fitted)", Align::Right),
            ("populations", Align::Left),
        ]);
        for c in &r.candidates {
            if let Some(f) = &c.fitted {
                t.row(vec![
                    c.name.clone(),
                    format!("{:.2}", f.rmsd_hz),
                    format!("{:.2}", f.max_abs_error_hz),
                    pct(f.probability),
                    c.fitted_populations
                        .iter()
                        .map(|(i, p)| format!("c{i} {p:.2}"))
                        .collect::<Vec<_>>()
                        .join(", "),
                ]);
            }
        }
        t.write(w, 2)?;
    }
    writeln!(w)?;
    writeln!(
        w,
        "Sensitivity to the error model (probability of '{}' under each):",
        win.name
    )?;
    let mut t = Table::new(&[
        ("setting", Align::Left),
        ("model", Align::Left),
        ("probability", Align::Right),
        ("winner", Align::Left),
    ]);
    t.row(vec![
        "default".into(),
        short(&r.error),
        pct(win.boltzmann.probability),
        win.name.clone(),
    ]);
    for s in &r.sensitivity {
        t.row(vec![
            s.setting.clone(),
            short(&s.error),
            pct(s.probabilities[r.winner]),
            r.candidates[s.winner].name.clone(),
        ]);
    }
    t.write(w, 2)?;
    writeln!(
        w,
        "  range of the winner's probability: {} to {}{}",
        pct(r.winner_probability_range.0),
        pct(r.winner_probability_range.1),
        if r.winner_changes {
            "; the winner CHANGES under some settings: treat the ranking as fragile"
        } else {
            "; the winner is the same under every setting"
        }
    )?;
    let mut warnings: Vec<String> = r.warnings.clone();
    for c in &r.candidates {
        for x in &c.warnings {
            warnings.push(format!("{}: {x}", c.name));
        }
    }
    if !warnings.is_empty() {
        writeln!(w)?;
        for x in warnings {
            writeln!(w, "Warning: {x}")?;
        }
    }
    writeln!(w)?;
    writeln!(
        w,
        "Probabilities follow from the stated error model and equal (or given) priors, as in the DP4 approach"
    )?;
    writeln!(
        w,
        "(Smith & Goodman, J. Am. Chem. Soc. 2010, 132, 12946) applied to couplings; they are no better than that model."
    )?;
    writeln!(w, "{CAUTION}")
}

fn short(e: &crate::rank::ErrorModel) -> String {
    match e.nu {
        Some(nu) => format!("t nu={nu}, scale {:.2} Hz", e.scale_hz),
        None => format!("Gaussian, scale {:.2} Hz", e.scale_hz),
    }
}

/// Writes the ranking as CSV: one row per candidate and observation.
pub fn write_csv(w: &mut dyn Write, r: &Ranking) -> io::Result<()> {
    writeln!(w, "candidate,observation,pair,observed_hz,scale_hz,predicted_hz,error_hz,fitted_hz,rmsd_hz,max_abs_error_hz,ln_likelihood,probability,probability_fitted")?;
    for c in &r.candidates {
        for (k, o) in r.observations.iter().enumerate() {
            let fitted = c
                .fitted
                .as_ref()
                .map(|f| format!("{:.3}", f.predicted_hz[k]))
                .unwrap_or_default();
            let pf = c
                .fitted
                .as_ref()
                .map(|f| format!("{:.6}", f.probability))
                .unwrap_or_default();
            writeln!(
                w,
                "{},{},{},{:.3},{:.3},{:.3},{:.3},{},{:.3},{:.3},{:.4},{:.6},{}",
                csv_cell(&c.name),
                csv_cell(o),
                c.pairs.get(k).map(String::as_str).unwrap_or(""),
                r.observed_hz[k],
                r.scale_hz[k],
                c.boltzmann.predicted_hz[k],
                c.boltzmann.error_hz[k],
                fitted,
                c.boltzmann.rmsd_hz,
                c.boltzmann.max_abs_error_hz,
                c.boltzmann.ln_likelihood,
                c.boltzmann.probability,
                pf
            )?;
        }
    }
    Ok(())
}

/// Quotes a CSV cell when needed.
pub fn csv_cell(s: &str) -> String {
    if s.contains([',', '"', '\n']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

/// Writes the ranking as JSON.
pub fn write_json(w: &mut dyn Write, r: &Ranking) -> io::Result<()> {
    serde_json::to_writer_pretty(&mut *w, r).map_err(io::Error::other)?;
    writeln!(w)
}

/// The predicted-against-observed plot of every candidate, with the
/// diagonal, as SVG.
pub fn plot_svg(r: &Ranking) -> String {
    let mut p = Plot::new(
        "Predicted against observed 3J(H,H) per candidate",
        "observed 3J(H,H) (Hz)",
        "predicted 3J(H,H), Boltzmann-averaged (Hz)",
    );
    p.identity_line("predicted = observed");
    for c in &r.candidates {
        let pts = r
            .observed_hz
            .iter()
            .zip(&c.boltzmann.predicted_hz)
            .zip(&r.scale_hz)
            .map(|((&o, &pr), &s)| ScatterPoint::new(o, pr).y_err(s))
            .collect();
        p.scatter(ScatterSeries::new(
            format!(
                "{} (P = {:.3}, RMSD {:.2} Hz)",
                c.name, c.boltzmann.probability, c.boltzmann.rmsd_hz
            ),
            pts,
        ));
    }
    p.to_svg()
}

fn state_row(s: &StateFit, t: &mut Table, extra: &str) {
    t.row(vec![
        s.name.clone(),
        s.population.map(|p| format!("{p:.4}")).unwrap_or_default(),
        format!("{:.2}", s.chi2),
        s.dof.to_string(),
        fmt_p(s.p_value),
        if s.fails.is_empty() {
            "-".into()
        } else {
            s.fails.join(" ")
        },
        extra.to_string(),
    ]);
}

fn state_table() -> Table {
    Table::new(&[
        ("state", Align::Left),
        ("population", Align::Right),
        ("chi2", Align::Right),
        ("dof", Align::Right),
        ("p", Align::Right),
        ("fails (|r| > 2 sigma)", Align::Left),
        ("", Align::Left),
    ])
}

/// Writes the check as a table for people, ending with [`CAUTION`].
pub fn write_check_table(w: &mut dyn Write, c: &Check) -> io::Result<()> {
    writeln!(
        w,
        "Single conformers against {} observed couplings",
        c.observations.len()
    )?;
    writeln!(
        w,
        "chi2 = sum ((observed - predicted)/sigma)^2, Gaussian, sigma = sqrt(measurement^2 + {:.2}^2) Hz (measurement default {:.2} Hz); p = P(chi2_dof >= chi2)",
        c.error.scale_hz, c.error.default_measurement_hz
    )?;
    writeln!(w)?;
    let mut t = state_table();
    for (i, s) in c.conformers.iter().enumerate() {
        state_row(
            s,
            &mut t,
            if i + 1 == c.best_conformer {
                "best"
            } else {
                ""
            },
        );
    }
    t.write(w, 2)?;
    if !c.families.is_empty() {
        writeln!(w)?;
        writeln!(
            w,
            "Ring-shape families (couplings population-weighted within each):"
        )?;
        let mut t = state_table();
        for (ring, s) in &c.families {
            state_row(s, &mut t, &format!("ring {ring}"));
        }
        t.write(w, 2)?;
    }
    writeln!(w)?;
    let mut t = state_table();
    state_row(&c.ensemble, &mut t, "");
    if let Some(m) = &c.mixture {
        let pops = c
            .mixture_populations
            .iter()
            .map(|(i, p)| format!("c{i} {p:.2}"))
            .collect::<Vec<_>>()
            .join(", ");
        state_row(m, &mut t, &pops);
    }
    t.write(w, 2)?;
    writeln!(w)?;
    writeln!(w, "Verdict: {} — {}", c.verdict, c.reason)?;
    for x in &c.warnings {
        writeln!(w, "Warning: {x}")?;
    }
    writeln!(w)?;
    writeln!(w, "{CAUTION}")
}

/// Writes the check as CSV: one row per state (conformer, family, ensemble, mixture).
pub fn write_check_csv(w: &mut dyn Write, c: &Check) -> io::Result<()> {
    write!(w, "kind,state,population,chi2,dof,p_value,fails")?;
    for o in &c.observations {
        write!(w, ",pred_{}", csv_cell(o))?;
    }
    writeln!(w)?;
    let line = |w: &mut dyn Write, kind: &str, s: &StateFit| -> io::Result<()> {
        write!(
            w,
            "{kind},{},{},{:.4},{},{},{}",
            csv_cell(&s.name),
            s.population.map(|p| format!("{p:.6}")).unwrap_or_default(),
            s.chi2,
            s.dof,
            s.p_value.map(|p| format!("{p:.6e}")).unwrap_or_default(),
            csv_cell(&s.fails.join(" "))
        )?;
        for p in &s.predicted_hz {
            write!(w, ",{p:.3}")?;
        }
        writeln!(w)
    };
    for s in &c.conformers {
        line(w, "conformer", s)?;
    }
    for (_, s) in &c.families {
        line(w, "family", s)?;
    }
    line(w, "ensemble", &c.ensemble)?;
    if let Some(m) = &c.mixture {
        line(w, "mixture", m)?;
    }
    Ok(())
}

/// Writes the check as JSON.
pub fn write_check_json(w: &mut dyn Write, c: &Check) -> io::Result<()> {
    serde_json::to_writer_pretty(&mut *w, c).map_err(io::Error::other)?;
    writeln!(w)
}
