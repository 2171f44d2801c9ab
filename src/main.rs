//! Command line of vicinal: a thin layer over the library. Every subcommand
//! parses its options, calls library functions and writes their reports.

use std::io::Write;
use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::{bail, Context, Result};
use clap::{Args, Parser, Subcommand};

use vicinal::elements::Element;
use vicinal::ensemble::predict::{self, PredictOptions, Weighting};
use vicinal::ensemble::source::{EnsembleSource, SourceOptions};
use vicinal::ensemble::weights::EnergyUnit;
use vicinal::fragments::FragmentKind;
use vicinal::io::{Format, Frame, ReadOptions};
use vicinal::karplus::{self, ModelChoice, ParamLibrary, PatternSubstituent};
use vicinal::output;
use vicinal::report::{self, OutputForm};

/// Vicinal 3J(H,H) couplings from conformer ensembles: prediction with
/// Karplus-type equations, Boltzmann averaging and population fitting.
#[derive(Parser, Debug)]
#[command(name = "vicinal", version, about, long_about = None)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand, Debug)]
enum Command {
    /// List atoms, bonds, rings and every vicinal H-X-Y-H pair with its atom references.
    Atoms(AtomsArgs),
    /// Predict every vicinal 3J(H,H) in every conformer and the ensemble average.
    Predict(PredictArgs),
    /// List the coupling-model parameter sets with their sources.
    Models(ModelsArgs),
    /// Tabulate (CSV) and plot (SVG) J against the dihedral for one parameter set.
    Curve(CurveArgs),
}

#[derive(Args, Debug)]
struct ModelsArgs {
    /// Also load parameter sets from this CSV file (repeatable).
    #[arg(long = "params", value_name = "FILE")]
    params: Vec<PathBuf>,
}

#[derive(Args, Debug)]
struct CurveArgs {
    /// Parameter set id (see `vicinal models`).
    #[arg(long = "model", value_name = "SET", default_value = "hla-general-beta")]
    model: String,
    /// A substituent for the HLA equation: element, orientation sign and optional
    /// beta elements, e.g. `O+`, `C-`, `C+:O,C` (repeatable; at most six).
    #[arg(long = "subst", value_name = "SPEC")]
    subst: Vec<String>,
    /// Step of the dihedral grid in degrees.
    #[arg(long = "step", value_name = "DEG", default_value_t = 5.0)]
    step: f64,
    /// Write the table here (CSV; default standard output).
    #[arg(long = "csv", value_name = "FILE")]
    csv: Option<PathBuf>,
    /// Also write an SVG plot of the curve here.
    #[arg(long = "svg", value_name = "FILE")]
    svg: Option<PathBuf>,
    /// Also load parameter sets from this CSV file (repeatable).
    #[arg(long = "params", value_name = "FILE")]
    params: Vec<PathBuf>,
}

fn load_library(extra: &[PathBuf]) -> Result<ParamLibrary> {
    let mut lib = ParamLibrary::builtin();
    for f in extra {
        lib.extend(ParamLibrary::load_file(f)?);
    }
    Ok(lib)
}

fn run_models(a: &ModelsArgs) -> Result<()> {
    let lib = load_library(&a.params)?;
    let mut t = report::table::Table::new(&[
        ("set", report::table::Align::Left),
        ("fragment", report::table::Align::Left),
        ("form", report::table::Align::Left),
        ("RMS Hz", report::table::Align::Right),
        ("default for", report::table::Align::Left),
        ("source", report::table::Align::Left),
    ]);
    for s in lib.sets() {
        let defaults: Vec<String> = default_uses(&s.id);
        t.row(vec![
            s.id.clone(),
            s.kind.label().to_string(),
            s.form.name().to_string(),
            s.rms_hz
                .map(|r| format!("{r:.2}"))
                .unwrap_or_else(|| "-".into()),
            defaults.join("; "),
            s.source.clone(),
        ]);
    }
    let mut out = std::io::stdout().lock();
    t.write(&mut out, 0)?;
    writeln!(out)?;
    writeln!(out, "How each set's coefficients were checked:")?;
    for s in lib.sets() {
        writeln!(out, "  {}: {}", s.id, s.status)?;
    }
    Ok(())
}

/// Where a set is used by default (for `vicinal models`).
fn default_uses(id: &str) -> Vec<String> {
    let mut v = Vec::new();
    for kind in FragmentKind::ALL {
        for (n, what) in [
            (0, "0-1 substituents"),
            (2, "2 substituents"),
            (3, "3 substituents"),
            (4, "4 substituents"),
        ] {
            for amide in [false, true] {
                if ModelChoice::default_set(kind, n, amide) == Some(id) {
                    let s = match kind {
                        FragmentKind::HCsp3Csp3H => format!("{} with {what}", kind.label()),
                        FragmentKind::HNCH if amide => "HNCH in amides".to_string(),
                        k => k.label().to_string(),
                    };
                    if !v.contains(&s) {
                        v.push(s);
                    }
                }
            }
        }
    }
    if ModelChoice::default().hydroxymethyl.as_deref() == Some(id) {
        v.push("hexopyranose H5-H6R/H5-H6S".into());
    }
    v
}

fn parse_subst(spec: &str) -> Result<PatternSubstituent> {
    let (head, beta) = match spec.split_once(':') {
        Some((h, b)) => (h, Some(b)),
        None => (spec, None),
    };
    let head = head.trim();
    let (el, sign) = match head.strip_suffix('+') {
        Some(e) => (e, 1.0),
        None => match head.strip_suffix('-') {
            Some(e) => (e, -1.0),
            None => bail!("substituent '{spec}': give the orientation sign, e.g. O+ or O-"),
        },
    };
    let element = Element::from_symbol(el)
        .with_context(|| format!("substituent '{spec}': unknown element '{el}'"))?;
    let mut b = Vec::new();
    if let Some(list) = beta {
        for e in list.split(',').map(str::trim).filter(|e| !e.is_empty()) {
            b.push(
                Element::from_symbol(e)
                    .with_context(|| format!("substituent '{spec}': unknown beta element '{e}'"))?,
            );
        }
    }
    Ok(PatternSubstituent {
        element,
        xi: sign,
        beta: b,
    })
}

fn run_curve(a: &CurveArgs) -> Result<()> {
    let lib = load_library(&a.params)?;
    let set = lib.require(&a.model)?;
    let pattern = a
        .subst
        .iter()
        .map(|s| parse_subst(s))
        .collect::<Result<Vec<_>>>()?;
    let points = karplus::curve(set, &pattern, a.step)?;
    let path = a.csv.clone().unwrap_or_else(|| PathBuf::from("-"));
    output::write_atomic(&path, &a.params, |mut w| {
        karplus::write_curve_csv(&mut w, &points)
    })?;
    if let Some(svg) = &a.svg {
        let label = if a.subst.is_empty() {
            set.id.clone()
        } else {
            format!("{} [{}]", set.id, a.subst.join(" "))
        };
        let text = karplus::curve_svg(
            &format!("3J(H,H) against the dihedral: {}", set.id),
            &[(label.as_str(), &points)],
        );
        output::write_atomic(svg, &a.params, |w| w.write_all(text.as_bytes()))?;
    }
    Ok(())
}

/// Options shared by every command that reads an ensemble.
#[derive(Args, Debug, Clone)]
struct InputArgs {
    /// Conformer files (XYZ, SDF/molfile, PDB) forming one ensemble; `-` reads standard input.
    #[arg(required = true)]
    files: Vec<PathBuf>,
    /// File format for every input (xyz, sdf, pdb); default: from the file extension.
    #[arg(long = "input-format", value_name = "FORMAT")]
    input_format: Option<String>,
    /// Where the energy is: an XYZ comment-line key (E=..., energy: ...) or an SDF data field name.
    #[arg(long = "energy-key", value_name = "KEY")]
    energy_key: Option<String>,
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
        };
        Ok(EnsembleSource::new(self.files.clone(), opts)?)
    }
}

#[derive(Args, Debug)]
struct AtomsArgs {
    #[command(flatten)]
    input: InputArgs,
    /// Output form: table or json.
    #[arg(long = "as", value_name = "FORM", default_value = "table")]
    form: String,
    /// Write the listing to this file instead of standard output.
    #[arg(short = 'o', long = "out", value_name = "FILE")]
    out: Option<PathBuf>,
}

/// How conformers are weighted and which coupling models are used.
#[derive(Args, Debug, Clone)]
struct ModelArgs {
    /// Conformer weights: `boltzmann` (from the energies), `equal` (a time
    /// average over MD frames), or a CSV file with columns conformer,population.
    #[arg(long = "weights", value_name = "HOW", default_value = "boltzmann")]
    weights: String,
    /// Temperature in K for Boltzmann weights.
    #[arg(
        short = 'T',
        long = "temperature",
        value_name = "K",
        default_value_t = 298.15
    )]
    temperature: f64,
    /// Unit of the energies in the files: kcal/mol, kJ/mol, hartree or eV.
    #[arg(long = "energy-unit", value_name = "UNIT", default_value = "kcal/mol")]
    energy_unit: String,
    /// Drop conformers more than this many kcal/mol above the lowest.
    #[arg(long = "window", value_name = "KCAL")]
    window: Option<f64>,
    /// Use this parameter set for every pair (see `vicinal models`).
    #[arg(long = "model", value_name = "SET")]
    model: Option<String>,
    /// Use a set for one fragment kind, e.g. `HOCH=fraser-1969` (repeatable).
    #[arg(long = "model-for", value_name = "KIND=SET")]
    model_for: Vec<String>,
    /// Load extra parameter sets from a CSV file in the format of params/karplus/sets.csv (repeatable).
    #[arg(long = "params", value_name = "FILE")]
    params: Vec<PathBuf>,
    /// Treat hexopyranose H5-H6 pairs like any H-C-C-H pair instead of using the
    /// hydroxymethyl (omega) equations.
    #[arg(long = "no-omega")]
    no_omega: bool,
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
fn read_populations(path: &PathBuf) -> Result<Vec<f64>> {
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

#[derive(Args, Debug)]
struct PredictArgs {
    #[command(flatten)]
    input: InputArgs,
    #[command(flatten)]
    models: ModelArgs,
    /// Output form: table (for people), csv or json.
    #[arg(long = "as", value_name = "FORM", default_value = "table")]
    form: String,
    /// In the table, show the per-conformer dihedrals and couplings whatever the ensemble size.
    #[arg(long = "each", conflicts_with = "no_each")]
    each: bool,
    /// In the table, leave out the per-conformer block.
    #[arg(long = "no-each")]
    no_each: bool,
    /// Write the report to this file instead of standard output.
    #[arg(short = 'o', long = "out", value_name = "FILE")]
    out: Option<PathBuf>,
}

fn run_predict(a: &PredictArgs) -> Result<()> {
    let form = output_form(&a.form)?;
    let library = a.models.library()?;
    let choice = a.models.choice(&library)?;
    let weighting = a.models.weighting(None)?;
    let src = a.input.source()?;
    let opts = PredictOptions {
        weighting,
        library,
        choice,
    };
    let pr = predict::predict(src, &opts)?;
    let each = if a.each {
        Some(true)
    } else if a.no_each {
        Some(false)
    } else {
        None
    };
    write_out(&a.out, &a.input.files, |w| match form {
        OutputForm::Table => report::predict::write_table(w, &pr, each),
        OutputForm::Csv => report::predict::write_csv(w, &pr),
        OutputForm::Json => report::predict::write_json(w, &pr),
    })
}

fn output_form(name: &str) -> Result<OutputForm> {
    OutputForm::from_name(name)
        .with_context(|| format!("unknown output form '{name}' (use table, csv or json)"))
}

fn write_out<F>(out: &Option<PathBuf>, inputs: &[PathBuf], write: F) -> Result<()>
where
    F: FnOnce(&mut dyn Write) -> std::io::Result<()>,
{
    let path = out.clone().unwrap_or_else(|| PathBuf::from("-"));
    output::write_atomic(&path, inputs, write)?;
    Ok(())
}

fn run_atoms(a: &AtomsArgs) -> Result<()> {
    let form = output_form(&a.form)?;
    let mut src = a.input.source()?;
    let mut frame = Frame::default();
    src.read_frame(&mut frame)?;
    let top = src.topology().context("no conformer read")?.clone();
    let frags = vicinal::fragments::enumerate(&top);
    match form {
        OutputForm::Table => write_out(&a.out, &a.input.files, |w| {
            report::atoms::write_table(w, &top, &frags)
        }),
        OutputForm::Json => {
            let listing = report::atoms::listing(&top, &frags);
            let text = serde_json::to_string_pretty(&listing)?;
            write_out(&a.out, &a.input.files, |w| writeln!(w, "{text}"))
        }
        OutputForm::Csv => bail!("the atom listing is written as a table or json"),
    }
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    let result = match &cli.command {
        Command::Atoms(a) => run_atoms(a),
        Command::Predict(a) => run_predict(a),
        Command::Models(a) => run_models(a),
        Command::Curve(a) => run_curve(a),
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            let _ = writeln!(std::io::stderr(), "vicinal: error: {e:#}");
            ExitCode::FAILURE
        }
    }
}
