//! `vicinal trajectory`: time-averaged couplings, their block-averaging
//! errors, and ring and rotamer states along a molecular-dynamics run.

use std::io::IsTerminal;
use std::path::PathBuf;
use std::time::Duration;

use anyhow::{bail, Context, Result};
use clap::Args;

use vicinal::io::{Format, ReadOptions};
use vicinal::report::{self, OutputForm};
use vicinal::trajectory::{self, TrajectoryOptions, TrajectorySource};

use super::{load_library, output_form, write_out};

#[derive(Args, Debug)]
pub(crate) struct TrajectoryArgs {
    /// Trajectory files read in order as one run: multi-frame XYZ, multi-model
    /// PDB or SDF; or DCD files together with --topology.
    #[arg(required = true)]
    pub(crate) files: Vec<PathBuf>,
    /// PDB or SDF file with the atoms of a DCD trajectory (same atoms, same order).
    #[arg(long = "topology", value_name = "FILE")]
    pub(crate) topology: Option<PathBuf>,
    /// Format of the text trajectory files (xyz, sdf, pdb); default: from the extension.
    #[arg(long = "input-format", value_name = "FORMAT")]
    pub(crate) input_format: Option<String>,
    /// First frame to use (1-based).
    #[arg(long = "first", value_name = "N", default_value_t = 1)]
    pub(crate) first: usize,
    /// Last frame to use (1-based, inclusive); default: the end.
    #[arg(long = "last", value_name = "N")]
    pub(crate) last: Option<usize>,
    /// Use every Nth frame.
    #[arg(long = "stride", value_name = "N", default_value_t = 1)]
    pub(crate) stride: usize,
    /// Time between saved frames in ps (for lifetimes in ps).
    #[arg(long = "timestep", value_name = "PS")]
    pub(crate) timestep: Option<f64>,
    /// Also follow the rotamer of this bond, as two atom indices `A-B` (repeatable).
    #[arg(long = "bond", value_name = "A-B")]
    pub(crate) bonds: Vec<String>,
    /// A rotamer change counts once the new state lasts this many frames.
    #[arg(long = "rotamer-dwell", value_name = "FRAMES", default_value_t = 1)]
    pub(crate) rotamer_dwell: u64,
    /// A ring inversion counts once the new chair lasts this many frames.
    #[arg(long = "ring-dwell", value_name = "FRAMES", default_value_t = 1)]
    pub(crate) ring_dwell: u64,
    /// Write the per-frame couplings and states as CSV to this file, while reading.
    #[arg(long = "series", value_name = "FILE.csv")]
    pub(crate) series: Option<PathBuf>,
    /// Plot the running averages of the couplings with their error bands to this SVG.
    #[arg(long = "plot", value_name = "FILE.svg")]
    pub(crate) plot: Option<PathBuf>,
    /// Couplings to plot, by their 1-based row in the report (default: the first four).
    #[arg(long = "plot-rows", value_name = "N,N,...", value_delimiter = ',')]
    pub(crate) plot_rows: Vec<usize>,
    /// Check only atoms and coordinates per frame, not bonding (faster).
    #[arg(long = "no-bond-check")]
    pub(crate) no_bond_check: bool,
    /// Extra parameter sets (CSV, format of params/karplus/sets.csv; repeatable).
    #[arg(long = "params", value_name = "FILE")]
    pub(crate) params: Vec<PathBuf>,
    /// Output form: table, csv (couplings), states (state CSV) or json.
    #[arg(long = "as", value_name = "FORM", default_value = "table")]
    pub(crate) form: String,
    /// Write the report to this file instead of standard output.
    #[arg(short = 'o', long = "out", value_name = "FILE")]
    pub(crate) out: Option<PathBuf>,
    /// No progress bar.
    #[arg(short = 'q', long = "quiet")]
    pub(crate) quiet: bool,
}

fn parse_bond(s: &str) -> Result<(usize, usize)> {
    let (a, b) = s
        .split_once('-')
        .with_context(|| format!("--bond takes two 1-based atom indices as A-B, got '{s}'"))?;
    let p = |t: &str| -> Result<usize> {
        let v: usize = t
            .trim()
            .parse()
            .with_context(|| format!("--bond '{s}': '{t}' is not an atom index"))?;
        if v == 0 {
            bail!("--bond '{s}': atom indices start at 1");
        }
        Ok(v - 1)
    };
    Ok((p(a)?, p(b)?))
}

pub(crate) fn run_trajectory(a: &TrajectoryArgs) -> Result<()> {
    let states_csv = a.form.eq_ignore_ascii_case("states");
    let form = if states_csv {
        OutputForm::Csv
    } else {
        output_form(&a.form)?
    };
    if a.first == 0 {
        bail!("--first counts frames from 1");
    }
    if a.stride == 0 {
        bail!("--stride must be at least 1");
    }
    if let Some(l) = a.last {
        if l < a.first {
            bail!("--last ({l}) is before --first ({})", a.first);
        }
    }
    let format = match &a.input_format {
        None => None,
        Some(f) => {
            Some(Format::from_name(f).with_context(|| format!("unknown input format '{f}'"))?)
        }
    };
    let is_dcd = |p: &PathBuf| {
        p.extension()
            .and_then(|e| e.to_str())
            .is_some_and(|e| e.eq_ignore_ascii_case("dcd"))
    };
    let source = if a.files.iter().any(is_dcd) {
        if !a.files.iter().all(is_dcd) {
            bail!("DCD files cannot be mixed with other formats in one run");
        }
        let top = a
            .topology
            .as_ref()
            .context("a DCD trajectory needs --topology FILE (PDB or SDF with the same atoms)")?;
        TrajectorySource::dcd(top, None, a.files.clone())?
    } else {
        if a.topology.is_some() {
            bail!("--topology is for DCD trajectories; text trajectories carry their own atoms");
        }
        TrajectorySource::files(a.files.clone(), format, ReadOptions::default())?
    };
    let mut inputs = a.files.clone();
    inputs.extend(a.topology.clone());
    inputs.extend(a.params.iter().cloned());
    if let Some(s) = &a.series {
        vicinal::output::check_not_input(s, &inputs)?;
    }
    let opts = TrajectoryOptions {
        first: a.first - 1,
        last: a.last.map(|l| l - 1),
        stride: a.stride,
        rotor_min_dwell: a.rotamer_dwell.max(1),
        ring_min_dwell: a.ring_dwell.max(1),
        bonds: a
            .bonds
            .iter()
            .map(|b| parse_bond(b))
            .collect::<Result<_>>()?,
        timestep_ps: a.timestep,
        library: load_library(&a.params)?,
        choice: Default::default(),
        timeseries_csv: a.series.clone(),
        // Running averages are shown only by the plot and the JSON report;
        // the blocking analysis at each checkpoint is not worth doing else.
        checkpoints: if a.plot.is_some() || form == OutputForm::Json {
            trajectory::DEFAULT_CHECKPOINTS
        } else {
            0
        },
        check_bonding: !a.no_bond_check,
    };

    let show = !a.quiet && std::io::stderr().is_terminal();
    let bar = if show {
        let bar = match source.frames_hint() {
            Some(n) => indicatif::ProgressBar::new(n as u64),
            None => indicatif::ProgressBar::new_spinner(),
        };
        let style = if source.frames_hint().is_some() {
            indicatif::ProgressStyle::with_template(
                "{bar:40} {pos}/{len} frames  {per_sec}  {eta} left",
            )
        } else {
            indicatif::ProgressStyle::with_template("{spinner} {pos} frames  {per_sec}")
        };
        if let Ok(style) = style {
            bar.set_style(style);
        }
        bar.enable_steady_tick(Duration::from_millis(200));
        Some(bar)
    } else {
        None
    };
    let mut progress = |n: usize| {
        if let Some(b) = &bar {
            b.set_position(n as u64);
        }
    };
    let result = trajectory::analyse(source, &opts, &mut progress);
    if let Some(b) = &bar {
        b.finish_and_clear();
    }
    let r = result?;

    if let Some(svg) = &a.plot {
        let rows: Vec<usize> = if a.plot_rows.is_empty() {
            (0..r.couplings.len().min(4)).collect()
        } else {
            let mut v = Vec::new();
            for &k in &a.plot_rows {
                if k == 0 || k > r.couplings.len() {
                    bail!(
                        "--plot-rows: the report has couplings 1..{}",
                        r.couplings.len()
                    );
                }
                v.push(k - 1);
            }
            v
        };
        let text = report::trajectory::plot_running_averages(&r, &rows);
        vicinal::output::write_atomic(svg, &inputs, |w| w.write_all(text.as_bytes()))?;
    }
    write_out(&a.out, &inputs, |w| match form {
        OutputForm::Table => report::trajectory::write_table(w, &r),
        OutputForm::Csv if states_csv => report::trajectory::write_states_csv(w, &r),
        OutputForm::Csv => report::trajectory::write_csv(w, &r),
        OutputForm::Json => report::trajectory::write_json(w, &r),
    })
}
