//! Vicinal fragments: every H–X–Y–H path with X and Y heavy atoms, with the
//! substituents that the coupling models need. Perceived once per ensemble
//! from the [`Topology`]; geometry-dependent quantities (dihedrals, the
//! orientation signs ξ) are evaluated per conformer elsewhere.

use crate::topology::Topology;

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

/// Enumerates every vicinal H–X–Y–H path of `top`. (Placeholder until
/// fragment perception lands.)
pub fn enumerate(_top: &Topology) -> Fragments {
    Fragments::default()
}
