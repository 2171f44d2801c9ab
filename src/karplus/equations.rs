//! The coupling equations themselves, as pure functions of angles (radians) and
//! precomputed substituent terms, plus the two geometric signs they need: the
//! HLA orientation sign ξ and the pro-R/pro-S identity of a CH2 proton.

use crate::geometry::Vec3;

use super::params::{Form, HlaCoefficients};

/// One substituent term of the HLA equation: its group electronegativity
/// difference Δχ (β-corrected, Huggins scale) and its orientation sign ξ (±1).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HlaTerm {
    /// Δχ_group = Δχ_α − P7 Σ Δχ_β.
    pub dchi: f64,
    /// Orientation sign ξ, +1 or −1 (see [`xi_sign`]).
    pub xi: f64,
}

/// Haasnoot–de Leeuw–Altona 3J(H,H) in Hz (Tetrahedron 1980, 36, 2783):
/// J = P1 cos²φ + P2 cos φ + P3 + Σᵢ Δχᵢ [P4 + P5 cos²(ξᵢ φ + P6 |Δχᵢ|)],
/// φ the IUPAC-signed H–C–C–H dihedral in radians.
#[inline]
pub fn hla(p: &HlaCoefficients, phi: f64, terms: &[HlaTerm]) -> f64 {
    let c = phi.cos();
    let mut j = p.p1 * c * c + p.p2 * c + p.p3;
    for t in terms {
        let a = (t.xi * phi + p.p6_rad * t.dchi.abs()).cos();
        j += t.dchi * (p.p4 + p.p5 * a * a);
    }
    j
}

/// The HLA equation from cos φ and sin φ, with each substituent's phase
/// a = P6 |Δχ| given as (Δχ, ξ, cos a, sin a): the same value as [`hla`], using
/// cos(ξφ + a) = cos φ cos a − ξ sin φ sin a, so that no trigonometric
/// function is called per conformer.
#[inline]
pub fn hla_sin_cos(
    p: &HlaCoefficients,
    cos_phi: f64,
    sin_phi: f64,
    terms: &[(f64, f64, f64, f64)],
) -> f64 {
    let c = cos_phi;
    let mut j = p.p1 * c * c + p.p2 * c + p.p3;
    for &(dchi, xi, ca, sa) in terms {
        let t = c * ca - xi * sin_phi * sa;
        j += dchi * (p.p4 + p.p5 * t * t);
    }
    j
}

/// Evaluates a one-angle form from cos x and sin x (no trigonometric calls
/// except for the phase offset of [`Form::Cos2`], which is a constant).
/// HLA here has no substituent terms; Omega uses the H6R series.
#[inline]
pub fn single_sin_cos(form: &Form, cs: f64, sn: f64) -> f64 {
    match form {
        Form::Hla(p) => hla_sin_cos(p, cs, sn, &[]),
        Form::Cos2 {
            a,
            b,
            c,
            offset_rad,
        } => {
            let t = if *offset_rad == 0.0 {
                cs
            } else {
                cs * offset_rad.cos() - sn * offset_rad.sin()
            };
            a * t * t + b * t + c
        }
        Form::Piecewise { a0, a180, s, c } => {
            let a = if cs >= 0.0 { a0 } else { a180 };
            a * cs * cs + s * sn * sn + c
        }
        Form::Fourier(k) => fourier_sin_cos(k, cs, sn),
        Form::Omega { h6r, .. } => fourier_sin_cos(h6r, cs, sn),
    }
}

/// [`fourier`] from cos x and sin x.
#[inline]
pub fn fourier_sin_cos(c: &[f64; 5], c1: f64, s1: f64) -> f64 {
    let c2 = 2.0 * c1 * c1 - 1.0;
    let s2 = 2.0 * s1 * c1;
    c[0] + c[1] * c1 + c[2] * s1 + c[3] * c2 + c[4] * s2
}

/// Five-term Fourier series c0 + c1 cos x + s1 sin x + c2 cos 2x + s2 sin 2x.
#[inline]
pub fn fourier(c: &[f64; 5], x: f64) -> f64 {
    let (s1, c1) = x.sin_cos();
    // cos 2x = 2cos²x − 1, sin 2x = 2 sin x cos x: no second sin_cos call.
    let c2 = 2.0 * c1 * c1 - 1.0;
    let s2 = 2.0 * s1 * c1;
    c[0] + c[1] * c1 + c[2] * s1 + c[3] * c2 + c[4] * s2
}

/// Evaluates a form that depends on one angle only (every form but HLA with
/// substituents, which passes its terms here, and Omega, which takes ω).
/// For [`Form::Omega`] `x` is ω and the H6R series is used; see [`omega`].
#[inline]
pub fn single_angle(form: &Form, x: f64, terms: &[HlaTerm]) -> f64 {
    match form {
        Form::Hla(p) => hla(p, x, terms),
        Form::Cos2 {
            a,
            b,
            c,
            offset_rad,
        } => {
            let t = (x + offset_rad).cos();
            a * t * t + b * t + c
        }
        Form::Piecewise { a0, a180, s, c } => {
            let (sn, cs) = x.sin_cos();
            let a = if cs >= 0.0 { a0 } else { a180 };
            a * cs * cs + s * sn * sn + c
        }
        Form::Fourier(k) => fourier(k, x),
        Form::Omega { h6r, .. } => fourier(h6r, x),
    }
}

/// Stenutz et al. (J. Org. Chem. 2002, 67, 949) hexopyranose couplings:
/// 3J(H5,H6R) when `pro_r`, else 3J(H5,H6S), as functions of
/// ω = τ(O5, C5, C6, O6) in radians. `None` if `form` is not [`Form::Omega`].
#[inline]
pub fn omega(form: &Form, omega_rad: f64, pro_r: bool) -> Option<f64> {
    match form {
        Form::Omega { h6r, h6s } => Some(fourier(if pro_r { h6r } else { h6s }, omega_rad)),
        _ => None,
    }
}

/// Orientation sign ξ of substituent `s` on carbon `ca` that carries the
/// coupled proton `ha`, `cb` the other carbon of the fragment:
/// ξ = sign[((Ha − Ca) × (S − Ca)) · (Cb − Ca)], used with the IUPAC-signed
/// φ = τ(Ha, Ca, Cb, Hb). Mirror images flip both ξ and φ, so J is unchanged;
/// this choice (rather than its negative) reproduces the small gauche couplings
/// of galactopyranosides (tests/karplus_sugars.rs). Returns +1 or −1 (+1 when
/// the triple product is exactly zero, a degenerate geometry).
#[inline]
pub fn xi_sign(ha: &Vec3, ca: &Vec3, s: &Vec3, cb: &Vec3) -> f64 {
    let t = (ha - ca).cross(&(s - ca)).dot(&(cb - ca));
    if t < 0.0 {
        -1.0
    } else {
        1.0
    }
}

/// True if proton `ha` of a prochiral CH2 centre `c6` is pro-R, given the
/// centre's two heavy neighbours in CIP priority order `first` > `second`
/// (O6 > C5 for a hexopyranose C6) and the other proton `hb`.
///
/// Replacing Ha by deuterium ranks it third, above Hb. The centre is then (R)
/// when first → second → Ha turns clockwise seen with Hb pointing away from
/// the viewer, which for bond vectors from the centre is (v1 × v2) · v3 < 0.
/// Ha and Hb lie on opposite sides of the plane of v1 and v2, so the sign of
/// (v1 × v2) · (Ha − Hb) is the same and is used here, being less sensitive to
/// distorted geometry. Checked against RDKit CIP labels
/// (tests/reference/hydroxymethyl_prochirality.py).
#[inline]
pub fn is_pro_r(c6: &Vec3, first: &Vec3, second: &Vec3, ha: &Vec3, hb: &Vec3) -> bool {
    let n = (first - c6).cross(&(second - c6));
    n.dot(&(ha - hb)) < 0.0
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    fn hla_beta() -> HlaCoefficients {
        HlaCoefficients {
            p1: 13.70,
            p2: -0.73,
            p3: 0.0,
            p4: 0.56,
            p5: -2.47,
            p6_rad: 16.9f64.to_radians(),
            p7: 0.14,
        }
    }

    // With no substituents HLA is its bare P1..P3 curve.
    #[test]
    fn hla_zero_substituents_is_bare_curve() {
        let p = hla_beta();
        for deg in [-180.0f64, -120.0, -60.0, 0.0, 37.0, 90.0, 180.0] {
            let phi = deg.to_radians();
            let c = phi.cos();
            assert_abs_diff_eq!(hla(&p, phi, &[]), 13.70 * c * c - 0.73 * c, epsilon = 1e-12);
        }
    }

    #[test]
    fn sin_cos_paths_match_trig_paths() {
        let p = hla_beta();
        let terms = [
            HlaTerm { dchi: 1.3, xi: 1.0 },
            HlaTerm {
                dchi: 0.4,
                xi: -1.0,
            },
        ];
        let sc: Vec<(f64, f64, f64, f64)> = terms
            .iter()
            .map(|t| {
                let a = p.p6_rad * t.dchi.abs();
                (t.dchi, t.xi, a.cos(), a.sin())
            })
            .collect();
        let forms = [
            Form::Hla(p),
            Form::Cos2 {
                a: 7.09,
                b: -1.42,
                c: 1.55,
                offset_rad: 0.3,
            },
            Form::Piecewise {
                a0: 6.6,
                a180: 11.6,
                s: 2.6,
                c: 0.0,
            },
            Form::Fourier([7.0, -1.0, 0.2, 5.0, 0.1]),
        ];
        for deg in (-180..=180).step_by(15) {
            let x = (deg as f64).to_radians();
            let (sn, cs) = x.sin_cos();
            assert_abs_diff_eq!(
                hla(&p, x, &terms),
                hla_sin_cos(&p, cs, sn, &sc),
                epsilon = 1e-12
            );
            for f in &forms {
                assert_abs_diff_eq!(
                    single_angle(f, x, &[]),
                    single_sin_cos(f, cs, sn),
                    epsilon = 1e-12
                );
            }
        }
    }

    #[test]
    fn fourier_matches_direct() {
        let k = [5.08, 0.47, 0.90, -0.12, 4.86];
        for deg in [-170.0f64, -65.0, 0.0, 65.0, 180.0] {
            let x = deg.to_radians();
            let direct = k[0]
                + k[1] * x.cos()
                + k[2] * x.sin()
                + k[3] * (2.0 * x).cos()
                + k[4] * (2.0 * x).sin();
            assert_abs_diff_eq!(fourier(&k, x), direct, epsilon = 1e-12);
        }
    }

    // Karplus 1959 piecewise: 8.5 cos² − 0.28 (|φ| ≤ 90°), 9.5 cos² − 0.28 beyond.
    #[test]
    fn piecewise_branches() {
        let f = Form::Piecewise {
            a0: 8.5,
            a180: 9.5,
            s: 0.0,
            c: -0.28,
        };
        assert_abs_diff_eq!(single_angle(&f, 0.0, &[]), 8.22, epsilon = 1e-12);
        assert_abs_diff_eq!(
            single_angle(&f, std::f64::consts::PI, &[]),
            9.22,
            epsilon = 1e-12
        );
        assert_abs_diff_eq!(
            single_angle(&f, -std::f64::consts::PI, &[]),
            9.22,
            epsilon = 1e-12
        );
    }

    #[test]
    fn xi_flips_under_mirror() {
        let ha = Vec3::new(0.3, 1.0, -0.2);
        let ca = Vec3::zeros();
        let s = Vec3::new(0.9, -0.5, -0.3);
        let cb = Vec3::new(0.0, 0.0, 1.5);
        let m = |v: &Vec3| Vec3::new(-v.x, v.y, v.z);
        assert_eq!(
            xi_sign(&ha, &ca, &s, &cb),
            -xi_sign(&m(&ha), &m(&ca), &m(&s), &m(&cb))
        );
    }
}
