//! Ring puckering: Cremer–Pople coordinates, conventional shape names, and
//! axial/equatorial labels for substituents of six-membered rings.
//!
//! # Cremer–Pople coordinates
//!
//! D. Cremer and J. A. Pople, J. Am. Chem. Soc. 1975, 97, 1354–1358. For a
//! ring of N atoms with positions R_j (j = 1…N in ring order) measured from
//! their centroid,
//!
//! * R' = Σ R_j sin(2π(j−1)/N), R'' = Σ R_j cos(2π(j−1)/N),
//!   n = R' × R'' / |R' × R''| (the mean-plane normal);
//! * z_j = R_j · n (displacements from the mean plane, Å; Σ z_j = 0);
//! * for 2 ≤ m ≤ (N−1)/2:
//!   q_m cos φ_m = √(2/N) Σ z_j cos(2πm(j−1)/N),
//!   q_m sin φ_m = −√(2/N) Σ z_j sin(2πm(j−1)/N);
//! * for even N, q_{N/2} = √(1/N) Σ z_j (−1)^(j−1);
//! * the total puckering amplitude Q = √(Σ z_j²) = √(Σ q_m²).
//!
//! For N = 6 the spherical coordinates are q2 = Q sin θ, q3 = Q cos θ,
//! θ ∈ [0°, 180°], φ = φ2 ∈ [0°, 360°). With the normal built as above, the
//! ring numbering runs clockwise when viewed from the side the normal points
//! to; reversing the ring order flips n, so a chair at θ = 0° reads as θ = 180°.
//!
//! # Shape names
//!
//! The conventional forms sit at these points of the Cremer–Pople sphere
//! (N = 6) and circle (N = 5); the positions were confirmed in this module's
//! tests by constructing each form (e.g. five coplanar atoms for an envelope)
//! and are those tabulated by J. C. A. Boeyens, J. Cryst. Mol. Struct. 1978,
//! 8, 317–320:
//!
//! | form (N = 6)          | θ            | φ             |
//! |-----------------------|--------------|---------------|
//! | chair                 | 0° or 180°   | —             |
//! | envelope (sofa)       | 54.7°/125.3° | 60°·k         |
//! | half-chair            | 50.8°/129.2° | 30° + 60°·k   |
//! | boat                  | 90°          | 60°·k         |
//! | twist-boat (skew)     | 90°          | 30° + 60°·k   |
//!
//! For N = 5, envelopes lie at φ2 = 36°·k and twists at 18° + 36°·k.
//!
//! The windows used by [`Pucker::shape`] (our choice, documented here):
//! planar when Q < [`PLANAR_Q_MAX`] (0.1 Å; q2 for N = 5); six-membered chair
//! when θ < 22.5° or θ > 157.5°; boat/twist-boat when 67.5° ≤ θ ≤ 112.5°;
//! envelope/half-chair in between. Within a band the φ-nearer form wins (φ
//! within 15° of 60°·k → boat or envelope, otherwise twist-boat or
//! half-chair; for N = 5, within 9° of 36°·k → envelope, otherwise twist). The
//! screw-boat (1,3-diplanar, θ ≈ 67.5°, φ = 30° + 60°·k; Boeyens 1978, from
//! memory) falls on the border of the bands and is not named separately.
//! Rings with N > 6 are reported as [`Shape::Puckered`] (or planar).
//!
//! # Axial and equatorial
//!
//! See [`Pucker::position`]: the label follows from the angle between the
//! ring-atom → substituent bond and the mean-plane normal (axial ≤ 35°,
//! equatorial ≥ 55°), with boats, twist-boats and flattened rings reported as
//! ambiguous with a reason.

use std::f64::consts::{PI, TAU};
use std::fmt;

use crate::error::{Error, Result};
use crate::geometry::Vec3;

/// Below this total puckering amplitude Q (Å) a ring is called planar (our
/// choice; a cyclohexane chair has Q ≈ 0.63 Å, a cyclopentane about 0.4 Å).
pub const PLANAR_Q_MAX: f64 = 0.1;

/// Below this total puckering amplitude Q (Å) a six-membered ring is too flat
/// for axial/equatorial labels to mean much (our choice; chairs of
/// cyclohexanes and pyranoses have Q ≈ 0.55–0.65 Å).
pub const FLATTENED_Q_MAX: f64 = 0.3;

/// A substituent bond within this angle (degrees) of the mean-plane normal
/// (either direction) is axial (our choice; ideal chair: 0°).
pub const AXIAL_MAX_DEG: f64 = 35.0;

/// A substituent bond at least this angle (degrees) away from the mean-plane
/// normal is equatorial (our choice; ideal chair: about 71°).
pub const EQUATORIAL_MIN_DEG: f64 = 55.0;

/// Smallest ring size handled.
pub const MIN_RING_SIZE: usize = 5;

/// One Fourier mode of the puckering: amplitude q_m (Å) and, for
/// 2 ≤ m ≤ (N−1)/2, its phase φ_m (radians, [0, 2π)). The mode m = N/2 of an
/// even ring has no phase.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PuckerMode {
    /// Mode index m (2 ≤ m ≤ N/2).
    pub m: usize,
    /// Amplitude q_m in Å; signed for the phaseless m = N/2 mode, otherwise ≥ 0.
    pub q: f64,
    /// Phase φ_m in radians in [0, 2π), or `None` for the m = N/2 mode.
    pub phi: Option<f64>,
}

/// Cremer–Pople puckering coordinates of one ring (J. Am. Chem. Soc. 1975,
/// 97, 1354).
#[derive(Debug, Clone, PartialEq)]
pub struct Pucker {
    /// Ring centroid (Å).
    pub centroid: Vec3,
    /// Unit normal of the mean plane, n = R' × R'' / |R' × R''|.
    pub normal: Vec3,
    /// Displacements z_j (Å) of the ring atoms from the mean plane, in ring
    /// order.
    pub z: Vec<f64>,
    /// Modes m = 2 … N/2 (integer division), in increasing m.
    pub modes: Vec<PuckerMode>,
    /// Total puckering amplitude Q = √(Σ z_j²) in Å.
    pub q_total: f64,
}

/// Conventional name of a ring shape; see the module documentation for the
/// windows.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Shape {
    /// Q below [`PLANAR_Q_MAX`].
    Planar,
    /// Six-membered chair (θ near 0° or 180°).
    Chair,
    /// Six-membered envelope, also called sofa (φ near 60°·k, intermediate θ).
    Envelope,
    /// Six-membered half-chair (φ near 30° + 60°·k, intermediate θ).
    HalfChair,
    /// Six-membered boat (θ near 90°, φ near 60°·k).
    Boat,
    /// Six-membered twist-boat, also called skew (θ near 90°, φ near 30° + 60°·k).
    TwistBoat,
    /// Five-membered envelope (φ2 near 36°·k).
    Envelope5,
    /// Five-membered twist (φ2 near 18° + 36°·k).
    Twist5,
    /// Rings of more than six atoms: puckered, not named further.
    Puckered,
}

impl Shape {
    /// Lower-case name for output ("chair", "twist-boat", …).
    pub fn name(&self) -> &'static str {
        match self {
            Shape::Planar => "planar",
            Shape::Chair => "chair",
            Shape::Envelope => "envelope",
            Shape::HalfChair => "half-chair",
            Shape::Boat => "boat",
            Shape::TwistBoat => "twist-boat",
            Shape::Envelope5 => "envelope",
            Shape::Twist5 => "twist",
            Shape::Puckered => "puckered",
        }
    }
}

impl fmt::Display for Shape {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

/// Which of the two chairs of a six-membered ring, as read from θ in the ring
/// order given.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum ChairSide {
    /// θ < 90° (the chair at the north pole, θ = 0°).
    ThetaNearZero,
    /// θ > 90° (the chair at the south pole, θ = 180°).
    ThetaNear180,
}

/// Axial/equatorial label of a substituent on a six-membered ring.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Position {
    /// Bond within [`AXIAL_MAX_DEG`] of the mean-plane normal.
    Axial,
    /// Bond at least [`EQUATORIAL_MIN_DEG`] from the mean-plane normal.
    Equatorial,
    /// No clear label; the reason says why.
    Ambiguous(Ambiguity),
}

impl Position {
    /// "axial", "equatorial" or "ambiguous".
    pub fn label(&self) -> &'static str {
        match self {
            Position::Axial => "axial",
            Position::Equatorial => "equatorial",
            Position::Ambiguous(_) => "ambiguous",
        }
    }
}

impl fmt::Display for Position {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Position::Ambiguous(why) => write!(f, "ambiguous ({why})"),
            other => f.write_str(other.label()),
        }
    }
}

/// Why a substituent got no axial/equatorial label.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Ambiguity {
    /// The ring is not six-membered (its size is given).
    NotSixMembered(usize),
    /// The ring is flattened: Q (Å) below [`FLATTENED_Q_MAX`].
    Flattened(f64),
    /// Flagpole position at a bow atom of a boat.
    Flagpole,
    /// Bowsprit position at a bow atom of a boat.
    Bowsprit,
    /// The ring is a twist-boat, where positions are isoclinal.
    TwistBoat,
    /// The bond's angle to the normal (degrees) lies between the windows.
    Intermediate(f64),
    /// The bond has zero length or the ring index is out of range.
    Degenerate,
}

impl fmt::Display for Ambiguity {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Ambiguity::NotSixMembered(n) => write!(f, "{n}-membered ring"),
            Ambiguity::Flattened(q) => write!(
                f,
                "flattened ring, Q = {q:.2} Å < {FLATTENED_Q_MAX:.2} Å"
            ),
            Ambiguity::Flagpole => f.write_str("boat flagpole"),
            Ambiguity::Bowsprit => f.write_str("boat bowsprit"),
            Ambiguity::TwistBoat => f.write_str("twist-boat ring"),
            Ambiguity::Intermediate(a) => write!(
                f,
                "bond at {a:.1}° to the ring normal, between {AXIAL_MAX_DEG}° and {EQUATORIAL_MIN_DEG}°"
            ),
            Ambiguity::Degenerate => f.write_str("degenerate bond or ring index"),
        }
    }
}

impl Pucker {
    /// Puckering coordinates of a ring whose atom positions (Å) are given in
    /// ring order. Fails for fewer than [`MIN_RING_SIZE`] atoms, non-finite
    /// coordinates, or a ring with no defined mean plane (atoms collinear or
    /// coincident).
    pub fn new(ring: &[Vec3]) -> Result<Pucker> {
        let mut p = Pucker {
            centroid: Vec3::zeros(),
            normal: Vec3::zeros(),
            z: Vec::with_capacity(ring.len()),
            modes: Vec::with_capacity(ring.len() / 2),
            q_total: 0.0,
        };
        p.update(ring)?;
        Ok(p)
    }

    /// Puckering coordinates of the ring `ring` (indices into `coords`, in
    /// ring order). Fails as [`Pucker::new`] does, or when an index is out of
    /// range.
    pub fn from_indices(coords: &[Vec3], ring: &[usize]) -> Result<Pucker> {
        let mut pts = Vec::with_capacity(ring.len());
        for &i in ring {
            let p = coords.get(i).ok_or_else(|| {
                Error::Structure(format!(
                    "ring atom index {} out of range ({} atoms)",
                    i + 1,
                    coords.len()
                ))
            })?;
            pts.push(*p);
        }
        Pucker::new(&pts)
    }

    /// Recomputes the coordinates in place for new positions of a ring of
    /// any size, reusing the buffers (no allocation when the size is
    /// unchanged).
    pub fn update(&mut self, ring: &[Vec3]) -> Result<()> {
        let n = ring.len();
        if n < MIN_RING_SIZE {
            return Err(Error::Structure(format!(
                "ring puckering needs at least {MIN_RING_SIZE} ring atoms, got {n}"
            )));
        }
        if ring.iter().any(|p| !p.iter().all(|c| c.is_finite())) {
            return Err(Error::Structure(
                "ring atom with non-finite coordinates".into(),
            ));
        }
        let nf = n as f64;
        let centroid = ring.iter().fold(Vec3::zeros(), |a, p| a + p) / nf;
        let mut r1 = Vec3::zeros();
        let mut r2 = Vec3::zeros();
        for (j, p) in ring.iter().enumerate() {
            let a = TAU * j as f64 / nf;
            let d = p - centroid;
            r1 += d * a.sin();
            r2 += d * a.cos();
        }
        let cross = r1.cross(&r2);
        let scale = r1.norm() * r2.norm();
        let len = cross.norm();
        if len <= 1e-8 * scale || len == 0.0 {
            return Err(Error::Structure(
                "ring has no mean plane (atoms collinear or coincident)".into(),
            ));
        }
        let normal = cross / len;
        self.centroid = centroid;
        self.normal = normal;
        self.z.clear();
        self.z
            .extend(ring.iter().map(|p| (p - centroid).dot(&normal)));
        self.modes.clear();
        let norm2 = (2.0 / nf).sqrt();
        for m in 2..=(n - 1) / 2 {
            let (mut c, mut s) = (0.0, 0.0);
            for (j, zj) in self.z.iter().enumerate() {
                let a = TAU * (m * j) as f64 / nf;
                c += zj * a.cos();
                s -= zj * a.sin();
            }
            let (c, s) = (norm2 * c, norm2 * s);
            let q = c.hypot(s);
            let phi = if q > 0.0 {
                s.atan2(c).rem_euclid(TAU)
            } else {
                0.0
            };
            // rem_euclid can return TAU itself for tiny negative inputs.
            let phi = if phi >= TAU { 0.0 } else { phi };
            self.modes.push(PuckerMode {
                m,
                q,
                phi: Some(phi),
            });
        }
        if n % 2 == 0 {
            let q: f64 = self
                .z
                .iter()
                .enumerate()
                .map(|(j, zj)| if j % 2 == 0 { *zj } else { -*zj })
                .sum::<f64>()
                / nf.sqrt();
            self.modes.push(PuckerMode {
                m: n / 2,
                q,
                phi: None,
            });
        }
        self.q_total = self.z.iter().map(|z| z * z).sum::<f64>().sqrt();
        Ok(())
    }

    /// Number of ring atoms N.
    pub fn ring_size(&self) -> usize {
        self.z.len()
    }

    /// The mode with index `m`, if the ring has one.
    pub fn mode(&self, m: usize) -> Option<&PuckerMode> {
        self.modes.iter().find(|x| x.m == m)
    }

    /// Amplitude q2 in Å (every ring with N ≥ 5 has it).
    pub fn q2(&self) -> f64 {
        self.mode(2).map_or(0.0, |m| m.q)
    }

    /// Phase φ2 in radians, [0, 2π).
    pub fn phi2(&self) -> f64 {
        self.mode(2).and_then(|m| m.phi).unwrap_or(0.0)
    }

    /// Signed amplitude q3 of a six-membered ring in Å (`None` otherwise).
    pub fn q3(&self) -> Option<f64> {
        if self.ring_size() == 6 {
            self.mode(3).map(|m| m.q)
        } else {
            None
        }
    }

    /// Cremer–Pople θ of a six-membered ring in radians, [0, π]:
    /// tan θ = q2/q3. `None` for other ring sizes.
    pub fn theta(&self) -> Option<f64> {
        self.q3().map(|q3| self.q2().atan2(q3))
    }

    /// θ in degrees (six-membered rings only).
    pub fn theta_deg(&self) -> Option<f64> {
        self.theta().map(f64::to_degrees)
    }

    /// φ2 in degrees, [0°, 360°).
    pub fn phi2_deg(&self) -> f64 {
        let d = self.phi2().to_degrees();
        if d >= 360.0 {
            0.0
        } else {
            d
        }
    }

    /// Conventional shape name; see the module documentation for the
    /// windows.
    pub fn shape(&self) -> Shape {
        let n = self.ring_size();
        let amplitude = if n == 5 { self.q2() } else { self.q_total };
        if amplitude < PLANAR_Q_MAX {
            return Shape::Planar;
        }
        match n {
            6 => {
                let theta = self.theta().unwrap_or(0.0).to_degrees();
                let polar = theta.min(180.0 - theta);
                let on_60 = near_multiple(self.phi2_deg(), 60.0, 15.0);
                if polar < 22.5 {
                    Shape::Chair
                } else if polar < 67.5 {
                    if on_60 {
                        Shape::Envelope
                    } else {
                        Shape::HalfChair
                    }
                } else if on_60 {
                    Shape::Boat
                } else {
                    Shape::TwistBoat
                }
            }
            5 => {
                if near_multiple(self.phi2_deg(), 36.0, 9.0) {
                    Shape::Envelope5
                } else {
                    Shape::Twist5
                }
            }
            _ => Shape::Puckered,
        }
    }

    /// Which chair a six-membered ring is nearer to, from θ in the ring
    /// order given. `None` unless the ring is six-membered and its shape is
    /// [`Shape::Chair`].
    pub fn chair_side(&self) -> Option<ChairSide> {
        if self.shape() != Shape::Chair {
            return None;
        }
        let theta = self.theta()?;
        Some(if theta < PI / 2.0 {
            ChairSide::ThetaNearZero
        } else {
            ChairSide::ThetaNear180
        })
    }

    /// IUPAC-style chair descriptor such as "4C1" (IUPAC-IUB JCBN,
    /// "Conformational nomenclature for five- and six-membered ring forms of
    /// monosaccharides and their derivatives", Eur. J. Biochem. 1980, 111,
    /// 295–298): the reference plane holds four ring atoms and leaves out the
    /// atom `anchor` (index into the ring order; the lowest-numbered ring
    /// carbon, C1 of a pyranose) and the atom opposite it; viewed so that the
    /// ring numbering runs clockwise, the atom above the plane is written
    /// before the "C", the one below after it.
    ///
    /// The ring order used for the puckering must follow the numbering
    /// direction (for a pyranose: O5, C1, C2, C3, C4, C5 or C1 … C5, O5), and
    /// `locants` gives the label of each ring atom in that order. With that
    /// order the Cremer–Pople normal points to the side from which the
    /// numbering is clockwise, so "above" is z > 0. Returns `None` unless the
    /// ring is a six-membered chair and `locants` has six entries.
    pub fn chair_descriptor(&self, locants: &[&str], anchor: usize) -> Option<String> {
        if self.ring_size() != 6 || locants.len() != 6 || anchor >= 6 {
            return None;
        }
        if self.shape() != Shape::Chair {
            return None;
        }
        let opposite = (anchor + 3) % 6;
        let (up, down) = if self.z[anchor] > 0.0 {
            (anchor, opposite)
        } else {
            (opposite, anchor)
        };
        Some(format!("{}C{}", locants[up], locants[down]))
    }

    /// Axial/equatorial label of the substituent at `sub` (Å) bonded to the
    /// ring atom at index `at` of the ring order, whose position is `atom`.
    ///
    /// The label comes from the angle α between the bond atom → sub and the
    /// mean-plane normal, folded into [0°, 90°]: axial when α ≤
    /// [`AXIAL_MAX_DEG`], equatorial when α ≥ [`EQUATORIAL_MIN_DEG`],
    /// otherwise ambiguous. Reported as ambiguous in any case: rings that are
    /// not six-membered, rings with Q < [`FLATTENED_Q_MAX`], twist-boats,
    /// and the bow atoms of a boat (the two atoms farthest from the mean
    /// plane), whose substituents are called flagpole (pointing over the
    /// ring, towards the centroid in projection) or bowsprit (pointing away).
    /// Chairs, envelopes, half-chairs and the four stern atoms of boats use
    /// the angle rule. The thresholds are our choice (ideal chair: axial 0°,
    /// equatorial about 71°).
    pub fn position(&self, at: usize, atom: &Vec3, sub: &Vec3) -> Position {
        let n = self.ring_size();
        if n != 6 {
            return Position::Ambiguous(Ambiguity::NotSixMembered(n));
        }
        let bond = sub - atom;
        let len = bond.norm();
        if at >= n || !len.is_finite() || len <= 0.0 {
            return Position::Ambiguous(Ambiguity::Degenerate);
        }
        if self.q_total < FLATTENED_Q_MAX {
            return Position::Ambiguous(Ambiguity::Flattened(self.q_total));
        }
        match self.shape() {
            Shape::TwistBoat => return Position::Ambiguous(Ambiguity::TwistBoat),
            Shape::Boat => {
                let mut top = 0;
                for (j, zj) in self.z.iter().enumerate() {
                    if zj.abs() > self.z[top].abs() {
                        top = j;
                    }
                }
                if at == top || at == (top + 3) % 6 {
                    let radial = atom - self.centroid;
                    let radial = radial - self.normal * radial.dot(&self.normal);
                    return Position::Ambiguous(if bond.dot(&radial) < 0.0 {
                        Ambiguity::Flagpole
                    } else {
                        Ambiguity::Bowsprit
                    });
                }
            }
            _ => {}
        }
        let alpha = angle_to_normal(&self.normal, &bond);
        if alpha <= AXIAL_MAX_DEG.to_radians() {
            Position::Axial
        } else if alpha >= EQUATORIAL_MIN_DEG.to_radians() {
            Position::Equatorial
        } else {
            Position::Ambiguous(Ambiguity::Intermediate(alpha.to_degrees()))
        }
    }
}

/// Angle (radians, [0, π/2]) between a bond vector and the line of a unit
/// normal, whichever direction along it is nearer. Returns π/2 for a zero
/// bond vector.
pub fn angle_to_normal(normal: &Vec3, bond: &Vec3) -> f64 {
    let len = bond.norm();
    if !len.is_finite() || len <= 0.0 {
        return PI / 2.0;
    }
    (normal.dot(bond).abs() / len).clamp(0.0, 1.0).acos()
}

/// Axial/equatorial label of the substituent at `sub` (Å) on ring atom
/// `ring[at]`, with `ring` the ring atom positions in ring order; see
/// [`Pucker::position`]. Fails as [`Pucker::new`] does.
pub fn ring_position(ring: &[Vec3], at: usize, sub: &Vec3) -> Result<Position> {
    let p = Pucker::new(ring)?;
    let atom = ring
        .get(at)
        .ok_or_else(|| Error::Structure(format!("ring position {} out of range", at + 1)))?;
    Ok(p.position(at, atom, sub))
}

/// True when `x` (degrees) lies within `tol` of a multiple of `period`.
fn near_multiple(x: f64, period: f64, tol: f64) -> bool {
    let r = x.rem_euclid(period);
    r <= tol || period - r <= tol
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    /// Atoms on a regular polygon of radius 1.5 Å in the xy plane, counter-
    /// clockwise seen from +z, lifted by `z` (Å).
    fn polygon(z: &[f64]) -> Vec<Vec3> {
        let n = z.len() as f64;
        z.iter()
            .enumerate()
            .map(|(j, zj)| {
                let a = TAU * j as f64 / n;
                Vec3::new(1.5 * a.cos(), 1.5 * a.sin(), *zj)
            })
            .collect()
    }

    /// Ideal D3d chair with C–C 1.54 Å and tetrahedral ring angles: atoms
    /// at radius r and heights ±h with r√3 = 2 d sin(α/2) (1,3 distance) and
    /// d² = r² + (2h)² (adjacent distance).
    fn ideal_chair() -> Vec<Vec3> {
        let d: f64 = 1.54;
        let alpha = (-1.0f64 / 3.0).acos();
        let r = 2.0 * d * (alpha / 2.0).sin() / 3f64.sqrt();
        let h = (d * d - r * r).sqrt() / 2.0;
        let z: Vec<f64> = (0..6).map(|j| if j % 2 == 0 { h } else { -h }).collect();
        let n = 6.0;
        z.iter()
            .enumerate()
            .map(|(j, zj)| {
                let a = TAU * j as f64 / n;
                Vec3::new(r * a.cos(), r * a.sin(), *zj)
            })
            .collect()
    }

    #[test]
    fn ideal_chair_geometry_and_coordinates() {
        let ring = ideal_chair();
        for j in 0..6 {
            let k = (j + 1) % 6;
            let l = (j + 2) % 6;
            assert_abs_diff_eq!((ring[k] - ring[j]).norm(), 1.54, epsilon = 1e-12);
            let a = crate::geometry::angle(&ring[j], &ring[k], &ring[l]).unwrap();
            assert_abs_diff_eq!(a.to_degrees(), 109.4712206, epsilon = 1e-6);
        }
        let p = Pucker::new(&ring).unwrap();
        // Σ z = 0 and Σ z² = Q² (Cremer & Pople 1975, eqs. 5 and 14).
        assert_abs_diff_eq!(p.z.iter().sum::<f64>(), 0.0, epsilon = 1e-12);
        let q2sum: f64 = p.modes.iter().map(|m| m.q * m.q).sum();
        assert_abs_diff_eq!(q2sum, p.q_total * p.q_total, epsilon = 1e-12);
        // From the definitions: Q = √6 h with h = √(d² − r²)/2 = 0.2567 Å.
        assert_abs_diff_eq!(p.q_total, 0.6288, epsilon = 1e-3);
        assert_eq!(p.shape(), Shape::Chair);
        let theta = p.theta_deg().unwrap();
        assert!(theta.min(180.0 - theta) < 1e-6, "theta {theta}");
        // Reversing the ring order moves the chair to the other pole.
        let mut rev = ring.clone();
        rev[1..].reverse();
        let r = Pucker::new(&rev).unwrap();
        assert_abs_diff_eq!(r.theta_deg().unwrap(), 180.0 - theta, epsilon = 1e-9);
        assert_ne!(p.chair_side(), r.chair_side());
        assert_abs_diff_eq!(r.q_total, p.q_total, epsilon = 1e-12);
    }

    #[test]
    fn chair_pole_follows_sign_of_first_atom() {
        // Counter-clockwise ring seen from +z: n = R'×R'' points to −z, so an
        // atom 1 lifted to +z has z1 < 0 and q3 < 0 (θ = 180°).
        let p = Pucker::new(&polygon(&[0.3, -0.3, 0.3, -0.3, 0.3, -0.3])).unwrap();
        assert!(p.normal.z < 0.0);
        assert_abs_diff_eq!(p.theta_deg().unwrap(), 180.0, epsilon = 1e-9);
        let p = Pucker::new(&polygon(&[-0.3, 0.3, -0.3, 0.3, -0.3, 0.3])).unwrap();
        assert_abs_diff_eq!(p.theta_deg().unwrap(), 0.0, epsilon = 1e-9);
    }

    #[test]
    fn constructed_six_membered_forms() {
        // Boat: atoms 1 and 4 lifted on the same side.
        let p = Pucker::new(&polygon(&[0.5, 0.0, 0.0, 0.5, 0.0, 0.0])).unwrap();
        assert_abs_diff_eq!(p.theta_deg().unwrap(), 90.0, epsilon = 1e-9);
        assert!(near_multiple(p.phi2_deg(), 60.0, 1e-9));
        assert_eq!(p.shape(), Shape::Boat);
        // Twist-boat (D2): 0, +h, −h, 0, +h, −h.
        let p = Pucker::new(&polygon(&[0.0, 0.4, -0.4, 0.0, 0.4, -0.4])).unwrap();
        assert_abs_diff_eq!(p.theta_deg().unwrap(), 90.0, epsilon = 1e-9);
        assert!(near_multiple(p.phi2_deg() - 30.0, 60.0, 1e-9));
        assert_eq!(p.shape(), Shape::TwistBoat);
        // Envelope (sofa): five coplanar atoms, θ = 54.7° or 125.3°.
        for k in 0..6 {
            let mut z = [0.0; 6];
            z[k] = 0.5;
            let p = Pucker::new(&polygon(&z)).unwrap();
            let t = p.theta_deg().unwrap();
            assert_abs_diff_eq!(t.min(180.0 - t), 54.7356, epsilon = 1e-3);
            assert!(near_multiple(p.phi2_deg(), 60.0, 1e-9), "{}", p.phi2_deg());
            assert_eq!(p.shape(), Shape::Envelope);
        }
        // Half-chair: four coplanar atoms, the two others adjacent and on
        // opposite sides; θ = 50.8° or 129.2°.
        for k in 0..6 {
            let mut z = [0.0; 6];
            z[k] = 0.4;
            z[(k + 1) % 6] = -0.4;
            let p = Pucker::new(&polygon(&z)).unwrap();
            let t = p.theta_deg().unwrap();
            assert_abs_diff_eq!(t.min(180.0 - t), 50.768, epsilon = 1e-3);
            assert!(near_multiple(p.phi2_deg() - 30.0, 60.0, 1e-9));
            assert_eq!(p.shape(), Shape::HalfChair);
        }
        let flat = Pucker::new(&polygon(&[0.01, -0.01, 0.0, 0.0, 0.0, 0.0])).unwrap();
        assert_eq!(flat.shape(), Shape::Planar);
    }

    #[test]
    fn constructed_five_membered_forms() {
        for k in 0..5 {
            // Envelope: four coplanar atoms.
            let mut z = [0.0; 5];
            z[k] = 0.5;
            let p = Pucker::new(&polygon(&z)).unwrap();
            assert!(near_multiple(p.phi2_deg(), 36.0, 1e-9), "{}", p.phi2_deg());
            assert_eq!(p.shape(), Shape::Envelope5);
            assert_abs_diff_eq!(p.q2(), p.q_total, epsilon = 1e-12);
            // Twist: two adjacent atoms on opposite sides of the plane of
            // the other three.
            let mut z = [0.0; 5];
            z[k] = 0.4;
            z[(k + 1) % 5] = -0.4;
            let p = Pucker::new(&polygon(&z)).unwrap();
            assert!(near_multiple(p.phi2_deg() - 18.0, 36.0, 1e-9));
            assert_eq!(p.shape(), Shape::Twist5);
            assert_abs_diff_eq!(p.z.iter().sum::<f64>(), 0.0, epsilon = 1e-12);
        }
        let p = Pucker::new(&polygon(&[0.0; 5])).unwrap();
        assert_eq!(p.shape(), Shape::Planar);
        assert_eq!(p.shape().name(), "planar");
    }

    #[test]
    fn larger_rings_keep_parseval() {
        let z = [0.3, -0.2, 0.5, -0.1, 0.0, 0.2, -0.4];
        let p = Pucker::new(&polygon(&z)).unwrap();
        assert_eq!(p.modes.len(), 2);
        assert_abs_diff_eq!(p.z.iter().sum::<f64>(), 0.0, epsilon = 1e-12);
        let s: f64 = p.modes.iter().map(|m| m.q * m.q).sum();
        assert_abs_diff_eq!(s, p.q_total * p.q_total, epsilon = 1e-12);
        assert_eq!(p.shape(), Shape::Puckered);
        let z8 = [0.3, -0.2, 0.5, -0.1, 0.0, 0.2, -0.4, 0.1];
        let p = Pucker::new(&polygon(&z8)).unwrap();
        let s: f64 = p.modes.iter().map(|m| m.q * m.q).sum();
        assert_abs_diff_eq!(s, p.q_total * p.q_total, epsilon = 1e-12);
    }

    #[test]
    fn bad_rings_are_errors() {
        assert!(Pucker::new(&polygon(&[0.0; 4])).is_err());
        let line: Vec<Vec3> = (0..6).map(|i| Vec3::new(i as f64, 0.0, 0.0)).collect();
        assert!(Pucker::new(&line).is_err());
        let mut nan = polygon(&[0.0; 6]);
        nan[2].x = f64::NAN;
        assert!(Pucker::new(&nan).is_err());
        assert!(Pucker::from_indices(&polygon(&[0.0; 6]), &[0, 1, 2, 3, 4, 9]).is_err());
    }

    #[test]
    fn chair_positions_and_descriptor() {
        let ring = ideal_chair();
        let p = Pucker::new(&ring).unwrap();
        for (j, atom) in ring.iter().enumerate() {
            // Axial: along ±z on the side of the atom's own displacement.
            let ax = atom + Vec3::new(0.0, 0.0, atom.z.signum() * 1.09);
            assert_eq!(p.position(j, atom, &ax), Position::Axial);
            // Equatorial: outward, tipped 19.5° away from the axial side.
            let out = Vec3::new(atom.x, atom.y, 0.0).normalize();
            let tilt = (19.47f64).to_radians();
            let eq = atom + (out * tilt.cos() - Vec3::z() * atom.z.signum() * tilt.sin()) * 1.09;
            assert_eq!(p.position(j, atom, &eq), Position::Equatorial);
            let mid = atom + (out + Vec3::z() * atom.z.signum()).normalize();
            assert!(matches!(
                p.position(j, atom, &mid),
                Position::Ambiguous(Ambiguity::Intermediate(_))
            ));
        }
        let labels = ["1", "2", "3", "4", "5", "6"];
        let d = p.chair_descriptor(&labels, 0).unwrap();
        assert!(d == "1C4" || d == "4C1");
    }

    #[test]
    fn boat_and_flat_positions() {
        let ring = polygon(&[0.6, 0.0, 0.0, 0.6, 0.0, 0.0]);
        let p = Pucker::new(&ring).unwrap();
        assert_eq!(p.shape(), Shape::Boat);
        let bow = ring[0];
        let inward = bow + Vec3::new(-0.5, 0.0, 0.9);
        let outward = bow + Vec3::new(1.0, 0.0, -0.2);
        assert_eq!(
            p.position(0, &bow, &inward),
            Position::Ambiguous(Ambiguity::Flagpole)
        );
        assert_eq!(
            p.position(0, &bow, &outward),
            Position::Ambiguous(Ambiguity::Bowsprit)
        );
        let flat = polygon(&[0.1, -0.1, 0.1, -0.1, 0.1, -0.1]);
        let pos = ring_position(&flat, 0, &(flat[0] + Vec3::z())).unwrap();
        assert!(matches!(pos, Position::Ambiguous(Ambiguity::Flattened(_))));
        assert!(pos.to_string().starts_with("ambiguous (flattened"));
        let five = polygon(&[0.3, -0.3, 0.0, 0.0, 0.0]);
        assert_eq!(
            ring_position(&five, 0, &Vec3::z()).unwrap(),
            Position::Ambiguous(Ambiguity::NotSixMembered(5))
        );
    }

    #[test]
    fn update_reuses_buffers() {
        let mut p = Pucker::new(&ideal_chair()).unwrap();
        let cap = p.z.capacity();
        p.update(&polygon(&[0.5, 0.0, 0.0, 0.5, 0.0, 0.0])).unwrap();
        assert_eq!(p.z.capacity(), cap);
        assert_eq!(p.shape(), Shape::Boat);
    }
}
