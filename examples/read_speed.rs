//! Times the conformer reader on one file against a plain byte scan of the same
//! file (counting newlines), and prints MB/s for both and their ratio.
//!
//! `cargo run --release --example read_speed -- FILE.xyz [xyz|sdf|pdb]`

use std::path::PathBuf;
use std::time::Instant;

use vicinal::io::{self, Format, Frame, ReadOptions};

/// CPU time of this thread in seconds, from Linux's `/proc/thread-self/schedstat`
/// (on a loaded machine wall time overstates the cost); wall time elsewhere.
fn cpu_seconds(wall: Instant) -> f64 {
    std::fs::read_to_string("/proc/thread-self/schedstat")
        .ok()
        .and_then(|s| s.split_whitespace().next()?.parse::<f64>().ok())
        .map(|ns| ns * 1e-9)
        .unwrap_or_else(|| wall.elapsed().as_secs_f64())
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let mut args = std::env::args().skip(1);
    let path = PathBuf::from(args.next().ok_or("usage: read_speed FILE [format]")?);
    let format = args.next().and_then(|f| Format::from_name(&f));
    let bytes = std::fs::metadata(&path)?.len() as f64;
    let mb = bytes / 1e6;

    // Plain scan: read the file through the same buffered input and count '\n'.
    let t = Instant::now();
    let c = cpu_seconds(t);
    let mut input = io::open_input(&path)?;
    let mut newlines = 0usize;
    loop {
        let buf = input.fill_buf()?;
        if buf.is_empty() {
            break;
        }
        newlines += buf.iter().filter(|&&b| b == b'\n').count();
        let n = buf.len();
        input.consume(n);
    }
    let scan_wall = t.elapsed().as_secs_f64();
    let scan_s = cpu_seconds(t) - c;

    // The reader.
    let t = Instant::now();
    let c = cpu_seconds(t);
    let mut r = io::open(&path, format, &ReadOptions::default())?;
    let mut frame = Frame::default();
    let (mut frames, mut atoms) = (0usize, 0usize);
    let mut checksum = 0.0;
    while r.read_frame(&mut frame)? {
        frames += 1;
        atoms += frame.len();
        checksum += frame.coords[0].x;
    }
    let read_wall = t.elapsed().as_secs_f64();
    let read_s = cpu_seconds(t) - c;

    println!("file: {} ({mb:.1} MB, {newlines} lines)", path.display());
    println!(
        "plain newline scan: {:8.1} MB/s of CPU time ({:8.1} MB/s wall)",
        mb / scan_s,
        mb / scan_wall
    );
    println!(
        "reader:             {:8.1} MB/s of CPU time ({:8.1} MB/s wall)",
        mb / read_s,
        mb / read_wall
    );
    println!("  {frames} frames, {atoms} atoms, checksum {checksum:.3}");
    println!("reader / scan:      {:8.3}", scan_s / read_s);
    Ok(())
}
