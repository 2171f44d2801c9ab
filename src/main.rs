//! Command line of vicinal: a thin layer over the library. Every subcommand
//! parses its options, calls library functions and writes their reports.

use std::io::Write;
use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::{bail, Context, Result};
use clap::{Args, Parser, Subcommand};

use vicinal::ensemble::source::{EnsembleSource, SourceOptions};
use vicinal::io::{Format, Frame, ReadOptions};
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
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            let _ = writeln!(std::io::stderr(), "vicinal: error: {e:#}");
            ExitCode::FAILURE
        }
    }
}
