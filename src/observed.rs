//! Measured couplings: reading an observations CSV and matching each row to a
//! predicted coupling of the ensemble.
//!
//! The CSV has a header; `#` lines are comments. Columns (case-insensitive):
//! - `atom1`, `atom2` (required): atom references as `predict` prints them —
//!   a 1-based index, element and index (`H7`), or an atom name. A methyl (or
//!   NH3+) group may be named by any of its protons or by its carbon.
//! - `j_hz` (required): the measured coupling in Hz.
//! - `sigma_hz`: its standard error in Hz (empty: the default measurement error).
//! - `temperature_k`: temperature of the measurement in K (for series).
//! - `signed`: `yes` when the sign of J was measured; otherwise |J| is compared
//!   with |J| predicted.
//! - `either`: two protons of a CH2 whose stereospecific assignment is not
//!   known, as `A/B` (e.g. `H6a/H6b` or `19/20`); fits try both ways round.
//! - `label`: free text carried to the reports.

use std::path::{Path, PathBuf};

use crate::atomref;
use crate::ensemble::predict::Coupling;
use crate::error::{Error, Result};
use crate::topology::Topology;

/// One measured coupling as read.
#[derive(Debug, Clone, PartialEq)]
pub struct Observation {
    /// File it came from.
    pub path: PathBuf,
    /// 1-based line in that file.
    pub line: usize,
    /// First atom reference, as written.
    pub atom1: String,
    /// Second atom reference, as written.
    pub atom2: String,
    /// Measured J in Hz.
    pub j_hz: f64,
    /// Standard error in Hz, if given.
    pub sigma_hz: Option<f64>,
    /// Temperature in K, if given.
    pub temperature_k: Option<f64>,
    /// True when the sign of J was measured.
    pub signed: bool,
    /// Two protons whose assignment may be swapped, as written.
    pub either: Option<(String, String)>,
    /// Free label.
    pub label: String,
}

impl Observation {
    /// `file:line` of the row, for messages.
    pub fn origin(&self) -> String {
        format!("{}:{}", self.path.display(), self.line)
    }
}

fn column(headers: &csv::StringRecord, names: &[&str]) -> Option<usize> {
    headers
        .iter()
        .position(|h| names.iter().any(|n| h.trim().eq_ignore_ascii_case(n)))
}

/// Reads an observations CSV (see the module documentation).
pub fn read_observations(path: &Path) -> Result<Vec<Observation>> {
    let text = std::fs::read_to_string(path).map_err(|e| Error::io(path, e))?;
    parse_observations(&text, path)
}

/// Parses observations from text; `path` names the source in errors.
pub fn parse_observations(text: &str, path: &Path) -> Result<Vec<Observation>> {
    // Comments and blank lines are dropped; `origin` maps the remaining lines
    // back to their line numbers in the file.
    let mut origin = Vec::new();
    let mut kept = Vec::new();
    for (i, l) in text.lines().enumerate() {
        let t = l.trim();
        if t.is_empty() || t.starts_with('#') {
            continue;
        }
        origin.push(i + 1);
        kept.push(l);
    }
    let body = kept.join("\n");
    let mut rdr = csv::ReaderBuilder::new()
        .trim(csv::Trim::All)
        .flexible(true)
        .from_reader(body.as_bytes());
    let headers = rdr
        .headers()
        .map_err(|e| Error::file(path, format!("cannot read the header: {e}")))?
        .clone();
    let need = |names: &[&str], what: &str| {
        column(&headers, names).ok_or_else(|| {
            Error::file(
                path,
                format!("the observations need a '{what}' column (header: atom1,atom2,j_hz[,sigma_hz,temperature_k,signed,either,label])"),
            )
        })
    };
    let c1 = need(&["atom1", "proton1", "a1"], "atom1")?;
    let c2 = need(&["atom2", "proton2", "a2"], "atom2")?;
    let cj = need(&["j_hz", "j", "3j_hz", "j_obs_hz"], "j_hz")?;
    let cs = column(&headers, &["sigma_hz", "sigma", "error_hz", "err_hz"]);
    let ct = column(&headers, &["temperature_k", "t_k", "temperature"]);
    let csg = column(&headers, &["signed"]);
    let ce = column(&headers, &["either", "unassigned"]);
    let cl = column(&headers, &["label", "name", "note"]);
    let mut out = Vec::new();
    for rec in rdr.records() {
        let rec = rec.map_err(|e| Error::file(path, format!("malformed CSV: {e}")))?;
        let line = rec
            .position()
            .and_then(|p| origin.get((p.line() as usize).saturating_sub(1)))
            .copied()
            .unwrap_or(0);
        if rec.iter().all(|f| f.is_empty()) {
            continue;
        }
        let get = |c: usize| rec.get(c).unwrap_or("").trim();
        let num = |c: usize, what: &str| -> Result<f64> {
            let s = get(c);
            let v: f64 = s
                .parse()
                .map_err(|_| Error::parse(path, line, format!("{what} '{s}' is not a number")))?;
            if !v.is_finite() {
                return Err(Error::parse(
                    path,
                    line,
                    format!("{what} '{s}' is not finite"),
                ));
            }
            Ok(v)
        };
        let opt = |c: Option<usize>, what: &str| -> Result<Option<f64>> {
            match c {
                Some(c) if !get(c).is_empty() => num(c, what).map(Some),
                _ => Ok(None),
            }
        };
        let (a1, a2) = (get(c1).to_string(), get(c2).to_string());
        if a1.is_empty() || a2.is_empty() {
            return Err(Error::parse(path, line, "both atom references are needed"));
        }
        let j_hz = num(cj, "j_hz")?;
        let sigma_hz = opt(cs, "sigma_hz")?;
        if let Some(s) = sigma_hz {
            if s <= 0.0 {
                return Err(Error::parse(
                    path,
                    line,
                    format!("sigma_hz must be positive, got {s}"),
                ));
            }
        }
        let temperature_k = opt(ct, "temperature_k")?;
        if let Some(t) = temperature_k {
            if t <= 0.0 {
                return Err(Error::parse(
                    path,
                    line,
                    format!("temperature_k must be positive, got {t}"),
                ));
            }
        }
        let signed = match csg.map(get) {
            None | Some("") => false,
            Some(s) => match s.to_ascii_lowercase().as_str() {
                "yes" | "y" | "true" | "1" => true,
                "no" | "n" | "false" | "0" => false,
                _ => {
                    return Err(Error::parse(
                        path,
                        line,
                        format!("signed must be yes or no, got '{s}'"),
                    ))
                }
            },
        };
        let either = match ce.map(get) {
            None | Some("") => None,
            Some(s) => match s.split_once('/') {
                Some((x, y)) if !x.trim().is_empty() && !y.trim().is_empty() => {
                    Some((x.trim().to_string(), y.trim().to_string()))
                }
                _ => {
                    return Err(Error::parse(
                        path,
                        line,
                        format!("either takes two protons as A/B, got '{s}'"),
                    ))
                }
            },
        };
        out.push(Observation {
            path: path.to_path_buf(),
            line,
            atom1: a1,
            atom2: a2,
            j_hz,
            sigma_hz,
            temperature_k,
            signed,
            either,
            label: cl.map(get).unwrap_or("").to_string(),
        });
    }
    if out.is_empty() {
        return Err(Error::file(path, "no observations in the file"));
    }
    Ok(out)
}

/// True if atom `a` (0-based) names side `side` of a coupling whose heavy
/// atom on that side is `heavy`: one of its protons, or the heavy atom itself
/// when the side is a rotor group.
fn names_side(a: usize, side: &[usize], heavy: usize) -> bool {
    side.contains(&a) || (side.len() > 1 && a == heavy)
}

/// The coupling that atoms `a` and `b` (0-based, either order) refer to.
pub fn find_coupling(couplings: &[Coupling], a: usize, b: usize) -> Option<usize> {
    couplings.iter().position(|c| {
        (names_side(a, &c.side1, c.x) && names_side(b, &c.side2, c.y))
            || (names_side(b, &c.side1, c.x) && names_side(a, &c.side2, c.y))
    })
}

/// Up to `k` couplings nearest to atoms `a`, `b`: those sharing an atom
/// first, then by index distance; as printable pair labels.
pub fn nearest_pairs(
    top: &Topology,
    couplings: &[Coupling],
    a: usize,
    b: usize,
    k: usize,
) -> Vec<String> {
    let mut scored: Vec<(usize, String)> = couplings
        .iter()
        .map(|c| {
            let atoms: Vec<usize> = c.side1.iter().chain(&c.side2).copied().collect();
            let shares = atoms.contains(&a) || atoms.contains(&b);
            let dist = atoms
                .iter()
                .map(|&i| i.abs_diff(a).min(i.abs_diff(b)))
                .min()
                .unwrap_or(usize::MAX);
            let score = if shares { 0 } else { 1 + dist };
            (score, coupling_label(top, c))
        })
        .collect();
    scored.sort();
    scored.into_iter().take(k).map(|(_, s)| s).collect()
}

/// Printable label of a coupling: `H7-H9`, or `H7-H12/H13/H14` for a rotor.
pub fn coupling_label(top: &Topology, c: &Coupling) -> String {
    let side = |s: &[usize]| {
        s.iter()
            .map(|&i| atomref::label(top, i))
            .collect::<Vec<_>>()
            .join("/")
    };
    format!("{}-{}", side(&c.side1), side(&c.side2))
}

/// A swappable pair of protons (0-based), from the `either` column.
pub type Swap = (usize, usize);

/// Observations matched to couplings.
#[derive(Debug, Clone, PartialEq)]
pub struct Matched {
    /// For each observation, the index of its coupling in the prediction.
    pub coupling: Vec<usize>,
    /// Resolved atoms (0-based) of each observation.
    pub atoms: Vec<(usize, usize)>,
    /// Distinct swappable proton pairs named in `either` columns.
    pub swaps: Vec<Swap>,
}

/// Resolves every observation's atoms and finds its coupling. A reference
/// that matches no atom, or a pair that matches no vicinal coupling, is an
/// error naming the row and listing the nearest valid pairs.
pub fn match_observations(
    obs: &[Observation],
    top: &Topology,
    couplings: &[Coupling],
) -> Result<Matched> {
    let mut coupling = Vec::with_capacity(obs.len());
    let mut atoms = Vec::with_capacity(obs.len());
    let mut swaps: Vec<Swap> = Vec::new();
    for o in obs {
        let at = |r: &str| {
            atomref::resolve(top, r).map_err(|e| Error::Usage(format!("{}: {e}", o.origin())))
        };
        let (a, b) = (at(&o.atom1)?, at(&o.atom2)?);
        let k = find_coupling(couplings, a, b).ok_or_else(|| {
            Error::Usage(format!(
                "{}: {}-{} is not a vicinal pair with a predicted coupling; nearest pairs: {}",
                o.origin(),
                atomref::label(top, a),
                atomref::label(top, b),
                nearest_pairs(top, couplings, a, b, 5).join(", ")
            ))
        })?;
        coupling.push(k);
        atoms.push((a, b));
        if let Some((x, y)) = &o.either {
            let (x, y) = (at(x)?, at(y)?);
            let s = (x.min(y), x.max(y));
            if x == y {
                return Err(Error::Usage(format!(
                    "{}: either names the same proton twice",
                    o.origin()
                )));
            }
            if !swaps.contains(&s) {
                swaps.push(s);
            }
        }
    }
    Ok(Matched {
        coupling,
        atoms,
        swaps,
    })
}

/// The couplings observed under one assignment of the swappable pairs:
/// `mask` bit k set means pair `swaps[k]` is exchanged in every observation.
/// Returns `None` when an exchanged pair names no predicted coupling.
pub fn couplings_under_swap(m: &Matched, couplings: &[Coupling], mask: u32) -> Option<Vec<usize>> {
    let swap = |i: usize| -> usize {
        let mut j = i;
        for (k, &(x, y)) in m.swaps.iter().enumerate() {
            if mask & (1 << k) != 0 {
                if j == x {
                    j = y;
                } else if j == y {
                    j = x;
                }
            }
        }
        j
    };
    m.atoms
        .iter()
        .map(|&(a, b)| find_coupling(couplings, swap(a), swap(b)))
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parses_columns_and_comments() {
        let text =
            "# demo\natom1,atom2,j_hz,sigma_hz,either\nH7,9,10.5,0.2,\n# x\n7,H10,2.5,,10/11\n";
        let o = parse_observations(text, Path::new("obs.csv")).unwrap();
        assert_eq!(o.len(), 2);
        assert_eq!(o[0].line, 3);
        assert_eq!(o[1].line, 5);
        assert_eq!(o[0].sigma_hz, Some(0.2));
        assert_eq!(o[1].sigma_hz, None);
        assert_eq!(o[1].either, Some(("10".into(), "11".into())));
    }

    #[test]
    fn bad_rows_name_the_line() {
        let e = parse_observations("atom1,atom2,j_hz\n1,2,abc\n", Path::new("o.csv")).unwrap_err();
        assert_eq!(e.to_string(), "o.csv:2: j_hz 'abc' is not a number");
        let e = parse_observations("atom1,j_hz\n1,2\n", Path::new("o.csv")).unwrap_err();
        assert!(e.to_string().contains("'atom2' column"));
    }
}
