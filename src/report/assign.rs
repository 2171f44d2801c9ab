//! Reports of `assign` (axial/equatorial verdicts of ring protons): a table
//! for people, CSV and JSON for scripts.

use std::io::{self, Write};

use super::rank::csv_cell;
use super::table::{Align, Table};
use super::CAUTION;
use crate::assign::Assignment;

fn opt(v: Option<f64>) -> String {
    v.map(|x| format!("{x:.2}")).unwrap_or_else(|| "-".into())
}

/// Writes the verdicts as a table for people, ending with [`CAUTION`].
pub fn write_table(w: &mut dyn Write, a: &Assignment) -> io::Result<()> {
    writeln!(w, "Axial or equatorial, from the measured couplings")?;
    writeln!(w, "Error model: {}", a.error.describe())?;
    writeln!(
        w,
        "A verdict needs a likelihood ratio >= {} (or <= 1/{}) between the best family with the proton axial and the best with it equatorial; equal priors, energies not used.",
        a.decisive_ratio, a.decisive_ratio
    )?;
    for p in &a.protons {
        writeln!(w)?;
        let who = if p.name.is_empty() {
            p.label.clone()
        } else {
            format!("{} ({})", p.name, p.label)
        };
        writeln!(w, "Proton {who}: {}", p.verdict.to_uppercase())?;
        writeln!(w, "  {}", p.reason)?;
        if let (Some(r), Some(pa)) = (p.ratio_axial, p.probability_axial) {
            writeln!(
                w,
                "  likelihood ratio axial/equatorial = {}, P(axial) = {:.4}, P(equatorial) = {:.4}",
                if !(1e-3..1e4).contains(&r) {
                    format!("{r:.2e}")
                } else {
                    format!("{r:.3}")
                },
                pa,
                1.0 - pa
            )?;
        }
        let mut cols: Vec<(String, Align)> = vec![
            ("family".into(), Align::Left),
            ("conformers".into(), Align::Right),
            ("population".into(), Align::Right),
            (
                format!("{} is", if p.name.is_empty() { &p.label } else { &p.name }),
                Align::Left,
            ),
        ];
        for o in &p.observations {
            cols.push((o.clone(), Align::Right));
        }
        cols.push(("ln L".into(), Align::Right));
        cols.push(("P".into(), Align::Right));
        cols.push(("fails".into(), Align::Left));
        let colref: Vec<(&str, Align)> = cols.iter().map(|(s, a)| (s.as_str(), *a)).collect();
        let mut t = Table::new(&colref);
        let mut obs_row = vec![
            "observed".to_string(),
            String::new(),
            String::new(),
            String::new(),
        ];
        for e in &p.observations {
            let v = p
                .evidence
                .iter()
                .find(|x| &x.label == e)
                .map(|x| x.observed_hz);
            obs_row.push(opt(v));
        }
        t.row(obs_row);
        for f in &p.families {
            let mut row = vec![
                f.name.clone(),
                f.conformers.len().to_string(),
                format!("{:.4}", f.population),
                f.position.clone(),
            ];
            for v in &f.predicted_hz {
                row.push(format!("{v:.2}"));
            }
            row.push(format!("{:.2}", f.ln_likelihood));
            row.push(format!("{:.4}", f.probability));
            row.push(if f.fails.is_empty() {
                "-".into()
            } else {
                f.fails.join(" ")
            });
            t.row(row);
        }
        t.write(w, 2)?;
        writeln!(
            w,
            "  Couplings that carry the decision (ln ratio > 0 favours axial):"
        )?;
        let mut t = Table::new(&[
            ("observation", Align::Left),
            ("observed Hz", Align::Right),
            ("size", Align::Left),
            ("if axial", Align::Right),
            ("if equatorial", Align::Right),
            ("ln ratio", Align::Right),
        ]);
        for e in &p.evidence {
            t.row(vec![
                e.label.clone(),
                format!("{:.2}", e.observed_hz),
                e.size.clone(),
                opt(e.axial_hz),
                opt(e.equatorial_hz),
                format!("{:+.2}", e.ln_ratio),
            ]);
        }
        t.write(w, 4)?;
        writeln!(
            w,
            "  Sum of observed H-C-C-H couplings: {:.1} Hz ({} of {} observed); {}",
            p.sum_j_hz, p.couplings_observed, p.couplings_total, p.sum_rule
        )?;
    }
    for x in &a.warnings {
        writeln!(w, "Warning: {x}")?;
    }
    writeln!(w)?;
    writeln!(w, "{CAUTION}")
}

/// Writes the verdicts as CSV: one row per proton and family.
pub fn write_csv(w: &mut dyn Write, a: &Assignment) -> io::Result<()> {
    writeln!(w, "proton,name,verdict,ratio_axial,probability_axial,sum_j_hz,family,family_conformers,family_population,position,ln_likelihood,family_probability,fails")?;
    for p in &a.protons {
        for f in &p.families {
            writeln!(
                w,
                "{},{},{},{},{},{:.2},{},{},{:.6},{},{:.4},{:.6},{}",
                p.label,
                csv_cell(&p.name),
                csv_cell(&p.verdict),
                p.ratio_axial
                    .map(|r| format!("{r:.6e}"))
                    .unwrap_or_default(),
                p.probability_axial
                    .map(|r| format!("{r:.6}"))
                    .unwrap_or_default(),
                p.sum_j_hz,
                csv_cell(&f.name),
                f.conformers.len(),
                f.population,
                f.position,
                f.ln_likelihood,
                f.probability,
                csv_cell(&f.fails.join(" "))
            )?;
        }
    }
    Ok(())
}

/// Writes the verdicts as JSON.
pub fn write_json(w: &mut dyn Write, a: &Assignment) -> io::Result<()> {
    serde_json::to_writer_pretty(&mut *w, a).map_err(io::Error::other)?;
    writeln!(w)
}
