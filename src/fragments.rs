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
    /// Every kind, in the order used in documentation.
    pub const ALL: [FragmentKind; 6] = [
        FragmentKind::HCsp3Csp3H,
        FragmentKind::HCsp3Csp2H,
        FragmentKind::HCsp2Csp2H,
        FragmentKind::HNCH,
        FragmentKind::HOCH,
        FragmentKind::Other,
    ];

    /// The kind whose [`label`](Self::label) is `s` (case-insensitive; also
    /// accepts `HCCH` for H–C(sp3)–C(sp3)–H).
    pub fn from_label(s: &str) -> Option<FragmentKind> {
        if s.eq_ignore_ascii_case("HCCH") {
            return Some(FragmentKind::HCsp3Csp3H);
        }
        FragmentKind::ALL
            .into_iter()
            .find(|k| k.label().eq_ignore_ascii_case(s))
    }

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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::{Bond, BondOrder};
    use crate::topology::{Atom, BondSource};

    /// A topology from elements, bonds and hybridisations (no geometry).
    fn topo(
        els: &[Element],
        bonds: &[(usize, usize)],
        hyb: &[Hybridization],
        charge: &[i8],
    ) -> Topology {
        let n = els.len();
        let mut b: Vec<Bond> = bonds
            .iter()
            .map(|&(i, j)| Bond::new(i, j, BondOrder::Unknown))
            .collect();
        b.sort_by_key(|x| (x.a, x.b));
        let mut nb = vec![Vec::new(); n];
        for x in &b {
            nb[x.a].push(x.b);
            nb[x.b].push(x.a);
        }
        for x in &mut nb {
            x.sort_unstable();
        }
        Topology {
            atoms: (0..n)
                .map(|i| Atom {
                    element: els[i],
                    name: None,
                    charge: charge.get(i).copied().unwrap_or(0),
                })
                .collect(),
            bonds: b,
            neighbors: nb,
            bond_source: BondSource::Distance,
            rings: Vec::new(),
            hybridization: hyb.to_vec(),
        }
    }

    use Element as E;
    use Hybridization::{Other as Ot, Sp2, Sp3};

    #[test]
    fn ethanol() {
        // C0 H3 H4 H5; C1 H6 H7; O2 H8
        let t = topo(
            &[E::C, E::C, E::O, E::H, E::H, E::H, E::H, E::H, E::H],
            &[
                (0, 1),
                (1, 2),
                (0, 3),
                (0, 4),
                (0, 5),
                (1, 6),
                (1, 7),
                (2, 8),
            ],
            &[Sp3, Sp3, Sp3, Ot, Ot, Ot, Ot, Ot, Ot],
            &[],
        );
        let f = enumerate(&t);
        assert_eq!(f.pairs.len(), 8);
        assert_eq!(
            f.rotors,
            vec![Rotor {
                center: 0,
                protons: [3, 4, 5],
                kind: RotorKind::Methyl
            }]
        );
        let keys: Vec<(usize, usize)> = f.pairs.iter().map(|p| (p.h1, p.h2)).collect();
        let mut sorted = keys.clone();
        sorted.sort_unstable();
        assert_eq!(keys, sorted);
        for p in &f.pairs {
            assert!(p.h1 < p.h2);
            assert!(t.bonded(p.h1, p.x) && t.bonded(p.x, p.y) && t.bonded(p.y, p.h2));
        }
        let p = &f.pairs[0];
        assert_eq!((p.h1, p.x, p.y, p.h2), (3, 0, 1, 6));
        assert_eq!(p.kind, FragmentKind::HCsp3Csp3H);
        assert_eq!(p.subs_x, vec![]);
        assert_eq!(
            p.subs_y,
            vec![Substituent {
                atom: 2,
                beta: vec![]
            }]
        );
        assert_eq!((p.rotor1, p.rotor2), (Some(0), None));
        let oh: Vec<&VicinalPair> = f
            .pairs
            .iter()
            .filter(|p| p.kind == FragmentKind::HOCH)
            .collect();
        assert_eq!(oh.len(), 2);
        assert!(oh
            .iter()
            .all(|p| p.h2 == 8 && p.x == 1 && p.y == 2 && !p.amide));
        assert_eq!(
            oh[0].subs_x,
            vec![Substituent {
                atom: 0,
                beta: vec![]
            }]
        );
    }

    #[test]
    fn kinds_by_hybridisation_and_beta_atoms() {
        // propene-like: C0(sp3)H3 – C1(sp2)H – C2(sp2)H2, plus a Cl on C0's neighbour? keep: C0–C1=C2
        // atoms: C0 C1 C2 | H3 H4 H5 on C0 | H6 on C1 | H7 H8 on C2
        let t = topo(
            &[E::C, E::C, E::C, E::H, E::H, E::H, E::H, E::H, E::H],
            &[
                (0, 1),
                (1, 2),
                (0, 3),
                (0, 4),
                (0, 5),
                (1, 6),
                (2, 7),
                (2, 8),
            ],
            &[Sp3, Sp2, Sp2, Ot, Ot, Ot, Ot, Ot, Ot],
            &[],
        );
        let f = enumerate(&t);
        let count = |k| f.pairs.iter().filter(|p| p.kind == k).count();
        assert_eq!(count(FragmentKind::HCsp3Csp2H), 3);
        assert_eq!(count(FragmentKind::HCsp2Csp2H), 2);
        let p = f.pairs.iter().find(|p| p.x == 0).unwrap();
        assert_eq!(
            p.subs_y,
            vec![Substituent {
                atom: 2,
                beta: vec![]
            }]
        );
        // β atoms: for the C1=C2 pair, C1's substituent C0 has no heavy neighbours but C1.
        let q = f
            .pairs
            .iter()
            .find(|p| p.kind == FragmentKind::HCsp2Csp2H)
            .unwrap();
        assert_eq!((q.x, q.y), (1, 2));
        assert_eq!(
            q.subs_x,
            vec![Substituent {
                atom: 0,
                beta: vec![]
            }]
        );
    }

    #[test]
    fn methylammonium_and_amide() {
        // CH3–NH3+: C0 N1, H2-4 on C, H5-7 on N
        let t = topo(
            &[E::C, E::N, E::H, E::H, E::H, E::H, E::H, E::H],
            &[(0, 1), (0, 2), (0, 3), (0, 4), (1, 5), (1, 6), (1, 7)],
            &[Sp3, Sp3, Ot, Ot, Ot, Ot, Ot, Ot],
            &[0, 1],
        );
        let f = enumerate(&t);
        assert_eq!(f.rotors.len(), 2);
        assert_eq!(f.rotors[1].kind, RotorKind::Ammonium);
        assert_eq!(f.pairs.len(), 9);
        assert!(f
            .pairs
            .iter()
            .all(|p| p.kind == FragmentKind::HNCH && !p.amide));
        assert!(f
            .pairs
            .iter()
            .all(|p| p.rotor1 == Some(0) && p.rotor2 == Some(1)));

        // N-methylformamide: H–C(=O)–N(H)–CH3. C0(=O1) N2 C3; H4 on C0, H5 on N2, H6-8 on C3.
        let t = topo(
            &[E::C, E::O, E::N, E::C, E::H, E::H, E::H, E::H, E::H],
            &[
                (0, 1),
                (0, 2),
                (2, 3),
                (0, 4),
                (2, 5),
                (3, 6),
                (3, 7),
                (3, 8),
            ],
            &[Sp2, Sp2, Sp2, Sp3, Ot, Ot, Ot, Ot, Ot],
            &[],
        );
        let f = enumerate(&t);
        assert_eq!(f.pairs.len(), 4);
        assert!(f
            .pairs
            .iter()
            .all(|p| p.kind == FragmentKind::HNCH && p.amide));
        // the formyl H4–C0–N2–H5 path, oriented h1 = 4 on x = C0
        let p = &f.pairs[0];
        assert_eq!((p.h1, p.x, p.y, p.h2), (4, 0, 2, 5));
        assert_eq!(
            p.subs_x,
            vec![Substituent {
                atom: 1,
                beta: vec![]
            }]
        );
        assert_eq!(
            p.subs_y,
            vec![Substituent {
                atom: 3,
                beta: vec![]
            }]
        );
        // NH with one proton: not a rotor; only the methyl is.
        assert_eq!(f.rotors.len(), 1);
    }

    #[test]
    fn other_kinds() {
        // H3Si–CH3 : Other
        let t = topo(
            &[E::SI, E::C, E::H, E::H, E::H, E::H, E::H, E::H],
            &[(0, 1), (0, 2), (0, 3), (0, 4), (1, 5), (1, 6), (1, 7)],
            &[Sp3, Sp3, Ot, Ot, Ot, Ot, Ot, Ot],
            &[],
        );
        let f = enumerate(&t);
        assert_eq!(f.pairs.len(), 9);
        assert!(f.pairs.iter().all(|p| p.kind == FragmentKind::Other));
    }
}
