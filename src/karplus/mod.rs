//! Coupling models: 3J(H,H) from a dihedral angle (and, for the
//! Haasnoot–de Leeuw–Altona equation, substituent electronegativities and
//! orientations).
//!
//! Parameter sets are data ([`params`], `params/karplus/sets.csv`); which set
//! applies to which fragment is decided once per ensemble by [`ModelChoice`]
//! and [`PreparedPair::new`], which also collects domain [`Warning`]s. Per
//! conformer, [`PreparedPair::evaluate`] computes the dihedral, the signs ξ and
//! J without allocating.
//!
//! Defaults (see [`ModelChoice::default_set`]):
//! - H–C(sp3)–C(sp3)–H: HLA, the set chosen by the number of non-H
//!   substituents (2, 3, 4 → `hla-2sub`, `hla-3sub`, `hla-4sub`; fewer →
//!   `hla-general-beta`, with a warning);
//! - the two H5–H6 pairs of a hexopyranose exocyclic CH2OH (recognised from the
//!   topology): Stenutz et al. 2002 (`stenutz-2002`), the specialised equations
//!   a carbohydrate chemist expects for these couplings; ω = τ(O5,C5,C6,O6)
//!   and the pro-R/pro-S identity of each H6 are taken from each conformer;
//! - H–C(sp3)–C(sp2)–H: Garbisch 1964; H–N–C–H of an amide: Hu & Bax 1997
//!   (θ taken directly as the measured H–N–Cα–Hα dihedral, which equals
//!   φ − 60° in ideal geometry); H–O–C–H: Fraser et al. 1969;
//! - H–C(sp2)–C(sp2)–H, non-amide H–N–C–H and other paths: no model (reported
//!   as not evaluated, not an error).
//!
//! Every predicted coupling is a model estimate (the HLA equation has an RMS
//! error of roughly half a hertz on its own training set, more on molecules
//! unlike it) to be confirmed by independent evidence.

mod batch;
pub mod curve;
pub mod equations;
pub mod params;

use std::collections::HashMap;

use crate::elements::Element;
use crate::error::{Error, Result};
use crate::fragments::{FragmentKind, VicinalPair};
use crate::geometry::{dihedral, DihedralParts, Vec3};
use crate::topology::{Hybridization, Topology};

pub use batch::PairBatch;
pub use curve::{curve, curve_svg, write_curve_csv, PatternSubstituent};
pub use equations::{hla, is_pro_r, xi_sign, HlaTerm};
pub use params::{Form, HlaCoefficients, ParamLibrary, ParamSet};

/// A fragment outside the fitted domain of its model: the model is still
/// evaluated, but the estimate deserves less trust.
#[derive(Debug, Clone, PartialEq)]
pub struct Warning {
    /// First proton (0-based).
    pub h1: usize,
    /// Second proton (0-based).
    pub h2: usize,
    /// The pair as a reader sees it (`H7–H9 (H1)`, 1-based).
    pub pair: String,
    /// Why the fragment is outside the domain.
    pub reason: String,
}

impl std::fmt::Display for Warning {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}: {}", self.pair, self.reason)
    }
}

/// Which parameter set to use for which fragment. Resolution order for a pair:
/// the per-kind override, then the run-wide set, then (for a recognised
/// hexopyranose H5–H6 pair) `hydroxymethyl`, then the default for the kind.
#[derive(Debug, Clone, PartialEq)]
pub struct ModelChoice {
    /// One set for every evaluated pair of the run (`None`: defaults).
    pub run: Option<String>,
    /// Set per fragment kind, overriding `run` and the defaults.
    pub per_kind: HashMap<FragmentKind, String>,
    /// Set for recognised hexopyranose H5–H6R/H5–H6S pairs (`None`: treat them
    /// like any other H–C(sp3)–C(sp3)–H pair). Default `stenutz-2002`.
    pub hydroxymethyl: Option<String>,
}

impl Default for ModelChoice {
    fn default() -> Self {
        ModelChoice {
            run: None,
            per_kind: HashMap::new(),
            hydroxymethyl: Some("stenutz-2002".to_string()),
        }
    }
}

impl ModelChoice {
    /// The default set id for a fragment kind, or `None` where no model applies.
    /// `n_substituents` is the number of non-H substituents on both carbons
    /// (HLA set choice); `amide` whether an H–N–C–H nitrogen is an amide N.
    pub fn default_set(
        kind: FragmentKind,
        n_substituents: usize,
        amide: bool,
    ) -> Option<&'static str> {
        match kind {
            FragmentKind::HCsp3Csp3H => Some(match n_substituents {
                0 | 1 => "hla-general-beta",
                2 => "hla-2sub",
                3 => "hla-3sub",
                _ => "hla-4sub",
            }),
            FragmentKind::HCsp3Csp2H => Some("garbisch-1964"),
            FragmentKind::HNCH if amide => Some("hu-bax-1997"),
            FragmentKind::HOCH => Some("fraser-1969"),
            FragmentKind::HNCH | FragmentKind::HCsp2Csp2H | FragmentKind::Other => None,
        }
    }
}

/// The atoms of a recognised hexopyranose exocyclic group for one H5–H6 pair.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Hydroxymethyl {
    /// Ring oxygen O5.
    pub o5: usize,
    /// Ring carbon C5.
    pub c5: usize,
    /// The ring carbon C4 on C5.
    pub c4: usize,
    /// Exocyclic carbon C6.
    pub c6: usize,
    /// Hydroxyl (or ether) oxygen O6.
    pub o6: usize,
    /// The H6 of this pair.
    pub h6: usize,
    /// The other H6 on C6.
    pub h6_other: usize,
}

/// Recognises the hexopyranose C5–C6 exocyclic pattern for the pair x–y: one
/// carbon (C6) with two H and one O (O6) and no other neighbour but the other
/// carbon (C5), which lies in a six-membered ring together with a ring oxygen
/// O5 bonded to it, and to a ring carbon C4. Rings come from `top.rings`, or are searched for when the
/// topology lists none.
pub fn recognise_hydroxymethyl(pair: &VicinalPair, top: &Topology) -> Option<Hydroxymethyl> {
    let el = |i: usize| top.atoms.get(i).map(|a| a.element);
    for (c6, h6, c5) in [(pair.x, pair.h1, pair.y), (pair.y, pair.h2, pair.x)] {
        if el(c6) != Some(Element::C) || el(c5) != Some(Element::C) {
            continue;
        }
        let nb = top.neighbors.get(c6)?;
        if nb.len() != 4 {
            continue;
        }
        let hs: Vec<usize> = top.hydrogens(c6).collect();
        let os: Vec<usize> = nb
            .iter()
            .copied()
            .filter(|&j| el(j) == Some(Element::O))
            .collect();
        if hs.len() != 2 || os.len() != 1 || !nb.contains(&c5) {
            continue;
        }
        let Some(&h6_other) = hs.iter().find(|&&h| h != h6) else {
            continue;
        };
        let o5 = top
            .neighbors
            .get(c5)?
            .iter()
            .copied()
            .find(|&j| j != c6 && el(j) == Some(Element::O) && in_six_ring(top, c5, j));
        let c4 = top
            .heavy_neighbors(c5)
            .find(|&j| j != c6 && Some(j) != o5 && el(j) == Some(Element::C));
        if let (Some(o5), Some(c4)) = (o5, c4) {
            return Some(Hydroxymethyl {
                o5,
                c5,
                c4,
                c6,
                o6: os[0],
                h6,
                h6_other,
            });
        }
    }
    None
}

/// True if the bond a–b lies in a ring of exactly six atoms.
fn in_six_ring(top: &Topology, a: usize, b: usize) -> bool {
    if !top.rings.is_empty() {
        return top
            .rings
            .iter()
            .any(|r| r.len() == 6 && r.contains(&a) && r.contains(&b));
    }
    // Depth-limited search for a path b → a of five bonds avoiding a–b.
    fn dfs(top: &Topology, cur: usize, target: usize, depth: usize, path: &mut Vec<usize>) -> bool {
        if depth == 0 {
            return false;
        }
        for j in top.heavy_neighbors(cur) {
            if depth == 1 {
                if j == target {
                    return true;
                }
                continue;
            }
            if j == target || path.contains(&j) {
                continue;
            }
            path.push(j);
            let found = dfs(top, j, target, depth - 1, path);
            path.pop();
            if found {
                return true;
            }
        }
        false
    }
    let mut path = vec![a, b];
    dfs(top, b, a, 5, &mut path)
}

/// True if the C5 of a hexopyranose has the D-series configuration (R):
/// (O5 − C5) × (C4 − C5) · (C6 − C5) < 0, as for the RDKit-built methyl
/// α-D-glucopyranoside in tests/reference/hydroxymethyl_prochirality.txt.
#[inline]
pub fn is_d_series(o5: &Vec3, c5: &Vec3, c4: &Vec3, c6: &Vec3) -> bool {
    (o5 - c5).cross(&(c4 - c5)).dot(&(c6 - c5)) < 0.0
}

/// Maximum number of HLA substituent terms (two carbons × two non-H
/// substituents besides the C–C partner and the coupled H).
const MAX_TERMS: usize = 6;

#[derive(Debug, Clone, Copy, PartialEq)]
struct PreparedSub {
    atom: usize,
    /// True when the substituent sits on `x` (the carbon of `h1`).
    on_x: bool,
    dchi: f64,
    /// cos and sin of the phase P6 |Δχ|.
    cos_a: f64,
    sin_a: f64,
}

#[derive(Debug, Clone, PartialEq)]
enum Kernel {
    Hla {
        p: HlaCoefficients,
        subs: [PreparedSub; MAX_TERMS],
        n: usize,
    },
    Single(Form),
    Omega {
        form: Form,
        hm: Hydroxymethyl,
    },
}

/// The Haasnoot–de Leeuw–Altona sum (Tetrahedron 1980, 36, 2783) in Hz for
/// the dihedral `parts` of H1–X–Y–H2 (X at `x`, Y at `y`), the same sum as
/// [`equations::hla_sin_cos`] accumulated in place; `None` when a
/// substituent lies outside `coords`. Shared by [`PreparedPair::evaluate`]
/// and [`PairBatch`], so both give the same bits.
#[inline(always)]
fn hla_sum(
    p: &HlaCoefficients,
    subs: &[PreparedSub],
    coords: &[Vec3],
    x: &Vec3,
    y: &Vec3,
    parts: &DihedralParts,
) -> Option<f64> {
    let (c, sin_phi) = (parts.x / parts.r, parts.y / parts.r);
    let mut j = p.p1 * c * c + p.p2 * c + p.p3;
    // The normals of the dihedral's planes serve the substituents of each
    // carbon: n1 = (X − H1) × (Y − X) = (Y − X) × (H1 − X) on X, and
    // −n2 = (X − Y) × (H2 − Y) on Y.
    for s in subs {
        let sp = coords.get(s.atom)?;
        // ξ = sign[((Ha − Ca) × (S − Ca)) · (Cb − Ca)]
        //   = sign[(S − Ca) · ((Cb − Ca) × (Ha − Ca))], a triple product
        // rotated so the cross product is shared.
        let t = if s.on_x {
            (sp - x).dot(&parts.n1)
        } else {
            -(sp - y).dot(&parts.n2)
        };
        let xi = if t < 0.0 { -1.0 } else { 1.0 };
        let u = c * s.cos_a - xi * sin_phi * s.sin_a;
        j += s.dchi * (p.p4 + p.p5 * u * u);
    }
    Some(j)
}

/// One vicinal pair made ready for fast evaluation over an ensemble: atom
/// indices, the chosen set, and for HLA the β-corrected Δχ of each substituent.
#[derive(Debug, Clone, PartialEq)]
pub struct PreparedPair {
    /// First proton (0-based).
    pub h1: usize,
    /// Heavy atom carrying `h1`.
    pub x: usize,
    /// Heavy atom carrying `h2`.
    pub y: usize,
    /// Second proton (0-based).
    pub h2: usize,
    /// Fragment kind.
    pub kind: FragmentKind,
    /// Id of the parameter set used.
    pub set_id: String,
    /// Published RMS error of that set in Hz, where known.
    pub rms_hz: Option<f64>,
    kernel: Kernel,
    max_index: usize,
}

/// A pair for which no model was evaluated, and why (not an error).
#[derive(Debug, Clone, PartialEq)]
pub struct NotEvaluated {
    /// First proton (0-based).
    pub h1: usize,
    /// Second proton (0-based).
    pub h2: usize,
    /// Why no model applies.
    pub reason: String,
}

/// All pairs of a molecule prepared once per ensemble.
#[derive(Debug, Clone, Default)]
pub struct PreparedSet {
    /// Pairs with a model, in input order.
    pub pairs: Vec<PreparedPair>,
    /// Pairs without one.
    pub not_evaluated: Vec<NotEvaluated>,
    /// Domain warnings, in pair order.
    pub warnings: Vec<Warning>,
}

/// Prepares every pair; see [`PreparedPair::new`].
pub fn prepare_all(
    pairs: &[VicinalPair],
    top: &Topology,
    lib: &ParamLibrary,
    choice: &ModelChoice,
) -> Result<PreparedSet> {
    let mut out = PreparedSet::default();
    for p in pairs {
        match PreparedPair::new(p, top, lib, choice, &mut out.warnings)? {
            Ok(pp) => out.pairs.push(pp),
            Err(ne) => out.not_evaluated.push(ne),
        }
    }
    Ok(out)
}

/// Usual maximum number of bonded neighbours of a neutral atom, for the
/// hypervalence check (`None`: not checked).
fn usual_valence(e: Element) -> Option<usize> {
    match e.atomic_number() {
        1 | 9 | 17 | 35 | 53 => Some(1),
        8 => Some(2),
        16 => Some(2),
        7 | 15 => Some(3),
        5 => Some(3),
        6 | 14 => Some(4),
        _ => None,
    }
}

fn pair_label(top: &Topology, pair: &VicinalPair) -> String {
    let r = |i: usize| {
        if i < top.len() {
            top.atom_ref(i)
        } else {
            format!("atom {}", i + 1)
        }
    };
    format!("{}–{}", r(pair.h1), r(pair.h2))
}

impl PreparedPair {
    /// Prepares one pair: picks the parameter set (see [`ModelChoice`]),
    /// precomputes Δχ per substituent for HLA, and appends domain warnings to
    /// `warnings`. Returns `Ok(Err(NotEvaluated))` when no model applies to the
    /// fragment kind, and an [`Error::Model`] when the chosen set cannot be
    /// evaluated for this pair (unknown id, an ω set on a pair that is not a
    /// hexopyranose H5–H6, atom indices outside the topology).
    pub fn new(
        pair: &VicinalPair,
        top: &Topology,
        lib: &ParamLibrary,
        choice: &ModelChoice,
        warnings: &mut Vec<Warning>,
    ) -> Result<std::result::Result<PreparedPair, NotEvaluated>> {
        let label = pair_label(top, pair);
        let all_atoms = [pair.h1, pair.x, pair.y, pair.h2]
            .into_iter()
            .chain(
                pair.subs_x
                    .iter()
                    .flat_map(|s| std::iter::once(s.atom).chain(s.beta.iter().copied())),
            )
            .chain(
                pair.subs_y
                    .iter()
                    .flat_map(|s| std::iter::once(s.atom).chain(s.beta.iter().copied())),
            );
        let mut max_index = 0;
        for i in all_atoms {
            if i >= top.len() {
                return Err(Error::Model(format!(
                    "{label}: atom index {} outside the molecule ({} atoms)",
                    i + 1,
                    top.len()
                )));
            }
            max_index = max_index.max(i);
        }
        let mut warn = |reason: String| {
            warnings.push(Warning {
                h1: pair.h1,
                h2: pair.h2,
                pair: label.clone(),
                reason,
            })
        };
        let hm = recognise_hydroxymethyl(pair, top);
        let n_subs = pair.n_substituents();
        let id: String = if let Some(id) = choice.per_kind.get(&pair.kind) {
            id.clone()
        } else if let Some(id) = &choice.run {
            id.clone()
        } else if let (Some(_), Some(id), FragmentKind::HCsp3Csp3H) =
            (hm, &choice.hydroxymethyl, pair.kind)
        {
            id.clone()
        } else {
            match ModelChoice::default_set(pair.kind, n_subs, pair.amide) {
                Some(id) => id.to_string(),
                None => {
                    let reason = match pair.kind {
                        FragmentKind::HNCH => {
                            "no default model for H–N–C–H outside amides".to_string()
                        }
                        k => format!("no default model for {} fragments", k.label()),
                    };
                    return Ok(Err(NotEvaluated {
                        h1: pair.h1,
                        h2: pair.h2,
                        reason,
                    }));
                }
            }
        };
        let set = lib.require(&id)?;
        if set.kind != pair.kind {
            warn(format!(
                "set '{}' was fitted for {} fragments, applied to a {} fragment",
                set.id,
                set.kind.label(),
                pair.kind.label()
            ));
        }
        // Charged atoms anywhere in the fragment or its α substituents.
        let alpha: Vec<usize> = pair
            .subs_x
            .iter()
            .chain(&pair.subs_y)
            .map(|s| s.atom)
            .collect();
        for &i in [pair.x, pair.y].iter().chain(&alpha) {
            let a = &top.atoms[i];
            if a.charge != 0 {
                warn(format!(
                    "{} carries a formal charge ({:+}), outside the fitted domain of '{}'",
                    top.atom_ref(i),
                    a.charge,
                    set.id
                ));
            }
            if let (Some(v), Some(nb)) = (usual_valence(a.element), top.neighbors.get(i)) {
                if nb.len() > v {
                    warn(format!(
                        "{} is hypervalent ({} neighbours), outside the fitted domain of '{}'",
                        top.atom_ref(i),
                        nb.len(),
                        set.id
                    ));
                }
            }
        }
        let kernel = match set.form {
            Form::Hla(p) => {
                if n_subs < 2 {
                    warn(format!(
                        "{n_subs} non-H substituent(s); the HLA equation was fitted for 2 to 4"
                    ));
                }
                for &c in &[pair.x, pair.y] {
                    if top.hybridization.get(c) == Some(&Hybridization::Sp2) {
                        warn(format!(
                            "{} is sp2; the HLA equation was fitted for sp3 carbons",
                            top.atom_ref(c)
                        ));
                    }
                }
                if n_subs > MAX_TERMS {
                    return Err(Error::Model(format!(
                        "{label}: {n_subs} substituents, more than the HLA equation can take ({MAX_TERMS})"
                    )));
                }
                let chi_h = Element::H.chi_huggins().unwrap_or(2.20);
                let chi = |i: usize, warn: &mut dyn FnMut(String)| -> f64 {
                    let e = top.atoms[i].element;
                    match e.chi_huggins() {
                        Some(c) => {
                            if e.data().chi_source.contains("from memory") {
                                warn(format!(
                                    "the Huggins electronegativity of {e} ({}) is a value from memory, not checked against the paper",
                                    top.atom_ref(i)
                                ));
                            }
                            c - chi_h
                        }
                        None => {
                            warn(format!(
                                "no Huggins electronegativity for {} ({}); its Δχ is taken as 0",
                                e,
                                top.atom_ref(i)
                            ));
                            0.0
                        }
                    }
                };
                let mut subs = [PreparedSub {
                    atom: 0,
                    on_x: true,
                    dchi: 0.0,
                    cos_a: 1.0,
                    sin_a: 0.0,
                }; MAX_TERMS];
                let mut n = 0;
                for (on_x, list) in [(true, &pair.subs_x), (false, &pair.subs_y)] {
                    for s in list.iter() {
                        let mut d = chi(s.atom, &mut warn);
                        for &b in &s.beta {
                            d -= p.p7 * chi(b, &mut warn);
                        }
                        let a = p.p6_rad * d.abs();
                        subs[n] = PreparedSub {
                            atom: s.atom,
                            on_x,
                            dchi: d,
                            cos_a: a.cos(),
                            sin_a: a.sin(),
                        };
                        n += 1;
                    }
                }
                Kernel::Hla { p, subs, n }
            }
            Form::Omega { .. } => match hm {
                Some(hm) => Kernel::Omega { form: set.form, hm },
                None => {
                    return Err(Error::Model(format!(
                        "{label}: set '{}' applies only to the H5–H6 pairs of a hexopyranose CH2OH group, which this pair is not",
                        set.id
                    )))
                }
            },
            f => Kernel::Single(f),
        };
        if let Kernel::Omega { hm, .. } = &kernel {
            max_index = max_index.max(hm.o5).max(hm.o6).max(hm.h6_other).max(hm.c4);
        }
        Ok(Ok(PreparedPair {
            h1: pair.h1,
            x: pair.x,
            y: pair.y,
            h2: pair.h2,
            kind: pair.kind,
            set_id: set.id.clone(),
            rms_hz: set.rms_hz,
            kernel,
            max_index,
        }))
    }

    /// The dihedral φ = τ(h1, x, y, h2) in radians and 3J in Hz for one
    /// conformer. Costs one dihedral, a cross and a dot product per HLA
    /// substituent, no trigonometric call but one atan2 for φ; no allocation.
    /// Errors ([`Error::Model`]) when `coords` is too short, the dihedral is
    /// undefined (collinear atoms), or J comes out non-finite.
    #[inline]
    pub fn evaluate(&self, coords: &[Vec3]) -> Result<(f64, f64)> {
        let (y, x, j) = self.eval_xy(coords)?;
        Ok((y.atan2(x), j))
    }

    /// 3J in Hz only, for averaging loops that do not report φ (saves the atan2).
    #[inline]
    pub fn evaluate_j(&self, coords: &[Vec3]) -> Result<f64> {
        self.eval_xy(coords).map(|t| t.2)
    }

    #[inline]
    fn eval_xy(&self, coords: &[Vec3]) -> Result<(f64, f64, f64)> {
        if coords.len() <= self.max_index {
            return Err(self.fail("coordinates do not cover every atom of the fragment"));
        }
        let (h1, x, y, h2) = (
            &coords[self.h1],
            &coords[self.x],
            &coords[self.y],
            &coords[self.h2],
        );
        let parts = DihedralParts::new(h1, x, y, h2)
            .ok_or_else(|| self.fail("H–X–Y–H dihedral undefined (collinear atoms)"))?;
        let (dy, dx, r) = (parts.y, parts.x, parts.r);
        let (cos_phi, sin_phi) = (dx / r, dy / r);
        let j = match &self.kernel {
            Kernel::Hla { p, subs, n } => hla_sum(p, &subs[..*n], coords, x, y, &parts)
                .ok_or_else(|| self.fail("coordinates do not cover every atom of the fragment"))?,
            Kernel::Single(f) => equations::single_sin_cos(f, cos_phi, sin_phi),
            Kernel::Omega { form, hm } => {
                let c5 = &coords[hm.c5];
                let c6 = &coords[hm.c6];
                let omega = dihedral(&coords[hm.o5], c5, c6, &coords[hm.o6])
                    .ok_or_else(|| self.fail("O5–C5–C6–O6 dihedral undefined (collinear atoms)"))?;
                let pro_r = is_pro_r(c6, &coords[hm.o6], c5, &coords[hm.h6], &coords[hm.h6_other]);
                // The equations are for D-hexopyranoses (C5 (R): O5 > C4 > C6 > H5).
                // An L sugar is evaluated as its mirror image: ω → −ω, and the
                // mirrored H6 swaps its pro-R/pro-S label, so J is mirror-invariant.
                if is_d_series(&coords[hm.o5], c5, &coords[hm.c4], c6) {
                    equations::omega(form, omega, pro_r)
                } else {
                    equations::omega(form, -omega, !pro_r)
                }
                .unwrap_or(f64::NAN)
            }
        };
        if !j.is_finite() {
            return Err(self.fail("coupling is not a finite number"));
        }
        Ok((dy, dx, j))
    }

    /// For a hexopyranose H5–H6 pair under an ω model: whether the H6 of this
    /// pair is pro-R in the given conformer (`None` for other pairs or bad
    /// coordinates).
    pub fn h6_is_pro_r(&self, coords: &[Vec3]) -> Option<bool> {
        match &self.kernel {
            Kernel::Omega { hm, .. } if coords.len() > self.max_index => Some(is_pro_r(
                &coords[hm.c6],
                &coords[hm.o6],
                &coords[hm.c5],
                &coords[hm.h6],
                &coords[hm.h6_other],
            )),
            _ => None,
        }
    }

    /// The β-corrected Δχ of each HLA substituent (atom, Δχ), empty for other
    /// models.
    pub fn substituent_dchi(&self) -> Vec<(usize, f64)> {
        match &self.kernel {
            Kernel::Hla { subs, n, .. } => subs[..*n].iter().map(|s| (s.atom, s.dchi)).collect(),
            _ => Vec::new(),
        }
    }

    #[cold]
    fn fail(&self, msg: &str) -> Error {
        Error::Model(format!(
            "pair H{}–H{} (atoms {}, {}, {}, {}): {msg}",
            self.h1 + 1,
            self.h2 + 1,
            self.h1 + 1,
            self.x + 1,
            self.y + 1,
            self.h2 + 1
        ))
    }
}
