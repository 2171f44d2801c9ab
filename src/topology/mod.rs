//! The molecule's topology, perceived once per ensemble: atoms, bonds,
//! neighbours, rings and hybridisation. Every conformer is checked against it.

use crate::elements::Element;
use crate::io::{Bond, BondOrder, Frame};

pub mod hybrid;
pub mod perceive;
pub mod rings;
mod screen;

/// Hybridisation of an atom, from bond orders where the file gives them, else
/// from geometry (neighbour count and bond angles).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Hybridization {
    /// Tetrahedral (sp3).
    Sp3,
    /// Trigonal (sp2), including aromatic and amide/carbonyl atoms.
    Sp2,
    /// Linear (sp).
    Sp,
    /// Hydrogen, or an atom the rules do not cover.
    Other,
}

/// One atom of the molecule.
#[derive(Debug, Clone, PartialEq)]
pub struct Atom {
    /// Element.
    pub element: Element,
    /// Name from the file (PDB atom name, SDF alias), if any.
    pub name: Option<String>,
    /// Formal charge as written (0 where the file has none).
    pub charge: i8,
}

/// How the bonds were obtained.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum BondSource {
    /// Written in the file (SDF bond block, PDB CONECT).
    File,
    /// Perceived from interatomic distances and covalent radii.
    Distance,
}

/// Atoms, bonds, rings and hybridisation of one molecule.
#[derive(Debug, Clone)]
pub struct Topology {
    /// Atoms in file order (index = 0-based atom index).
    pub atoms: Vec<Atom>,
    /// Bonds with `a < b`, sorted.
    pub bonds: Vec<Bond>,
    /// Neighbours of each atom, sorted by index.
    pub neighbors: Vec<Vec<usize>>,
    /// Where the bonds came from.
    pub bond_source: BondSource,
    /// Smallest set of smallest rings; each ring lists its atoms in ring order.
    pub rings: Vec<Vec<usize>>,
    /// Hybridisation of each atom.
    pub hybridization: Vec<Hybridization>,
}

impl Topology {
    /// Number of atoms.
    pub fn len(&self) -> usize {
        self.atoms.len()
    }

    /// True if there are no atoms.
    pub fn is_empty(&self) -> bool {
        self.atoms.is_empty()
    }

    /// The order of the bond i–j, if bonded.
    pub fn bond_order(&self, i: usize, j: usize) -> Option<BondOrder> {
        let key = (i.min(j), i.max(j));
        self.bonds
            .binary_search_by(|b| (b.a, b.b).cmp(&key))
            .ok()
            .map(|k| self.bonds[k].order)
    }

    /// True if atoms i and j are bonded.
    pub fn bonded(&self, i: usize, j: usize) -> bool {
        self.neighbors[i].binary_search(&j).is_ok()
    }

    /// Human-readable reference of an atom: `7` or `7 (H2A)`, 1-based.
    pub fn atom_ref(&self, i: usize) -> String {
        match &self.atoms[i].name {
            Some(n) if !n.is_empty() => format!("{}{} ({})", self.atoms[i].element, i + 1, n),
            _ => format!("{}{}", self.atoms[i].element, i + 1),
        }
    }

    /// Non-hydrogen neighbours of atom i.
    pub fn heavy_neighbors(&self, i: usize) -> impl Iterator<Item = usize> + '_ {
        self.neighbors[i]
            .iter()
            .copied()
            .filter(move |&j| !self.atoms[j].element.is_hydrogen())
    }

    /// Hydrogen neighbours of atom i.
    pub fn hydrogens(&self, i: usize) -> impl Iterator<Item = usize> + '_ {
        self.neighbors[i]
            .iter()
            .copied()
            .filter(move |&j| self.atoms[j].element.is_hydrogen())
    }

    /// True if atom i is an amide nitrogen (N bonded to a carbon carrying a
    /// carbonyl oxygen); see [`hybrid::is_amide_nitrogen`].
    pub fn is_amide_nitrogen(&self, i: usize) -> bool {
        hybrid::is_amide_nitrogen(&self.atoms, &self.neighbors, &self.hybridization, i)
    }

    /// The rings (indices into `rings`) that contain atom i.
    pub fn rings_of(&self, i: usize) -> impl Iterator<Item = usize> + '_ {
        self.rings
            .iter()
            .enumerate()
            .filter(move |(_, r)| r.contains(&i))
            .map(|(k, _)| k)
    }
}

/// Atoms of a frame as topology atoms (names kept where non-empty).
pub fn atoms_of(frame: &Frame) -> Vec<Atom> {
    (0..frame.len())
        .map(|i| Atom {
            element: frame.elements[i],
            name: frame
                .names
                .get(i)
                .filter(|n| !n.is_empty())
                .map(|n| n.to_string()),
            charge: frame.charges.get(i).copied().unwrap_or(0),
        })
        .collect()
}
