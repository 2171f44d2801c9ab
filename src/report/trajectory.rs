//! Reports of a trajectory analysis ([`crate::trajectory`]): an aligned table
//! for people, CSV (couplings; states) and JSON for scripts, and an SVG plot
//! of running averages with their error band.

use std::io::{self, Write};

use serde::Serialize;

use super::table::{Align, Table};
use super::CAUTION;
use crate::atomref;
use crate::plot::{LineSeries, Plot};
use crate::timeseries::Plateau;
use crate::trajectory::{StateSeries, TrajCoupling, TrajectoryReport};

fn plateau_name(p: Plateau) -> &'static str {
    match p {
        Plateau::Found => "yes",
        Plateau::NotReached => "no (lower bound)",
        Plateau::TooShort => "too short",
    }
}

fn fmt_opt(v: Option<f64>, digits: usize) -> String {
    match v {
        Some(x) if x.is_finite() => format!("{x:.digits$}"),
        _ => "-".into(),
    }
}

fn formula(r: &TrajectoryReport) -> String {
    let mut counts = std::collections::BTreeMap::new();
    for a in &r.topology.atoms {
        *counts.entry(a.element.symbol()).or_insert(0usize) += 1;
    }
    let mut s = String::new();
    let mut put = |sym: &str, n: usize| {
        s.push_str(sym);
        if n > 1 {
            s.push_str(&n.to_string());
        }
    };
    for sym in ["C", "H"] {
        if let Some(n) = counts.remove(sym) {
            put(sym, n);
        }
    }
    for (sym, n) in counts {
        put(sym, n);
    }
    s
}

fn halves_cells(c: &TrajCoupling) -> [String; 3] {
    match &c.halves {
        Some(h) => [
            format!("{:.2}±{:.2}", h.first_mean, h.first_sem),
            format!("{:.2}±{:.2}", h.second_mean, h.second_sem),
            if h.drifted {
                "DRIFT".into()
            } else {
                "ok".into()
            },
        ],
        None => ["-".into(), "-".into(), "too short".into()],
    }
}

/// Writes the report as tables for people, ending with the caution.
pub fn write_table(w: &mut dyn Write, r: &TrajectoryReport) -> io::Result<()> {
    let files: Vec<String> = r.files.iter().map(|f| f.display().to_string()).collect();
    writeln!(
        w,
        "Trajectory: {} frame(s) used of {} read, {} ({} atoms), from {}",
        r.frames_used,
        r.frames_read,
        formula(r),
        r.topology.len(),
        files.join(", ")
    )?;
    writeln!(
        w,
        "Selection: frames {} to {}, every {}{}",
        r.first + 1,
        r.last_used.map_or("-".to_string(), |l| (l + 1).to_string()),
        r.stride,
        r.frame_interval_ps
            .map(|dt| format!("; {dt} ps between used frames"))
            .unwrap_or_default()
    )?;
    writeln!(w)?;
    let dt = r.frame_interval_ps;
    writeln!(
        w,
        "Time-averaged couplings 3J(H,H), equal weights over the used frames; error = blocked standard error of the mean"
    )?;
    let mut cols = vec![
        ("pair", Align::Left),
        ("kind", Align::Left),
        ("model", Align::Left),
        ("mean Hz", Align::Right),
        ("error Hz", Align::Right),
        ("plateau", Align::Left),
        ("tau_int frames", Align::Right),
    ];
    if dt.is_some() {
        cols.push(("tau_int ps", Align::Right));
    }
    cols.extend([
        ("independent frames", Align::Right),
        ("min Hz", Align::Right),
        ("max Hz", Align::Right),
        ("1st half Hz", Align::Right),
        ("2nd half Hz", Align::Right),
        ("halves", Align::Left),
    ]);
    let mut t = Table::new(&cols);
    for c in &r.couplings {
        let b = &c.blocking;
        let mut row = vec![
            c.label.clone(),
            c.kind.label().to_string(),
            c.model.clone(),
            format!("{:.2}", b.mean),
            format!("{:.3}", b.sem),
            plateau_name(b.plateau).to_string(),
            format!("{:.1}", b.tau_int_frames),
        ];
        if let Some(dt) = dt {
            row.push(format!("{:.3}", b.tau_int_frames * dt));
        }
        row.push(format!("{:.0}", b.effective_samples));
        row.push(format!("{:.2}", c.min_hz));
        row.push(format!("{:.2}", c.max_hz));
        row.extend(halves_cells(c));
        t.row(row);
    }
    t.write(w, 2)?;
    if r.couplings.iter().any(|c| c.rotor_averaged) {
        writeln!(
            w,
            "  (rotor): a fast-rotating CH3 or NH3+ group; its coupling is the mean over its three protons in each frame."
        )?;
    }
    if !r.not_evaluated.is_empty() {
        writeln!(w)?;
        writeln!(w, "Pairs without a coupling model")?;
        for ne in &r.not_evaluated {
            writeln!(
                w,
                "  {}-{}: {}",
                atomref::label(&r.topology, ne.h1),
                atomref::label(&r.topology, ne.h2),
                ne.reason
            )?;
        }
    }
    for s in &r.states {
        writeln!(w)?;
        write_state_block(w, r, s)?;
    }
    if !r.warnings.is_empty() {
        writeln!(w)?;
        writeln!(w, "Warnings")?;
        for m in &r.warnings {
            writeln!(w, "  - {m}")?;
        }
    }
    writeln!(w)?;
    writeln!(w, "{CAUTION}")
}

fn write_state_block(w: &mut dyn Write, r: &TrajectoryReport, s: &StateSeries) -> io::Result<()> {
    let head = if s.what == "ring" {
        format!("Ring {} ({}-membered)", s.label, s.atoms.len())
    } else {
        format!(
            "Rotamers about {}-{} (dihedral {}{})",
            atomref::label(&r.topology, s.atoms[1]),
            atomref::label(&r.topology, s.atoms[2]),
            s.label,
            if s.user_named { ", asked for" } else { "" }
        )
    };
    let mut line = format!(
        "{head}: {} transition(s), {} lasting at least {} frame(s)",
        s.transitions, s.committed_transitions, s.min_dwell_frames
    );
    if let Some(n) = s.ring_inversions {
        line.push_str(&format!("; {n} chair-chair inversion(s)"));
    }
    writeln!(w, "{line}")?;
    let dt = r.frame_interval_ps;
    let mut cols: Vec<(String, Align)> = vec![
        ("state".into(), Align::Left),
        ("frames".into(), Align::Right),
        ("occupancy %".into(), Align::Right),
        ("visits".into(), Align::Right),
        ("mean lifetime frames".into(), Align::Right),
    ];
    if dt.is_some() {
        cols.push(("mean lifetime ps".into(), Align::Right));
    }
    cols.push(("longest frames".into(), Align::Right));
    for &k in &s.couplings {
        if let Some(c) = r.couplings.get(k) {
            cols.push((format!("{} Hz", c.label), Align::Right));
        }
    }
    let cref: Vec<(&str, Align)> = cols.iter().map(|(a, b)| (a.as_str(), *b)).collect();
    let mut t = Table::new(&cref);
    for st in &s.states {
        let mut row = vec![
            st.name.clone(),
            st.frames.to_string(),
            format!("{:.1}", 100.0 * st.occupancy),
            st.runs.to_string(),
            format!("{:.1}", st.mean_lifetime_frames),
        ];
        if let Some(dt) = dt {
            row.push(format!("{:.3}", st.mean_lifetime_frames * dt));
        }
        row.push(st.longest_run_frames.to_string());
        for v in &st.mean_j_hz {
            row.push(fmt_opt(*v, 2));
        }
        t.row(row);
    }
    t.write(w, 2)?;
    if !s.couplings.is_empty() {
        writeln!(
            w,
            "  (coupling columns: mean 3J in Hz over the frames in each state)"
        )?;
    }
    Ok(())
}

fn csv_err(e: csv::Error) -> io::Error {
    io::Error::other(e)
}

/// Writes one CSV row per coupling: label, atoms (1-based), kind, model,
/// mean, blocked error, plateau, τ_int, effective frames, min, max, the two
/// halves, drift flag.
pub fn write_csv(w: &mut dyn Write, r: &TrajectoryReport) -> io::Result<()> {
    let mut c = csv::Writer::from_writer(w);
    c.write_record([
        "pair",
        "protons_1",
        "protons_2",
        "x",
        "y",
        "kind",
        "model",
        "rotor_averaged",
        "frames",
        "mean_hz",
        "sem_hz",
        "sem_error_hz",
        "plateau",
        "tau_int_frames",
        "tau_int_ps",
        "effective_frames",
        "sd_hz",
        "min_hz",
        "max_hz",
        "first_half_mean_hz",
        "first_half_sem_hz",
        "second_half_mean_hz",
        "second_half_sem_hz",
        "drift",
    ])
    .map_err(csv_err)?;
    let ids = |s: &[usize]| {
        s.iter()
            .map(|i| (i + 1).to_string())
            .collect::<Vec<_>>()
            .join(" ")
    };
    for k in &r.couplings {
        let b = &k.blocking;
        let h = k.halves.as_ref();
        let f = |v: Option<f64>| v.map(|x| format!("{x:.6}")).unwrap_or_default();
        c.write_record([
            k.label.clone(),
            ids(&k.side1),
            ids(&k.side2),
            (k.x + 1).to_string(),
            (k.y + 1).to_string(),
            k.kind.label().to_string(),
            k.model.clone(),
            k.rotor_averaged.to_string(),
            b.count.to_string(),
            format!("{:.6}", b.mean),
            format!("{:.6}", b.sem),
            format!("{:.6}", b.sem_error),
            format!("{:?}", b.plateau).to_lowercase(),
            format!("{:.3}", b.tau_int_frames),
            f(r.frame_interval_ps.map(|dt| b.tau_int_frames * dt)),
            format!("{:.1}", b.effective_samples),
            format!("{:.6}", b.std_dev),
            format!("{:.6}", k.min_hz),
            format!("{:.6}", k.max_hz),
            f(h.map(|h| h.first_mean)),
            f(h.map(|h| h.first_sem)),
            f(h.map(|h| h.second_mean)),
            f(h.map(|h| h.second_sem)),
            h.map(|h| h.drifted.to_string()).unwrap_or_default(),
        ])
        .map_err(csv_err)?;
    }
    c.flush()
}

/// Writes one CSV row per (state series, state): what, label, state,
/// frames, occupancy, visits, lifetimes, transitions, and the mean of each
/// coupling of the series in the state as `pair=value` pairs separated by `;`.
pub fn write_states_csv(w: &mut dyn Write, r: &TrajectoryReport) -> io::Result<()> {
    let mut c = csv::Writer::from_writer(w);
    c.write_record([
        "what",
        "atoms",
        "state",
        "frames",
        "occupancy",
        "visits",
        "mean_lifetime_frames",
        "mean_complete_lifetime_frames",
        "longest_run_frames",
        "transitions",
        "committed_transitions",
        "ring_inversions",
        "mean_j_hz",
    ])
    .map_err(csv_err)?;
    for s in &r.states {
        for st in &s.states {
            let js: Vec<String> = s
                .couplings
                .iter()
                .zip(&st.mean_j_hz)
                .filter_map(|(&k, v)| Some(format!("{}={:.4}", r.couplings.get(k)?.label, (*v)?)))
                .collect();
            c.write_record([
                s.what.to_string(),
                s.label.clone(),
                st.name.clone(),
                st.frames.to_string(),
                format!("{:.6}", st.occupancy),
                st.runs.to_string(),
                format!("{:.3}", st.mean_lifetime_frames),
                st.mean_complete_lifetime_frames
                    .map(|v| format!("{v:.3}"))
                    .unwrap_or_default(),
                st.longest_run_frames.to_string(),
                s.transitions.to_string(),
                s.committed_transitions.to_string(),
                s.ring_inversions.map(|n| n.to_string()).unwrap_or_default(),
                js.join(";"),
            ])
            .map_err(csv_err)?;
        }
    }
    c.flush()
}

#[derive(Serialize)]
struct JsonNotEvaluated<'a> {
    h1: usize,
    h2: usize,
    reason: &'a str,
}

#[derive(Serialize)]
struct JsonReport<'a> {
    atoms: Vec<String>,
    #[serde(flatten)]
    report: &'a TrajectoryReport,
    pairs_without_model: Vec<JsonNotEvaluated<'a>>,
    caution: &'static str,
}

/// Writes the whole report as one JSON document (atom indices 0-based, as
/// in the library; `atoms` gives the label of each index).
pub fn write_json(w: &mut dyn Write, r: &TrajectoryReport) -> io::Result<()> {
    let doc = JsonReport {
        atoms: (0..r.topology.len())
            .map(|i| atomref::label(&r.topology, i))
            .collect(),
        report: r,
        pairs_without_model: r
            .not_evaluated
            .iter()
            .map(|n| JsonNotEvaluated {
                h1: n.h1,
                h2: n.h2,
                reason: &n.reason,
            })
            .collect(),
        caution: CAUTION,
    };
    serde_json::to_writer_pretty(&mut *w, &doc).map_err(io::Error::other)?;
    writeln!(w)
}

/// SVG plot of the running average of the chosen couplings (indices into
/// `r.couplings`; empty for all) against frames used (or ps when a time step
/// was given), each with dashed lines at ± one blocked standard error.
pub fn plot_running_averages(r: &TrajectoryReport, chosen: &[usize]) -> String {
    let picks: Vec<usize> = if chosen.is_empty() {
        (0..r.couplings.len()).collect()
    } else {
        chosen
            .iter()
            .copied()
            .filter(|&k| k < r.couplings.len())
            .collect()
    };
    let (x_label, scale) = match r.frame_interval_ps {
        Some(dt) => ("time (ps)", dt),
        None => ("frames used", 1.0),
    };
    let mut p = Plot::new(
        "Running average of 3J(H,H); dashed: ± blocked standard error",
        x_label,
        "3J(H,H) (Hz)",
    );
    const PALETTE: [&str; 8] = [
        "#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#F0E442", "#000000",
    ];
    for (n, &k) in picks.iter().enumerate() {
        let c = &r.couplings[k];
        let colour = PALETTE[n % PALETTE.len()];
        let pts = |sign: f64| -> Vec<(f64, f64)> {
            r.checkpoints
                .iter()
                .filter_map(|cp| {
                    let m = cp.mean_hz.get(k)?;
                    let e = cp.sem_hz.get(k)?;
                    Some((cp.frames as f64 * scale, m + sign * e))
                })
                .collect()
        };
        p.line(LineSeries::new(c.label.clone(), pts(0.0)).color(colour));
        p.line(
            // Unlabelled: the legend names each coupling once.
            LineSeries::new(String::new(), pts(1.0))
                .color(colour)
                .dashed(),
        );
        p.line(
            LineSeries::new(String::new(), pts(-1.0))
                .color(colour)
                .dashed(),
        );
    }
    p.size(800.0, 500.0);
    p.to_svg()
}
