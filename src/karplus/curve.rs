//! J against the dihedral angle for one parameter set and a substituent
//! pattern: as data, as CSV and as an SVG line plot.

use std::io::Write;

use crate::elements::Element;
use crate::error::{Error, Result};
use crate::plot::{LineSeries, Plot};

use super::equations::{self, HlaTerm};
use super::params::{Form, ParamSet};

/// One substituent of a curve pattern (HLA only): the α element, its
/// orientation sign ξ (+1 or −1, see [`super::xi_sign`]) and the non-H
/// elements bonded to it (β).
#[derive(Debug, Clone, PartialEq)]
pub struct PatternSubstituent {
    /// Element of the α atom.
    pub element: Element,
    /// Orientation sign ξ; any positive value is read as +1, else −1.
    pub xi: f64,
    /// Elements of the β atoms.
    pub beta: Vec<Element>,
}

fn dchi(e: Element) -> Result<f64> {
    let h = Element::H.chi_huggins().unwrap_or(2.20);
    e.chi_huggins().map(|c| c - h).ok_or_else(|| {
        Error::Model(format!(
            "no Huggins electronegativity for {e}; the HLA equation cannot use it"
        ))
    })
}

/// J in Hz on a grid of dihedral angles from −180° to 180° in steps of
/// `step_deg` degrees, as (degrees, Hz). The angle is the H–X–Y–H dihedral,
/// except for an ω set (Stenutz 2002), where it is ω = τ(O5,C5,C6,O6) and J
/// is 3J(H5,H6R). `pattern` is used by HLA sets only (at most six
/// substituents) and ignored by the others.
pub fn curve(
    set: &ParamSet,
    pattern: &[PatternSubstituent],
    step_deg: f64,
) -> Result<Vec<(f64, f64)>> {
    if !(step_deg.is_finite() && step_deg > 0.0 && step_deg <= 360.0) {
        return Err(Error::Usage(format!(
            "curve step must be a number of degrees in (0, 360], got {step_deg}"
        )));
    }
    let mut terms = Vec::new();
    if let Form::Hla(p) = &set.form {
        if pattern.len() > 6 {
            return Err(Error::Model(format!(
                "{} substituents given; the HLA equation takes at most 6",
                pattern.len()
            )));
        }
        for s in pattern {
            let mut d = dchi(s.element)?;
            for &b in &s.beta {
                d -= p.p7 * dchi(b)?;
            }
            terms.push(HlaTerm {
                dchi: d,
                xi: if s.xi > 0.0 { 1.0 } else { -1.0 },
            });
        }
    }
    let n = (360.0 / step_deg + 1e-9).floor() as usize;
    let mut out = Vec::with_capacity(n + 2);
    for k in 0..=n {
        let deg = -180.0 + k as f64 * step_deg;
        out.push((
            deg,
            equations::single_angle(&set.form, deg.to_radians(), &terms),
        ));
    }
    if out.last().map(|p| p.0 < 180.0 - 1e-9).unwrap_or(false) {
        out.push((
            180.0,
            equations::single_angle(&set.form, std::f64::consts::PI, &terms),
        ));
    }
    if out.iter().any(|p| !p.1.is_finite()) {
        return Err(Error::Model(format!(
            "set '{}' gives a non-finite coupling",
            set.id
        )));
    }
    Ok(out)
}

/// Writes a curve as CSV with the header `dihedral_deg,j_hz`.
pub fn write_curve_csv<W: Write>(w: &mut W, points: &[(f64, f64)]) -> std::io::Result<()> {
    writeln!(w, "dihedral_deg,j_hz")?;
    for (d, j) in points {
        writeln!(w, "{d:.3},{j:.4}")?;
    }
    Ok(())
}

/// An SVG line plot of one or more curves (label, points), with axes
/// "dihedral angle (degrees)" and "3J(H,H) (Hz)", x from −180° to 180°.
pub fn curve_svg(title: &str, series: &[(&str, &[(f64, f64)])]) -> String {
    let mut plot = Plot::new(title, "dihedral angle (degrees)", "3J(H,H) (Hz)");
    plot.x_range(-180.0, 180.0)
        .x_ticks(&[-180.0, -120.0, -60.0, 0.0, 60.0, 120.0, 180.0]);
    for (label, pts) in series {
        plot.line(LineSeries::new(*label, pts.to_vec()));
    }
    plot.to_svg()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::karplus::ParamLibrary;

    #[test]
    fn grid_and_csv() {
        let lib = ParamLibrary::builtin();
        let set = lib.get("hla-general-beta").unwrap();
        let pat = vec![
            PatternSubstituent {
                element: Element::O,
                xi: 1.0,
                beta: vec![],
            },
            PatternSubstituent {
                element: Element::C,
                xi: -1.0,
                beta: vec![Element::O],
            },
        ];
        let c = curve(set, &pat, 10.0).unwrap();
        assert_eq!(c.len(), 37);
        assert_eq!(c[0].0, -180.0);
        assert_eq!(c[36].0, 180.0);
        let c7 = curve(set, &pat, 7.0).unwrap();
        assert_eq!(c7.last().unwrap().0, 180.0);
        let mut buf = Vec::new();
        write_curve_csv(&mut buf, &c).unwrap();
        let s = String::from_utf8(buf).unwrap();
        assert!(s.starts_with("dihedral_deg,j_hz\n-180.000,"));
        assert!(curve(set, &pat, 0.0).is_err());
        assert!(curve(set, &pat, f64::NAN).is_err());
        let svg = curve_svg("HLA", &[("hla-general-beta", &c)]);
        assert!(svg.contains("dihedral angle (degrees)") && svg.contains("3J(H,H) (Hz)"));
    }

    #[test]
    fn element_without_chi_is_an_error() {
        let lib = ParamLibrary::builtin();
        let set = lib.get("hla-2sub").unwrap();
        let pat = vec![PatternSubstituent {
            element: Element::from_symbol("Xe").unwrap(),
            xi: 1.0,
            beta: vec![],
        }];
        assert!(matches!(curve(set, &pat, 30.0), Err(Error::Model(_))));
    }
}
