//! `vicinal rank`, `assign` and `check` run as a user would, on RDKit-made
//! ensembles of cis- and trans-4-tert-butylcyclohexan-1-ol
//! (tests/reference/tbch_ensembles.py: RDKit 2026.09.1 ETKDGv3 + MMFF94).
//!
//! Observed couplings of H1 (tests/data/tbch/*_observed.csv), from memory:
//! the classic textbook values for this pair, which we could not confirm
//! against a published source from here — trans (H1 axial): a triplet of
//! triplets, J = 11.1 Hz to the two axial H2/H6 and 4.3 Hz to the two
//! equatorial ones; cis (H1 equatorial): only small couplings, about 2.8 Hz
//! (W½ ≈ 7–8 Hz). The accepted assignment (common practice: the
//! tert-butyl group locks the chair with itself equatorial) is H1 axial in
//! trans, equatorial in cis.

use std::path::{Path, PathBuf};
use std::process::Command;

fn data(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data/tbch")
        .join(name)
}

fn run(args: &[&str]) -> (bool, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_vicinal"))
        .args(args)
        .output()
        .expect("the vicinal binary runs");
    (
        out.status.success(),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn p(name: &str) -> String {
    data(name).to_string_lossy().into_owned()
}

fn json(args: &[&str]) -> serde_json::Value {
    let (ok, out, err) = run(args);
    assert!(ok, "vicinal {args:?} failed: {err}");
    serde_json::from_str(&out).expect("valid JSON")
}

fn probability(v: &serde_json::Value, name: &str) -> f64 {
    v["candidates"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["name"] == name)
        .unwrap()["boltzmann"]["probability"]
        .as_f64()
        .unwrap()
}

fn rank_json(observed: &str) -> serde_json::Value {
    json(&[
        "rank",
        &p("trans.sdf"),
        &p("cis.sdf"),
        "--observed",
        &p(observed),
        "--as",
        "json",
    ])
}

fn h1_verdict(ensemble: &str, observed: &str) -> serde_json::Value {
    let v = json(&[
        "assign",
        &p(ensemble),
        "--observed",
        &p(observed),
        "--proton",
        "H1",
        "--as",
        "json",
    ]);
    v["protons"][0].clone()
}

#[test]
fn trans_observations_pick_trans() {
    let v = rank_json("trans_h1_observed.csv");
    let pt = probability(&v, "trans");
    eprintln!("P(trans | trans data) = {pt}");
    assert!(pt > 0.9, "P(trans) = {pt}");
    assert_eq!(v["decisive"], true);
    assert_eq!(
        v["candidates"][v["winner"].as_u64().unwrap() as usize]["name"],
        "trans"
    );
    // The sensitivity runs keep the winner.
    assert_eq!(v["winner_changes"], false);
    assert!(v["winner_probability_range"][0].as_f64().unwrap() > 0.9);
}

#[test]
fn cis_observations_pick_cis() {
    let v = rank_json("cis_h1_observed.csv");
    let pc = probability(&v, "cis");
    eprintln!("P(cis | cis data) = {pc}");
    assert!(pc > 0.9, "P(cis) = {pc}");
    assert_eq!(v["decisive"], true);
    assert_eq!(v["winner_changes"], false);
}

#[test]
fn h1_is_axial_in_trans_and_equatorial_in_cis() {
    let t = h1_verdict("trans.sdf", "trans_h1_observed.csv");
    assert_eq!(t["verdict"], "axial", "{t}");
    assert!(t["probability_axial"].as_f64().unwrap() > 0.99);
    // The two large couplings carry the decision.
    assert_eq!(t["evidence"][0]["size"], "large");
    assert!(t["evidence"][0]["label"].as_str().unwrap().contains("ax"));
    // 2 x 11.1 + 2 x 4.3 Hz, in the axial range of the rule of thumb.
    assert!((t["sum_j_hz"].as_f64().unwrap() - 30.8).abs() < 1e-9);
    assert!(t["sum_rule"].as_str().unwrap().starts_with("reads axial"));

    let c = h1_verdict("cis.sdf", "cis_h1_observed.csv");
    assert_eq!(c["verdict"], "equatorial", "{c}");
    assert!(c["probability_axial"].as_f64().unwrap() < 0.01);
    assert!(c["reason"]
        .as_str()
        .unwrap()
        .contains("only small or intermediate couplings"));
    assert!(c["sum_rule"]
        .as_str()
        .unwrap()
        .starts_with("reads equatorial"));
}

#[test]
fn couplings_far_from_the_stereocentre_cannot_tell() {
    // H4 couplings are the same in both isomers (tert-butyl equatorial in both).
    let v = rank_json("h4_observed.csv");
    let pt = probability(&v, "trans");
    eprintln!("P(trans | H4 data) = {pt}");
    assert!((0.3..0.7).contains(&pt), "P(trans) = {pt}");
    assert_eq!(v["decisive"], false);
    let (ok, out, _) = run(&[
        "rank",
        &p("trans.sdf"),
        &p("cis.sdf"),
        "--observed",
        &p("h4_observed.csv"),
    ]);
    assert!(ok);
    assert!(out.contains("Verdict: cannot tell"), "{out}");
    assert!(out.trim_end().ends_with(vicinal::report::CAUTION));
}

#[test]
fn a_missing_label_names_candidate_and_label() {
    let (ok, _, err) = run(&[
        "rank",
        &p("trans_noalias.sdf"),
        &p("cis.sdf"),
        "--observed",
        &p("trans_h1_observed.csv"),
    ]);
    assert!(!ok);
    assert!(
        err.contains("candidate 'trans_noalias': label 'H2ax' names no atom"),
        "{err}"
    );
}

#[test]
fn a_doubled_label_names_candidate_and_label() {
    let (ok, _, err) = run(&[
        "rank",
        &p("trans_doubled.sdf"),
        &p("cis.sdf"),
        "--observed",
        &p("trans_h1_observed.csv"),
    ]);
    assert!(!ok);
    assert!(
        err.contains("candidate 'trans_doubled': label 'H1' is doubled"),
        "{err}"
    );
}

#[test]
fn a_mapping_csv_supplies_labels_and_a_missing_entry_is_named() {
    let map = p("trans_noalias_map.csv");
    let labels = format!("t={map}");
    let cand = format!("t={}", p("trans_noalias.sdf"));
    let v = json(&[
        "rank",
        "--candidate",
        &cand,
        &p("cis.sdf"),
        "--observed",
        &p("trans_h1_observed.csv"),
        "--labels",
        &labels,
        "--as",
        "json",
    ]);
    assert!(probability(&v, "t") > 0.9);

    let dir = std::env::temp_dir().join(format!("vicinal-rank-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let short = dir.join("map.csv");
    std::fs::write(&short, "label,atom\nH1,13\nH2eq,15\n").unwrap();
    let labels = format!("t={}", short.display());
    let (ok, _, err) = run(&[
        "rank",
        "--candidate",
        &cand,
        &p("cis.sdf"),
        "--observed",
        &p("trans_h1_observed.csv"),
        "--labels",
        &labels,
    ]);
    assert!(!ok);
    assert!(
        err.contains("candidate 't': label 'H2ax' is missing from the mapping"),
        "{err}"
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn priors_and_error_model_options_change_the_numbers() {
    let a = rank_json("h4_observed.csv");
    let v = json(&[
        "rank",
        &p("trans.sdf"),
        &p("cis.sdf"),
        "--observed",
        &p("h4_observed.csv"),
        "--prior",
        "cis=3",
        "--scale",
        "0.5",
        "--nu",
        "gauss",
        "--as",
        "json",
    ]);
    assert!(probability(&v, "cis") > probability(&a, "cis"));
    assert_eq!(v["error"]["nu"], serde_json::Value::Null);
    assert_eq!(v["error"]["scale_hz"], 0.5);
    let (ok, _, err) = run(&[
        "rank",
        &p("trans.sdf"),
        "--observed",
        &p("h4_observed.csv"),
        "--prior",
        "nosuch=2",
    ]);
    assert!(!ok);
    assert!(err.contains("'nosuch'"), "{err}");
}

#[test]
fn csv_table_plot_and_fitted_populations() {
    let dir = std::env::temp_dir().join(format!("vicinal-rank-plot-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let svg = dir.join("rank.svg");
    let (ok, out, err) = run(&[
        "rank",
        &p("trans.sdf"),
        &p("cis.sdf"),
        "--observed",
        &p("trans_h1_observed.csv"),
        "--fit",
        "--plot",
        svg.to_str().unwrap(),
    ]);
    assert!(ok, "{err}");
    assert!(out.contains("FITTED free populations"));
    assert!(out.contains("Sensitivity to the error model"));
    let s = std::fs::read_to_string(&svg).unwrap();
    assert!(s.starts_with("<svg") || s.starts_with("<?xml"));
    assert!(s.contains("trans (P = "));
    let (ok, out, _) = run(&[
        "rank",
        &p("trans.sdf"),
        &p("cis.sdf"),
        "--observed",
        &p("trans_h1_observed.csv"),
        "--as",
        "csv",
    ]);
    assert!(ok);
    let lines: Vec<&str> = out.lines().collect();
    assert_eq!(lines.len(), 1 + 2 * 4);
    assert!(lines[0].starts_with("candidate,observation,pair,observed_hz"));
    assert!(!out.contains("NaN") && !out.contains("inf"));
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn check_finds_a_single_conformer_or_asks_for_a_mixture() {
    let v = json(&[
        "check",
        &p("cis.sdf"),
        "--observed",
        &p("cis_h1_observed.csv"),
        "--as",
        "json",
    ]);
    assert_eq!(v["verdict"], "single conformer");
    // The failing conformers are the ring-flipped ones (H1 axial).
    let fails = v["conformers"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|c| !c["fails"].as_array().unwrap().is_empty())
        .count();
    assert!(fails >= 6, "{fails}");

    // Invented halfway couplings: no single conformer, but a mixture.
    let v = json(&[
        "check",
        &p("cis.sdf"),
        "--observed",
        &p("cis_mixture_observed.csv"),
        "--as",
        "json",
    ]);
    assert_eq!(v["verdict"], "mixture required", "{}", v["reason"]);

    let (ok, out, _) = run(&[
        "check",
        &p("trans.sdf"),
        "--observed",
        &p("trans_h1_observed.csv"),
    ]);
    assert!(ok);
    assert!(out.contains("Ring-shape families"));
    assert!(out.trim_end().ends_with(vicinal::report::CAUTION));
}

#[test]
fn assign_table_and_csv() {
    let (ok, out, err) = run(&[
        "assign",
        &p("trans.sdf"),
        "--observed",
        &p("trans_h1_observed.csv"),
    ]);
    assert!(ok, "{err}");
    assert!(out.contains("Proton H1 (H13): AXIAL"), "{out}");
    assert!(out.trim_end().ends_with(vicinal::report::CAUTION));
    let (ok, out, _) = run(&[
        "assign",
        &p("cis.sdf"),
        "--observed",
        &p("cis_h1_observed.csv"),
        "--as",
        "csv",
    ]);
    assert!(ok);
    assert!(out.lines().any(|l| l.starts_with("H13,H1,equatorial,")));
    let (ok, _, err) = run(&[
        "assign",
        &p("cis.sdf"),
        "--observed",
        &p("cis_h1_observed.csv"),
        "--proton",
        "HO",
    ]);
    assert!(!ok);
    assert!(err.contains("not a proton on a six-membered ring"), "{err}");
}
