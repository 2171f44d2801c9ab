//! End-to-end tests of the `vicinal` binary on the files shipped in
//! `examples/` and `tests/data/`: the README's main-job command, the three
//! output forms agreeing with each other, weighting options, the atom
//! listing, the curve command, and one-line errors with a non-zero exit.

use std::path::PathBuf;
use std::process::{Command, Output};

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn vicinal(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_vicinal"))
        .args(args)
        .current_dir(root())
        .output()
        .expect("the vicinal binary runs")
}

fn ok(args: &[&str]) -> String {
    let out = vicinal(args);
    assert!(
        out.status.success(),
        "vicinal {args:?} failed: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout).unwrap()
}

fn fails(args: &[&str]) -> String {
    let out = vicinal(args);
    assert!(!out.status.success(), "vicinal {args:?} should fail");
    let err = String::from_utf8(out.stderr).unwrap();
    assert_eq!(
        err.lines().count(),
        1,
        "one-line error expected, got: {err}"
    );
    assert!(err.starts_with("vicinal: error: "), "{err}");
    err
}

fn tmp(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("vicinal-cli-{}", std::process::id()));
    std::fs::create_dir_all(&d).unwrap();
    d.join(name)
}

/// The README's main-job command, on the shipped demo.
#[test]
fn readme_main_job_runs() {
    let out = ok(&["predict", "examples/megal.sdf"]);
    assert!(out.contains("Ensemble: 4 conformer(s) of C7H14O6 (27 atoms)"));
    assert!(out.contains("Boltzmann at 298.15 K"));
    assert!(out.contains("stenutz-2002"));
    assert!(out.contains("hla-4sub"));
    assert!(out.contains("chair"));
    assert!(out.contains("Caution: predicted couplings are model estimates"));
}

#[derive(Debug, serde::Deserialize)]
struct JsonCoupling {
    atoms1: Vec<usize>,
    atoms2: Vec<usize>,
    kind: String,
    model: String,
    j_hz: Vec<f64>,
    j_mean_hz: f64,
    dihedral_deg: Vec<Vec<f64>>,
}

#[derive(Debug, serde::Deserialize)]
struct JsonConformer {
    population: f64,
}

#[derive(Debug, serde::Deserialize)]
struct JsonReport {
    caution: String,
    conformers: Vec<JsonConformer>,
    couplings: Vec<JsonCoupling>,
}

/// CSV and JSON parse back and agree with each other and with the table.
#[test]
fn csv_json_and_table_agree() {
    let table = ok(&["predict", "examples/cis2mech.sdf"]);
    let json: JsonReport =
        serde_json::from_str(&ok(&["predict", "examples/cis2mech.sdf", "--as", "json"])).unwrap();
    let csv_text = ok(&["predict", "examples/cis2mech.sdf", "--as", "csv"]);
    let mut rdr = csv::Reader::from_reader(csv_text.as_bytes());
    let headers = rdr.headers().unwrap().clone();
    let col = |name: &str| headers.iter().position(|h| h == name).unwrap();
    let rows: Vec<csv::StringRecord> = rdr.records().map(|r| r.unwrap()).collect();
    assert_eq!(rows.len(), json.couplings.len());
    assert!(json.caution.contains("model estimates"));
    let total: f64 = json.conformers.iter().map(|c| c.population).sum();
    assert!((total - 1.0).abs() < 1e-12);
    for (r, c) in rows.iter().zip(&json.couplings) {
        let mean: f64 = r[col("j_mean_hz")].parse().unwrap();
        assert!((mean - c.j_mean_hz).abs() < 1e-4);
        assert_eq!(r[col("kind")], c.kind);
        assert_eq!(r[col("model")], c.model);
        let a1: Vec<usize> = r[col("atoms1")]
            .split(';')
            .map(|s| s.parse().unwrap())
            .collect();
        assert_eq!(a1, c.atoms1);
        // Per-conformer J agree, and the mean is the population-weighted one.
        let mut m = 0.0;
        for (k, (j, conf)) in c.j_hz.iter().zip(&json.conformers).enumerate() {
            let jc: f64 = r[col(&format!("j_hz_{}", k + 1))].parse().unwrap();
            assert!((jc - j).abs() < 1e-4);
            m += conf.population * j;
        }
        assert!((m - c.j_mean_hz).abs() < 1e-9);
        assert_eq!(c.dihedral_deg.len(), c.j_hz.len());
        // The table shows the same mean to 0.01 Hz on the pair's row.
        let mut label = c
            .atoms1
            .iter()
            .map(|i| format!("H{i}"))
            .collect::<Vec<_>>()
            .join("/");
        if c.atoms1.len() > 1 {
            label.push_str("(rotor)");
        }
        label.push('-');
        let line = table
            .lines()
            .find(|l| {
                l.trim_start().starts_with(&label)
                    && l.contains(&format!("H{}", c.atoms2[0]))
                    && l.contains(&c.model)
            })
            .unwrap_or_else(|| panic!("no table row for {label}"));
        assert!(line.contains(&format!("{:.2}", c.j_mean_hz)), "{line}");
    }
}

/// A rigid ensemble (the same conformer three times) averages to its own
/// couplings with zero spread.
#[test]
fn rigid_ensemble_averages_to_itself() {
    let frames = vicinal::io::read_all(
        &root().join("examples/megal.xyz"),
        None,
        &Default::default(),
    )
    .unwrap();
    let f = tmp("rigid.xyz");
    let mut text = Vec::new();
    for _ in 0..3 {
        vicinal::io::xyz::write_frame(&mut text, &frames[0]).unwrap();
    }
    std::fs::write(&f, text).unwrap();
    let single = tmp("single.xyz");
    let mut one = Vec::new();
    vicinal::io::xyz::write_frame(&mut one, &frames[0]).unwrap();
    std::fs::write(&single, one).unwrap();
    let three: JsonReport = serde_json::from_str(&ok(&[
        "predict",
        f.to_str().unwrap(),
        "--weights",
        "equal",
        "--as",
        "json",
    ]))
    .unwrap();
    let solo: JsonReport = serde_json::from_str(&ok(&[
        "predict",
        single.to_str().unwrap(),
        "--weights",
        "equal",
        "--as",
        "json",
    ]))
    .unwrap();
    assert_eq!(three.couplings.len(), solo.couplings.len());
    for (a, b) in three.couplings.iter().zip(&solo.couplings) {
        assert!((a.j_mean_hz - b.j_mean_hz).abs() < 1e-12);
        assert!(a.j_hz.iter().all(|j| (j - b.j_hz[0]).abs() < 1e-12));
    }
}

#[test]
fn weighting_options() {
    // Boltzmann needs energies: the XYZ demo has them only under a key.
    let e = fails(&["predict", "examples/megal.xyz"]);
    assert!(e.contains("needs an energy for every conformer"), "{e}");
    let with_key = ok(&[
        "predict",
        "examples/megal.xyz",
        "--energy-key",
        "energy",
        "--as",
        "json",
    ]);
    let sdf = ok(&["predict", "examples/megal.sdf", "--as", "json"]);
    let a: JsonReport = serde_json::from_str(&with_key).unwrap();
    let b: JsonReport = serde_json::from_str(&sdf).unwrap();
    for (x, y) in a.conformers.iter().zip(&b.conformers) {
        assert!((x.population - y.population).abs() < 1e-6);
    }
    // A window of 1 kcal/mol keeps only the lowest conformer of megal.
    let w: JsonReport = serde_json::from_str(&ok(&[
        "predict",
        "examples/megal.sdf",
        "--window",
        "1",
        "--as",
        "json",
    ]))
    .unwrap();
    assert!((w.conformers[0].population - 1.0).abs() < 1e-12);
    assert!(w.conformers[1..].iter().all(|c| c.population == 0.0));
    // User populations from a CSV.
    let pop = tmp("pop.csv");
    std::fs::write(&pop, "conformer,population\n1,1\n2,1\n3,1\n4,1\n").unwrap();
    let u: JsonReport = serde_json::from_str(&ok(&[
        "predict",
        "examples/megal.sdf",
        "--weights",
        pop.to_str().unwrap(),
        "--as",
        "json",
    ]))
    .unwrap();
    assert!(u
        .conformers
        .iter()
        .all(|c| (c.population - 0.25).abs() < 1e-12));
    // kJ/mol reading of the same numbers gives flatter populations.
    let kj: JsonReport = serde_json::from_str(&ok(&[
        "predict",
        "examples/megal.sdf",
        "--energy-unit",
        "kJ/mol",
        "--as",
        "json",
    ]))
    .unwrap();
    assert!(kj.conformers[0].population < b.conformers[0].population);
    let e = fails(&["predict", "examples/megal.sdf", "--energy-unit", "furlongs"]);
    assert!(e.contains("unknown energy unit"));
}

#[test]
fn standard_input_and_format_flag() {
    let text = std::fs::read(root().join("examples/cis2mech.sdf")).unwrap();
    let mut child = Command::new(env!("CARGO_BIN_EXE_vicinal"))
        .args(["atoms", "-", "--input-format", "sdf"])
        .current_dir(root())
        .stdin(std::process::Stdio::piped())
        .stdout(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    use std::io::Write;
    child.stdin.take().unwrap().write_all(&text).unwrap();
    let out = child.wait_with_output().unwrap();
    assert!(out.status.success());
    let s = String::from_utf8(out.stdout).unwrap();
    assert!(s.contains("Vicinal pairs"));
    let e = fails(&["atoms", "-"]);
    assert!(e.contains("--input-format"));
}

#[test]
fn atoms_listing() {
    let out = ok(&["atoms", "examples/cis2mech.sdf"]);
    assert!(out.contains("Atoms (22; bonds as written in the file)"));
    assert!(out.contains("ring 1: 6-membered"));
    assert!(out.contains("methyl"));
    let json: serde_json::Value =
        serde_json::from_str(&ok(&["atoms", "examples/cis2mech.sdf", "--as", "json"])).unwrap();
    let pairs = json["pairs"].as_array().unwrap();
    assert!(!pairs.is_empty());
    // Every pair's path is H-X-Y-H with 1-based indices into the atom list.
    let atoms = json["atoms"].as_array().unwrap();
    for p in pairs {
        let path: Vec<usize> = p["path"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_u64().unwrap() as usize)
            .collect();
        assert_eq!(atoms[path[0] - 1]["element"], "H");
        assert_eq!(atoms[path[3] - 1]["element"], "H");
    }
}

/// Karplus 1959 (J. Chem. Phys. 30, 11): 8.5 cos²φ − 0.28 for 0–90°,
/// 9.5 cos²φ − 0.28 for 90–180°, so 8.22 Hz at 0° and 9.22 Hz at 180°.
#[test]
fn curve_command_tabulates_and_plots() {
    let csv_path = tmp("k59.csv");
    let svg_path = tmp("k59.svg");
    ok(&[
        "curve",
        "--model",
        "karplus-1959",
        "--step",
        "90",
        "--csv",
        csv_path.to_str().unwrap(),
        "--svg",
        svg_path.to_str().unwrap(),
    ]);
    let text = std::fs::read_to_string(&csv_path).unwrap();
    let mut rdr = csv::Reader::from_reader(text.as_bytes());
    let rows: Vec<(f64, f64)> = rdr
        .records()
        .map(|r| {
            let r = r.unwrap();
            (r[0].parse().unwrap(), r[1].parse().unwrap())
        })
        .collect();
    let at = |deg: f64| {
        rows.iter()
            .find(|(d, _)| (*d - deg).abs() < 1e-9)
            .unwrap()
            .1
    };
    assert!((at(0.0) - 8.22).abs() < 1e-9);
    assert!((at(180.0) - 9.22).abs() < 1e-9);
    assert!((at(90.0) + 0.28).abs() < 1e-9);
    let svg = std::fs::read_to_string(&svg_path).unwrap();
    assert!(svg.starts_with("<svg") || svg.starts_with("<?xml"));
    assert!(svg.contains("dihedral angle (degrees)"));
    assert!(svg.contains("(Hz)"));
    // An HLA curve with substituents needs their orientation sign.
    let e = fails(&["curve", "--model", "hla-2sub", "--subst", "O"]);
    assert!(e.contains("orientation sign"));
    ok(&[
        "curve", "--model", "hla-2sub", "--subst", "O+", "--subst", "C-:O",
    ]);
    ok(&["models"]);
}

/// Bad input gives a one-line error naming the file and line, and a
/// non-zero exit, never a panic.
#[test]
fn malformed_input_through_the_binary() {
    let cases = [
        ("tests/data/malformed/truncated.xyz", "truncated.xyz:"),
        ("tests/data/malformed/nan.xyz", "nan.xyz:"),
        (
            "tests/data/malformed/unknown_element.xyz",
            "unknown element",
        ),
        ("tests/data/malformed/empty.xyz", "empty"),
        ("tests/data/malformed/sdf_bad_bond.sdf", "sdf_bad_bond.sdf:"),
    ];
    for (file, want) in cases {
        let e = fails(&["predict", file, "--weights", "equal"]);
        assert!(e.contains(want), "{file}: {e}");
    }
    let e = fails(&["predict", "no/such/file.xyz"]);
    assert!(e.contains("no/such/file.xyz"));
    let e = fails(&["predict", "examples/megal.sdf", "-o", "examples/megal.sdf"]);
    assert!(e.contains("one of the input files"));
}

/// Two files form one ensemble; a conformer of another molecule is refused
/// with its index.
#[test]
fn several_files_one_ensemble() {
    let both: JsonReport = serde_json::from_str(&ok(&[
        "predict",
        "examples/megal.sdf",
        "examples/megal.sdf",
        "--as",
        "json",
    ]))
    .unwrap();
    assert_eq!(both.conformers.len(), 8);
    let e = fails(&["predict", "examples/megal.sdf", "examples/cis2mech.sdf"]);
    assert!(e.contains("conformer 5"), "{e}");
}

/// Hydrogens are needed.
#[test]
fn no_hydrogens_is_refused() {
    let f = tmp("noh.xyz");
    std::fs::write(&f, "6\nbenzene-like ring without H\nC 1.39 0 0\nC 0.695 1.204 0\nC -0.695 1.204 0\nC -1.39 0 0\nC -0.695 -1.204 0\nC 0.695 -1.204 0\n").unwrap();
    let e = fails(&["atoms", f.to_str().unwrap()]);
    assert!(e.contains("hydrogens are needed"), "{e}");
}

/// The trajectory command on the MDTraj-written DCD fixture (tests/reference/make_dcd.py)
/// with its PDB topology, and on the same frames as multi-model PDB, agree.
#[test]
fn trajectory_command_on_dcd_and_errors() {
    let plot = tmp("traj.svg");
    let json: serde_json::Value = serde_json::from_str(&ok(&[
        "trajectory",
        "tests/data/dcd/ethane_cell.dcd",
        "--topology",
        "tests/data/dcd/ethane.pdb",
        "--as",
        "json",
        "--plot",
        plot.to_str().unwrap(),
        "--quiet",
    ]))
    .unwrap();
    assert_eq!(json["frames_used"], 6);
    assert!(std::fs::read_to_string(&plot).unwrap().contains("<svg"));
    let table = ok(&[
        "trajectory",
        "tests/data/dcd/ethane_cell.dcd",
        "--topology",
        "tests/data/dcd/ethane.pdb",
    ]);
    assert!(table.contains("Caution: predicted couplings are model estimates"));
    let e = fails(&["trajectory", "tests/data/dcd/ethane_cell.dcd"]);
    assert!(e.contains("--topology"), "{e}");
    let e = fails(&[
        "trajectory",
        "tests/data/malformed/truncated.xyz",
        "--quiet",
    ]);
    assert!(e.contains("truncated.xyz"), "{e}");
}
