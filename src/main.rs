//! Command line of vicinal: a thin layer over the library. Every subcommand
//! parses its options, calls library functions and writes their reports.

use std::io::Write;
use std::process::ExitCode;

use clap::{Parser, Subcommand};

mod cli;

use cli::assign::{run_assign, AssignArgs};
use cli::atoms::{run_atoms, AtomsArgs};
use cli::fit::{run_fit, FitArgs};
use cli::models::{run_curve, run_models, CurveArgs, ModelsArgs};
use cli::predict::{run_predict, PredictArgs};
use cli::rank::{run_check, run_rank, CheckArgs, RankArgs};
use cli::trajectory::{run_trajectory, TrajectoryArgs};

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
    /// Time-averaged couplings, their errors, and ring/rotamer states over an MD trajectory.
    Trajectory(TrajectoryArgs),
    /// Decide axial or equatorial for ring protons from their measured couplings.
    Assign(AssignArgs),
    /// Rank candidate structures by how well their ensembles predict the measured couplings.
    Rank(RankArgs),
    /// Test each conformer (and ring-shape family) against the measured couplings.
    Check(CheckArgs),
    /// Fit populations of conformers or groups (free, two-state, reweighting, van 't Hoff) to measured couplings.
    Fit(FitArgs),
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    if let Err(e) = vicinal::elements::check_builtin_table() {
        let _ = writeln!(
            std::io::stderr(),
            "vicinal: error: the element table built into this binary is broken ({e}); rebuild from an intact params/elements.csv"
        );
        return ExitCode::FAILURE;
    }
    let result = match &cli.command {
        Command::Atoms(a) => run_atoms(a),
        Command::Predict(a) => run_predict(a),
        Command::Models(a) => run_models(a),
        Command::Curve(a) => run_curve(a),
        Command::Trajectory(a) => run_trajectory(a),
        Command::Assign(a) => run_assign(a),
        Command::Rank(a) => run_rank(a),
        Command::Check(a) => run_check(a),
        Command::Fit(a) => run_fit(a),
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) if broken_pipe(&e) => ExitCode::SUCCESS,
        Err(e) => {
            let _ = writeln!(std::io::stderr(), "vicinal: error: {e:#}");
            ExitCode::FAILURE
        }
    }
}

/// True when the error is standard output closed early (`vicinal ... | head`),
/// which is not a failure of the run.
fn broken_pipe(e: &anyhow::Error) -> bool {
    e.chain().any(|c| {
        c.downcast_ref::<std::io::Error>()
            .is_some_and(|io| io.kind() == std::io::ErrorKind::BrokenPipe)
            || matches!(
                c.downcast_ref::<vicinal::Error>(),
                Some(vicinal::Error::Io { source, .. }) if source.kind() == std::io::ErrorKind::BrokenPipe
            )
    })
}
