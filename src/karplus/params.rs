//! Parameter sets for the coupling models, read from `params/karplus/sets.csv`
//! (embedded at build time) or from a user file in the same format. Every row
//! names its published source and how its coefficients were checked.

use std::path::Path;

use crate::error::{Error, Result};
use crate::fragments::FragmentKind;

/// The parameter table as shipped, embedded at build time.
pub const SETS_CSV: &str = include_str!("../../params/karplus/sets.csv");

/// Name under which the embedded table is reported in messages.
const BUILTIN_NAME: &str = "params/karplus/sets.csv";

/// Coefficients of the Haasnoot–de Leeuw–Altona equation (Haasnoot, de Leeuw
/// & Altona, Tetrahedron 1980, 36, 2783).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HlaCoefficients {
    /// P1 in Hz (cos²φ term).
    pub p1: f64,
    /// P2 in Hz (cos φ term).
    pub p2: f64,
    /// P3 in Hz (constant).
    pub p3: f64,
    /// P4 in Hz per electronegativity unit.
    pub p4: f64,
    /// P5 in Hz per electronegativity unit.
    pub p5: f64,
    /// P6 in radians per electronegativity unit (given in degrees in the file).
    pub p6_rad: f64,
    /// P7, dimensionless weight of the β substituents.
    pub p7: f64,
}

/// The functional form of a parameter set with its coefficients. Angles are
/// radians; φ is the IUPAC-signed H–X–Y–H dihedral unless stated.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Form {
    /// Haasnoot–de Leeuw–Altona with electronegativity terms.
    Hla(HlaCoefficients),
    /// J = A cos²θ + B cos θ + C with θ = φ + offset.
    Cos2 {
        /// A in Hz.
        a: f64,
        /// B in Hz.
        b: f64,
        /// C in Hz.
        c: f64,
        /// Phase offset in radians added to φ.
        offset_rad: f64,
    },
    /// J = A0 cos²φ + S sin²φ + C for |φ| ≤ 90°, A180 cos²φ + S sin²φ + C beyond
    /// (Karplus 1959, Garbisch 1964).
    Piecewise {
        /// cos² coefficient for |φ| ≤ 90°, Hz.
        a0: f64,
        /// cos² coefficient for |φ| > 90°, Hz.
        a180: f64,
        /// sin² coefficient, Hz.
        s: f64,
        /// Constant, Hz.
        c: f64,
    },
    /// J = c0 + c1 cos φ + s1 sin φ + c2 cos 2φ + s2 sin 2φ (Hz).
    Fourier([f64; 5]),
    /// Hexopyranose H5–H6 couplings as Fourier series (coefficients as in
    /// [`Form::Fourier`]) in ω = τ(O5, C5, C6, O6): one for 3J(H5,H6R), one for
    /// 3J(H5,H6S) (Stenutz et al., J. Org. Chem. 2002, 67, 949).
    Omega {
        /// Series for the pro-R proton H6R.
        h6r: [f64; 5],
        /// Series for the pro-S proton H6S.
        h6s: [f64; 5],
    },
}

impl Form {
    /// Short name of the form as written in the parameter file.
    pub fn name(&self) -> &'static str {
        match self {
            Form::Hla(_) => "hla",
            Form::Cos2 { .. } => "cos2",
            Form::Piecewise { .. } => "piecewise",
            Form::Fourier(_) => "fourier",
            Form::Omega { .. } => "omega",
        }
    }
}

/// One published parameter set.
#[derive(Debug, Clone, PartialEq)]
pub struct ParamSet {
    /// Our short identifier (`hla-general-beta`).
    pub id: String,
    /// Fragment kind the set was fitted for.
    pub kind: FragmentKind,
    /// Functional form and coefficients.
    pub form: Form,
    /// Published RMS error of the fit in Hz, where known.
    pub rms_hz: Option<f64>,
    /// Authors, journal, volume, first page, year.
    pub source: String,
    /// How the coefficients were checked (`confirmed: …` or `from memory`).
    pub status: String,
    /// Where the row was read (`file:line`).
    pub origin: String,
}

/// A collection of parameter sets, looked up by id.
#[derive(Debug, Clone, Default)]
pub struct ParamLibrary {
    sets: Vec<ParamSet>,
}

fn kind_from_label(s: &str) -> Option<FragmentKind> {
    [
        FragmentKind::HCsp3Csp3H,
        FragmentKind::HCsp3Csp2H,
        FragmentKind::HCsp2Csp2H,
        FragmentKind::HNCH,
        FragmentKind::HOCH,
        FragmentKind::Other,
    ]
    .into_iter()
    .find(|k| k.label().eq_ignore_ascii_case(s))
}

fn parse_form(form: &str, coefs: &[f64]) -> std::result::Result<Form, String> {
    let want = |n: usize| {
        if coefs.len() == n {
            Ok(())
        } else {
            Err(format!(
                "form '{form}' takes {n} coefficients, found {}",
                coefs.len()
            ))
        }
    };
    let five = |s: &[f64]| [s[0], s[1], s[2], s[3], s[4]];
    match form {
        "hla" => {
            want(7)?;
            Ok(Form::Hla(HlaCoefficients {
                p1: coefs[0],
                p2: coefs[1],
                p3: coefs[2],
                p4: coefs[3],
                p5: coefs[4],
                p6_rad: coefs[5].to_radians(),
                p7: coefs[6],
            }))
        }
        "cos2" => {
            want(4)?;
            Ok(Form::Cos2 {
                a: coefs[0],
                b: coefs[1],
                c: coefs[2],
                offset_rad: coefs[3].to_radians(),
            })
        }
        "piecewise" => {
            want(4)?;
            Ok(Form::Piecewise {
                a0: coefs[0],
                a180: coefs[1],
                s: coefs[2],
                c: coefs[3],
            })
        }
        "fourier" => {
            want(5)?;
            Ok(Form::Fourier(five(coefs)))
        }
        "omega" => {
            want(10)?;
            Ok(Form::Omega {
                h6r: five(&coefs[..5]),
                h6s: five(&coefs[5..]),
            })
        }
        other => Err(format!(
            "unknown form '{other}' (expected hla, cos2, piecewise, fourier or omega)"
        )),
    }
}

impl ParamLibrary {
    /// The embedded library (`params/karplus/sets.csv`).
    pub fn builtin() -> ParamLibrary {
        // The embedded table is checked by a unit test; failing here is a build
        // defect, not a user error, so fall back to an empty library.
        ParamLibrary::from_str_named(SETS_CSV, BUILTIN_NAME).unwrap_or_default()
    }

    /// Parses a table in the format of `params/karplus/sets.csv`; errors name
    /// `<string>:line`.
    #[allow(clippy::should_implement_trait)]
    pub fn from_str(text: &str) -> Result<ParamLibrary> {
        ParamLibrary::from_str_named(text, "<string>")
    }

    /// Reads a parameter file; errors name `file:line`.
    pub fn load_file(path: impl AsRef<Path>) -> Result<ParamLibrary> {
        let path = path.as_ref();
        let text = std::fs::read_to_string(path).map_err(|e| Error::io(path, e))?;
        ParamLibrary::from_str_named(&text, &path.display().to_string())
    }

    /// Parses a table, naming it `name` in error messages.
    pub fn from_str_named(text: &str, name: &str) -> Result<ParamLibrary> {
        let mut rdr = csv::ReaderBuilder::new()
            .has_headers(true)
            .comment(Some(b'#'))
            .flexible(true)
            .trim(csv::Trim::All)
            .from_reader(text.as_bytes());
        let header_line = rdr.position().line();
        let headers = rdr
            .headers()
            .map_err(|e| Error::parse(name, header_line.max(1) as usize, e.to_string()))?
            .clone();
        let expected = [
            "id",
            "kind",
            "form",
            "coefficients",
            "rms_hz",
            "source",
            "status",
        ];
        let got: Vec<&str> = headers.iter().collect();
        if got != expected {
            return Err(Error::file(
                name,
                format!(
                    "header must be '{}', found '{}'",
                    expected.join(","),
                    got.join(",")
                ),
            ));
        }
        let mut sets: Vec<ParamSet> = Vec::new();
        let mut record = csv::StringRecord::new();
        loop {
            let line_guess = rdr.position().line() as usize;
            let more = rdr.read_record(&mut record).map_err(|e| {
                let line = e
                    .position()
                    .map(|p| p.line() as usize)
                    .unwrap_or(line_guess);
                Error::parse(name, line, e.to_string())
            })?;
            if !more {
                break;
            }
            let line = record
                .position()
                .map(|p| p.line() as usize)
                .unwrap_or(line_guess);
            let err = |msg: String| Error::parse(name, line, msg);
            if record.len() != expected.len() {
                return Err(err(format!(
                    "expected {} fields, found {}",
                    expected.len(),
                    record.len()
                )));
            }
            let field = |k: usize| record.get(k).unwrap_or("");
            let id = field(0).to_string();
            if id.is_empty() || id.contains(char::is_whitespace) {
                return Err(err(format!("bad set id '{id}'")));
            }
            if sets.iter().any(|s| s.id == id) {
                return Err(err(format!("set id '{id}' appears twice")));
            }
            let kind = kind_from_label(field(1))
                .ok_or_else(|| err(format!("unknown fragment kind '{}'", field(1))))?;
            let mut coefs = Vec::new();
            for tok in field(3).split_whitespace() {
                let v: f64 = tok
                    .parse()
                    .map_err(|_| err(format!("bad coefficient '{tok}'")))?;
                if !v.is_finite() {
                    return Err(err(format!("coefficient '{tok}' is not finite")));
                }
                coefs.push(v);
            }
            let form = parse_form(field(2), &coefs).map_err(err)?;
            let rms_hz = match field(4) {
                "" => None,
                s => {
                    let v: f64 = s.parse().map_err(|_| err(format!("bad rms_hz '{s}'")))?;
                    if !(v.is_finite() && v >= 0.0) {
                        return Err(err(format!("rms_hz '{s}' must be a number >= 0")));
                    }
                    Some(v)
                }
            };
            sets.push(ParamSet {
                id,
                kind,
                form,
                rms_hz,
                source: field(5).to_string(),
                status: field(6).to_string(),
                origin: format!("{name}:{line}"),
            });
        }
        Ok(ParamLibrary { sets })
    }

    /// The set with this id.
    pub fn get(&self, id: &str) -> Option<&ParamSet> {
        self.sets.iter().find(|s| s.id == id)
    }

    /// The set with this id, or an [`Error::Model`] listing the known ids.
    pub fn require(&self, id: &str) -> Result<&ParamSet> {
        self.get(id).ok_or_else(|| {
            Error::Model(format!(
                "no coupling parameter set '{id}' (known: {})",
                self.ids().collect::<Vec<_>>().join(", ")
            ))
        })
    }

    /// Ids of all sets, in file order.
    pub fn ids(&self) -> impl Iterator<Item = &str> {
        self.sets.iter().map(|s| s.id.as_str())
    }

    /// All sets, in file order.
    pub fn sets(&self) -> &[ParamSet] {
        &self.sets
    }

    /// Adds the sets of `other`; a set whose id already exists replaces it (so a
    /// user file can override a shipped set).
    pub fn extend(&mut self, other: ParamLibrary) {
        for s in other.sets {
            if let Some(slot) = self.sets.iter_mut().find(|t| t.id == s.id) {
                *slot = s;
            } else {
                self.sets.push(s);
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn builtin_parses() {
        let lib = ParamLibrary::from_str_named(SETS_CSV, BUILTIN_NAME).unwrap();
        for id in [
            "hla-general",
            "hla-general-beta",
            "hla-2sub",
            "hla-3sub",
            "hla-4sub",
            "karplus-1959",
            "karplus-1963",
            "bothner-by-1965",
            "garbisch-1964",
            "pardi-1984",
            "vuister-bax-1993",
            "wang-bax-1996",
            "hu-bax-1997",
            "schmidt-1999",
            "fraser-1969",
            "stenutz-2002",
        ] {
            let s = lib.get(id).unwrap_or_else(|| panic!("missing {id}"));
            assert!(!s.source.is_empty() && !s.status.is_empty(), "{id}");
        }
        assert!(ParamLibrary::builtin().get("hla-2sub").is_some());
    }

    #[test]
    fn errors_name_line() {
        let text = "# comment\nid,kind,form,coefficients,rms_hz,source,status\n\
                    a,HNCH,cos2,1 2 3 0,,src,from memory\n\
                    b,HNCH,cos2,1 2 x 0,,src,from memory\n";
        let e = ParamLibrary::from_str(text).unwrap_err().to_string();
        assert!(e.starts_with("<string>:4:"), "{e}");
        assert!(e.contains("bad coefficient 'x'"), "{e}");

        let text = "id,kind,form,coefficients,rms_hz,source,status\n\
                    a,HNCH,hla,1 2 3,,src,from memory\n";
        let e = ParamLibrary::from_str(text).unwrap_err().to_string();
        assert!(
            e.starts_with("<string>:2:") && e.contains("7 coefficients"),
            "{e}"
        );

        let text = "id,kind,form,coefficients,rms_hz,source,status\n\
                    a,HXCH,cos2,1 2 3 0,,src,from memory\n";
        let e = ParamLibrary::from_str(text).unwrap_err().to_string();
        assert!(e.contains("unknown fragment kind"), "{e}");
    }

    #[test]
    fn extend_overrides() {
        let mut lib = ParamLibrary::builtin();
        let user = ParamLibrary::from_str(
            "id,kind,form,coefficients,rms_hz,source,status\n\
             hu-bax-1997,HNCH,cos2,1 0 0 0,0.1,mine,invented for a test\n\
             my-set,HOCH,cos2,9 -1 0.5 0,,mine,invented for a test\n",
        )
        .unwrap();
        let n = lib.sets().len();
        lib.extend(user);
        assert_eq!(lib.sets().len(), n + 1);
        assert_eq!(lib.get("hu-bax-1997").unwrap().source, "mine");
        assert!(lib.require("nope").is_err());
    }
}
