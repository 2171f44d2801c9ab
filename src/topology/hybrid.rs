//! Hybridisation of each atom, and amide nitrogens.
//!
//! Where the file gives bond orders (SDF), they decide: a double or aromatic
//! bond makes an atom sp2; a triple bond or two double bonds make it sp; single
//! bonds only, sp3. Where it does not (XYZ, PDB, distance-perceived bonds), the
//! geometry decides, with the thresholds below (common practice in structure
//! perception; values chosen midway between the ideal geometries they separate).
//!
//! Amide nitrogens (N–C(=O)) are made sp2 in both cases: the amide N is planar
//! by conjugation even though all its bonds are formally single.

use super::{Atom, Hybridization};
use crate::elements::Element;
use crate::geometry::{angle, Vec3};
use crate::io::{Bond, BondOrder};

/// Sum of the three bond angles (degrees) above which an atom with three
/// neighbours is planar (sp2). Ideal values: 360° planar, 328.4° tetrahedral
/// (3 × 109.47°); 350° leaves room for the slight pyramidalisation of real
/// sp2 centres while staying far from sp3.
pub const PLANAR_ANGLE_SUM_DEG: f64 = 350.0;

/// Bond angle (degrees) above which an atom with two neighbours is linear (sp).
/// Ideal values: 180° sp, 120° sp2, 109.5° sp3.
pub const LINEAR_ANGLE_DEG: f64 = 160.0;

/// Longest C–O distance (Å) read as a C=O double bond for an oxygen with one
/// neighbour. Typical lengths (common practice, from memory): C=O 1.20–1.23 Å,
/// carboxylate C–O 1.25–1.27 Å, C–O single 1.36–1.43 Å.
pub const CARBONYL_MAX_A: f64 = 1.30;

/// Longest C–S distance (Å) read as C=S for a sulfur with one neighbour
/// (typical C=S 1.61–1.67 Å, C–S single 1.81–1.83 Å; from memory).
pub const THIOCARBONYL_MAX_A: f64 = 1.72;

/// Longest distance (Å) to its single neighbour for a nitrogen to be read as
/// nitrile-like sp N (typical C≡N 1.14–1.16 Å, C=N 1.27–1.30 Å; from memory).
pub const NITRILE_MAX_A: f64 = 1.22;

/// Assigns the hybridisation of every atom. `bonds` must be the topology's
/// bonds (sorted, `a < b`) and `neighbors` the matching sorted neighbour lists;
/// `coords` are the coordinates of the first conformer in Å.
pub fn assign(
    atoms: &[Atom],
    bonds: &[Bond],
    neighbors: &[Vec<usize>],
    coords: &[Vec3],
) -> Vec<Hybridization> {
    let n = atoms.len();
    let order = |i: usize, j: usize| -> BondOrder {
        let key = (i.min(j), i.max(j));
        bonds
            .binary_search_by(|b| (b.a, b.b).cmp(&key))
            .map(|k| bonds[k].order)
            .unwrap_or(BondOrder::Unknown)
    };
    let mut hyb = vec![Hybridization::Other; n];
    for i in 0..n {
        let el = atoms[i].element;
        if el.is_hydrogen() || !covered(el) {
            continue;
        }
        let nb = &neighbors[i];
        let orders: Vec<BondOrder> = nb.iter().map(|&j| order(i, j)).collect();
        hyb[i] = if !orders.is_empty() && orders.iter().all(|&o| o != BondOrder::Unknown) {
            from_orders(&orders)
        } else {
            from_geometry(el, i, nb, coords)
        };
    }
    // Amide nitrogens are planar (sp2).
    for i in 0..n {
        if is_amide_nitrogen(atoms, neighbors, &hyb, i) {
            hyb[i] = Hybridization::Sp2;
        }
    }
    hyb
}

/// Elements the hybridisation rules cover.
fn covered(el: Element) -> bool {
    matches!(
        el,
        Element::B | Element::C | Element::N | Element::O | Element::SI | Element::P | Element::S
    ) || el.atomic_number() == 34 // Se
}

fn from_orders(orders: &[BondOrder]) -> Hybridization {
    let doubles = orders.iter().filter(|&&o| o == BondOrder::Double).count();
    let triples = orders.iter().filter(|&&o| o == BondOrder::Triple).count();
    let aromatic = orders.contains(&BondOrder::Aromatic);
    if triples > 0 || doubles >= 2 {
        Hybridization::Sp
    } else if doubles == 1 || aromatic {
        Hybridization::Sp2
    } else {
        Hybridization::Sp3
    }
}

fn angle_sum_deg(i: usize, nb: &[usize], coords: &[Vec3]) -> Option<f64> {
    let (a, b, c) = (nb[0], nb[1], nb[2]);
    let p = |k: usize| coords.get(k);
    let (ci, ca, cb, cc) = (p(i)?, p(a)?, p(b)?, p(c)?);
    Some((angle(ca, ci, cb)? + angle(ca, ci, cc)? + angle(cb, ci, cc)?).to_degrees())
}

fn distance(i: usize, j: usize, coords: &[Vec3]) -> Option<f64> {
    Some((coords.get(i)? - coords.get(j)?).norm())
}

fn from_geometry(el: Element, i: usize, nb: &[usize], coords: &[Vec3]) -> Hybridization {
    use Hybridization::*;
    let planar = || angle_sum_deg(i, nb, coords).is_some_and(|s| s > PLANAR_ANGLE_SUM_DEG);
    let linear = || {
        match (coords.get(nb[0]), coords.get(i), coords.get(nb[1])) {
            (Some(a), Some(b), Some(c)) => angle(a, b, c),
            _ => None,
        }
        .is_some_and(|t| t.to_degrees() > LINEAR_ANGLE_DEG)
    };
    match (el, nb.len()) {
        (_, 0) => Other,
        (_, k) if k >= 4 => Sp3,
        (Element::C, 3) | (Element::N, 3) | (Element::B, 3) => {
            if planar() {
                Sp2
            } else {
                Sp3
            }
        }
        (Element::C, 2) | (Element::N, 2) => {
            if linear() {
                Sp
            } else {
                Sp2
            }
        }
        (Element::N, 1) => {
            if distance(i, nb[0], coords).is_some_and(|d| d < NITRILE_MAX_A) {
                Sp
            } else {
                Sp3
            }
        }
        (Element::O, 1) => {
            if distance(i, nb[0], coords).is_some_and(|d| d < CARBONYL_MAX_A) {
                Sp2
            } else {
                Sp3
            }
        }
        (Element::S, 1) => {
            if distance(i, nb[0], coords).is_some_and(|d| d < THIOCARBONYL_MAX_A) {
                Sp2
            } else {
                Sp3
            }
        }
        (Element::C, 1) => Sp,
        (Element::O, _) | (Element::S, _) => Sp3,
        (Element::SI, _) | (Element::P, _) => Sp3,
        _ => Other,
    }
}

/// True if atom `i` is a carbonyl-type oxygen: one neighbour, a carbon, and
/// sp2 (a double bond in the file, or a short C–O distance).
fn is_carbonyl_oxygen(
    atoms: &[Atom],
    neighbors: &[Vec<usize>],
    hyb: &[Hybridization],
    o: usize,
) -> bool {
    atoms[o].element == Element::O
        && neighbors[o].len() == 1
        && hyb[o] == Hybridization::Sp2
        && atoms[neighbors[o][0]].element == Element::C
}

/// True if atom `i` is an amide nitrogen: a nitrogen bonded to a carbon that
/// carries a carbonyl oxygen (one neighbour, sp2 from a C=O bond in the file or
/// a C–O distance below [`CARBONYL_MAX_A`]). Peptide, lactam, urea and
/// carbamate nitrogens qualify.
pub fn is_amide_nitrogen(
    atoms: &[Atom],
    neighbors: &[Vec<usize>],
    hyb: &[Hybridization],
    i: usize,
) -> bool {
    if atoms.get(i).map(|a| a.element) != Some(Element::N) {
        return false;
    }
    neighbors[i].iter().any(|&c| {
        atoms[c].element == Element::C
            && neighbors[c]
                .iter()
                .any(|&o| is_carbonyl_oxygen(atoms, neighbors, hyb, o))
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn atom(e: Element) -> Atom {
        Atom {
            element: e,
            name: None,
            charge: 0,
        }
    }

    fn neighbors_of(n: usize, bonds: &[Bond]) -> Vec<Vec<usize>> {
        let mut nb = vec![Vec::new(); n];
        for b in bonds {
            nb[b.a].push(b.b);
            nb[b.b].push(b.a);
        }
        for x in &mut nb {
            x.sort_unstable();
        }
        nb
    }

    #[test]
    fn from_bond_orders() {
        // C0=C1-C2#N3, C1-O4 ... ; C5 with two doubles (allene-like) to C1? keep simple
        use BondOrder::*;
        let atoms: Vec<Atom> = [Element::C, Element::C, Element::C, Element::N, Element::O]
            .into_iter()
            .map(atom)
            .collect();
        let mut bonds = vec![
            Bond::new(0, 1, Double),
            Bond::new(1, 2, Single),
            Bond::new(2, 3, Triple),
            Bond::new(1, 4, Single),
        ];
        bonds.sort_by_key(|b| (b.a, b.b));
        let nb = neighbors_of(5, &bonds);
        let coords = vec![Vec3::zeros(); 5];
        let h = assign(&atoms, &bonds, &nb, &coords);
        use Hybridization::*;
        assert_eq!(h, vec![Sp2, Sp2, Sp, Sp, Sp3]);
    }

    #[test]
    fn from_geometry_rules() {
        let o = Vec3::zeros();
        // trigonal planar: 120° apart in the xy plane
        let planar: Vec<Vec3> = (0..3)
            .map(|k| {
                let t = (k as f64) * 120f64.to_radians();
                Vec3::new(t.cos(), t.sin(), 0.0) * 1.4
            })
            .collect();
        // pyramidal: tetrahedral directions
        let pyr = [
            Vec3::new(1.0, 1.0, 1.0),
            Vec3::new(1.0, -1.0, -1.0),
            Vec3::new(-1.0, 1.0, -1.0),
        ];
        let c = |nb: &[Vec3], el: Element| {
            let mut coords = vec![o];
            coords.extend_from_slice(nb);
            let idx: Vec<usize> = (1..=nb.len()).collect();
            from_geometry(el, 0, &idx, &coords)
        };
        use Hybridization::*;
        assert_eq!(c(&planar, Element::C), Sp2);
        assert_eq!(c(&pyr, Element::C), Sp3);
        assert_eq!(c(&planar, Element::N), Sp2);
        assert_eq!(c(&pyr, Element::N), Sp3);
        assert_eq!(c(&[Vec3::x(), -Vec3::x()], Element::C), Sp);
        assert_eq!(c(&[Vec3::x(), Vec3::y()], Element::C), Sp2);
        assert_eq!(c(&[Vec3::x() * 1.22], Element::O), Sp2);
        assert_eq!(c(&[Vec3::x() * 1.42], Element::O), Sp3);
        assert_eq!(c(&[Vec3::x(), Vec3::y()], Element::O), Sp3);
    }

    #[test]
    fn amide_nitrogen_from_geometry() {
        // N0 - C1(=O2) - C3 ; N planar enough not needed: amide rule decides
        let atoms: Vec<Atom> = [Element::N, Element::C, Element::O, Element::C]
            .into_iter()
            .map(atom)
            .collect();
        let bonds = vec![
            Bond::new(0, 1, BondOrder::Unknown),
            Bond::new(1, 2, BondOrder::Unknown),
            Bond::new(1, 3, BondOrder::Unknown),
        ];
        let nb = neighbors_of(4, &bonds);
        let coords = vec![
            Vec3::new(-1.33, 0.0, 0.0),
            Vec3::zeros(),
            Vec3::new(0.6, 1.05, 0.0),
            Vec3::new(0.75, -1.3, 0.0),
        ];
        let h = assign(&atoms, &bonds, &nb, &coords);
        assert_eq!(h[2], Hybridization::Sp2);
        assert!(is_amide_nitrogen(&atoms, &nb, &h, 0));
        assert_eq!(h[0], Hybridization::Sp2);
        // Same with a long C–O (alcohol-like): not an amide.
        let mut far = coords.clone();
        far[2] = Vec3::new(0.72, 1.25, 0.0);
        let h = assign(&atoms, &bonds, &nb, &far);
        assert!(!is_amide_nitrogen(&atoms, &nb, &h, 0));
    }
}
