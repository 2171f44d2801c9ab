//! `vicinal atoms`.

use std::path::PathBuf;

use anyhow::{bail, Context, Result};
use clap::Args;

use vicinal::io::Frame;
use vicinal::report::{self, OutputForm};

use super::{output_form, write_out, InputArgs};

#[derive(Args, Debug)]
pub(crate) struct AtomsArgs {
    #[command(flatten)]
    pub(crate) input: InputArgs,
    /// Output form: table or json.
    #[arg(long = "as", value_name = "FORM", default_value = "table")]
    pub(crate) form: String,
    /// Write the listing to this file instead of standard output.
    #[arg(short = 'o', long = "out", value_name = "FILE")]
    pub(crate) out: Option<PathBuf>,
}

pub(crate) fn run_atoms(a: &AtomsArgs) -> Result<()> {
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
