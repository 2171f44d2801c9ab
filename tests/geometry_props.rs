//! Dihedral invariants: ideal staggered ethane (standard geometry: C–C 1.54 Å,
//! C–H 1.09 Å, tetrahedral angles; common practice) gives ±60° and 180° for
//! every H–C–C–H path; the dihedral is unchanged by any rigid rotation plus
//! translation and changes sign under a mirror image (property tests).

use nalgebra::{Rotation3, Unit};
use proptest::prelude::*;
use vicinal::elements::Element;
use vicinal::fragments;
use vicinal::geometry::{dihedral, Vec3};
use vicinal::io::Frame;
use vicinal::topology::perceive;

/// Staggered ethane from standard geometry; C1 at −z, C2 at +z.
fn staggered_ethane() -> Frame {
    let half = 1.54 / 2.0;
    let tet = 109.4712206f64.to_radians();
    let (r, dz) = (1.09 * tet.sin(), -1.09 * tet.cos());
    let mut f = Frame {
        path: "ethane".into(),
        ..Frame::default()
    };
    f.elements = vec![Element::C, Element::C];
    f.coords = vec![Vec3::new(0.0, 0.0, -half), Vec3::new(0.0, 0.0, half)];
    for (start, z) in [(0.0, -half - dz), (60.0, half + dz)] {
        for k in 0..3 {
            let a = (start + 120.0 * k as f64).to_radians();
            f.elements.push(Element::H);
            f.coords.push(Vec3::new(r * a.cos(), r * a.sin(), z));
        }
    }
    f.names = vec![String::new(); 8];
    f.charges = vec![0; 8];
    f
}

#[test]
fn staggered_ethane_is_60_and_180() {
    let f = staggered_ethane();
    let top = perceive::build(&f).unwrap();
    let frags = fragments::enumerate(&top);
    assert_eq!(frags.pairs.len(), 9);
    assert_eq!(frags.rotors.len(), 2);
    let mut anti = 0;
    let mut gauche = 0;
    for p in &frags.pairs {
        let c = &f.coords;
        let t = dihedral(&c[p.h1], &c[p.x], &c[p.y], &c[p.h2])
            .unwrap()
            .to_degrees();
        if (t.abs() - 180.0).abs() < 1e-9 {
            anti += 1;
        } else {
            assert!((t.abs() - 60.0).abs() < 1e-9, "{t}");
            gauche += 1;
        }
    }
    assert_eq!((anti, gauche), (3, 6));
}

fn point() -> impl Strategy<Value = Vec3> {
    (-5.0..5.0f64, -5.0..5.0f64, -5.0..5.0f64).prop_map(|(x, y, z)| Vec3::new(x, y, z))
}

proptest! {
    #[test]
    fn invariant_under_rigid_motion(
        a in point(), b in point(), c in point(), d in point(),
        axis in point(), ang in -std::f64::consts::PI..std::f64::consts::PI, shift in point(),
    ) {
        prop_assume!(axis.norm() > 1e-3);
        let t0 = dihedral(&a, &b, &c, &d);
        prop_assume!(t0.is_some());
        // Keep away from ill-conditioned, nearly collinear cases.
        let bend = |p: &Vec3, q: &Vec3, r: &Vec3| ((p - q).cross(&(r - q))).norm() / ((p - q).norm() * (r - q).norm());
        prop_assume!(bend(&a, &b, &c) > 0.05 && bend(&b, &c, &d) > 0.05);
        let rot = Rotation3::from_axis_angle(&Unit::new_normalize(axis), ang);
        let m = |p: &Vec3| rot * p + shift;
        let t1 = dihedral(&m(&a), &m(&b), &m(&c), &m(&d)).unwrap();
        let t0 = t0.unwrap();
        let diff = vicinal::geometry::wrap_angle(t1 - t0);
        prop_assert!(diff.abs() < 1e-9, "{t0} vs {t1}");
    }

    #[test]
    fn sign_flips_under_mirror(
        a in point(), b in point(), c in point(), d in point(),
        normal in point(),
    ) {
        prop_assume!(normal.norm() > 1e-3);
        let bend = |p: &Vec3, q: &Vec3, r: &Vec3| ((p - q).cross(&(r - q))).norm() / ((p - q).norm() * (r - q).norm());
        prop_assume!(bend(&a, &b, &c) > 0.05 && bend(&b, &c, &d) > 0.05);
        let n = normal.normalize();
        // Reflection through the plane through the origin with normal n.
        let m = |p: &Vec3| p - n * (2.0 * p.dot(&n));
        let t0 = dihedral(&a, &b, &c, &d).unwrap();
        let t1 = dihedral(&m(&a), &m(&b), &m(&c), &m(&d)).unwrap();
        // −π and π are the same angle.
        let diff = vicinal::geometry::wrap_angle(t1 + t0);
        prop_assert!(diff.abs() < 1e-9, "{t0} vs {t1}");
    }

    #[test]
    fn reversed_path_has_the_same_dihedral(
        a in point(), b in point(), c in point(), d in point(),
    ) {
        let bend = |p: &Vec3, q: &Vec3, r: &Vec3| ((p - q).cross(&(r - q))).norm() / ((p - q).norm() * (r - q).norm());
        prop_assume!(bend(&a, &b, &c) > 0.05 && bend(&b, &c, &d) > 0.05);
        let t0 = dihedral(&a, &b, &c, &d).unwrap();
        let t1 = dihedral(&d, &c, &b, &a).unwrap();
        prop_assert!(vicinal::geometry::wrap_angle(t1 - t0).abs() < 1e-9);
    }
}
