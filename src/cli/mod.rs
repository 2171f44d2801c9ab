//! Pieces shared by the subcommands: input, weighting and model options, and
//! writing a report to a file or standard output.

pub(crate) mod assign;
pub(crate) mod atoms;
pub(crate) mod fit;
pub(crate) mod models;
pub(crate) mod predict;
pub(crate) mod rank;
pub(crate) mod trajectory;

use std::io::Write;
use std::path::PathBuf;

use anyhow::{bail, Context, Result};
use clap::Args;

use vicinal::ensemble::predict::Weighting;
use vicinal::ensemble::source::{EnsembleSource, SourceOptions};
use vicinal::ensemble::weights::EnergyUnit;
use vicinal::fragments::FragmentKind;
use vicinal::io::{Format, ReadOptions};
use vicinal::karplus::{ModelChoice, ParamLibrary};
use vicinal::output;
use vicinal::report::OutputForm;

pub(crate) fn load_library(extra: &[PathBuf]) -> Result<ParamLibrary> {
    let mut lib = ParamLibrary::builtin();
    for f in extra {
        lib.extend(ParamLibrary::load_file(f)?);
    }
    Ok(lib)
}

/// Where and in which form a report is written.
#[derive(Args, Debug, Clone)]
pub(crate) struct OutputArgs {
    /// Output form: table (for people), csv or json.
    #[arg(long = "as", value_name = "FORM", default_value = "table")]
    pub(crate) form: String,
    /// Write the report to this file instead of standard output.
    #[arg(short = 'o', long = "out", value_name = "FILE")]
    pub(crate) out: Option<PathBuf>,
}

/// Options shared by every command that reads an ensemble.
#[derive(Args, Debug, Clone)]
pub(crate) struct InputArgs {
    /// Conformer files (XYZ, SDF/molfile, PDB) forming one ensemble; `-` reads standard input.
    #[arg(required = true)]
    pub(crate) files: Vec<PathBuf>,
    /// File format for every input (xyz, sdf, pdb); default: from the file extension.
    #[arg(long = "input-format", value_name = "FORMAT")]
    pub(crate) input_format: Option<String>,
    /// Where the energy is: an XYZ comment-line key (E=..., energy: ...) or an SDF data field name.
    #[arg(long = "energy-key", value_name = "KEY")]
    pub(crate) energy_key: Option<String>,
}

impl InputArgs {
    fn source(&self) -> Result<EnsembleSource> {
        let format = match &self.input_format {
            None => None,
            Some(f) => match Format::from_name(f) {
                Some(f) => Some(f),
                None => bail!("unknown input format '{f}' (use xyz, sdf or pdb)"),
            },
        };
        if self.files.iter().filter(|f| f.as_os_str() == "-").count() > 0 && format.is_none() {
            bail!("reading standard input needs --input-format (xyz, sdf or pdb)");
        }
        let opts = SourceOptions {
            format,
            read: ReadOptions {
                energy_key: self.energy_key.clone(),
            },
            check_bonding: true,
        };
        Ok(EnsembleSource::new(self.files.clone(), opts)?)
    }
}

/// How conformers are weighted and which coupling models are used.
#[derive(Args, Debug, Clone)]
pub(crate) struct ModelArgs {
    /// Conformer weights: `boltzmann` (from the energies), `equal` (a time
    /// average over MD frames), or a CSV file with columns conformer,population.
    #[arg(long = "weights", value_name = "HOW", default_value = "boltzmann")]
    pub(crate) weights: String,
    /// Temperature in K for Boltzmann weights.
    #[arg(
        short = 'T',
        long = "temperature",
        value_name = "K",
        default_value_t = 298.15
    )]
    pub(crate) temperature: f64,
    /// Unit of the energies in the files: kcal/mol, kJ/mol, hartree or eV.
    #[arg(long = "energy-unit", value_name = "UNIT", default_value = "kcal/mol")]
    pub(crate) energy_unit: String,
    /// Drop conformers more than this many kcal/mol above the lowest.
    #[arg(long = "window", value_name = "KCAL")]
    pub(crate) window: Option<f64>,
    /// Use this parameter set for every pair (see `vicinal models`).
    #[arg(long = "model", value_name = "SET")]
    pub(crate) model: Option<String>,
    /// Use a set for one fragment kind, e.g. `HOCH=fraser-1969` (repeatable).
    #[arg(long = "model-for", value_name = "KIND=SET")]
    pub(crate) model_for: Vec<String>,
    /// Load extra parameter sets from a CSV file in the format of params/karplus/sets.csv (repeatable).
    #[arg(long = "params", value_name = "FILE")]
    pub(crate) params: Vec<PathBuf>,
    /// Treat hexopyranose H5-H6 pairs like any H-C-C-H pair instead of using the
    /// hydroxymethyl (omega) equations.
    #[arg(long = "no-omega")]
    pub(crate) no_omega: bool,
}

impl ModelArgs {
    fn library(&self) -> Result<ParamLibrary> {
        load_library(&self.params)
    }

    fn choice(&self, lib: &ParamLibrary) -> Result<ModelChoice> {
        let mut c = ModelChoice::default();
        if let Some(m) = &self.model {
            lib.require(m)?;
            c.run = Some(m.clone());
        }
        for spec in &self.model_for {
            let (kind, set) = spec
                .split_once('=')
                .with_context(|| format!("--model-for takes KIND=SET, got '{spec}'"))?;
            let kind = FragmentKind::from_label(kind.trim()).with_context(|| {
                format!(
                    "unknown fragment kind '{kind}' (use one of {})",
                    FragmentKind::ALL.map(|k| k.label()).join(", ")
                )
            })?;
            lib.require(set.trim())?;
            c.per_kind.insert(kind, set.trim().to_string());
        }
        if self.no_omega {
            c.hydroxymethyl = None;
        }
        Ok(c)
    }

    fn weighting(&self, n_hint: Option<usize>) -> Result<Weighting> {
        let _ = n_hint;
        match self.weights.as_str() {
            "boltzmann" => {
                let unit: EnergyUnit = self.energy_unit.parse()?;
                if !(self.temperature.is_finite() && self.temperature > 0.0) {
                    bail!("the temperature must be a positive number of kelvin");
                }
                if let Some(w) = self.window {
                    if !(w.is_finite() && w >= 0.0) {
                        bail!("--window takes a non-negative energy in kcal/mol, got {w}");
                    }
                }
                Ok(Weighting::Boltzmann {
                    temperature_k: self.temperature,
                    unit,
                    window_kcal: self.window,
                })
            }
            "equal" => Ok(Weighting::Equal),
            file => Ok(Weighting::Given(read_populations(&PathBuf::from(file))?)),
        }
    }
}

/// Reads user populations: a CSV with a header naming `conformer` and
/// `population` (or `weight`) columns; conformers 1-based and complete.
pub(crate) fn read_populations(path: &PathBuf) -> Result<Vec<f64>> {
    let mut rdr = csv::ReaderBuilder::new()
        .comment(Some(b'#'))
        .trim(csv::Trim::All)
        .from_path(path)
        .with_context(|| format!("{}: cannot read the populations file", path.display()))?;
    let headers = rdr.headers()?.clone();
    let col = |names: &[&str]| {
        headers
            .iter()
            .position(|h| names.iter().any(|n| h.eq_ignore_ascii_case(n)))
    };
    let ci = col(&["conformer", "index"]);
    let pi = col(&["population", "weight", "p"])
        .with_context(|| format!("{}: needs a 'population' column", path.display()))?;
    let mut v: Vec<(usize, f64)> = Vec::new();
    for (k, rec) in rdr.records().enumerate() {
        let rec = rec?;
        let line = rec.position().map(|p| p.line()).unwrap_or(k as u64 + 2);
        let idx = match ci {
            Some(c) => rec
                .get(c)
                .and_then(|s| s.parse::<usize>().ok())
                .with_context(|| format!("{}:{line}: bad conformer index", path.display()))?,
            None => k + 1,
        };
        let p: f64 = rec
            .get(pi)
            .and_then(|s| s.parse().ok())
            .with_context(|| format!("{}:{line}: bad population", path.display()))?;
        v.push((idx, p));
    }
    v.sort_by_key(|x| x.0);
    for (k, (idx, _)) in v.iter().enumerate() {
        if *idx != k + 1 {
            bail!(
                "{}: populations must be given for conformers 1..N exactly once (conformer {} is missing or repeated)",
                path.display(),
                k + 1
            );
        }
    }
    Ok(v.into_iter().map(|x| x.1).collect())
}

pub(crate) fn output_form(name: &str) -> Result<OutputForm> {
    OutputForm::from_name(name)
        .with_context(|| format!("unknown output form '{name}' (use table, csv or json)"))
}

pub(crate) fn write_out<F>(out: &Option<PathBuf>, inputs: &[PathBuf], write: F) -> Result<()>
where
    F: FnOnce(&mut dyn Write) -> std::io::Result<()>,
{
    let path = out.clone().unwrap_or_else(|| PathBuf::from("-"));
    output::write_atomic(&path, inputs, write)?;
    Ok(())
}
