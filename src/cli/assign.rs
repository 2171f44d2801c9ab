//! `vicinal assign`: axial or equatorial, from a ring proton's couplings.

use std::path::PathBuf;

use anyhow::{bail, Result};
use clap::Args;

use vicinal::assign::{self, AssignOptions};
use vicinal::observed;
use vicinal::report::{self, OutputForm};

use super::rank::{predict_files, ErrorArgs};
use super::{output_form, write_out, InputArgs, ModelArgs, OutputArgs};

#[derive(Args, Debug)]
pub(crate) struct AssignArgs {
    #[command(flatten)]
    pub(crate) input: InputArgs,
    /// Observed couplings (CSV: atom1,atom2,j_hz[,sigma_hz,...]).
    #[arg(long = "observed", value_name = "FILE", required = true)]
    pub(crate) observed: PathBuf,
    /// The ring proton to decide (repeatable); default: every six-membered-ring proton with observations.
    #[arg(long = "proton", value_name = "ATOM")]
    pub(crate) protons: Vec<String>,
    /// Likelihood ratio needed for a verdict (below it: cannot tell).
    #[arg(long = "decisive", value_name = "RATIO", default_value_t = vicinal::rank::DEFAULT_DECISIVE_RATIO)]
    pub(crate) decisive: f64,
    #[command(flatten)]
    pub(crate) error: ErrorArgs,
    #[command(flatten)]
    pub(crate) models: ModelArgs,
    #[command(flatten)]
    pub(crate) output: OutputArgs,
}

pub(crate) fn run_assign(a: &AssignArgs) -> Result<()> {
    let form = output_form(&a.output.form)?;
    let em = a.error.model()?;
    if !(a.decisive.is_finite() && a.decisive > 1.0) {
        bail!("--decisive must be a number above 1");
    }
    let obs = observed::read_observations(&a.observed)?;
    let pr = predict_files(
        a.input.files.clone(),
        &a.input.input_format,
        &a.input.energy_key,
        &a.models,
    )?;
    let opts = AssignOptions {
        error: em,
        decisive_ratio: a.decisive,
    };
    let r = assign::assign(&pr, &obs, &a.protons, &opts)?;
    let mut inputs = a.input.files.clone();
    inputs.push(a.observed.clone());
    write_out(&a.output.out, &inputs, |w| match form {
        OutputForm::Table => report::assign::write_table(w, &r),
        OutputForm::Csv => report::assign::write_csv(w, &r),
        OutputForm::Json => report::assign::write_json(w, &r),
    })
}
