//! Trajectory analysis end to end: state occupancies, transitions and ring
//! inversions on synthetic trajectories of known conformer runs (built here,
//! scenario of our own making), DCD against the same frames as XYZ (frames
//! from the MDTraj 1.11.1 reference CSV beside the fixture), frame selection,
//! and clear errors for truncated or mismatched input.

use std::f64::consts::PI;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};

use vicinal::geometry::{dihedral, Vec3};
use vicinal::io::ReadOptions;
use vicinal::trajectory::{
    analyse, StateSeries, TrajectoryOptions, TrajectoryReport, TrajectorySource,
};

fn tmp_dir(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("vicinal-traj-{}-{name}", std::process::id()));
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// Places d with |cd| = r, angle b–c–d = theta and dihedral a–b–c–d = phi
/// (natural extension reference frame, common practice).
fn place(a: Vec3, b: Vec3, c: Vec3, r: f64, theta: f64, phi: f64) -> Vec3 {
    let bc = (c - b).normalize();
    let n = (b - a).cross(&bc).normalize();
    let m = n.cross(&bc);
    let d2 = Vec3::new(
        -r * theta.cos(),
        r * theta.sin() * phi.cos(),
        r * theta.sin() * phi.sin(),
    );
    c + bc * d2.x + m * d2.y + n * d2.z
}

/// Butane C1–C4 then H on C1 (3), C2 (2), C3 (2), C4 (3), with the
/// C1–C2–C3–C4 torsion `tau` (radians).
fn butane(tau: f64) -> Vec<(&'static str, Vec3)> {
    let t = 111f64.to_radians();
    let th = 109.5f64.to_radians();
    let c1 = Vec3::new(0.0, 0.0, 0.0);
    let c2 = Vec3::new(1.53, 0.0, 0.0);
    let c3 = c2 + Vec3::new(-(t.cos()) * 1.53, t.sin() * 1.53, 0.0);
    let c4 = place(c1, c2, c3, 1.53, t, tau);
    let d120 = 2.0 * PI / 3.0;
    let mut v = vec![("C", c1), ("C", c2), ("C", c3), ("C", c4)];
    for k in 0..3 {
        v.push(("H", place(c3, c2, c1, 1.09, th, PI / 3.0 + k as f64 * d120)));
    }
    for s in [1.0, -1.0] {
        v.push(("H", place(c4, c3, c2, 1.09, th, tau + s * d120)));
    }
    for s in [1.0, -1.0] {
        v.push(("H", place(c1, c2, c3, 1.09, th, tau + s * d120)));
    }
    for k in 0..3 {
        v.push(("H", place(c2, c3, c4, 1.09, th, PI / 3.0 + k as f64 * d120)));
    }
    v
}

fn xyz_frame(out: &mut String, title: &str, atoms: &[(&str, Vec3)]) {
    writeln!(out, "{}", atoms.len()).unwrap();
    writeln!(out, "{title}").unwrap();
    for (s, p) in atoms {
        writeln!(out, "{s} {:.6} {:.6} {:.6}", p.x, p.y, p.z).unwrap();
    }
}

fn write(dir: &Path, name: &str, text: &str) -> PathBuf {
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p
}

fn run(files: Vec<PathBuf>, opts: &TrajectoryOptions) -> vicinal::Result<TrajectoryReport> {
    let src = TrajectorySource::files(files, None, ReadOptions::default())?;
    analyse(src, opts, &mut |_| {})
}

fn state<'a>(s: &'a StateSeries, name: &str) -> Option<&'a vicinal::trajectory::StateSummary> {
    s.states.iter().find(|x| x.name == name)
}

/// Known runs of the butane torsion: a×10, g+×5, a×7, g−×3, a×5 (30 frames).
const BUTANE_RUNS: [(f64, usize); 5] = [(180.0, 10), (62.0, 5), (178.0, 7), (-65.0, 3), (183.0, 5)];

fn butane_file(dir: &Path) -> PathBuf {
    let mut s = String::new();
    let mut n = 0;
    for (deg, len) in BUTANE_RUNS {
        for k in 0..len {
            // Small wobble inside the window so frames differ.
            let tau = (deg + 3.0 * ((k as f64) * 0.7).sin()).to_radians();
            let atoms = butane(tau);
            let d = dihedral(&atoms[0].1, &atoms[1].1, &atoms[2].1, &atoms[3].1).unwrap();
            assert!(
                (vicinal::geometry::wrap_angle(d - tau)).abs() < 1e-9,
                "placement convention"
            );
            n += 1;
            xyz_frame(&mut s, &format!("frame {n}"), &atoms);
        }
    }
    write(dir, "butane.xyz", &s)
}

#[test]
fn butane_rotamer_occupancies_transitions_and_lifetimes() {
    let dir = tmp_dir("butane");
    let file = butane_file(&dir);
    let csv = dir.join("series.csv");
    let opts = TrajectoryOptions {
        timeseries_csv: Some(csv.clone()),
        timestep_ps: Some(2.0),
        ..TrajectoryOptions::default()
    };
    let r = run(vec![file.clone()], &opts).unwrap();
    assert_eq!(r.frames_used, 30);
    // The central bond C2–C3 (0-based 1–2); the methyl bonds are rotors.
    let rot: Vec<&StateSeries> = r.states.iter().filter(|s| s.what == "rotamer").collect();
    assert_eq!(
        rot.len(),
        1,
        "{:?}",
        rot.iter().map(|s| &s.label).collect::<Vec<_>>()
    );
    let s = rot[0];
    assert_eq!(s.atoms, vec![0, 1, 2, 3]);
    let anti = state(s, "a").unwrap();
    let gp = state(s, "g+").unwrap();
    let gm = state(s, "g-").unwrap();
    assert_eq!((anti.frames, gp.frames, gm.frames), (22, 5, 3));
    assert!((anti.occupancy - 22.0 / 30.0).abs() < 1e-12);
    assert_eq!(s.transitions, 4);
    assert_eq!(s.committed_transitions, 4);
    assert_eq!((anti.runs, gp.runs, gm.runs), (3, 1, 1));
    assert!((anti.mean_lifetime_frames - 22.0 / 3.0).abs() < 1e-12);
    assert_eq!(anti.mean_complete_lifetime_frames, Some(7.0));
    assert_eq!(gp.longest_run_frames, 5);
    // Per-state couplings: the state-weighted means give the overall mean.
    for (slot, &k) in s.couplings.iter().enumerate() {
        let total: f64 = s
            .states
            .iter()
            .map(|st| st.occupancy * st.mean_j_hz[slot].unwrap())
            .sum();
        assert!((total - r.couplings[k].blocking.mean).abs() < 1e-9);
    }
    // Anti H–C2–C3–H pairs are large in the anti state: the vicinal
    // couplings across C2–C3 differ between anti and gauche (common practice).
    assert_eq!(s.couplings.len(), 4);
    // Rotor averaging: the C1 methyl couples to the C2 protons as one group.
    assert!(r
        .couplings
        .iter()
        .any(|c| c.rotor_averaged && c.side1.len() == 3));
    // With a minimum dwell of 4 frames the 3-frame g− excursion is not a
    // committed transition (a→g+→a commits twice; a→g−→a not at all).
    let opts4 = TrajectoryOptions {
        rotor_min_dwell: 4,
        ..TrajectoryOptions::default()
    };
    let r4 = run(vec![file.clone()], &opts4).unwrap();
    let s4 = r4.states.iter().find(|s| s.what == "rotamer").unwrap();
    assert_eq!(s4.transitions, 4);
    assert_eq!(s4.committed_transitions, 2);
    // The per-frame CSV: header plus 30 rows, time column, rotamer labels.
    let text = std::fs::read_to_string(&csv).unwrap();
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines.len(), 31);
    assert!(lines[0].starts_with("frame,time_ps,J "), "{}", lines[0]);
    assert!(lines[11].starts_with("11,20.0000,"), "{}", lines[11]);
    assert!(lines[11].ends_with(",g+"), "{}", lines[11]);
    assert!(lines[1].ends_with(",a"));
}

#[test]
fn selection_several_files_and_user_bond() {
    let dir = tmp_dir("select");
    let file = butane_file(&dir);
    // Same trajectory split over two files reads as one.
    let text = std::fs::read_to_string(&file).unwrap();
    let lines: Vec<&str> = text.lines().collect();
    let per = 16; // 14 atoms + 2 header lines
    let a = write(&dir, "a.xyz", &(lines[..12 * per].join("\n") + "\n"));
    let b = write(&dir, "b.xyz", &(lines[12 * per..].join("\n") + "\n"));
    let whole = run(vec![file.clone()], &TrajectoryOptions::default()).unwrap();
    let split = run(vec![a, b], &TrajectoryOptions::default()).unwrap();
    assert_eq!(split.frames_used, 30);
    for (x, y) in whole.couplings.iter().zip(&split.couplings) {
        assert!((x.blocking.mean - y.blocking.mean).abs() < 1e-12);
    }
    // Frames 11..=15 (0-based 10..=14) are the g+ run; stride 2 → 10, 12, 14.
    let opts = TrajectoryOptions {
        first: 10,
        last: Some(14),
        stride: 2,
        bonds: vec![(0, 1)],
        ..TrajectoryOptions::default()
    };
    let r = run(vec![file.clone()], &opts).unwrap();
    assert_eq!(r.frames_used, 3);
    assert_eq!(r.frames_read, 15);
    assert_eq!(r.last_used, Some(14));
    let central = r
        .states
        .iter()
        .find(|s| s.what == "rotamer" && !s.user_named)
        .unwrap();
    assert_eq!(central.states.len(), 1);
    assert_eq!(central.states[0].name, "g+");
    assert!(r
        .states
        .iter()
        .any(|s| s.user_named && s.atoms[1] == 0 && s.atoms[2] == 1));
    // A selection past the end is an error, not an empty report.
    let past = TrajectoryOptions {
        first: 100,
        ..TrajectoryOptions::default()
    };
    let e = run(vec![file.clone()], &past).unwrap_err().to_string();
    assert!(e.contains("no frame selected"), "{e}");
    // Naming atoms that are not bonded is refused.
    let bad = TrajectoryOptions {
        bonds: vec![(0, 3)],
        ..TrajectoryOptions::default()
    };
    let e = run(vec![file], &bad).unwrap_err().to_string();
    assert!(e.contains("not bonded"), "{e}");
}

/// Chair cyclohexane: ring carbons alternate ±0.25 Å about the mean plane;
/// `flip` mirrors it through that plane (the other chair).
fn cyclohexane(flip: bool) -> Vec<(&'static str, Vec3)> {
    let s = if flip { -1.0 } else { 1.0 };
    let mut v = Vec::new();
    let mut hs = Vec::new();
    for k in 0..6 {
        let a = k as f64 * PI / 3.0;
        let up = if k % 2 == 0 { 1.0 } else { -1.0 } * s;
        let radial = Vec3::new(a.cos(), a.sin(), 0.0);
        let c = radial * 1.45 + Vec3::new(0.0, 0.0, 0.25 * up);
        v.push(("C", c));
        hs.push(("H", c + Vec3::new(0.0, 0.0, 1.09 * up)));
        let eq = (radial * 0.943 - Vec3::new(0.0, 0.0, 0.333 * up)).normalize();
        hs.push(("H", c + eq * 1.09));
    }
    v.extend(hs);
    v
}

#[test]
fn cyclohexane_ring_inversions() {
    let dir = tmp_dir("chx");
    let runs = [(false, 4), (true, 6), (false, 3), (true, 2)];
    let mut s = String::new();
    for (flip, n) in runs {
        for _ in 0..n {
            xyz_frame(&mut s, "cyclohexane", &cyclohexane(flip));
        }
    }
    let file = write(&dir, "chx.xyz", &s);
    let r = run(vec![file.clone()], &TrajectoryOptions::default()).unwrap();
    let rings: Vec<&StateSeries> = r.states.iter().filter(|s| s.what == "ring").collect();
    assert_eq!(rings.len(), 1);
    let ring = rings[0];
    assert_eq!(ring.ring_inversions, Some(3));
    assert_eq!(ring.transitions, 3);
    let names: Vec<&str> = ring.states.iter().map(|s| s.name.as_str()).collect();
    assert_eq!(names.len(), 2, "{names:?}");
    let first = &ring.states[0];
    let second = &ring.states[1];
    assert_eq!((first.frames, second.frames), (7, 8));
    assert!(names.contains(&"chair (theta<90)") && names.contains(&"chair (theta>90)"));
    // Mirror-image chairs give the same couplings.
    for slot in 0..ring.couplings.len() {
        let (a, b) = (
            first.mean_j_hz[slot].unwrap(),
            second.mean_j_hz[slot].unwrap(),
        );
        assert!((a - b).abs() < 1e-6, "{a} {b}");
    }
    // Every ring coupling is within the ring.
    assert_eq!(ring.couplings.len(), r.couplings.len());
    // With a minimum dwell of 3 frames the final 2-frame chair does not count.
    let o = TrajectoryOptions {
        ring_min_dwell: 3,
        ..TrajectoryOptions::default()
    };
    let r3 = run(vec![file], &o).unwrap();
    let ring3 = r3.states.iter().find(|s| s.what == "ring").unwrap();
    assert_eq!(ring3.ring_inversions, Some(2));
}

fn dcd_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/dcd")
}

/// The MDTraj reference coordinates of the DCD fixture, written as XYZ.
fn ethane_xyz_from_reference(dir: &Path) -> PathBuf {
    let text = std::fs::read_to_string(dcd_dir().join("ethane_cell.csv")).unwrap();
    let mut frames: Vec<Vec<(String, [f64; 3])>> = Vec::new();
    for line in text.lines().filter(|l| !l.starts_with('#')).skip(1) {
        let f: Vec<&str> = line.split(',').collect();
        let fr: usize = f[0].parse().unwrap();
        if frames.len() <= fr {
            frames.push(Vec::new());
        }
        let p = [
            f[3].parse().unwrap(),
            f[4].parse().unwrap(),
            f[5].parse().unwrap(),
        ];
        frames[fr].push((f[2].to_string(), p));
    }
    let mut s = String::new();
    for fr in &frames {
        writeln!(s, "{}\nethane", fr.len()).unwrap();
        for (e, p) in fr {
            writeln!(s, "{e} {:.9} {:.9} {:.9}", p[0], p[1], p[2]).unwrap();
        }
    }
    write(dir, "ethane.xyz", &s)
}

#[test]
fn dcd_gives_the_same_averages_as_the_same_frames_in_xyz() {
    let dir = tmp_dir("dcd");
    let xyz = ethane_xyz_from_reference(&dir);
    let src = TrajectorySource::dcd(
        &dcd_dir().join("ethane.pdb"),
        None,
        vec![dcd_dir().join("ethane_cell.dcd")],
    )
    .unwrap();
    assert_eq!(src.frames_hint(), Some(6));
    let mut calls = Vec::new();
    let d = analyse(src, &TrajectoryOptions::default(), &mut |n| calls.push(n)).unwrap();
    assert_eq!(calls, vec![6]);
    let x = run(vec![xyz], &TrajectoryOptions::default()).unwrap();
    assert_eq!(d.frames_used, 6);
    assert_eq!(x.frames_used, 6);
    assert_eq!(d.couplings.len(), 1);
    assert!(d.couplings[0].rotor_averaged);
    assert_eq!(d.couplings.len(), x.couplings.len());
    for (a, b) in d.couplings.iter().zip(&x.couplings) {
        assert!((a.blocking.mean - b.blocking.mean).abs() < 1e-6);
        assert!((a.min_hz - b.min_hz).abs() < 1e-6);
        assert!((a.max_hz - b.max_hz).abs() < 1e-6);
    }
}

#[test]
fn truncated_and_mismatched_trajectories_give_clear_errors() {
    let dir = tmp_dir("errors");
    let file = butane_file(&dir);
    let text = std::fs::read_to_string(&file).unwrap();
    // Cut in the middle of frame 3.
    let cut: String = text.lines().take(16 * 2 + 7).collect::<Vec<_>>().join("\n") + "\n";
    let t = write(&dir, "cut.xyz", &cut);
    let e = run(vec![t], &TrajectoryOptions::default())
        .unwrap_err()
        .to_string();
    assert!(e.contains("cut.xyz"), "{e}");
    // Frame 4 with a different element: named by its index.
    let mut lines: Vec<String> = text.lines().map(String::from).collect();
    lines[16 * 3 + 2 + 5] = lines[16 * 3 + 2 + 5].replacen('H', "F", 1);
    let m = write(&dir, "mismatch.xyz", &(lines.join("\n") + "\n"));
    let e = run(vec![m], &TrajectoryOptions::default())
        .unwrap_err()
        .to_string();
    assert!(e.contains("conformer 4") && e.contains("atom 6"), "{e}");
    // A DCD cut inside its last frame.
    let data = std::fs::read(dcd_dir().join("ethane_cell.dcd")).unwrap();
    let short = dir.join("short.dcd");
    std::fs::write(&short, &data[..data.len() - 20]).unwrap();
    let src = TrajectorySource::dcd(&dcd_dir().join("ethane.pdb"), None, vec![short]).unwrap();
    let e = analyse(src, &TrajectoryOptions::default(), &mut |_| {})
        .unwrap_err()
        .to_string();
    assert!(e.contains("short.dcd") && e.contains("truncated"), "{e}");
    // A DCD whose atoms are not the topology's: refused before any frame.
    let butane_pdb = {
        let mut s = String::new();
        for (i, (el, p)) in butane(PI).iter().enumerate() {
            writeln!(
                s,
                "HETATM{:>5} {:<4} BUT A   1    {:8.3}{:8.3}{:8.3}  1.00  0.00          {:>2}",
                i + 1,
                format!("{el}{}", i + 1),
                p.x,
                p.y,
                p.z,
                el
            )
            .unwrap();
        }
        s.push_str("END\n");
        write(&dir, "butane.pdb", &s)
    };
    let e = TrajectorySource::dcd(&butane_pdb, None, vec![dcd_dir().join("ethane_cell.dcd")])
        .err()
        .unwrap()
        .to_string();
    assert!(e.contains("ethane_cell.dcd"), "{e}");
}

#[test]
fn reports_render_without_nan_and_carry_the_caution() {
    use vicinal::report::trajectory as rep;
    let dir = tmp_dir("report");
    let file = butane_file(&dir);
    let opts = TrajectoryOptions {
        timestep_ps: Some(0.5),
        ..TrajectoryOptions::default()
    };
    let r = run(vec![file], &opts).unwrap();
    assert!(!r.checkpoints.is_empty());
    assert_eq!(r.checkpoints.last().unwrap().frames, 30);
    let mut t = Vec::new();
    rep::write_table(&mut t, &r).unwrap();
    let t = String::from_utf8(t).unwrap();
    assert!(t.contains(vicinal::report::CAUTION));
    assert!(t.contains("mean Hz") && t.contains("tau_int ps") && t.contains("occupancy %"));
    let mut c = Vec::new();
    rep::write_csv(&mut c, &r).unwrap();
    let c = String::from_utf8(c).unwrap();
    assert_eq!(c.lines().count(), r.couplings.len() + 1);
    let mut sc = Vec::new();
    rep::write_states_csv(&mut sc, &r).unwrap();
    let mut j = Vec::new();
    rep::write_json(&mut j, &r).unwrap();
    let v: serde_json::Value = serde_json::from_slice(&j).unwrap();
    assert_eq!(v["frames_used"], 30);
    assert!(v["caution"].as_str().is_some());
    let svg = rep::plot_running_averages(&r, &[0]);
    assert!(svg.starts_with("<svg") && svg.contains("polyline"));
    for text in [
        &t,
        &c,
        &String::from_utf8(sc).unwrap(),
        &String::from_utf8(j).unwrap(),
        &svg,
    ] {
        assert!(!text.contains("NaN") && !text.contains("inf"), "{text}");
    }
}
