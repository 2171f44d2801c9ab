//! Keeping diastereotopic protons apart across conformers.
//!
//! The two protons of a CH2 group (or of any sp3 centre with exactly two
//! protons and two other, different neighbours) are diastereotopic in general,
//! and chemists report their couplings separately. Conformer generators do
//! not keep them apart: the two protons of a CH2 are equivalent in the
//! molecular graph, so an embedding may put either one in either position.
//! Averaging the couplings of "atom 14" over such an ensemble would mix the
//! two protons.
//!
//! This module fixes the identity of each such proton by its arrangement in
//! the first conformer: the sign of the triple product
//! (H − C) · ((N₁ − C) × (N₂ − C)), with N₁, N₂ the two other neighbours in
//! index order, tells the two protons apart. In every later conformer whose
//! signs are reversed, the two protons' coordinates are exchanged before any
//! coupling is evaluated, so that each reported proton keeps the position it
//! has in conformer 1.

use crate::geometry::Vec3;
use crate::topology::Topology;

/// One prochiral centre with two protons.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
struct Centre {
    c: usize,
    h: [usize; 2],
    n: [usize; 2],
    /// Sign of the first proton's triple product in conformer 1.
    sign: bool,
}

/// Re-pairs the protons of every two-proton sp3 centre with conformer 1.
#[derive(Debug, Clone, Default)]
pub struct ProtonPairing {
    centres: Vec<Centre>,
}

fn triple(coords: &[Vec3], c: usize, h: usize, n: [usize; 2]) -> f64 {
    let o = coords[c];
    (coords[h] - o).dot(&(coords[n[0]] - o).cross(&(coords[n[1]] - o)))
}

impl ProtonPairing {
    /// Finds the centres (atoms with four neighbours, exactly two of them
    /// protons) and records each first proton's side in `first` (the
    /// coordinates of conformer 1).
    pub fn new(top: &Topology, first: &[Vec3]) -> ProtonPairing {
        let mut centres = Vec::new();
        for c in 0..top.len() {
            let nb = &top.neighbors[c];
            if nb.len() != 4 || top.atoms[c].element.is_hydrogen() {
                continue;
            }
            let hs: Vec<usize> = top.hydrogens(c).collect();
            let others: Vec<usize> = nb.iter().copied().filter(|j| !hs.contains(j)).collect();
            if hs.len() != 2 || others.len() != 2 {
                continue;
            }
            let (h, n) = ([hs[0], hs[1]], [others[0], others[1]]);
            if first.len() < top.len() {
                continue;
            }
            centres.push(Centre {
                c,
                h,
                n,
                sign: triple(first, c, h[0], n) > 0.0,
            });
        }
        ProtonPairing { centres }
    }

    /// Number of two-proton centres watched.
    pub fn len(&self) -> usize {
        self.centres.len()
    }

    /// True if the molecule has no such centre.
    pub fn is_empty(&self) -> bool {
        self.centres.is_empty()
    }

    /// Copies `coords` into `out`, exchanging the two protons of every centre
    /// whose arrangement is reversed relative to conformer 1. Returns the
    /// number of centres exchanged.
    pub fn apply(&self, coords: &[Vec3], out: &mut Vec<Vec3>) -> usize {
        out.clear();
        out.extend_from_slice(coords);
        let mut swapped = 0;
        for ct in &self.centres {
            if (triple(coords, ct.c, ct.h[0], ct.n) > 0.0) != ct.sign {
                out.swap(ct.h[0], ct.h[1]);
                swapped += 1;
            }
        }
        swapped
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::elements::Element;
    use crate::topology::{Atom, BondSource, Hybridization};

    // A CH2 between two carbons (propane's C2 with its neighbours).
    fn ch2() -> (Topology, Vec<Vec3>) {
        let el = [Element::C, Element::C, Element::C, Element::H, Element::H];
        let atoms = el
            .iter()
            .map(|&e| Atom {
                element: e,
                name: None,
                charge: 0,
            })
            .collect();
        let neighbors = vec![vec![1, 2, 3, 4], vec![0], vec![0], vec![0], vec![0]];
        let top = Topology {
            atoms,
            bonds: vec![],
            neighbors,
            bond_source: BondSource::Distance,
            rings: vec![],
            hybridization: vec![Hybridization::Sp3; 5],
        };
        let c = vec![
            Vec3::new(0.0, 0.0, 0.0),
            Vec3::new(1.5, 0.0, 0.0),
            Vec3::new(-0.5, 1.4, 0.0),
            Vec3::new(-0.3, -0.5, 0.9),
            Vec3::new(-0.3, -0.5, -0.9),
        ];
        (top, c)
    }

    #[test]
    fn swapped_protons_are_re_paired() {
        let (top, c) = ch2();
        let pairing = ProtonPairing::new(&top, &c);
        assert_eq!(pairing.len(), 1);
        let mut out = Vec::new();
        assert_eq!(pairing.apply(&c, &mut out), 0);
        assert_eq!(out, c);
        let mut swapped = c.clone();
        swapped.swap(3, 4);
        assert_eq!(pairing.apply(&swapped, &mut out), 1);
        assert_eq!(out, c);
    }
}
