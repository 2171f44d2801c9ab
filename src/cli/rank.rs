//! `vicinal rank` (candidate structures against the observations) and
//! `vicinal check` (single conformers of one ensemble against them), with the
//! error-model options shared with `vicinal assign`.

use std::path::{Path, PathBuf};

use anyhow::{bail, Context, Result};
use clap::Args;

use vicinal::check;
use vicinal::ensemble::predict::{self, PredictOptions, Prediction};
use vicinal::observed;
use vicinal::rank::{self, Candidate, ErrorModel, LabelMap, RankOptions};
use vicinal::report::{self, OutputForm};

use super::{output_form, write_out, InputArgs, ModelArgs, OutputArgs};

/// Options of the error model (rank, assign, check).
#[derive(Args, Debug, Clone)]
pub(crate) struct ErrorArgs {
    /// Model part of the error scale in Hz, combined in quadrature with each
    /// row's measurement error (our default 1.0 Hz: HLA's 0.5-0.7 Hz RMS plus geometry errors).
    #[arg(long = "scale", value_name = "HZ", default_value_t = rank::DEFAULT_SCALE_HZ)]
    pub(crate) scale: f64,
    /// Degrees of freedom of the Student-t error model, or `gauss` for a Gaussian (default 4).
    #[arg(long = "nu", value_name = "NU", default_value = "4")]
    pub(crate) nu: String,
    /// Measurement error in Hz for rows without sigma_hz.
    #[arg(long = "sigma-default", value_name = "HZ", default_value_t = vicinal::fit::DEFAULT_MEASUREMENT_SIGMA_HZ)]
    pub(crate) sigma_default: f64,
}

impl ErrorArgs {
    pub(crate) fn model(&self) -> Result<ErrorModel> {
        let nu = match self.nu.to_ascii_lowercase().as_str() {
            "gauss" | "gaussian" | "normal" | "inf" => None,
            s => Some(
                s.parse::<f64>()
                    .with_context(|| format!("--nu takes a number >= 1 or 'gauss', got '{s}'"))?,
            ),
        };
        let em = ErrorModel {
            scale_hz: self.scale,
            nu,
            default_measurement_hz: self.sigma_default,
        };
        em.validate()?;
        Ok(em)
    }
}

#[derive(Args, Debug)]
pub(crate) struct RankArgs {
    /// Candidate ensembles, one file per candidate, named by the file stem
    /// (use --candidate for a candidate made of several files).
    pub(crate) files: Vec<PathBuf>,
    /// A candidate made of one or more files: NAME=FILE[,FILE...] (repeatable).
    #[arg(long = "candidate", value_name = "NAME=FILES")]
    pub(crate) candidates: Vec<String>,
    /// Observed couplings (CSV: atom1,atom2,j_hz[,sigma_hz,...]); atoms are labels.
    #[arg(long = "observed", value_name = "FILE", required = true)]
    pub(crate) observed: PathBuf,
    /// Map labels to atoms for one candidate with a CSV label,atom: NAME=FILE (repeatable).
    /// Without it a label must be the name of exactly one atom in the candidate's files.
    #[arg(long = "labels", value_name = "NAME=FILE")]
    pub(crate) labels: Vec<String>,
    /// Prior of one candidate: NAME=P (repeatable; default equal; normalised).
    #[arg(long = "prior", value_name = "NAME=P")]
    pub(crate) priors: Vec<String>,
    /// Likelihood ratio winner/runner-up needed to name a winner.
    #[arg(long = "decisive", value_name = "RATIO", default_value_t = rank::DEFAULT_DECISIVE_RATIO)]
    pub(crate) decisive: f64,
    /// Also fit free conformer populations per candidate (reported apart, marked as fitted).
    #[arg(long = "fit")]
    pub(crate) fit: bool,
    #[command(flatten)]
    pub(crate) error: ErrorArgs,
    /// File format for every input (xyz, sdf, pdb); default: from the file extension.
    #[arg(long = "input-format", value_name = "FORMAT")]
    pub(crate) input_format: Option<String>,
    /// Where the energy is: an XYZ comment-line key or an SDF data field name.
    #[arg(long = "energy-key", value_name = "KEY")]
    pub(crate) energy_key: Option<String>,
    #[command(flatten)]
    pub(crate) models: ModelArgs,
    #[command(flatten)]
    pub(crate) output: OutputArgs,
    /// Also write the predicted-against-observed plot of every candidate (SVG).
    #[arg(long = "plot", value_name = "FILE.svg")]
    pub(crate) plot: Option<PathBuf>,
}

fn split_named<'a>(spec: &'a str, opt: &str) -> Result<(&'a str, &'a str)> {
    match spec.split_once('=') {
        Some((n, v)) if !n.trim().is_empty() && !v.trim().is_empty() => Ok((n.trim(), v.trim())),
        _ => bail!("{opt} takes NAME=VALUE, got '{spec}'"),
    }
}

pub(crate) fn predict_files(
    files: Vec<PathBuf>,
    input_format: &Option<String>,
    energy_key: &Option<String>,
    models: &ModelArgs,
) -> Result<Prediction> {
    let input = InputArgs {
        files,
        input_format: input_format.clone(),
        energy_key: energy_key.clone(),
    };
    let library = models.library()?;
    let choice = models.choice(&library)?;
    let opts = PredictOptions {
        weighting: models.weighting(None)?,
        library,
        choice,
    };
    Ok(predict::predict(input.source()?, &opts)?)
}

pub(crate) fn run_rank(a: &RankArgs) -> Result<()> {
    let form = output_form(&a.output.form)?;
    let em = a.error.model()?;
    let obs = observed::read_observations(&a.observed)?;
    let mut specs: Vec<(String, Vec<PathBuf>)> = Vec::new();
    for f in &a.files {
        let name = f
            .file_stem()
            .map(|s| s.to_string_lossy().to_string())
            .filter(|s| !s.is_empty())
            .with_context(|| format!("{}: cannot name a candidate after this file", f.display()))?;
        specs.push((name, vec![f.clone()]));
    }
    for c in &a.candidates {
        let (name, files) = split_named(c, "--candidate")?;
        let files: Vec<PathBuf> = files
            .split(',')
            .map(str::trim)
            .filter(|s| !s.is_empty())
            .map(PathBuf::from)
            .collect();
        specs.push((name.to_string(), files));
    }
    if specs.is_empty() {
        bail!("no candidates: give ensemble files, or --candidate NAME=FILE[,FILE...]");
    }
    let known = |n: &str, opt: &str| -> Result<()> {
        if specs.iter().any(|(s, _)| s == n) {
            Ok(())
        } else {
            bail!(
                "{opt} names candidate '{n}', which is not among the candidates ({})",
                specs
                    .iter()
                    .map(|s| s.0.as_str())
                    .collect::<Vec<_>>()
                    .join(", ")
            )
        }
    };
    let mut maps: Vec<(String, LabelMap)> = Vec::new();
    for l in &a.labels {
        let (name, file) = split_named(l, "--labels")?;
        known(name, "--labels")?;
        if maps.iter().any(|m| m.0 == name) {
            bail!("--labels is given twice for candidate '{name}'");
        }
        maps.push((name.to_string(), LabelMap::read(Path::new(file))?));
    }
    let mut priors: Vec<(String, f64)> = Vec::new();
    for p in &a.priors {
        let (name, v) = split_named(p, "--prior")?;
        known(name, "--prior")?;
        let v: f64 = v
            .parse()
            .ok()
            .filter(|v: &f64| v.is_finite() && *v > 0.0)
            .with_context(|| format!("--prior {name}: '{v}' is not a positive number"))?;
        priors.push((name.to_string(), v));
    }
    let mut candidates = Vec::with_capacity(specs.len());
    let mut inputs: Vec<PathBuf> = vec![a.observed.clone()];
    for (name, files) in specs {
        inputs.extend(files.iter().cloned());
        let prediction = predict_files(files, &a.input_format, &a.energy_key, &a.models)
            .with_context(|| format!("candidate '{name}'"))?;
        let labels = maps
            .iter()
            .find(|m| m.0 == name)
            .map(|m| m.1.clone())
            .unwrap_or_default();
        let prior = priors.iter().find(|p| p.0 == name).map_or(1.0, |p| p.1);
        candidates.push(Candidate {
            name,
            prediction,
            labels,
            prior,
        });
    }
    let opts = RankOptions {
        error: em,
        decisive_ratio: a.decisive,
        fit_populations: a.fit,
    };
    if !(a.decisive.is_finite() && a.decisive > 1.0) {
        bail!("--decisive must be a number above 1");
    }
    let r = rank::rank(&candidates, &obs, &opts)?;
    if let Some(p) = &a.plot {
        let svg = report::rank::plot_svg(&r);
        write_out(&Some(p.clone()), &inputs, |w| w.write_all(svg.as_bytes()))?;
    }
    write_out(&a.output.out, &inputs, |w| match form {
        OutputForm::Table => report::rank::write_table(w, &r),
        OutputForm::Csv => report::rank::write_csv(w, &r),
        OutputForm::Json => report::rank::write_json(w, &r),
    })
}

#[derive(Args, Debug)]
pub(crate) struct CheckArgs {
    #[command(flatten)]
    pub(crate) input: InputArgs,
    /// Observed couplings (CSV: atom1,atom2,j_hz[,sigma_hz,...]).
    #[arg(long = "observed", value_name = "FILE", required = true)]
    pub(crate) observed: PathBuf,
    /// A state "explains the data" when its chi-squared p-value is at least this.
    #[arg(long = "p-threshold", value_name = "P", default_value_t = check::DEFAULT_P_THRESHOLD)]
    pub(crate) p_threshold: f64,
    #[command(flatten)]
    pub(crate) error: ErrorArgs,
    #[command(flatten)]
    pub(crate) models: ModelArgs,
    #[command(flatten)]
    pub(crate) output: OutputArgs,
}

pub(crate) fn run_check(a: &CheckArgs) -> Result<()> {
    let form = output_form(&a.output.form)?;
    let em = a.error.model()?;
    if !(a.p_threshold > 0.0 && a.p_threshold < 1.0) {
        bail!("--p-threshold must lie between 0 and 1");
    }
    let obs = observed::read_observations(&a.observed)?;
    let pr = predict_files(
        a.input.files.clone(),
        &a.input.input_format,
        &a.input.energy_key,
        &a.models,
    )?;
    let c = check::check(&pr, &obs, &em, a.p_threshold)?;
    let mut inputs = a.input.files.clone();
    inputs.push(a.observed.clone());
    write_out(&a.output.out, &inputs, |w| match form {
        OutputForm::Table => report::rank::write_check_table(w, &c),
        OutputForm::Csv => report::rank::write_check_csv(w, &c),
        OutputForm::Json => report::rank::write_check_json(w, &c),
    })
}
