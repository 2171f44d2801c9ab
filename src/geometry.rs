//! Geometry on Cartesian coordinates in ångström. Angles are radians here;
//! conversion to degrees happens at the edges (output, command line).

/// A position or displacement in Å.
pub type Vec3 = nalgebra::Vector3<f64>;

/// Below this value of sin² of a bond angle, a dihedral is treated as
/// undefined: three of its atoms are (nearly) collinear (|sin θ| < 1e-4).
pub(crate) const COLLINEAR_EPS: f64 = 1e-8;

/// Signed dihedral angle τ(a, b, c, d) in radians, in (−π, π], with the IUPAC
/// sign convention (IUPAC Gold Book, "torsion angle"; Klyne & Prelog,
/// Experientia 1960, 16, 521): looking along b→c, τ is positive when the bond
/// b–a must turn clockwise to eclipse c–d.
///
/// Computed with the atan2 form (Blondel & Karplus, J. Comput. Chem. 1996, 17,
/// 1132), which is accurate near 0 and π. Returns `None` when a–b–c or b–c–d
/// is collinear (or two atoms coincide), where the angle is undefined.
#[inline]
pub fn dihedral(a: &Vec3, b: &Vec3, c: &Vec3, d: &Vec3) -> Option<f64> {
    dihedral_xy(a, b, c, d).map(|(y, x, _)| y.atan2(x))
}

/// The dihedral angle τ(a, b, c, d) of [`dihedral`] as the pair (y, x, r)
/// with τ = atan2(y, x) and r = √(x² + y²) > 0, so that cos τ = x/r and
/// sin τ = y/r without an atan2 (y and x in Å⁶, r likewise). `None` where
/// [`dihedral`] is `None`.
#[inline]
pub fn dihedral_xy(a: &Vec3, b: &Vec3, c: &Vec3, d: &Vec3) -> Option<(f64, f64, f64)> {
    DihedralParts::new(a, b, c, d).map(|p| (p.y, p.x, p.r))
}

/// The intermediate vectors of the dihedral τ(a, b, c, d), for callers that
/// need more than the angle (the Haasnoot–de Leeuw–Altona orientation signs
/// use the two plane normals): n1 = (b − a) × (c − b), n2 = (c − b) × (d − c),
/// and τ = atan2(y, x) with r = √(x² + y²) as in [`dihedral_xy`].
#[derive(Debug, Clone, Copy)]
pub(crate) struct DihedralParts {
    pub(crate) n1: Vec3,
    pub(crate) n2: Vec3,
    pub(crate) y: f64,
    pub(crate) x: f64,
    pub(crate) r: f64,
}

impl DihedralParts {
    /// `None` where [`dihedral`] is `None`.
    #[inline(always)]
    pub(crate) fn new(a: &Vec3, b: &Vec3, c: &Vec3, d: &Vec3) -> Option<DihedralParts> {
        let b1 = b - a;
        let b2 = c - b;
        let b3 = d - c;
        let n1 = b1.cross(&b2);
        let n2 = b2.cross(&b3);
        let b2n2 = b2.norm_squared();
        if b2n2 == 0.0
            || n1.norm_squared() <= COLLINEAR_EPS * b1.norm_squared() * b2n2
            || n2.norm_squared() <= COLLINEAR_EPS * b3.norm_squared() * b2n2
        {
            return None;
        }
        // atan2(|b2| b1·(b2×b3), (b1×b2)·(b2×b3)); both scaled by |b2| alike.
        let y = b1.dot(&n2) * b2n2.sqrt();
        let x = n1.dot(&n2);
        let r = (x * x + y * y).sqrt();
        if !(r > 0.0 && r.is_finite()) {
            return None;
        }
        Some(DihedralParts { n1, n2, y, x, r })
    }
}

/// Angle a–b–c at b in radians, in [0, π]; `None` if either bond has zero length.
#[inline]
pub fn angle(a: &Vec3, b: &Vec3, c: &Vec3) -> Option<f64> {
    let u = a - b;
    let v = c - b;
    let nu = u.norm();
    let nv = v.norm();
    if nu == 0.0 || nv == 0.0 {
        return None;
    }
    let cos = (u.dot(&v) / (nu * nv)).clamp(-1.0, 1.0);
    Some(cos.acos())
}

/// Wraps an angle in radians into (−π, π].
#[inline]
pub fn wrap_angle(x: f64) -> f64 {
    let two_pi = std::f64::consts::TAU;
    let mut y = x % two_pi;
    if y <= -std::f64::consts::PI {
        y += two_pi;
    } else if y > std::f64::consts::PI {
        y -= two_pi;
    }
    y
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    fn v(x: f64, y: f64, z: f64) -> Vec3 {
        Vec3::new(x, y, z)
    }

    // IUPAC convention (Gold Book "torsion angle"): looking from b along +z, the
    // front bond points along +x and the rear bond along +y, which is a
    // clockwise quarter turn for a viewer looking along +z: τ = +90°.
    // RDKit 2026.09.1 GetDihedralDeg gives +90.0 for these coordinates.
    #[test]
    fn sign_convention() {
        let a = v(1.0, 0.0, 0.0);
        let b = v(0.0, 0.0, 0.0);
        let c = v(0.0, 0.0, 1.0);
        let d_plus = v(0.0, 1.0, 1.0);
        let d_minus = v(0.0, -1.0, 1.0);
        let t = dihedral(&a, &b, &c, &d_plus).unwrap().to_degrees();
        let u = dihedral(&a, &b, &c, &d_minus).unwrap().to_degrees();
        assert_abs_diff_eq!(t.abs(), 90.0, epsilon = 1e-9);
        assert_abs_diff_eq!(t, -u, epsilon = 1e-9);
        assert_abs_diff_eq!(t, 90.0, epsilon = 1e-9);
    }

    #[test]
    fn collinear_is_none() {
        let a = v(0.0, 0.0, -1.0);
        let b = v(0.0, 0.0, 0.0);
        let c = v(0.0, 0.0, 1.0);
        let d = v(1.0, 0.0, 2.0);
        assert!(dihedral(&a, &b, &c, &d).is_none());
    }

    #[test]
    fn wrap() {
        assert_abs_diff_eq!(
            wrap_angle(3.0 * std::f64::consts::PI),
            std::f64::consts::PI,
            epsilon = 1e-12
        );
        assert_abs_diff_eq!(wrap_angle(-0.5), -0.5, epsilon = 1e-12);
    }
}
