//! Command line of vicinal: a thin layer over the library.

use clap::Parser;

/// Vicinal 3J(H,H) couplings from conformer ensembles.
#[derive(Parser, Debug)]
#[command(name = "vicinal", version, about)]
struct Cli {}

fn main() {
    let _cli = Cli::parse();
}
