//! `vicinal fit` end to end: the binary on files under `examples/` and
//! `tests/data/fit/`, and on observation files written by the tests from
//! chosen populations (synthetic round trips).

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use serde_json::Value;
use vicinal::fit::rng::Xoshiro256StarStar;

fn root(rel: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join(rel)
}

fn tmp(name: &str) -> PathBuf {
    Path::new(env!("CARGO_TARGET_TMPDIR")).join(format!("fit_cli_{name}"))
}

fn run(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_vicinal"))
        .arg("fit")
        .args(args)
        .output()
        .expect("the binary runs")
}

fn ok_json(args: &[&str]) -> Value {
    let mut a = args.to_vec();
    a.extend(["--as", "json"]);
    let out = run(&a);
    assert!(
        out.status.success(),
        "vicinal {args:?} failed: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).expect("valid JSON")
}

fn fails(args: &[&str]) -> String {
    let out = run(args);
    assert!(!out.status.success(), "vicinal {args:?} should fail");
    String::from_utf8_lossy(&out.stderr).into_owned()
}

fn num(v: &Value) -> f64 {
    v.as_f64().unwrap_or(f64::NAN)
}

fn populations(v: &Value) -> Vec<f64> {
    v["populations"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| num(&p["value"]))
        .collect()
}

fn megal() -> [String; 3] {
    [
        root("examples/megal.sdf").display().to_string(),
        "--energy-key".into(),
        "MMFF94_energy_kcal_mol".into(),
    ]
}

/// Predicted couplings of every state (rows: observations of `obs`) and the
/// observation rows of a first fit, for building synthetic observations.
fn design(ensemble: &[String], obs: &Path, extra: &[&str]) -> (Vec<Vec<f64>>, Value) {
    let mut a: Vec<&str> = ensemble.iter().map(String::as_str).collect();
    let o = obs.display().to_string();
    a.extend(["--observed", o.as_str(), "--mc", "0", "--fit-anyway"]);
    a.extend(extra);
    let v = ok_json(&a);
    let states: Vec<Vec<f64>> = v["states"]
        .as_array()
        .unwrap()
        .iter()
        .map(|s| {
            s["predicted_hz"]
                .as_array()
                .unwrap()
                .iter()
                .map(num)
                .collect()
        })
        .collect();
    (states, v)
}

fn write_obs(path: &Path, header: &str, rows: &[String]) {
    let mut s = format!("# synthetic, written by tests/fit_cli.rs\n{header}\n");
    for r in rows {
        s.push_str(r);
        s.push('\n');
    }
    std::fs::write(path, s).unwrap();
}

/// Atom pairs of the six megal observations (examples/megal_observed.csv).
const MEGAL_PAIRS: [(u32, u32); 6] = [(17, 26), (26, 24), (24, 22), (22, 18), (18, 19), (18, 20)];

#[test]
fn hydroxymethyl_populations_of_methyl_glucoside() {
    // Stenutz, Carmichael, Widmalm & Serianni, J. Org. Chem. 67, 949 (2002):
    // methyl alpha-D-glucopyranoside J5,6R 5.49, J5,6S 2.39 Hz -> gg/gt/tg
    // 42/47/10 %. Three staggered rotamers built with RDKit
    // (tests/reference/glucoside_rotamers.py); 2 couplings + the sum rule fix
    // the 3 populations exactly. With the authors' limiting omega
    // (-65/65/180 deg) the published numbers come back within 1.5 %; with
    // ideal staggered rotamers (-60/60/180 deg) within 6 % (tg is the most
    // sensitive: the limiting couplings move with omega).
    let obs = root("tests/data/fit/glucoside_observed.csv")
        .display()
        .to_string();
    for (file, tol) in [
        ("tests/data/fit/glucoside_rotamers_65.sdf", 0.015),
        ("tests/data/fit/glucoside_rotamers.sdf", 0.06),
    ] {
        let f = root(file).display().to_string();
        let v = ok_json(&[&f, "--observed", &obs, "--weights", "equal"]);
        let p = populations(&v);
        for (got, want) in p.iter().zip([0.42, 0.47, 0.10]) {
            assert!((got - want).abs() < tol, "{file}: {p:?}");
        }
        assert!(num(&v["result"]["quality"]["chi2"]) < 1e-12);
    }
}

#[test]
fn exact_recovery_without_noise_and_round_trip_with_noise() {
    let ens = megal();
    let obs0 = root("examples/megal_observed.csv");
    let (a, _) = design(&ens, &obs0, &[]);
    let truth = [0.5, 0.3, 0.2, 0.0];
    let y: Vec<f64> = (0..MEGAL_PAIRS.len())
        .map(|k| (0..4).map(|i| truth[i] * a[i][k]).sum())
        .collect();
    // No noise: the populations come back exactly.
    let path = tmp("megal_exact.csv");
    let rows: Vec<String> = MEGAL_PAIRS
        .iter()
        .zip(&y)
        .map(|((p, q), j)| format!("{p},{q},{j:.12}"))
        .collect();
    write_obs(&path, "atom1,atom2,j_hz", &rows);
    let mut args: Vec<&str> = ens.iter().map(String::as_str).collect();
    let ps = path.display().to_string();
    args.extend(["--observed", ps.as_str()]);
    let v = ok_json(&args);
    for (got, want) in populations(&v).iter().zip(truth) {
        assert!((got - want).abs() < 1e-6, "{got} vs {want}");
    }
    // Seeded noise at the stated sigma (0.2 Hz measurement, model error 0):
    // every population's truth lies inside its reported 95 % interval.
    let mut hits = 0;
    let mut total = 0;
    for seed in 0..8u64 {
        let mut rng = Xoshiro256StarStar::seed_from_u64(1000 + seed);
        let rows: Vec<String> = MEGAL_PAIRS
            .iter()
            .zip(&y)
            .map(|((p, q), j)| format!("{p},{q},{:.6},0.2", j + 0.2 * rng.next_normal()))
            .collect();
        let path = tmp(&format!("megal_noise_{seed}.csv"));
        write_obs(&path, "atom1,atom2,j_hz,sigma_hz", &rows);
        let ps = path.display().to_string();
        let mut args: Vec<&str> = ens.iter().map(String::as_str).collect();
        args.extend([
            "--observed",
            ps.as_str(),
            "--model-error",
            "0",
            "--mc",
            "400",
        ]);
        let v = ok_json(&args);
        for (p, want) in v["populations"].as_array().unwrap().iter().zip(truth) {
            let iv = p["interval_95"].as_array().unwrap();
            total += 1;
            if num(&iv[0]) - 1e-9 <= want && want <= num(&iv[1]) + 1e-9 {
                hits += 1;
            }
        }
    }
    // 32 intervals at 95 %: expect about 30; allow a few misses.
    assert!(hits >= 28, "{hits} of {total} intervals hold the truth");
}

#[test]
fn two_state_delta_g_against_closed_form() {
    // Closed form of a two-state fit (common practice, linear least squares
    // in one variable): x = sum(d r)/sum(d^2), d = (a1 - a2)/sigma,
    // r = (y - a2)/sigma; dG = -RT ln(x/(1-x)), R = 8.314462618 J/(mol K).
    let cis = root("examples/cis2mech.sdf").display().to_string();
    let obs = root("tests/data/fit/cis2mech_either.csv")
        .display()
        .to_string();
    let v = ok_json(&[
        &cis,
        "--energy-key",
        "MMFF94_energy_kcal_mol",
        "--observed",
        &obs,
        "--groups",
        "ring-theta",
        "--populations",
        "two-state",
        "-T",
        "250",
    ]);
    let a1: Vec<f64> = v["states"][0]["predicted_hz"]
        .as_array()
        .unwrap()
        .iter()
        .map(num)
        .collect();
    let a2: Vec<f64> = v["states"][1]["predicted_hz"]
        .as_array()
        .unwrap()
        .iter()
        .map(num)
        .collect();
    let (mut dd, mut dr) = (0.0, 0.0);
    for (k, o) in v["observations"].as_array().unwrap().iter().enumerate() {
        let s = num(&o["sigma_hz"]);
        let d = (a1[k] - a2[k]) / s;
        dd += d * d;
        dr += d * (num(&o["observed_hz"]) - a2[k]) / s;
    }
    let x = dr / dd;
    assert!(x > 0.0 && x < 1.0);
    let dg = -8.314_462_618 * 250.0 * (x / (1.0 - x)).ln() / 4184.0;
    let r = &v["result"];
    assert!((num(&r["fraction"]) - x).abs() < 1e-9);
    assert!((num(&r["thermo"]["delta_g_kcal_per_mol"]) - dg).abs() < 1e-9);
    assert_eq!(num(&r["temperature_k"]), 250.0);
    // The demo's C6 protons sit the other way round from the invented
    // values: the data prefer the exchanged assignment.
    let asg = &v["assignments"];
    assert_eq!(asg["trials"].as_array().unwrap().len(), 2);
    assert_eq!(asg["trials"][0]["swapped"][0], Value::Bool(true));
    assert_eq!(asg["clear_preference"], Value::Bool(true));
}

#[test]
fn van_t_hoff_on_synthetic_series() {
    let cis = root("examples/cis2mech.sdf").display().to_string();
    let ens = [cis, "--weights".to_string(), "equal".to_string()];
    let obs0 = root("examples/cis2mech_observed.csv");
    let (a, _) = design(&ens, &obs0, &[]);
    let pairs = [(21, 12), (21, 19), (21, 20), (12, 13), (12, 14)];
    // dH = -0.8 kcal/mol, dS = -1.0 cal/(mol K) for conformer 1 against 2.
    let (dh, ds) = (-0.8, -1.0);
    let frac = |t: f64| {
        let rt = 8.314_462_618 * t / 4184.0;
        1.0 / (1.0 + ((dh - t * ds / 1000.0) / rt).exp())
    };
    for (noise, tol_se) in [(false, 0.0), (true, 3.0)] {
        let mut rng = Xoshiro256StarStar::seed_from_u64(77);
        let mut rows = Vec::new();
        for t in [220.0, 250.0, 280.0, 310.0, 340.0] {
            let x = frac(t);
            for (k, (p, q)) in pairs.iter().enumerate() {
                let j = x * a[0][k] + (1.0 - x) * a[1][k];
                let e = if noise { 0.1 * rng.next_normal() } else { 0.0 };
                rows.push(format!("{p},{q},{:.9},0.1,{t}", j + e));
            }
        }
        let path = tmp(&format!("vth_{noise}.csv"));
        write_obs(&path, "atom1,atom2,j_hz,sigma_hz,temperature_k", &rows);
        let ps = path.display().to_string();
        let mut args: Vec<&str> = ens.iter().map(String::as_str).collect();
        args.extend([
            "--observed",
            &ps,
            "--populations",
            "van-t-hoff",
            "--model-error",
            "0",
        ]);
        let v = ok_json(&args);
        let r = &v["result"];
        let (h, s) = (
            num(&r["delta_h_kcal_per_mol"]),
            num(&r["delta_s_cal_per_mol_k"]),
        );
        if noise {
            let (hs, ss) = (num(&r["delta_h_std_err"]), num(&r["delta_s_std_err"]));
            assert!((h - dh).abs() < tol_se * hs, "dH {h} +- {hs}");
            assert!((s - ds).abs() < tol_se * ss, "dS {s} +- {ss}");
            assert!(num(&r["correlation"]).abs() > 0.5);
        } else {
            assert!((h - dh).abs() < 1e-5, "{h}");
            assert!((s - ds).abs() < 1e-4, "{s}");
        }
    }
    // Several temperatures without the van 't Hoff model: refused.
    let ps = tmp("vth_true.csv").display().to_string();
    let mut args: Vec<&str> = ens.iter().map(String::as_str).collect();
    args.extend(["--observed", &ps]);
    assert!(fails(&args).contains("several temperatures"));
}

#[test]
fn underdetermined_fit_is_refused_with_advice() {
    let ens = megal();
    let path = tmp("megal_two.csv");
    write_obs(
        &path,
        "atom1,atom2,j_hz",
        &["18,19,7.6".into(), "18,20,4.6".into()],
    );
    let ps = path.display().to_string();
    let mut args: Vec<&str> = ens.iter().map(String::as_str).collect();
    args.extend(["--observed", ps.as_str()]);
    let e = fails(&args);
    assert!(
        e.contains("4 populations cannot be fixed by 2 couplings"),
        "{e}"
    );
    assert!(
        e.contains("--populations reweight") && e.contains("--groups"),
        "{e}"
    );
    // Asked to, it fits anyway and says so.
    args.push("--fit-anyway");
    let v = ok_json(&args);
    let f: Vec<String> = v["findings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|x| x[1].as_str().unwrap_or("").to_string())
        .collect();
    assert!(f.iter().any(|m| m.contains("cannot be fixed")), "{f:?}");
    // Minimal reweighting needs no such count.
    let mut args: Vec<&str> = ens.iter().map(String::as_str).collect();
    args.extend(["--observed", ps.as_str(), "--populations", "reweight"]);
    let v = ok_json(&args);
    let w: f64 = populations(&v).iter().sum();
    assert!((w - 1.0).abs() < 1e-9);
}

#[test]
fn degenerate_states_are_refused() {
    // Conformer 1 of the demo twice, then conformer 2: states 1 and 2
    // predict identical couplings.
    let text = std::fs::read_to_string(root("examples/cis2mech.sdf")).unwrap();
    let recs: Vec<&str> = text.split_inclusive("$$$$\n").collect();
    assert!(recs.len() >= 2);
    let path = tmp("cis_dup.sdf");
    std::fs::write(&path, format!("{}{}{}", recs[0], recs[0], recs[1])).unwrap();
    let ps = path.display().to_string();
    let obs = root("tests/data/fit/cis2mech_either.csv")
        .display()
        .to_string();
    let base = [
        ps.as_str(),
        "--observed",
        obs.as_str(),
        "--weights",
        "equal",
    ];
    let e = fails(&base);
    assert!(
        e.contains("conformer 1 and conformer 2 predict the same couplings"),
        "{e}"
    );
    // Grouping the two copies resolves it.
    let mut args = base.to_vec();
    args.extend(["--groups", "1-2,3"]);
    let v = ok_json(&args);
    assert_eq!(v["states"].as_array().unwrap().len(), 2);
    // A two-state fit of two identical states is refused too.
    let mut args = base.to_vec();
    args.extend(["--groups", "1,2", "--populations", "two-state"]);
    assert!(fails(&args).contains("a two-state fraction would mean nothing"));
}

#[test]
fn unknown_pair_lists_nearest_and_plots_are_written() {
    let ens = megal();
    let path = tmp("megal_bad.csv");
    write_obs(&path, "atom1,atom2,j_hz", &["17,24,7.9".into()]);
    let ps = path.display().to_string();
    let mut args: Vec<&str> = ens.iter().map(String::as_str).collect();
    args.extend(["--observed", ps.as_str()]);
    let e = fails(&args);
    assert!(
        e.contains("is not a vicinal pair") && e.contains("nearest pairs"),
        "{e}"
    );

    let obs = root("examples/megal_observed.csv").display().to_string();
    let (p1, p2) = (tmp("c.svg"), tmp("p.svg"));
    let (s1, s2) = (p1.display().to_string(), p2.display().to_string());
    let mut args: Vec<&str> = ens.iter().map(String::as_str).collect();
    args.extend(["--observed", &obs, "--plot", &s1, "--plot-populations", &s2]);
    let out = run(&args);
    assert!(out.status.success());
    let table = String::from_utf8_lossy(&out.stdout);
    assert!(table.contains("Caution:") && table.contains("p-value"));
    let c = std::fs::read_to_string(&p1).unwrap();
    assert!(c.starts_with("<svg") && c.contains("observed 3J(H,H) (Hz)"));
    assert!(c.contains("fitted 3J(H,H) (Hz)"));
    let p = std::fs::read_to_string(&p2).unwrap();
    assert!(p.contains("population (%)"));
}

#[test]
fn csv_is_long_form_and_monte_carlo_is_seeded() {
    let ens = megal();
    let obs = root("examples/megal_observed.csv").display().to_string();
    let mut args: Vec<&str> = ens.iter().map(String::as_str).collect();
    args.extend([
        "--observed",
        &obs,
        "--as",
        "csv",
        "--seed",
        "5",
        "--mc",
        "200",
    ]);
    let a = run(&args);
    let b = run(&args);
    assert!(a.status.success());
    assert_eq!(a.stdout, b.stdout);
    let text = String::from_utf8_lossy(&a.stdout);
    assert!(text.starts_with("section,item,quantity,value,unit\n"));
    assert!(text.contains("fit,free,chi2,"));
    assert!(text.contains("monte_carlo,,seed,5,"));
}
