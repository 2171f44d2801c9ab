//! Reports of a prediction: an aligned table for people, CSV and JSON for
//! scripts. Column and field names are documented in the README and kept
//! stable.

use std::io::{self, Write};

use serde::Serialize;

use super::table::{Align, Table};
use super::CAUTION;
use crate::atomref;
use crate::ensemble::predict::{ConformerInfo, Coupling, Prediction, RingProton, RingSeries};
use crate::topology::Topology;

/// Conformers shown per block of the per-conformer table.
const CONFORMERS_PER_BLOCK: usize = 8;

/// Conformers listed in the table of a large ensemble (most populated first).
const CONFORMERS_LISTED_LARGE: usize = 20;

/// Above this many conformers the table omits the per-conformer block unless asked.
pub const PER_CONFORMER_DEFAULT_MAX: usize = 40;

fn refs(top: &Topology, atoms: &[usize]) -> String {
    atoms
        .iter()
        .map(|&i| atomref::label(top, i))
        .collect::<Vec<_>>()
        .join("/")
}

fn names(top: &Topology, atoms: &[usize]) -> String {
    let n: Vec<&str> = atoms.iter().map(|&i| atomref::name(top, i)).collect();
    if n.iter().all(|s| s.is_empty()) {
        String::new()
    } else {
        n.join("/")
    }
}

fn pair_label(top: &Topology, c: &Coupling) -> String {
    let side = |s: &[usize]| {
        if s.len() > 1 {
            format!("{}(rotor)", refs(top, s))
        } else {
            refs(top, s)
        }
    };
    let tag = match c.h6_pro_r {
        Some(true) => " [H6 pro-R]",
        Some(false) => " [H6 pro-S]",
        None => "",
    };
    format!("{}-{}{tag}", side(&c.side1), side(&c.side2))
}

fn fmt_dihedral(d: &[f64]) -> String {
    if d.len() == 1 {
        format!("{:.1}", d[0].to_degrees())
    } else {
        "rotor".to_string()
    }
}

fn formula(top: &Topology) -> String {
    let mut counts = std::collections::BTreeMap::new();
    for a in &top.atoms {
        *counts.entry(a.element.symbol()).or_insert(0usize) += 1;
    }
    let mut s = String::new();
    // Hill order: C, H, then alphabetical.
    for sym in ["C", "H"] {
        if let Some(n) = counts.remove(sym) {
            s.push_str(sym);
            if n > 1 {
                s.push_str(&n.to_string());
            }
        }
    }
    for (sym, n) in counts {
        s.push_str(sym);
        if n > 1 {
            s.push_str(&n.to_string());
        }
    }
    s
}

/// Writes the prediction as tables for people. `per_conformer` forces the
/// per-conformer block on (`Some(true)`) or off; `None` shows it for up to
/// [`PER_CONFORMER_DEFAULT_MAX`] conformers.
pub fn write_table(
    w: &mut dyn Write,
    pr: &Prediction,
    per_conformer: Option<bool>,
) -> io::Result<()> {
    let top = &pr.topology;
    let n = pr.conformers.len();
    let files: Vec<String> = pr.files.iter().map(|f| f.display().to_string()).collect();
    writeln!(
        w,
        "Ensemble: {n} conformer(s) of {} ({} atoms) from {}",
        formula(top),
        top.len(),
        files.join(", ")
    )?;
    writeln!(
        w,
        "Weights: {}; effective number of conformers {:.2}",
        pr.weighting, pr.effective_conformers
    )?;
    writeln!(w)?;

    let show = per_conformer.unwrap_or(n <= PER_CONFORMER_DEFAULT_MAX);
    // Large ensembles list their most populated conformers only.
    let mut order: Vec<usize> = (0..n).collect();
    if !show {
        order.sort_by(|&a, &b| {
            pr.conformers[b]
                .population
                .total_cmp(&pr.conformers[a].population)
        });
        order.truncate(CONFORMERS_LISTED_LARGE);
        writeln!(w, "Conformers (the {} most populated of {n})", order.len())?;
    } else {
        writeln!(w, "Conformers")?;
    }
    let mut cols: Vec<(String, Align)> = vec![
        ("#".into(), Align::Right),
        ("source".into(), Align::Left),
        ("energy".into(), Align::Right),
        ("rel. kcal/mol".into(), Align::Right),
        ("population".into(), Align::Right),
    ];
    for (k, r) in pr.rings.iter().enumerate() {
        cols.push((
            format!("ring {} ({}-membered)", k + 1, r.atoms.len()),
            Align::Left,
        ));
    }
    let cols_ref: Vec<(&str, Align)> = cols.iter().map(|(s, a)| (s.as_str(), *a)).collect();
    let mut t = Table::new(&cols_ref);
    for &i in &order {
        let c = &pr.conformers[i];
        let mut row = vec![
            c.index.to_string(),
            format!("{}:{}", c.file.display(), c.line),
            c.energy
                .map(|e| format!("{e:.4}"))
                .unwrap_or_else(|| "-".into()),
            c.relative_kcal_mol
                .map(|e| format!("{e:.3}"))
                .unwrap_or_else(|| "-".into()),
            if c.kept {
                fmt_population(c.population)
            } else {
                "dropped".into()
            },
        ];
        for r in &pr.rings {
            row.push(shape_cell(r, i));
        }
        t.row(row);
    }
    t.write(w, 2)?;
    if order.len() < n {
        let listed: f64 = order.iter().map(|&i| pr.conformers[i].population).sum();
        writeln!(
            w,
            "  ... and {} more conformers holding {:.4} of the population (all are in --as csv/json, or with --each)",
            n - order.len(),
            (1.0 - listed).max(0.0)
        )?;
    }
    writeln!(w)?;

    writeln!(
        w,
        "Couplings 3J(H,H) in Hz: population-weighted mean, standard deviation and range over conformers"
    )?;
    let has_names = top.atoms.iter().any(|a| a.name.is_some());
    let mut cols = vec![("pair", Align::Left)];
    if has_names {
        cols.push(("names", Align::Left));
    }
    cols.extend([
        ("kind", Align::Left),
        ("model", Align::Left),
        ("mean Hz", Align::Right),
        ("sd Hz", Align::Right),
        ("min Hz", Align::Right),
        ("max Hz", Align::Right),
    ]);
    let mut t = Table::new(&cols);
    for c in &pr.couplings {
        let nm = [names(top, &c.side1), names(top, &c.side2)];
        let mut row = vec![pair_label(top, c)];
        if has_names {
            row.push(nm.join("-"));
        }
        row.extend([
            c.kind.label().to_string(),
            c.model.clone(),
            format!("{:.2}", c.spread.mean),
            format!("{:.2}", c.spread.sd),
            format!("{:.2}", c.spread.min),
            format!("{:.2}", c.spread.max),
        ]);
        t.row(row);
    }
    t.write(w, 2)?;
    if pr.couplings.iter().any(|c| c.rotor_averaged) {
        writeln!(
            w,
            "  (rotor): a fast-rotating CH3 or NH3+ group; its coupling is the mean over its three protons in each conformer."
        )?;
    }
    if !pr.not_evaluated.is_empty() {
        writeln!(w)?;
        writeln!(w, "Pairs without a coupling model")?;
        for ne in &pr.not_evaluated {
            writeln!(
                w,
                "  {}-{}: {}",
                atomref::label(top, ne.h1),
                atomref::label(top, ne.h2),
                ne.reason
            )?;
        }
    }

    writeln!(w)?;
    if show {
        writeln!(w, "Per conformer: H-X-Y-H dihedral in degrees / 3J in Hz")?;
        for start in (0..n).step_by(CONFORMERS_PER_BLOCK) {
            let end = (start + CONFORMERS_PER_BLOCK).min(n);
            let mut cols: Vec<(String, Align)> = vec![("pair".into(), Align::Left)];
            for k in start..end {
                cols.push((format!("conf {}", k + 1), Align::Right));
            }
            let cols_ref: Vec<(&str, Align)> = cols.iter().map(|(s, a)| (s.as_str(), *a)).collect();
            let mut t = Table::new(&cols_ref);
            for c in &pr.couplings {
                let mut row = vec![pair_label(top, c)];
                for k in start..end {
                    row.push(format!(
                        "{} / {:.2}",
                        fmt_dihedral(&c.dihedral_rad[k]),
                        c.j_hz[k]
                    ));
                }
                t.row(row);
            }
            t.write(w, 2)?;
            if end < n {
                writeln!(w)?;
            }
        }
    } else {
        writeln!(
            w,
            "Per-conformer dihedrals and couplings of all {n} conformers: ask for them with --each, or use --as csv / --as json."
        )?;
    }

    if !pr.ring_protons.is_empty() {
        writeln!(w)?;
        writeln!(
            w,
            "Six-membered ring protons: axial (C-H within 35 deg of the ring normal) or equatorial (beyond 55 deg)"
        )?;
        write_positions(w, top, &pr.ring_protons, &pr.conformers, show)?;
    }

    if !pr.warnings.is_empty() {
        writeln!(w)?;
        writeln!(w, "Warnings")?;
        for s in &pr.warnings {
            writeln!(w, "  - {s}")?;
        }
    }
    writeln!(w)?;
    writeln!(w, "{CAUTION}")
}

fn fmt_population(p: f64) -> String {
    if p > 0.0 && p < 1e-4 {
        format!("{p:.1e}")
    } else {
        format!("{p:.4}")
    }
}

fn shape_cell(r: &RingSeries, i: usize) -> String {
    let s = &r.shapes[i];
    match s.theta_deg {
        Some(t) => format!(
            "{} (Q {:.2} A, theta {:.0}, phi {:.0})",
            s.shape, s.q_angstrom, t, s.phi_deg
        ),
        None if s.q_angstrom > 0.0 => {
            format!(
                "{} (Q {:.2} A, phi {:.0})",
                s.shape, s.q_angstrom, s.phi_deg
            )
        }
        None => s.shape.clone(),
    }
}

fn write_positions(
    w: &mut dyn Write,
    top: &Topology,
    protons: &[RingProton],
    conformers: &[ConformerInfo],
    each: bool,
) -> io::Result<()> {
    let n = conformers.len();
    let mut cols: Vec<(String, Align)> = vec![
        ("proton".into(), Align::Left),
        ("on".into(), Align::Left),
        ("ring".into(), Align::Right),
        ("axial pop.".into(), Align::Right),
        ("equatorial pop.".into(), Align::Right),
    ];
    let shown = if each { n.min(CONFORMERS_PER_BLOCK) } else { 0 };
    for k in 0..shown {
        cols.push((format!("conf {}", k + 1), Align::Left));
    }
    let cols_ref: Vec<(&str, Align)> = cols.iter().map(|(s, a)| (s.as_str(), *a)).collect();
    let mut t = Table::new(&cols_ref);
    for rp in protons {
        let (mut ax, mut eq) = (0.0, 0.0);
        for (pos, c) in rp.positions.iter().zip(conformers) {
            match pos.as_str() {
                "axial" => ax += c.population,
                "equatorial" => eq += c.population,
                _ => {}
            }
        }
        let mut row = vec![
            atomref::label(top, rp.proton - 1),
            atomref::label(top, rp.carbon - 1),
            rp.ring.to_string(),
            format!("{ax:.3}"),
            format!("{eq:.3}"),
        ];
        for k in 0..shown {
            row.push(rp.positions[k].clone());
        }
        t.row(row);
    }
    t.write(w, 2)?;
    if shown < n && each {
        writeln!(
            w,
            "  (labels of every conformer are in the CSV and JSON outputs)"
        )?;
    }
    Ok(())
}

/// Writes the couplings as CSV: one row per coupling with its averages, then
/// `dihedral_deg_N` and `j_hz_N` for every conformer N (rotor groups list the
/// dihedrals of their protons separated by `;`).
pub fn write_csv(w: &mut dyn Write, pr: &Prediction) -> io::Result<()> {
    let top = &pr.topology;
    let mut wr = csv::Writer::from_writer(w);
    let mut header: Vec<String> = [
        "atoms1",
        "names1",
        "atoms2",
        "names2",
        "carbon1",
        "carbon2",
        "kind",
        "model",
        "rotor_averaged",
        "h6_prochirality",
        "j_mean_hz",
        "j_sd_hz",
        "j_min_hz",
        "j_max_hz",
    ]
    .iter()
    .map(|s| s.to_string())
    .collect();
    for k in 1..=pr.conformers.len() {
        header.push(format!("dihedral_deg_{k}"));
        header.push(format!("j_hz_{k}"));
    }
    wr.write_record(&header).map_err(io::Error::other)?;
    let join = |a: &[usize]| {
        a.iter()
            .map(|i| (i + 1).to_string())
            .collect::<Vec<_>>()
            .join(";")
    };
    let jn = |a: &[usize]| {
        a.iter()
            .map(|&i| atomref::name(top, i))
            .collect::<Vec<_>>()
            .join(";")
    };
    for c in &pr.couplings {
        let mut rec = vec![
            join(&c.side1),
            jn(&c.side1),
            join(&c.side2),
            jn(&c.side2),
            (c.x + 1).to_string(),
            (c.y + 1).to_string(),
            c.kind.label().to_string(),
            c.model.clone(),
            c.rotor_averaged.to_string(),
            c.h6_pro_r
                .map(|r| if r { "pro-R" } else { "pro-S" })
                .unwrap_or("")
                .to_string(),
            format!("{:.4}", c.spread.mean),
            format!("{:.4}", c.spread.sd),
            format!("{:.4}", c.spread.min),
            format!("{:.4}", c.spread.max),
        ];
        for k in 0..pr.conformers.len() {
            rec.push(
                c.dihedral_rad[k]
                    .iter()
                    .map(|d| format!("{:.3}", d.to_degrees()))
                    .collect::<Vec<_>>()
                    .join(";"),
            );
            rec.push(format!("{:.4}", c.j_hz[k]));
        }
        wr.write_record(&rec).map_err(io::Error::other)?;
    }
    wr.flush()
}

#[derive(Serialize)]
struct JsonCoupling<'a> {
    atoms1: Vec<usize>,
    atoms2: Vec<usize>,
    names1: Vec<&'a str>,
    names2: Vec<&'a str>,
    carbons: [usize; 2],
    kind: &'a str,
    model: &'a str,
    model_rms_hz: Option<f64>,
    rotor_averaged: bool,
    h6_prochirality: Option<&'a str>,
    dihedral_deg: Vec<Vec<f64>>,
    j_hz: &'a [f64],
    j_mean_hz: f64,
    j_sd_hz: f64,
    j_min_hz: f64,
    j_max_hz: f64,
}

#[derive(Serialize)]
struct JsonNotEvaluated<'a> {
    atoms1: usize,
    atoms2: usize,
    reason: &'a str,
}

#[derive(Serialize)]
struct JsonReport<'a> {
    program: &'a str,
    version: &'a str,
    caution: &'a str,
    files: Vec<String>,
    formula: String,
    atom_count: usize,
    weighting: &'a str,
    effective_conformers: f64,
    conformers: &'a [ConformerInfo],
    couplings: Vec<JsonCoupling<'a>>,
    not_evaluated: Vec<JsonNotEvaluated<'a>>,
    rings: &'a [RingSeries],
    ring_protons: &'a [RingProton],
    warnings: &'a [String],
}

/// Writes the whole prediction as one JSON document (see the README for the
/// fields). Atom indices are 1-based.
pub fn write_json(w: &mut dyn Write, pr: &Prediction) -> io::Result<()> {
    let top = &pr.topology;
    let one = |a: &[usize]| a.iter().map(|i| i + 1).collect::<Vec<_>>();
    let nm = |a: &[usize]| a.iter().map(|&i| atomref::name(top, i)).collect::<Vec<_>>();
    let round = |x: f64, k: i32| {
        let f = 10f64.powi(k);
        (x * f).round() / f
    };
    let couplings = pr
        .couplings
        .iter()
        .map(|c| JsonCoupling {
            atoms1: one(&c.side1),
            atoms2: one(&c.side2),
            names1: nm(&c.side1),
            names2: nm(&c.side2),
            carbons: [c.x + 1, c.y + 1],
            kind: c.kind.label(),
            model: &c.model,
            model_rms_hz: c.model_rms_hz,
            rotor_averaged: c.rotor_averaged,
            h6_prochirality: c.h6_pro_r.map(|r| if r { "pro-R" } else { "pro-S" }),
            dihedral_deg: c
                .dihedral_rad
                .iter()
                .map(|d| d.iter().map(|x| round(x.to_degrees(), 3)).collect())
                .collect(),
            j_hz: &c.j_hz,
            j_mean_hz: c.spread.mean,
            j_sd_hz: c.spread.sd,
            j_min_hz: c.spread.min,
            j_max_hz: c.spread.max,
        })
        .collect();
    let report = JsonReport {
        program: "vicinal",
        version: env!("CARGO_PKG_VERSION"),
        caution: CAUTION,
        files: pr.files.iter().map(|f| f.display().to_string()).collect(),
        formula: formula(top),
        atom_count: top.len(),
        weighting: &pr.weighting,
        effective_conformers: pr.effective_conformers,
        conformers: &pr.conformers,
        couplings,
        not_evaluated: pr
            .not_evaluated
            .iter()
            .map(|n| JsonNotEvaluated {
                atoms1: n.h1 + 1,
                atoms2: n.h2 + 1,
                reason: &n.reason,
            })
            .collect(),
        rings: &pr.rings,
        ring_protons: &pr.ring_protons,
        warnings: &pr.warnings,
    };
    serde_json::to_writer_pretty(&mut *w, &report).map_err(io::Error::other)?;
    writeln!(w)
}
