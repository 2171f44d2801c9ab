//! Benchmark (not a test): read a multi-frame XYZ trajectory, perceive the
//! topology once, check every frame against it (atoms and bonding; atoms
//! only with `--atoms-only`), and compute every vicinal
//! H–X–Y–H dihedral in every frame. In the same run, a plain line scan of the
//! same file (counting newlines over 1 MiB reads) gives the I/O baseline, and
//! the ratio of the two throughputs is printed.
//!
//! ```sh
//! cargo run --release --example gen_trajectory -- /tmp/hexanol_100k.xyz 100000
//! cargo run --release --example bench_dihedrals -- /tmp/hexanol_100k.xyz
//! ```

use std::fs::File;
use std::io::Read;
use std::path::PathBuf;
use std::time::Instant;

use vicinal::ensemble::source::{EnsembleSource, SourceOptions};
use vicinal::fragments;
use vicinal::geometry::dihedral;
use vicinal::io::Frame;

fn line_scan(path: &PathBuf) -> std::io::Result<(usize, u64)> {
    let mut f = File::open(path)?;
    let mut buf = vec![0u8; 1 << 20];
    let mut lines = 0usize;
    let mut bytes = 0u64;
    loop {
        let k = f.read(&mut buf)?;
        if k == 0 {
            break;
        }
        bytes += k as u64;
        lines += buf[..k].iter().filter(|&&b| b == b'\n').count();
    }
    Ok((lines, bytes))
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let path = PathBuf::from(
        std::env::args()
            .nth(1)
            .ok_or("usage: bench_dihedrals FILE.xyz [--atoms-only]")?,
    );
    // --atoms-only: check atoms and coordinates per frame but not bonding.
    let check_bonding = std::env::args().nth(2).as_deref() != Some("--atoms-only");
    let size = std::fs::metadata(&path)?.len() as f64;

    let t0 = Instant::now();
    let (lines, _) = line_scan(&path)?;
    let t_scan = t0.elapsed().as_secs_f64();

    let t1 = Instant::now();
    let opts = SourceOptions {
        check_bonding,
        ..SourceOptions::default()
    };
    let mut src = EnsembleSource::new(vec![path.clone()], opts)?;
    let mut frame = Frame::default();
    let mut pairs = Vec::new();
    let mut n_frames = 0usize;
    let mut checksum = 0.0f64;
    let mut n_dihedrals = 0usize;
    while src.read_frame(&mut frame)? {
        if n_frames == 0 {
            let top = src.topology().ok_or("no topology")?;
            pairs = fragments::enumerate(top)
                .pairs
                .iter()
                .map(|p| [p.h1, p.x, p.y, p.h2])
                .collect();
        }
        let c = &frame.coords;
        for p in &pairs {
            if let Some(t) = dihedral(&c[p[0]], &c[p[1]], &c[p[2]], &c[p[3]]) {
                checksum += t;
                n_dihedrals += 1;
            }
        }
        n_frames += 1;
    }
    let t_read = t1.elapsed().as_secs_f64();

    let mb = size / 1e6;
    println!("file: {} ({mb:.1} MB, {lines} lines)", path.display());
    println!(
        "line scan:          {:8.3} s  {:8.1} MB/s",
        t_scan,
        mb / t_scan
    );
    println!(
        "read + dihedrals:   {:8.3} s  {:8.1} MB/s  ({n_frames} frames, {} pairs, {n_dihedrals} dihedrals, checksum {checksum:.3})",
        t_read,
        mb / t_read,
        pairs.len()
    );
    println!(
        "throughput ratio (dihedrals / line scan): {:.3}",
        t_scan / t_read
    );
    Ok(())
}
