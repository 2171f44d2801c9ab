//! Vicinal fragments: every H–X–Y–H path with X and Y heavy atoms, with the
//! substituents that the coupling models need. Perceived once per ensemble
//! from the [`Topology`]; geometry-dependent quantities (dihedrals, the
//! orientation signs ξ) are evaluated per conformer elsewhere.

use crate::elements::Element;
use crate::topology::{Hybridization, Topology};

/// The kind of a vicinal fragment, which decides the default coupling model.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize, serde::Deserialize)]
pub enum FragmentKind {
    /// H–C(sp3)–C(sp3)–H.
    #[serde(rename = "HC(sp3)C(sp3)H")]
    HCsp3Csp3H,
    /// H–C(sp3)–C(sp2)–H (either way round).
    #[serde(rename = "HC(sp3)C(sp2)H")]
    HCsp3Csp2H,
    /// H–C(sp2)–C(sp2)–H (olefinic or aromatic; no Karplus model by default).
    #[serde(rename = "HC(sp2)C(sp2)H")]
    HCsp2Csp2H,
    /// H–N–C–H; `amide` when N is an amide nitrogen (peptide 3J(HN,Hα)).
    #[serde(rename = "HNCH")]
    HNCH,
    /// H–O–C–H (hydroxyl proton to carbinol proton).
    #[serde(rename = "HOCH")]
    HOCH,
    /// Any other H–X–Y–H path (for example H–C–Si–H, H–N–N–H).
    #[serde(rename = "other")]
    Other,
}

impl FragmentKind {
    /// A short label for tables and CSV, stable across versions.
    pub fn label(self) -> &'static str {
        match self {
            FragmentKind::HCsp3Csp3H => "HC(sp3)C(sp3)H",
            FragmentKind::HCsp3Csp2H => "HC(sp3)C(sp2)H",
            FragmentKind::HCsp2Csp2H => "HC(sp2)C(sp2)H",
            FragmentKind::HNCH => "HNCH",
            FragmentKind::HOCH => "HOCH",
            FragmentKind::Other => "other",
        }
    }
}

/// A non-hydrogen substituent (α) on X or Y, other than the X–Y bond partner,
/// with its own non-hydrogen neighbours (β), excluding the carbon it sits on.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Substituent {
    /// 0-based index of the α atom.
    pub atom: usize,
    /// 0-based indices of the β atoms on it (hydrogens excluded).
    pub beta: Vec<usize>,
}

/// What kind of fast-rotating group a proton belongs to.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum RotorKind {
    /// A CH3 group (three equivalent protons by fast rotation).
    Methyl,
    /// An NH3+ group.
    Ammonium,
}

/// A group of protons made equivalent by fast rotation about one bond.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Rotor {
    /// The heavy atom carrying the protons (0-based).
    pub center: usize,
    /// The three protons (0-based), in index order.
    pub protons: [usize; 3],
    /// Methyl or ammonium.
    pub kind: RotorKind,
}

/// One H–X–Y–H path. `h1`/`x` and `y`/`h2` are ordered so that `h1 < h2`.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct VicinalPair {
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
    /// True for H–N–C–H where N is an amide nitrogen (N–C(=O)).
    pub amide: bool,
    /// Non-hydrogen substituents on `x` other than `y`.
    pub subs_x: Vec<Substituent>,
    /// Non-hydrogen substituents on `y` other than `x`.
    pub subs_y: Vec<Substituent>,
    /// Index into [`Fragments::rotors`] if `h1` belongs to a fast rotor.
    pub rotor1: Option<usize>,
    /// Index into [`Fragments::rotors`] if `h2` belongs to a fast rotor.
    pub rotor2: Option<usize>,
}

impl VicinalPair {
    /// Total number of non-hydrogen substituents on both carbons.
    pub fn n_substituents(&self) -> usize {
        self.subs_x.len() + self.subs_y.len()
    }
}

/// All vicinal pairs and rotors of a molecule.
#[derive(Debug, Clone, Default)]
pub struct Fragments {
    /// Every H–X–Y–H path, sorted by (h1, h2).
    pub pairs: Vec<VicinalPair>,
    /// Fast-rotating groups.
    pub rotors: Vec<Rotor>,
}

/// Enumerates every vicinal H–X–Y–H path of `top`: X and Y bonded non-hydrogen
/// atoms, each carrying at least one hydrogen. Each path appears once, oriented
/// so that `h1 < h2` (`h1` on `x`); pairs are sorted by `(h1, h2)`. Geminal
/// protons on one carbon (CH2) stay distinct pairs. Methyl groups (a carbon
/// with exactly three H and one heavy neighbour) and ammonium groups (an N with
/// three H and one heavy neighbour, charged +1 or with four neighbours) become
/// [`Rotor`]s, sorted by their centre atom.
///
/// The kind follows the elements and hybridisation of X and Y: C(sp3)–C(sp3),
/// C(sp3)–C(sp2), C(sp2)–C(sp2), N–C (with the amide flag of the N), O–C, and
/// [`FragmentKind::Other`] for everything else (including sp carbons).
pub fn enumerate(top: &Topology) -> Fragments {
    let n = top.len();
    let mut rotors = Vec::new();
    let mut rotor_of = vec![None; n];
    for c in 0..n {
        if let Some(kind) = rotor_kind(top, c) {
            let hs: Vec<usize> = top.hydrogens(c).collect();
            if let [a, b, d] = hs[..] {
                let k = rotors.len();
                for &h in &hs {
                    rotor_of[h] = Some(k);
                }
                rotors.push(Rotor {
                    center: c,
                    protons: [a, b, d],
                    kind,
                });
            }
        }
    }

    let mut pairs = Vec::new();
    for bond in &top.bonds {
        let (u, v) = (bond.a, bond.b);
        if top.atoms[u].element.is_hydrogen() || top.atoms[v].element.is_hydrogen() {
            continue;
        }
        for hu in top.hydrogens(u) {
            for hv in top.hydrogens(v) {
                if hu == hv {
                    continue;
                }
                let (h1, x, y, h2) = if hu < hv {
                    (hu, u, v, hv)
                } else {
                    (hv, v, u, hu)
                };
                let (kind, amide) = kind_of(top, x, y);
                pairs.push(VicinalPair {
                    h1,
                    x,
                    y,
                    h2,
                    kind,
                    amide,
                    subs_x: substituents(top, x, y),
                    subs_y: substituents(top, y, x),
                    rotor1: rotor_of[h1],
                    rotor2: rotor_of[h2],
                });
            }
        }
    }
    pairs.sort_by_key(|p| (p.h1, p.h2));
    Fragments { pairs, rotors }
}

/// The rotor kind of atom `c`, if it is a methyl carbon or an ammonium nitrogen.
fn rotor_kind(top: &Topology, c: usize) -> Option<RotorKind> {
    let el = top.atoms[c].element;
    let nh = top.hydrogens(c).count();
    let nheavy = top.heavy_neighbors(c).count();
    if nh != 3 || nheavy != 1 {
        return None;
    }
    if el == Element::C {
        Some(RotorKind::Methyl)
    } else if el == Element::N && (top.atoms[c].charge == 1 || top.neighbors[c].len() == 4) {
        Some(RotorKind::Ammonium)
    } else {
        None
    }
}

fn kind_of(top: &Topology, x: usize, y: usize) -> (FragmentKind, bool) {
    use Hybridization::*;
    let (ex, ey) = (top.atoms[x].element, top.atoms[y].element);
    let (hx, hy) = (top.hybridization[x], top.hybridization[y]);
    match (ex, ey) {
        (Element::C, Element::C) => {
            let k = match (hx, hy) {
                (Sp3, Sp3) => FragmentKind::HCsp3Csp3H,
                (Sp3, Sp2) | (Sp2, Sp3) => FragmentKind::HCsp3Csp2H,
                (Sp2, Sp2) => FragmentKind::HCsp2Csp2H,
                _ => FragmentKind::Other,
            };
            (k, false)
        }
        (Element::N, Element::C) => (FragmentKind::HNCH, top.is_amide_nitrogen(x)),
        (Element::C, Element::N) => (FragmentKind::HNCH, top.is_amide_nitrogen(y)),
        (Element::O, Element::C) | (Element::C, Element::O) => (FragmentKind::HOCH, false),
        _ => (FragmentKind::Other, false),
    }
}

/// Non-hydrogen neighbours of `x` other than `y`, each with its own non-hydrogen
/// neighbours other than `x`.
fn substituents(top: &Topology, x: usize, y: usize) -> Vec<Substituent> {
    top.heavy_neighbors(x)
        .filter(|&a| a != y)
        .map(|a| Substituent {
            atom: a,
            beta: top.heavy_neighbors(a).filter(|&b| b != x).collect(),
        })
        .collect()
}
