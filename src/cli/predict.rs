//! `vicinal predict`.

use anyhow::Result;
use clap::Args;

use vicinal::ensemble::predict::{self, PredictOptions};
use vicinal::report::{self, OutputForm};

use super::{output_form, write_out, InputArgs, ModelArgs, OutputArgs};

#[derive(Args, Debug)]
pub(crate) struct PredictArgs {
    #[command(flatten)]
    pub(crate) input: InputArgs,
    #[command(flatten)]
    pub(crate) models: ModelArgs,
    #[command(flatten)]
    pub(crate) output: OutputArgs,
    /// In the table, show the per-conformer dihedrals and couplings whatever the ensemble size.
    #[arg(long = "each", conflicts_with = "no_each")]
    pub(crate) each: bool,
    /// In the table, leave out the per-conformer block.
    #[arg(long = "no-each")]
    pub(crate) no_each: bool,
}

pub(crate) fn run_predict(a: &PredictArgs) -> Result<()> {
    let form = output_form(&a.output.form)?;
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
    write_out(&a.output.out, &a.input.files, |w| match form {
        OutputForm::Table => report::predict::write_table(w, &pr, each),
        OutputForm::Csv => report::predict::write_csv(w, &pr),
        OutputForm::Json => report::predict::write_json(w, &pr),
    })
}
