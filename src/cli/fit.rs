//! `vicinal fit`: populations of conformers or groups of conformers from
//! measured couplings.

use std::path::PathBuf;

use anyhow::{bail, Result};
use clap::Args;

use vicinal::ensemble::predict::{self, PredictOptions};
use vicinal::fit::maxent::{ThetaRule, DEFAULT_TARGET_REDUCED_CHI2};
use vicinal::fit::montecarlo::{MonteCarloOptions, DEFAULT_SAMPLES, DEFAULT_SEED};
use vicinal::fit::{DEFAULT_MEASUREMENT_SIGMA_HZ, DEFAULT_SAME_COUPLINGS_HZ};
use vicinal::observed;
use vicinal::output;
use vicinal::populations::{
    self, FitRequest, Grouping, MemberWeighting, PopulationModel, SigmaOptions,
};
use vicinal::report::{self, OutputForm};

use super::{output_form, write_out, InputArgs, ModelArgs, OutputArgs};

#[derive(Args, Debug)]
pub(crate) struct FitArgs {
    #[command(flatten)]
    pub(crate) input: InputArgs,
    #[command(flatten)]
    pub(crate) models: ModelArgs,
    /// Measured couplings: CSV with atom1,atom2,j_hz[,sigma_hz,temperature_k,signed,either,label].
    #[arg(long = "observed", value_name = "FILE", required = true)]
    pub(crate) observed: PathBuf,
    /// What is fitted: free (populations >= 0 summing to 1), two-state
    /// (fraction, K and dG of two groups), reweight (minimal reweighting of the
    /// computed ensemble) or van-t-hoff (dH and dS of two groups from
    /// observations at several temperatures).
    #[arg(long = "populations", value_name = "MODEL", default_value = "free")]
    pub(crate) populations: String,
    /// The states: `each` conformer; ranges `1-12,13-20` ('+' joins ranges
    /// in one group); `ring-theta[:RING]` (theta < 90 / > 90 of a
    /// six-membered ring); `ring-shape[:RING]`; `rotamer:ATOM1,ATOM2` (g+/a/g-
    /// of that pair's dihedral); or `file:GROUPS.csv` (columns conformer,group).
    #[arg(long = "groups", value_name = "SPEC", default_value = "each")]
    pub(crate) groups: String,
    /// Reweighting: fixed theta (confidence in the computed ensemble); default:
    /// the largest theta whose chi2 per coupling reaches --chi2-target.
    #[arg(long = "theta", value_name = "THETA")]
    pub(crate) theta: Option<f64>,
    /// Reweighting: target chi2 per coupling for choosing theta.
    #[arg(long = "chi2-target", value_name = "X", default_value_t = DEFAULT_TARGET_REDUCED_CHI2)]
    pub(crate) chi2_target: f64,
    /// Monte Carlo resamples of the observations for population intervals (0: none).
    #[arg(long = "mc", value_name = "N", default_value_t = DEFAULT_SAMPLES)]
    pub(crate) mc: usize,
    /// Seed of the Monte Carlo resampling (reproducible on every platform).
    #[arg(long = "seed", value_name = "N", default_value_t = DEFAULT_SEED)]
    pub(crate) seed: u64,
    /// Measurement error in Hz of rows without sigma_hz.
    #[arg(long = "sigma-meas", value_name = "HZ", default_value_t = DEFAULT_MEASUREMENT_SIGMA_HZ)]
    pub(crate) sigma_meas: f64,
    /// Error in Hz of the coupling model, for every pair; default: the
    /// parameter set's published RMS where known, else 0.5 Hz.
    #[arg(long = "model-error", value_name = "HZ")]
    pub(crate) model_error: Option<f64>,
    /// Two states whose predicted couplings all agree within this many Hz
    /// are reported as indistinguishable.
    #[arg(long = "same-within", value_name = "HZ", default_value_t = DEFAULT_SAME_COUPLINGS_HZ)]
    pub(crate) same_within: f64,
    /// Fit even when the couplings cannot decide the populations (the report
    /// then says why the numbers are one answer among many).
    #[arg(long = "fit-anyway")]
    pub(crate) fit_anyway: bool,
    #[command(flatten)]
    pub(crate) output: OutputArgs,
    /// Write an SVG of observed against fitted couplings here.
    #[arg(long = "plot", value_name = "FILE.svg")]
    pub(crate) plot: Option<PathBuf>,
    /// Write an SVG of the fitted populations with their intervals here.
    #[arg(long = "plot-populations", value_name = "FILE.svg")]
    pub(crate) plot_populations: Option<PathBuf>,
}

fn positive(v: f64, what: &str) -> Result<f64> {
    if !(v.is_finite() && v > 0.0) {
        bail!("{what} must be a positive number, got {v}");
    }
    Ok(v)
}

pub(crate) fn run_fit(a: &FitArgs) -> Result<()> {
    let form = output_form(&a.output.form)?;
    let model = match a.populations.to_ascii_lowercase().as_str() {
        "free" => PopulationModel::Free,
        "two-state" | "two" => PopulationModel::TwoState,
        "reweight" => PopulationModel::Reweight(match a.theta {
            Some(t) => ThetaRule::Fixed(positive(t, "--theta")?),
            None => ThetaRule::ReducedChi2(positive(a.chi2_target, "--chi2-target")?),
        }),
        "van-t-hoff" | "vant-hoff" | "vanthoff" => PopulationModel::VantHoff,
        other => {
            bail!("unknown --populations '{other}' (use free, two-state, reweight or van-t-hoff)")
        }
    };
    if a.theta.is_some() && !matches!(model, PopulationModel::Reweight(_)) {
        bail!("--theta applies to --populations reweight only");
    }
    positive(a.sigma_meas, "--sigma-meas")?;
    if let Some(m) = a.model_error {
        if !(m.is_finite() && m >= 0.0) {
            bail!("--model-error must be a number of Hz >= 0, got {m}");
        }
    }
    positive(a.same_within, "--same-within")?;
    let grouping = Grouping::parse(&a.groups)?;
    let obs = observed::read_observations(&a.observed)?;

    let library = a.models.library()?;
    let choice = a.models.choice(&library)?;
    let weighting = a.models.weighting(None)?;
    let src = a.input.source()?;
    let pr = predict::predict(
        src,
        &PredictOptions {
            weighting,
            library,
            choice,
        },
    )?;
    let boltzmann = a.models.weights == "boltzmann";
    let mut weighting_note = pr.weighting.clone();
    let member_weighting = if boltzmann && model == PopulationModel::VantHoff {
        weighting_note.push_str(", recomputed at each measurement temperature");
        MemberWeighting::Boltzmann {
            temperature_k: a.models.temperature,
        }
    } else {
        MemberWeighting::Populations
    };
    let req = FitRequest {
        model,
        grouping,
        member_weighting,
        weighting_note,
        sigma: SigmaOptions {
            measurement_hz: a.sigma_meas,
            model_hz: a.model_error,
        },
        temperature_k: a.models.temperature,
        monte_carlo: (a.mc > 0).then_some(MonteCarloOptions {
            n_samples: a.mc.max(2),
            seed: a.seed,
        }),
        fit_anyway: a.fit_anyway,
        same_couplings_hz: a.same_within,
    };
    let fit = populations::fit_ensemble(&pr, &obs, &req)?;

    let mut inputs = a.input.files.clone();
    inputs.push(a.observed.clone());
    if let Some(p) = &a.plot {
        let svg = report::fit::couplings_plot(&fit).to_svg();
        output::write_atomic(p, &inputs, |w| w.write_all(svg.as_bytes()))?;
    }
    if let Some(p) = &a.plot_populations {
        let svg = report::fit::populations_plot(&fit).to_svg();
        output::write_atomic(p, &inputs, |w| w.write_all(svg.as_bytes()))?;
    }
    write_out(&a.output.out, &inputs, |w| match form {
        OutputForm::Table => report::fit::write_table(w, &fit),
        OutputForm::Csv => report::fit::write_csv(w, &fit),
        OutputForm::Json => report::fit::write_json(w, &fit),
    })
}
