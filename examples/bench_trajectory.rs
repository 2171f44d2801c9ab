//! Speed of the trajectory analysis: runs `trajectory::analyse` over one or
//! more trajectory files (XYZ, PDB or SDF; or DCD with `--top FILE`) and
//! prints the time and the throughput in MB/s of input. `--atoms-only`
//! checks frames for atoms only, not bonding (the synthetic hexan-2-ol
//! trajectory of `gen_trajectory` has unphysical close contacts from its free
//! torsion random walks, which the bonding check refuses). `--checkpoints`
//! records the running averages, as `vicinal trajectory --plot` does.
//!
//! ```sh
//! cargo run --release --example gen_trajectory -- /tmp/bench/hex100k.xyz 100000
//! cargo run --release --example bench_trajectory -- /tmp/bench/hex100k.xyz --atoms-only
//! ```

use std::path::PathBuf;
use std::time::Instant;

use vicinal::io::ReadOptions;
use vicinal::trajectory::{analyse, TrajectoryOptions, TrajectorySource};

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let mut args = std::env::args().skip(1);
    let mut files = Vec::new();
    let mut top: Option<PathBuf> = None;
    let mut repeat = 1usize;
    // As the command line's table report: no running-average checkpoints.
    let mut opts = TrajectoryOptions {
        checkpoints: 0,
        ..TrajectoryOptions::default()
    };
    while let Some(a) = args.next() {
        match a.as_str() {
            "--top" => top = args.next().map(PathBuf::from),
            "--atoms-only" => opts.check_bonding = false,
            "--repeat" => repeat = args.next().and_then(|s| s.parse().ok()).unwrap_or(1),
            // As `vicinal trajectory --plot` or `--as json`: running averages.
            "--checkpoints" => opts.checkpoints = vicinal::trajectory::DEFAULT_CHECKPOINTS,
            _ => files.push(PathBuf::from(a)),
        }
    }
    if files.is_empty() {
        return Err(
            "usage: bench_trajectory FILE... [--top TOPOLOGY.pdb] [--atoms-only] [--checkpoints] [--repeat N]"
                .into(),
        );
    }
    let mut best = f64::INFINITY;
    for _ in 0..repeat.max(1) {
        let source = match &top {
            Some(t) => TrajectorySource::dcd(t, None, files.clone())?,
            None => TrajectorySource::files(files.clone(), None, ReadOptions::default())?,
        };
        let bytes = source.input_bytes();
        let t0 = Instant::now();
        let report = analyse(source, &opts, &mut |_| {})?;
        let secs = t0.elapsed().as_secs_f64();
        best = best.min(secs);
        println!(
            "{} frames, {} couplings, {} state series; {:.1} MB in {:.3} s: {:.0} MB/s",
            report.frames_used,
            report.couplings.len(),
            report.states.len(),
            bytes as f64 / 1e6,
            secs,
            bytes as f64 / 1e6 / secs
        );
        if let Some(c) = report.couplings.first() {
            println!(
                "first coupling {}: {:.3} ± {:.3} Hz (tau_int {:.1} frames)",
                c.label, c.blocking.mean, c.blocking.sem, c.blocking.tau_int_frames
            );
        }
    }
    println!("best {best:.3} s");
    if top.is_none() {
        // Baseline in the same run: the reader alone, no analysis.
        let t0 = Instant::now();
        let mut frame = vicinal::io::Frame::default();
        let mut n = 0usize;
        let mut bytes = 0u64;
        for f in &files {
            bytes += std::fs::metadata(f)?.len();
            let mut r = vicinal::io::open(f, None, &ReadOptions::default())?;
            while r.read_frame(&mut frame)? {
                n += 1;
            }
        }
        let secs = t0.elapsed().as_secs_f64();
        println!(
            "reader alone: {n} frames in {secs:.3} s: {:.0} MB/s",
            bytes as f64 / 1e6 / secs
        );
    }
    Ok(())
}
