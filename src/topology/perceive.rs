//! Building a [`Topology`] from the first conformer, and checking the others
//! against it.
//!
//! Bonds come from the file when it has them (SDF bond block, PDB CONECT);
//! otherwise two atoms are bonded when their distance is at most
//! r_i + r_j + [`BOND_TOLERANCE_A`], with the single-bond covalent radii of
//! Cordero et al. (Dalton Trans. 2008, 2832), hydrogen–hydrogen pairs excepted.
//! Pairs are found with a cell grid, so perception and the per-conformer check
//! are O(n) in the number of atoms.

use super::screen::PairScreen;
use super::{atoms_of, hybrid, rings, BondSource, Topology};
use crate::elements::Element;
use crate::error::{Error, Result};
use crate::geometry::Vec3;
use crate::io::{Bond, BondOrder, Frame};

/// Tolerance (Å) added to the sum of covalent radii for distance-based bond
/// perception: bonded when d ≤ r_i + r_j + 0.45 Å. Common practice in bond
/// perception from Cartesian coordinates (the same margin is used by several
/// structure toolkits); it accepts stretched bonds in optimised and MD
/// geometries while staying well below 1,3 distances (C···C ≈ 2.5 Å against a
/// C–C cutoff of 1.97 Å; H···C ≈ 2.1 Å against 1.52 Å).
pub const BOND_TOLERANCE_A: f64 = 0.45;

/// Two atoms closer than this (Å) are taken to be the same atom written twice.
pub const DUPLICATE_DISTANCE_A: f64 = 0.1;

/// Builds the topology of a molecule from one frame (taken as conformer 1):
/// bonds from the file when `frame.has_bonds`, else from distances; then the
/// smallest set of smallest rings and the hybridisation of every atom.
///
/// Fails on non-finite coordinates, atoms closer than
/// [`DUPLICATE_DISTANCE_A`], a hydrogen bonded to more than one atom (distance
/// perception only), bond indices outside the atom list, and a structure
/// whose carbons carry no hydrogens at all (implicit-hydrogen input).
pub fn build(frame: &Frame) -> Result<Topology> {
    let n = frame.len();
    if frame.coords.len() != n {
        return Err(conformer_err(
            frame,
            1,
            format!(
                "{} coordinates for {} atoms (reader defect?)",
                frame.coords.len(),
                n
            ),
        ));
    }
    if n == 0 {
        return Err(conformer_err(frame, 1, "the structure has no atoms".into()));
    }
    let atoms = atoms_of(frame);
    check_finite(frame, 1)?;

    let mut checker = GridScan::default();
    let radii: Vec<f64> = frame.elements.iter().map(|e| e.covalent_radius()).collect();
    let (bonds, source) = if frame.has_bonds {
        // Duplicate positions are wrong whatever the bond source.
        checker.scan(&frame.coords, &radii, |i, j, d2| {
            if d2 < DUPLICATE_DISTANCE_A * DUPLICATE_DISTANCE_A {
                return Err(duplicate_err(frame, 1, i, j, d2.sqrt()));
            }
            Ok(())
        })?;
        (file_bonds(frame)?, BondSource::File)
    } else {
        let mut bonds = Vec::new();
        checker.scan(&frame.coords, &radii, |i, j, d2| {
            if d2 < DUPLICATE_DISTANCE_A * DUPLICATE_DISTANCE_A {
                return Err(duplicate_err(frame, 1, i, j, d2.sqrt()));
            }
            let (ei, ej) = (frame.elements[i], frame.elements[j]);
            if ei.is_hydrogen() && ej.is_hydrogen() {
                return Ok(());
            }
            let cut = radii[i] + radii[j] + BOND_TOLERANCE_A;
            if d2 <= cut * cut {
                bonds.push(Bond::new(i, j, BondOrder::Unknown));
            }
            Ok(())
        })?;
        bonds.sort_by_key(|b| (b.a, b.b));
        (bonds, BondSource::Distance)
    };

    let mut neighbors = vec![Vec::new(); n];
    for b in &bonds {
        neighbors[b.a].push(b.b);
        neighbors[b.b].push(b.a);
    }
    for nb in &mut neighbors {
        nb.sort_unstable();
    }

    if source == BondSource::Distance {
        for (h, nb) in neighbors.iter().enumerate() {
            if frame.elements[h].is_hydrogen() && nb.len() > 1 {
                let list: Vec<String> = nb.iter().map(|&j| label(frame, j)).collect();
                return Err(conformer_err(
                    frame,
                    1,
                    format!(
                        "hydrogen {} is bonded to {} atoms ({}) by distance; give bonds in the file (SDF) if this is intended",
                        label(frame, h),
                        nb.len(),
                        list.join(", ")
                    ),
                ));
            }
        }
    }

    let has_carbon = frame.elements.contains(&Element::C);
    let has_ch = (0..n).any(|i| {
        frame.elements[i] == Element::C
            && neighbors[i]
                .iter()
                .any(|&j| frame.elements[j].is_hydrogen())
    });
    if has_carbon && !has_ch {
        return Err(Error::Structure(format!(
            "{}: hydrogens are needed: add explicit hydrogens to the file (no carbon carries a hydrogen)",
            frame.path.display()
        )));
    }

    let rings = rings::sssr(&neighbors);
    let hybridization = hybrid::assign(&atoms, &bonds, &neighbors, &frame.coords);
    Ok(Topology {
        atoms,
        bonds,
        neighbors,
        bond_source: source,
        rings,
        hybridization,
    })
}

/// Checks that `frame` (1-based `conformer` in the ensemble) has the same
/// atoms as `top`, in the same order, with finite coordinates, no duplicate
/// atoms and the same bonding: for file bonds, the same bond list; for
/// distance-perceived bonds, every bond still within its cutoff and no new
/// bond. O(n) per frame. For many frames, keep a [`FrameChecker`] instead,
/// which reuses its buffers.
pub fn check_frame(top: &Topology, frame: &Frame, conformer: usize) -> Result<()> {
    FrameChecker::new(top).check(frame, conformer)
}

/// Reusable per-ensemble checker: holds the topology, its radii and the cell
/// grid's buffers, so that checking a frame allocates nothing once warm.
#[derive(Debug, Clone)]
pub struct FrameChecker {
    top: Topology,
    radii: Vec<f64>,
    grid: GridScan,
    sorted_bonds: Vec<(usize, usize, BondOrder)>,
    /// For small molecules with distance-perceived bonds: the single-precision
    /// screen that passes the usual frame without the exact checks. `None`
    /// for large molecules, which use the grid, and for bonds from the file.
    screen: Option<PairScreen>,
}

impl FrameChecker {
    /// A checker for frames of the molecule `top` (keeps its own copy).
    pub fn new(top: &Topology) -> Self {
        FrameChecker {
            top: top.clone(),
            radii: top
                .atoms
                .iter()
                .map(|a| a.element.covalent_radius())
                .collect(),
            grid: GridScan::default(),
            sorted_bonds: Vec::new(),
            screen: pair_screen(top),
        }
    }

    /// Checks one frame; see [`check_frame`].
    pub fn check(&mut self, frame: &Frame, conformer: usize) -> Result<()> {
        if self.same_elements(frame) && self.screen_clear(frame) {
            return Ok(());
        }
        self.check_atoms(frame, conformer)?;
        self.check_bonds_exact(frame, conformer)
    }

    /// True when the frame has the topology's elements in the same order.
    fn same_elements(&self, frame: &Frame) -> bool {
        frame.elements.len() == self.top.len()
            && frame
                .elements
                .iter()
                .zip(&self.top.atoms)
                .all(|(e, a)| *e == a.element)
    }

    /// True when the pair screen passes the frame: finite coordinates, every
    /// bond within its cutoff, no new bond, no duplicate atoms.
    fn screen_clear(&mut self, frame: &Frame) -> bool {
        self.screen.as_mut().is_some_and(|s| s.clear(&frame.coords))
    }

    /// Checks atom count, elements and finite coordinates only.
    pub fn check_atoms(&self, frame: &Frame, conformer: usize) -> Result<()> {
        let top = &self.top;
        if frame.len() != top.len() || frame.coords.len() != top.len() {
            return Err(conformer_err(
                frame,
                conformer,
                format!(
                    "has {} atoms but conformer 1 has {}",
                    frame.len().min(frame.coords.len()),
                    top.len()
                ),
            ));
        }
        if let Some(i) = (0..top.len()).find(|&i| frame.elements[i] != top.atoms[i].element) {
            return Err(conformer_err(
                frame,
                conformer,
                format!(
                    "atom {} is {} here but {} in conformer 1",
                    i + 1,
                    frame.elements[i],
                    top.atoms[i].element
                ),
            ));
        }
        check_finite(frame, conformer)
    }

    /// Checks bonding only (and duplicate atoms); assumes
    /// [`check_atoms`](Self::check_atoms) passed.
    pub fn check_bonds(&mut self, frame: &Frame, conformer: usize) -> Result<()> {
        if self.screen_clear(frame) {
            return Ok(());
        }
        self.check_bonds_exact(frame, conformer)
    }

    /// [`check_bonds`](Self::check_bonds) in double precision, naming the
    /// first offending atoms.
    fn check_bonds_exact(&mut self, frame: &Frame, conformer: usize) -> Result<()> {
        let coords = &frame.coords;
        let top = &self.top;
        match top.bond_source {
            BondSource::Distance => {
                self.check_bond_lengths(frame, conformer)?;
                let radii = &self.radii;
                self.grid.scan(coords, radii, |i, j, d2| {
                    if d2 < DUPLICATE_DISTANCE_A * DUPLICATE_DISTANCE_A {
                        return Err(duplicate_err(frame, conformer, i, j, d2.sqrt()));
                    }
                    let (hi, hj) = (
                        frame.elements[i].is_hydrogen(),
                        frame.elements[j].is_hydrogen(),
                    );
                    if hi && hj {
                        return Ok(());
                    }
                    let cut = radii[i] + radii[j] + BOND_TOLERANCE_A;
                    if d2 <= cut * cut && !top.bonded(i, j) {
                        let d = d2.sqrt();
                        let msg = if hi || hj {
                            let (h, x) = if hi { (i, j) } else { (j, i) };
                            format!(
                                "new bond {}–{} ({:.2} Å): a proton moved?",
                                label(frame, h),
                                label(frame, x),
                                d
                            )
                        } else {
                            format!(
                                "new bond {}–{} ({:.2} Å) not in conformer 1",
                                label(frame, i),
                                label(frame, j),
                                d
                            )
                        };
                        return Err(conformer_err(frame, conformer, msg));
                    }
                    Ok(())
                })
            }
            BondSource::File => {
                self.grid.scan(coords, &self.radii, |i, j, d2| {
                    if d2 < DUPLICATE_DISTANCE_A * DUPLICATE_DISTANCE_A {
                        return Err(duplicate_err(frame, conformer, i, j, d2.sqrt()));
                    }
                    Ok(())
                })?;
                if frame.has_bonds {
                    self.compare_file_bonds(frame, conformer)?;
                }
                Ok(())
            }
        }
    }

    /// Every bond of the topology still within its cutoff.
    fn check_bond_lengths(&self, frame: &Frame, conformer: usize) -> Result<()> {
        let coords = &frame.coords;
        for b in &self.top.bonds {
            let cut = self.radii[b.a] + self.radii[b.b] + BOND_TOLERANCE_A;
            let d2 = (coords[b.a] - coords[b.b]).norm_squared();
            if d2 > cut * cut {
                return Err(conformer_err(
                    frame,
                    conformer,
                    format!(
                        "bond {}–{} is broken ({:.2} Å; bonded up to {:.2} Å)",
                        label(frame, b.a),
                        label(frame, b.b),
                        d2.sqrt(),
                        cut
                    ),
                ));
            }
        }
        Ok(())
    }

    fn compare_file_bonds(&mut self, frame: &Frame, conformer: usize) -> Result<()> {
        let top = &self.top;
        let same_in_order = frame.bonds.len() == top.bonds.len()
            && frame
                .bonds
                .iter()
                .zip(&top.bonds)
                .all(|(f, t)| f.a.min(f.b) == t.a && f.a.max(f.b) == t.b && f.order == t.order);
        if same_in_order {
            return Ok(());
        }
        self.sorted_bonds.clear();
        self.sorted_bonds.extend(
            frame
                .bonds
                .iter()
                .map(|b| (b.a.min(b.b), b.a.max(b.b), b.order)),
        );
        self.sorted_bonds.sort_by_key(|&(a, b, _)| (a, b));
        self.sorted_bonds.dedup_by_key(|&mut (a, b, _)| (a, b));
        let n = top.len();
        let name = |i: usize| {
            if i < n {
                label(frame, i)
            } else {
                format!("#{}", i + 1)
            }
        };
        // First bond missing here, or present here only, or with another order.
        let (mut p, mut q) = (0, 0);
        let fb = &self.sorted_bonds;
        loop {
            match (fb.get(p), top.bonds.get(q)) {
                (None, None) => return Ok(()),
                (Some(&(a, b, o)), Some(t)) if (a, b) == (t.a, t.b) => {
                    if o != t.order {
                        return Err(conformer_err(
                            frame,
                            conformer,
                            format!(
                                "bond {}–{} has order {:?} here but {:?} in conformer 1",
                                name(a),
                                name(b),
                                o,
                                t.order
                            ),
                        ));
                    }
                    p += 1;
                    q += 1;
                }
                (Some(&(a, b, _)), None) => {
                    return Err(conformer_err(
                        frame,
                        conformer,
                        format!("new bond {}–{} not in conformer 1", name(a), name(b)),
                    ));
                }
                (Some(&(a, b, _)), Some(t)) if (a, b) < (t.a, t.b) => {
                    return Err(conformer_err(
                        frame,
                        conformer,
                        format!("new bond {}–{} not in conformer 1", name(a), name(b)),
                    ));
                }
                (_, Some(t)) => {
                    return Err(conformer_err(
                        frame,
                        conformer,
                        format!(
                            "bond {}–{} of conformer 1 is missing here",
                            name(t.a),
                            name(t.b)
                        ),
                    ));
                }
            }
        }
    }
}

/// Atom label: element symbol and 1-based index, with the file's name if any
/// (`C3`, `H9 (HB2)`).
fn label(frame: &Frame, i: usize) -> String {
    let el = frame.elements.get(i).map(|e| e.symbol()).unwrap_or("atom ");
    match frame.names.get(i) {
        Some(n) if !n.trim().is_empty() => format!("{}{} ({})", el, i + 1, n.trim()),
        _ => format!("{}{}", el, i + 1),
    }
}

fn conformer_err(frame: &Frame, conformer: usize, msg: String) -> Error {
    Error::Conformer {
        path: frame.path.clone(),
        line: frame.line,
        conformer,
        msg,
    }
}

fn duplicate_err(frame: &Frame, conformer: usize, i: usize, j: usize, d: f64) -> Error {
    conformer_err(
        frame,
        conformer,
        format!(
            "atoms {} and {} are {:.2} Å apart (duplicate atoms?)",
            label(frame, i),
            label(frame, j),
            d
        ),
    )
}

fn check_finite(frame: &Frame, conformer: usize) -> Result<()> {
    if let Some(i) = frame
        .coords
        .iter()
        .position(|c| !(c.x.is_finite() && c.y.is_finite() && c.z.is_finite()))
    {
        return Err(conformer_err(
            frame,
            conformer,
            format!(
                "atom {} has a non-finite coordinate ({}, {}, {})",
                label(frame, i),
                frame.coords[i].x,
                frame.coords[i].y,
                frame.coords[i].z
            ),
        ));
    }
    Ok(())
}

/// The file's bonds, validated, with `a < b`, sorted and without duplicates.
fn file_bonds(frame: &Frame) -> Result<Vec<Bond>> {
    let n = frame.len();
    let mut bonds = Vec::with_capacity(frame.bonds.len());
    for b in &frame.bonds {
        if b.a >= n || b.b >= n || b.a == b.b {
            return Err(conformer_err(
                frame,
                1,
                format!(
                    "bond between atoms {} and {} is not valid for {} atoms",
                    b.a + 1,
                    b.b + 1,
                    n
                ),
            ));
        }
        bonds.push(Bond::new(b.a, b.b, b.order));
    }
    bonds.sort_by_key(|b| (b.a, b.b));
    bonds.dedup_by_key(|b| (b.a, b.b));
    Ok(bonds)
}

/// Most grid cells allowed per atom; beyond it the cell edge grows, which
/// keeps memory O(n) for sparse inputs (molecules far apart).
const MAX_CELLS_PER_ATOM: usize = 8;

/// The pair screen of [`FrameChecker`] for a small molecule with
/// distance-perceived bonds: alarm distance, for a bonded pair or two
/// hydrogens, the duplicate-atom distance, otherwise the bond cutoff (a closer
/// approach would be a new bond); and for bonded pairs the bond cutoff. `None`
/// above [`BRUTE_FORCE_MAX_ATOMS`] atoms or for bonds from the file.
fn pair_screen(top: &Topology) -> Option<PairScreen> {
    let n = top.len();
    if n > BRUTE_FORCE_MAX_ATOMS || top.bond_source != BondSource::Distance {
        return None;
    }
    let cut = |i: usize, j: usize| {
        top.atoms[i].element.covalent_radius()
            + top.atoms[j].element.covalent_radius()
            + BOND_TOLERANCE_A
    };
    let alarm = |i: usize, j: usize| {
        let both_h = top.atoms[i].element.is_hydrogen() && top.atoms[j].element.is_hydrogen();
        if both_h || top.bonded(i, j) {
            DUPLICATE_DISTANCE_A
        } else {
            cut(i, j).max(DUPLICATE_DISTANCE_A)
        }
    };
    let cutoff = |i: usize, j: usize| top.bonded(i, j).then(|| cut(i, j));
    Some(PairScreen::new(n, alarm, cutoff))
}

/// Up to this many atoms, pair scans test every pair instead of a cell grid
/// (the grid's set-up costs more than it saves for small molecules).
const BRUTE_FORCE_MAX_ATOMS: usize = 48;

/// A uniform cell grid over the coordinates, built by counting sort; reused
/// between frames.
#[derive(Debug, Clone, Default)]
struct GridScan {
    start: Vec<u32>,
    members: Vec<u32>,
    cell: Vec<u32>,
}

impl GridScan {
    /// Calls `f(i, j, d²)` for every pair i < j closer than the largest
    /// possible bond cutoff (2 max r + tolerance), in increasing i. Stops at
    /// the first error.
    fn scan<F>(&mut self, coords: &[Vec3], radii: &[f64], mut f: F) -> Result<()>
    where
        F: FnMut(usize, usize, f64) -> Result<()>,
    {
        let n = coords.len();
        if n < 2 {
            return Ok(());
        }
        let rmax = radii.iter().copied().fold(0.0, f64::max);
        let reach = (2.0 * rmax + BOND_TOLERANCE_A).max(DUPLICATE_DISTANCE_A);
        let reach2 = reach * reach;
        // For small molecules every pair is cheaper than building the grid.
        if n <= BRUTE_FORCE_MAX_ATOMS {
            for i in 0..n {
                let ci = coords[i];
                for (j, cj) in coords.iter().enumerate().skip(i + 1) {
                    let d2 = (cj - ci).norm_squared();
                    if d2 < reach2 {
                        f(i, j, d2)?;
                    }
                }
            }
            return Ok(());
        }
        let (mut lo, mut hi) = (coords[0], coords[0]);
        for c in coords {
            lo = lo.inf(c);
            hi = hi.sup(c);
        }
        let ext = hi - lo;
        let max_cells = (MAX_CELLS_PER_ATOM * n).max(64) as f64;
        let mut edge = reach;
        let dims = loop {
            let d = [
                (ext.x / edge).floor() + 1.0,
                (ext.y / edge).floor() + 1.0,
                (ext.z / edge).floor() + 1.0,
            ];
            if d[0] * d[1] * d[2] <= max_cells {
                break [d[0] as usize, d[1] as usize, d[2] as usize];
            }
            edge *= 1.5;
        };
        let ncell = dims[0] * dims[1] * dims[2];
        let inv = 1.0 / edge;
        let cell_xyz = |c: &Vec3| -> [usize; 3] {
            let q = (c - lo) * inv;
            [
                (q.x as usize).min(dims[0] - 1),
                (q.y as usize).min(dims[1] - 1),
                (q.z as usize).min(dims[2] - 1),
            ]
        };
        let lin = |x: usize, y: usize, z: usize| (z * dims[1] + y) * dims[0] + x;

        self.start.clear();
        self.start.resize(ncell + 1, 0);
        self.cell.clear();
        for c in coords {
            let [x, y, z] = cell_xyz(c);
            let k = lin(x, y, z);
            self.cell.push(k as u32);
            self.start[k + 1] += 1;
        }
        for k in 0..ncell {
            self.start[k + 1] += self.start[k];
        }
        self.members.clear();
        self.members.resize(n, 0);
        {
            // Fill using a moving cursor (start[k] advanced then restored).
            for (i, &k) in self.cell.iter().enumerate() {
                let pos = self.start[k as usize] as usize;
                self.members[pos] = i as u32;
                self.start[k as usize] += 1;
            }
            for k in (1..=ncell).rev() {
                self.start[k] = self.start[k - 1];
            }
            self.start[0] = 0;
        }

        for i in 0..n {
            let [x, y, z] = cell_xyz(&coords[i]);
            for zz in z.saturating_sub(1)..=(z + 1).min(dims[2] - 1) {
                for yy in y.saturating_sub(1)..=(y + 1).min(dims[1] - 1) {
                    for xx in x.saturating_sub(1)..=(x + 1).min(dims[0] - 1) {
                        let k = lin(xx, yy, zz);
                        let (s, e) = (self.start[k] as usize, self.start[k + 1] as usize);
                        for &j in &self.members[s..e] {
                            let j = j as usize;
                            if j <= i {
                                continue;
                            }
                            let d2 = (coords[i] - coords[j]).norm_squared();
                            if d2 <= reach2 {
                                f(i, j, d2)?;
                            }
                        }
                    }
                }
            }
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Staggered ethane, standard geometry (C–C 1.54 Å, C–H 1.09 Å, tetrahedral).
    pub(crate) fn ethane() -> Frame {
        let mut f = Frame {
            path: "ethane.xyz".into(),
            line: 1,
            ..Frame::default()
        };
        let c = 1.54 / 2.0;
        let t = (109.4712206f64).to_radians();
        let (r, zc) = (
            1.09 * (std::f64::consts::PI - t).sin(),
            1.09 * (std::f64::consts::PI - t).cos(),
        );
        f.elements = vec![Element::C, Element::C];
        f.coords = vec![Vec3::new(0.0, 0.0, -c), Vec3::new(0.0, 0.0, c)];
        for k in 0..3 {
            let a = (k as f64 * 120.0f64).to_radians();
            f.elements.push(Element::H);
            f.coords.push(Vec3::new(r * a.cos(), r * a.sin(), -c - zc));
        }
        for k in 0..3 {
            let a = (60.0 + k as f64 * 120.0f64).to_radians();
            f.elements.push(Element::H);
            f.coords.push(Vec3::new(r * a.cos(), r * a.sin(), c + zc));
        }
        f.names = vec![String::new(); 8];
        f.charges = vec![0; 8];
        f
    }

    fn msg(e: Error) -> String {
        e.to_string()
    }

    #[test]
    fn ethane_bonds_and_hybrids() {
        let f = ethane();
        let t = build(&f).unwrap();
        assert_eq!(t.bonds.len(), 7);
        assert_eq!(t.bond_source, BondSource::Distance);
        assert_eq!(t.neighbors[0], vec![1, 2, 3, 4]);
        assert!(t.rings.is_empty());
        assert_eq!(t.hybridization[0], super::super::Hybridization::Sp3);
        check_frame(&t, &f, 2).unwrap();
    }

    #[test]
    fn duplicate_atoms() {
        let mut f = ethane();
        f.coords[7] = f.coords[2] + Vec3::new(0.02, 0.0, 0.0);
        let e = msg(build(&f).unwrap_err());
        assert!(
            e.contains("atoms H3 and H8 are 0.02 Å apart (duplicate atoms?)"),
            "{e}"
        );
        assert!(e.starts_with("ethane.xyz:1: conformer 1:"), "{e}");
    }

    #[test]
    fn non_finite() {
        let mut f = ethane();
        f.coords[4].y = f64::NAN;
        let e = msg(build(&f).unwrap_err());
        assert!(e.contains("atom H5 has a non-finite coordinate"), "{e}");
    }

    #[test]
    fn no_hydrogens() {
        let mut f = ethane();
        f.elements.truncate(2);
        f.coords.truncate(2);
        let e = msg(build(&f).unwrap_err());
        assert!(
            e.contains("hydrogens are needed: add explicit hydrogens to the file"),
            "{e}"
        );
    }

    #[test]
    fn hydrogen_with_two_partners() {
        let mut f = ethane();
        // an O right next to H3 (1.0 Å beyond it along C–H)
        let dir = (f.coords[2] - f.coords[0]).normalize();
        f.elements.push(Element::O);
        f.coords.push(f.coords[2] + dir * 1.0);
        let e = msg(build(&f).unwrap_err());
        assert!(
            e.contains("hydrogen H3 is bonded to 2 atoms (C1, O9)"),
            "{e}"
        );
        // With file bonds it is accepted.
        f.has_bonds = true;
        f.bonds = vec![
            Bond::new(0, 1, BondOrder::Single),
            Bond::new(0, 2, BondOrder::Single),
            Bond::new(0, 3, BondOrder::Single),
            Bond::new(0, 4, BondOrder::Single),
            Bond::new(1, 5, BondOrder::Single),
            Bond::new(1, 6, BondOrder::Single),
            Bond::new(1, 7, BondOrder::Single),
        ];
        let t = build(&f).unwrap();
        assert_eq!(t.bond_source, BondSource::File);
        assert_eq!(t.bonds.len(), 7);
    }

    #[test]
    fn changed_element() {
        let f = ethane();
        let t = build(&f).unwrap();
        let mut g = f.clone();
        g.elements[6] = Element::F;
        g.line = 41;
        let e = msg(check_frame(&t, &g, 7).unwrap_err());
        assert_eq!(
            e,
            "ethane.xyz:41: conformer 7: atom 7 is F here but H in conformer 1"
        );
        let mut g = f.clone();
        g.elements.pop();
        g.coords.pop();
        let e = msg(check_frame(&t, &g, 3).unwrap_err());
        assert!(e.contains("has 7 atoms but conformer 1 has 8"), "{e}");
    }

    #[test]
    fn broken_bond() {
        let f = ethane();
        let t = build(&f).unwrap();
        let mut g = f.clone();
        let dir = (g.coords[5] - g.coords[1]).normalize();
        g.coords[5] = g.coords[1] + dir * 2.31;
        let e = msg(check_frame(&t, &g, 5).unwrap_err());
        assert!(
            e.contains("conformer 5: bond C2–H6 is broken (2.31 Å"),
            "{e}"
        );
    }

    #[test]
    fn moved_proton() {
        // ethane plus a water far away; then move H of ethane onto the water O.
        let mut f = ethane();
        f.elements.extend([Element::O, Element::H, Element::H]);
        let o = Vec3::new(6.0, 0.0, 0.0);
        f.coords.extend([
            o,
            o + Vec3::new(0.96, 0.0, 0.0),
            o + Vec3::new(-0.24, 0.93, 0.0),
        ]);
        let t = build(&f).unwrap();
        assert_eq!(t.bonds.len(), 9);
        let mut g = f.clone();
        // The water comes up to H8 of the ethane: O 0.98 Å from H8 along C2→H8,
        // the water's own protons pointing away.
        let h = g.coords[7];
        let dir = (h - g.coords[1]).normalize();
        let p = dir.cross(&Vec3::z()).normalize();
        let o = h + dir * 0.98;
        let t75 = 75f64.to_radians();
        g.coords[8] = o;
        g.coords[9] = o + dir * 0.96;
        g.coords[10] = o + (dir * t75.cos() + p * t75.sin()) * 0.96;
        let e = msg(check_frame(&t, &g, 5).unwrap_err());
        assert!(
            e.contains("conformer 5: new bond H8–O9 (0.98 Å): a proton moved?"),
            "{e}"
        );
    }

    #[test]
    fn file_bond_lists_compared() {
        let mut f = ethane();
        f.has_bonds = true;
        f.bonds = (2..5)
            .map(|h| Bond::new(0, h, BondOrder::Single))
            .chain((5..8).map(|h| Bond::new(1, h, BondOrder::Single)))
            .chain(std::iter::once(Bond::new(1, 0, BondOrder::Single)))
            .collect();
        let t = build(&f).unwrap();
        check_frame(&t, &f, 2).unwrap();
        let mut g = f.clone();
        g.bonds.pop();
        let e = msg(check_frame(&t, &g, 2).unwrap_err());
        assert!(
            e.contains("bond C1–C2 of conformer 1 is missing here"),
            "{e}"
        );
        let mut g = f.clone();
        g.bonds.push(Bond::new(2, 5, BondOrder::Single));
        let e = msg(check_frame(&t, &g, 2).unwrap_err());
        assert!(e.contains("new bond H3–H6 not in conformer 1"), "{e}");
        let mut g = f.clone();
        g.bonds[6].order = BondOrder::Double;
        let e = msg(check_frame(&t, &g, 2).unwrap_err());
        assert!(e.contains("bond C1–C2 has order Double here"), "{e}");
    }

    #[test]
    fn grid_matches_all_pairs_on_a_large_random_cloud() {
        // 3000 atoms on a jittered lattice; compare with O(n²) distances.
        let mut f = Frame::default();
        let mut seed = 12345u64;
        let mut rnd = || {
            seed = seed
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            ((seed >> 11) as f64) / ((1u64 << 53) as f64)
        };
        for x in 0..15 {
            for y in 0..15 {
                for z in 0..14 {
                    let el = if (x + y + z) % 3 == 0 {
                        Element::H
                    } else {
                        Element::C
                    };
                    f.elements.push(el);
                    f.coords.push(Vec3::new(
                        x as f64 * 1.3 + 0.3 * rnd(),
                        y as f64 * 1.3 + 0.3 * rnd(),
                        z as f64 * 1.3 + 0.3 * rnd(),
                    ));
                }
            }
        }
        let radii: Vec<f64> = f.elements.iter().map(|e| e.covalent_radius()).collect();
        let mut g = GridScan::default();
        let mut got = Vec::new();
        g.scan(&f.coords, &radii, |i, j, d2| {
            let cut = radii[i] + radii[j] + BOND_TOLERANCE_A;
            if d2 <= cut * cut {
                got.push((i, j));
            }
            Ok(())
        })
        .unwrap();
        got.sort_unstable();
        let mut want = Vec::new();
        for i in 0..f.len() {
            for j in i + 1..f.len() {
                let cut = radii[i] + radii[j] + BOND_TOLERANCE_A;
                if (f.coords[i] - f.coords[j]).norm_squared() <= cut * cut {
                    want.push((i, j));
                }
            }
        }
        assert_eq!(got, want);
        assert!(!want.is_empty());
    }
}
