//! Axial or equatorial? Deciding the position of a ring proton from its
//! measured vicinal couplings.
//!
//! The conformers of the ensemble are grouped into ring-shape families for
//! the ring that carries the proton: the two chairs (told apart by the side
//! of the Cremer–Pople θ, below or above 90°, in the ring order of the
//! topology), boats and twist-boats, half-chairs and envelopes, and flat or
//! undefined rings. In each family the proton sits axial, equatorial, or
//! neither (boats, twist-boats), read from the per-conformer labels of
//! [`crate::ensemble::predict`]. The couplings of the proton predicted for a
//! family are the population-weighted mean over the family's conformers
//! (equal weights if they carry no population); the likelihood of the
//! observed couplings under each family follows the error model of
//! [`crate::rank`] (Student-t, ν = 4, scale 1.0 Hz combined with the
//! measurement error, by default). Energies do not enter: the data alone
//! decide between the families, with equal priors.
//!
//! The verdict compares the best family with the proton axial against the
//! best family with it equatorial: the likelihood ratio Λ = L_ax / L_eq and
//! P(axial) = Λ / (1 + Λ). Λ ≥ 10 (or ≤ 1/10) calls the position; between
//! the two the verdict is "cannot tell" ([`crate::rank::DEFAULT_DECISIVE_RATIO`],
//! our choice). With no family for one of the positions the verdict is
//! "cannot tell" as well: the ensemble offers nothing to compare with.
//!
//! The sum of the proton's observed vicinal couplings ΣJ is reported beside
//! it with the rule of thumb of common practice (from memory): in a chair an
//! axial methine proton between two CH2 groups has two axial–axial
//! (≈ 10–12 Hz) and two axial–equatorial (≈ 3–5 Hz) couplings, ΣJ ≈ 20–30 Hz,
//! while an equatorial one has four small ones (≈ 2–4 Hz), ΣJ ≈ 7–12 Hz; the
//! width of the multiplet between its outer lines is ΣJ. Textbooks of
//! NMR spectroscopy of organic compounds give these ranges; the figures here
//! are from memory.

use serde::Serialize;

use crate::atomref;
use crate::ensemble::predict::Prediction;
use crate::error::{Error, Result};
use crate::fit::RESIDUAL_FLAG_SIGMAS;
use crate::observed::Observation;
use crate::rank::{self, ErrorModel, MatchedRow};

/// Couplings at or above this (Hz) are called large (anti, trans-diaxial in
/// a chair; common practice: ax–ax ≈ 10–12 Hz).
pub const LARGE_J_HZ: f64 = 8.0;

/// Couplings at or below this (Hz) are called small (gauche; common
/// practice: ax–eq and eq–eq ≈ 2–5 Hz).
pub const SMALL_J_HZ: f64 = 5.0;

/// ΣJ (Hz) at or above which the rule of thumb reads "axial" for a methine
/// proton between two CH2 groups (our threshold inside the common-practice
/// gap between ≈ 12 and ≈ 20 Hz).
pub const SUM_AXIAL_MIN_HZ: f64 = 17.0;

/// ΣJ (Hz) at or below which the rule of thumb reads "equatorial".
pub const SUM_EQUATORIAL_MAX_HZ: f64 = 14.0;

/// A ring-shape family of conformers.
#[derive(Debug, Clone, Serialize)]
pub struct Family {
    /// Name, e.g. `chair (theta < 90)`.
    pub name: String,
    /// 1-based conformer indices.
    pub conformers: Vec<usize>,
    /// Total Boltzmann (ensemble) population of the family.
    pub population: f64,
    /// Position of the proton in the family: `axial`, `equatorial`, or
    /// `neither` (boats, twist-boats, mixed labels).
    pub position: String,
    /// Predicted coupling per observation of the proton, Hz.
    pub predicted_hz: Vec<f64>,
    /// ln L of the observations under this family.
    pub ln_likelihood: f64,
    /// Gaussian χ² with the combined σ.
    pub chi2: f64,
    /// Observations more than 2σ off (labels).
    pub fails: Vec<String>,
    /// Probability of the family among all families (equal priors).
    pub probability: f64,
}

/// One observation of the proton in the verdict.
#[derive(Debug, Clone, Serialize)]
pub struct Evidence {
    /// `atom1-atom2` as written.
    pub label: String,
    /// Observed J, Hz.
    pub observed_hz: f64,
    /// `large`, `small` or `intermediate`.
    pub size: String,
    /// Predicted in the best axial family, Hz.
    pub axial_hz: Option<f64>,
    /// Predicted in the best equatorial family, Hz.
    pub equatorial_hz: Option<f64>,
    /// Contribution to ln Λ (positive favours axial).
    pub ln_ratio: f64,
}

/// Verdict on the position of one proton.
#[derive(Debug, Clone, Serialize)]
pub struct ProtonVerdict {
    /// 1-based atom index.
    pub proton: usize,
    /// Its label (`H7`) and name from the file.
    pub label: String,
    /// Atom name in the file.
    pub name: String,
    /// Families of the proton's ring.
    pub families: Vec<Family>,
    /// Observations of this proton.
    pub observations: Vec<String>,
    /// Likelihood ratio best-axial / best-equatorial family, if both exist.
    pub ratio_axial: Option<f64>,
    /// P(axial) = Λ/(1+Λ), if both exist.
    pub probability_axial: Option<f64>,
    /// `axial`, `equatorial` or `cannot tell`.
    pub verdict: String,
    /// Why, in words.
    pub reason: String,
    /// The couplings that carry the decision, strongest first.
    pub evidence: Vec<Evidence>,
    /// Σ of the observed H–C–C–H couplings of the proton, Hz.
    pub sum_j_hz: f64,
    /// Observed / predicted number of vicinal couplings of the proton.
    pub couplings_observed: usize,
    /// Number of H–C–C–H partners the proton has in the prediction.
    pub couplings_total: usize,
    /// Rule-of-thumb reading of ΣJ, or why it does not apply.
    pub sum_rule: String,
}

/// Result of [`assign`].
#[derive(Debug, Clone, Serialize)]
pub struct Assignment {
    /// Error model.
    pub error: ErrorModel,
    /// Ratio needed for a verdict.
    pub decisive_ratio: f64,
    /// One verdict per proton.
    pub protons: Vec<ProtonVerdict>,
    /// Warnings.
    pub warnings: Vec<String>,
}

/// Groups the conformers by the shape of ring `ring` (0-based index into
/// `pr.rings`); see the module docs.
pub fn families(pr: &Prediction, ring: usize) -> Vec<(String, Vec<usize>)> {
    let mut out: Vec<(String, Vec<usize>)> = Vec::new();
    let Some(series) = pr.rings.get(ring) else {
        return out;
    };
    for (c, s) in series.shapes.iter().enumerate() {
        let name = match (s.shape.as_str(), s.theta_deg) {
            ("chair", Some(t)) if t < 90.0 => "chair (theta < 90)".to_string(),
            ("chair", _) => "chair (theta > 90)".to_string(),
            ("boat" | "twist-boat", _) => "boat/twist-boat".to_string(),
            ("half-chair" | "envelope", _) => "half-chair/envelope".to_string(),
            (other, _) => other.to_string(),
        };
        match out.iter_mut().find(|f| f.0 == name) {
            Some(f) => f.1.push(c),
            None => out.push((name, vec![c])),
        }
    }
    out
}

/// Options of [`assign`].
#[derive(Debug, Clone, Copy)]
pub struct AssignOptions {
    /// Error model.
    pub error: ErrorModel,
    /// Likelihood ratio needed for a verdict.
    pub decisive_ratio: f64,
}

impl Default for AssignOptions {
    fn default() -> Self {
        AssignOptions {
            error: ErrorModel::default(),
            decisive_ratio: rank::DEFAULT_DECISIVE_RATIO,
        }
    }
}

/// Decides axial/equatorial for the protons `protons` (atom references;
/// empty: every six-membered-ring proton with observations).
pub fn assign(
    pr: &Prediction,
    obs: &[Observation],
    protons: &[String],
    opts: &AssignOptions,
) -> Result<Assignment> {
    opts.error.validate()?;
    let mut warnings = Vec::new();
    let rows = rank::match_rows(
        obs,
        pr,
        |r| atomref::resolve(&pr.topology, r),
        &mut warnings,
    )?;
    let targets: Vec<usize> = if protons.is_empty() {
        pr.ring_protons
            .iter()
            .map(|rp| rp.proton - 1)
            .filter(|h| rows.iter().any(|r| r.atoms.0 == *h || r.atoms.1 == *h))
            .collect()
    } else {
        let mut v = Vec::new();
        for p in protons {
            let h = atomref::resolve(&pr.topology, p)?;
            if !pr.ring_protons.iter().any(|rp| rp.proton - 1 == h) {
                return Err(Error::Usage(format!(
                    "{p} ({}) is not a proton on a six-membered ring",
                    atomref::label(&pr.topology, h)
                )));
            }
            if !rows.iter().any(|r| r.atoms.0 == h || r.atoms.1 == h) {
                return Err(Error::Usage(format!(
                    "{p} ({}) has no observed coupling in the observations",
                    atomref::label(&pr.topology, h)
                )));
            }
            v.push(h);
        }
        v
    };
    if targets.is_empty() {
        return Err(Error::Usage(
            "no proton on a six-membered ring has an observed coupling".into(),
        ));
    }
    let protons = targets
        .iter()
        .map(|&h| verdict_for(pr, &rows, h, opts))
        .collect::<Result<Vec<_>>>()?;
    Ok(Assignment {
        error: opts.error,
        decisive_ratio: opts.decisive_ratio,
        protons,
        warnings,
    })
}

fn size_of(j: f64) -> &'static str {
    if j >= LARGE_J_HZ {
        "large"
    } else if j <= SMALL_J_HZ {
        "small"
    } else {
        "intermediate"
    }
}

fn verdict_for(
    pr: &Prediction,
    all_rows: &[MatchedRow],
    h: usize,
    opts: &AssignOptions,
) -> Result<ProtonVerdict> {
    let em = &opts.error;
    let rp = pr
        .ring_protons
        .iter()
        .find(|rp| rp.proton - 1 == h)
        .ok_or_else(|| Error::Usage(format!("{} is not a ring proton", h + 1)))?;
    let rows: Vec<MatchedRow> = all_rows
        .iter()
        .filter(|r| r.atoms.0 == h || r.atoms.1 == h)
        .cloned()
        .collect();
    let pop: Vec<f64> = pr.conformers.iter().map(|c| c.population).collect();
    let mut fams = Vec::new();
    for (name, members) in families(pr, rp.ring - 1) {
        let w: Vec<f64> = members
            .iter()
            .map(|&c| pop.get(c).copied().unwrap_or(0.0))
            .collect();
        let population: f64 = w.iter().sum();
        let predicted: Vec<f64> = rows
            .iter()
            .map(|r| rank::weighted_j(pr, r, &members, &w))
            .collect();
        let mut labels = members
            .iter()
            .map(|&c| rp.positions.get(c).map(String::as_str).unwrap_or(""));
        let first = labels.next().unwrap_or("");
        let same = labels.all(|l| l == first);
        let position = if same && (first == "axial" || first == "equatorial") {
            first.to_string()
        } else {
            "neither".to_string()
        };
        let mut ln_l = 0.0;
        let mut chi2 = 0.0;
        let mut fails = Vec::new();
        for (r, p) in rows.iter().zip(&predicted) {
            let s = em.sigma_hz(r.sigma_hz);
            let e = r.observed_hz - p;
            ln_l += em.ln_density(e, s);
            chi2 += (e / s) * (e / s);
            if (e / s).abs() > RESIDUAL_FLAG_SIGMAS {
                fails.push(r.label.clone());
            }
        }
        fams.push(Family {
            name,
            conformers: members.iter().map(|c| c + 1).collect(),
            population,
            position,
            predicted_hz: predicted,
            ln_likelihood: ln_l,
            chi2,
            fails,
            probability: 0.0,
        });
    }
    let p = rank::normalise_log(&fams.iter().map(|f| f.ln_likelihood).collect::<Vec<_>>());
    for (f, pi) in fams.iter_mut().zip(p) {
        f.probability = pi;
    }
    let best = |pos: &str| {
        fams.iter()
            .enumerate()
            .filter(|(_, f)| f.position == pos)
            .max_by(|a, b| a.1.ln_likelihood.total_cmp(&b.1.ln_likelihood))
            .map(|(i, _)| i)
    };
    let (ax, eq) = (best("axial"), best("equatorial"));
    let name = atomref::name(&pr.topology, h).to_string();
    let label = atomref::label(&pr.topology, h);
    let who = if name.is_empty() {
        label.clone()
    } else {
        name.clone()
    };
    let mut evidence: Vec<Evidence> = rows
        .iter()
        .enumerate()
        .map(|(k, r)| {
            let a = ax.map(|i| fams[i].predicted_hz[k]);
            let e = eq.map(|i| fams[i].predicted_hz[k]);
            let s = em.sigma_hz(r.sigma_hz);
            let ln_ratio = match (a, e) {
                (Some(a), Some(e)) => {
                    em.ln_density(r.observed_hz - a, s) - em.ln_density(r.observed_hz - e, s)
                }
                _ => 0.0,
            };
            Evidence {
                label: r.label.clone(),
                observed_hz: r.observed_hz,
                size: size_of(r.observed_hz).to_string(),
                axial_hz: a,
                equatorial_hz: e,
                ln_ratio,
            }
        })
        .collect();
    evidence.sort_by(|a, b| b.ln_ratio.abs().total_cmp(&a.ln_ratio.abs()));
    let large: Vec<&Evidence> = evidence.iter().filter(|e| e.size == "large").collect();
    let carried = if large.is_empty() {
        let m = rows.iter().map(|r| r.observed_hz).fold(0.0f64, f64::max);
        format!("only small or intermediate couplings (largest {m:.1} Hz)")
    } else {
        format!(
            "large coupling(s) {} (anti, trans-diaxial in a chair)",
            large
                .iter()
                .map(|e| format!("{} = {:.1} Hz", e.label, e.observed_hz))
                .collect::<Vec<_>>()
                .join(", ")
        )
    };
    let (ratio_axial, probability_axial, verdict, reason) = match (ax, eq) {
        (Some(a), Some(e)) => {
            let lr = fams[a].ln_likelihood - fams[e].ln_likelihood;
            let r = rank::finite_ratio(lr);
            let pa = rank::normalise_log(&[fams[a].ln_likelihood, fams[e].ln_likelihood])[0];
            let thr = opts.decisive_ratio.ln();
            let (v, why) = if lr >= thr {
                (
                    "axial",
                    format!(
                        "{who} axial: {carried}; the '{}' family fits {} times better than '{}'",
                        fams[a].name,
                        fmt_ratio(r),
                        fams[e].name
                    ),
                )
            } else if lr <= -thr {
                (
                    "equatorial",
                    format!(
                        "{who} equatorial: {carried}; the '{}' family fits {} times better than '{}'",
                        fams[e].name,
                        fmt_ratio(1.0 / r.max(1e-300)),
                        fams[a].name
                    ),
                )
            } else {
                (
                    "cannot tell",
                    format!(
                        "the likelihood ratio axial/equatorial is {} (needs >= {} or <= 1/{}): the observed couplings do not separate the positions",
                        fmt_ratio(r),
                        opts.decisive_ratio,
                        opts.decisive_ratio
                    ),
                )
            };
            (Some(r), Some(pa), v.to_string(), why)
        }
        (Some(_), None) | (None, Some(_)) => {
            let have = if ax.is_some() { "axial" } else { "equatorial" };
            let missing = if ax.is_some() { "equatorial" } else { "axial" };
            (
                None,
                None,
                "cannot tell".to_string(),
                format!(
                    "no conformer family of the ensemble has {who} {missing} (all are {have} or neither): nothing to compare with; add conformers of the other ring shape"
                ),
            )
        }
        (None, None) => (
            None,
            None,
            "cannot tell".to_string(),
            format!("{who} is neither axial nor equatorial in every family of the ensemble"),
        ),
    };
    let best_fam = fams
        .iter()
        .max_by(|a, b| a.ln_likelihood.total_cmp(&b.ln_likelihood));
    let mut reason = reason;
    if let Some(b) = best_fam {
        if !b.fails.is_empty() {
            reason.push_str(&format!(
                "; note: even the best family ('{}') misses {} by more than 2 sigma",
                b.name,
                b.fails.join(", ")
            ));
        }
    }
    let partners: Vec<usize> = pr
        .couplings
        .iter()
        .enumerate()
        .filter(|(_, c)| c.side1.contains(&h) || c.side2.contains(&h))
        .filter(|(_, c)| {
            let el = |i: usize| pr.topology.atoms.get(i).map(|a| a.element);
            el(c.x) == Some(crate::elements::Element::C)
                && el(c.y) == Some(crate::elements::Element::C)
        })
        .map(|(i, _)| i)
        .collect();
    let observed_partners: Vec<usize> = {
        let mut v: Vec<usize> = rows
            .iter()
            .map(|r| r.coupling)
            .filter(|k| partners.contains(k))
            .collect();
        v.sort_unstable();
        v.dedup();
        v
    };
    let sum_j_hz: f64 = rows
        .iter()
        .filter(|r| partners.contains(&r.coupling))
        .map(|r| r.observed_hz.abs())
        .sum();
    let sum_rule = sum_rule(
        pr,
        h,
        rp.carbon - 1,
        &partners,
        &observed_partners,
        sum_j_hz,
    );
    Ok(ProtonVerdict {
        proton: h + 1,
        label,
        name,
        families: fams,
        observations: rows.iter().map(|r| r.label.clone()).collect(),
        ratio_axial,
        probability_axial,
        verdict,
        reason,
        evidence,
        sum_j_hz,
        couplings_observed: observed_partners.len(),
        couplings_total: partners.len(),
        sum_rule,
    })
}

fn fmt_ratio(r: f64) -> String {
    if r >= 1e4 || (r > 0.0 && r < 1e-3) {
        format!("{r:.1e}")
    } else {
        format!("{r:.2}")
    }
}

/// Reads ΣJ with the multiplet-width rule of thumb (module docs), when it
/// applies: a methine proton whose carbon has two ring CH2 neighbours, with
/// every vicinal coupling observed.
fn sum_rule(
    pr: &Prediction,
    h: usize,
    carbon: usize,
    partners: &[usize],
    observed: &[usize],
    sum: f64,
) -> String {
    let top = &pr.topology;
    let methine = top.hydrogens(carbon).count() == 1;
    let ch2_neighbours = top
        .heavy_neighbors(carbon)
        .filter(|&n| top.hydrogens(n).count() == 2)
        .count();
    let _ = h;
    if !methine || ch2_neighbours < 2 {
        return "rule of thumb not applicable (it is for a ring CH between two CH2 groups)"
            .to_string();
    }
    if observed.len() < partners.len() {
        return format!(
            "rule of thumb not applicable: only {} of the {} vicinal couplings observed",
            observed.len(),
            partners.len()
        );
    }
    let reading = if sum >= SUM_AXIAL_MIN_HZ {
        "reads axial"
    } else if sum <= SUM_EQUATORIAL_MAX_HZ {
        "reads equatorial"
    } else {
        "between the ranges"
    };
    format!(
        "{reading} (rule of thumb, common practice, from memory: axial CH between two CH2 in a chair sum 20-30 Hz, equatorial 7-12 Hz)"
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sizes() {
        assert_eq!(size_of(11.1), "large");
        assert_eq!(size_of(4.3), "small");
        assert_eq!(size_of(6.5), "intermediate");
    }
}
