//! Property tests of the XYZ writer/reader pair and of the byte float parser.

use std::io::{BufRead, Cursor};
use std::path::PathBuf;

use proptest::prelude::*;
use vicinal::elements::Element;
use vicinal::geometry::Vec3;
use vicinal::io::number::parse_f64;
use vicinal::io::xyz::{write_frame, XyzReader};
use vicinal::io::{Frame, FrameReader, ReadOptions};

fn finite_f64() -> impl Strategy<Value = f64> {
    prop_oneof![
        prop::num::f64::NORMAL | prop::num::f64::SUBNORMAL | prop::num::f64::ZERO,
        -1000.0..1000.0f64,
        (-99_999_999i64..99_999_999).prop_map(|m| m as f64 / 1e6),
    ]
}

fn element() -> impl Strategy<Value = Element> {
    (1u8..=54).prop_filter_map("listed element", Element::from_atomic_number)
}

fn frame() -> impl Strategy<Value = Frame> {
    (
        prop::collection::vec((element(), finite_f64(), finite_f64(), finite_f64()), 1..25),
        "[ -~]{0,40}",
    )
        .prop_map(|(atoms, title)| Frame {
            title: title.trim().to_string(),
            elements: atoms.iter().map(|a| a.0).collect(),
            coords: atoms.iter().map(|a| Vec3::new(a.1, a.2, a.3)).collect(),
            ..Frame::default()
        })
}

/// Decimal strings of the shapes conformer files contain, and some they should not.
fn decimal_string() -> impl Strategy<Value = String> {
    (
        prop_oneof![Just(""), Just("-"), Just("+")],
        "[0-9]{0,20}",
        prop::option::of("[0-9]{0,20}"),
        prop::option::of((
            prop_oneof![Just("e"), Just("E")],
            prop_oneof![Just(""), Just("-"), Just("+")],
            0u32..400,
        )),
    )
        .prop_map(|(sign, int, frac, exp)| {
            let mut s = format!("{sign}{int}");
            if let Some(f) = frac {
                s.push('.');
                s.push_str(&f);
            }
            if let Some((e, es, v)) = exp {
                s.push_str(&format!("{e}{es}{v}"));
            }
            s
        })
}

fn same_as_std(s: &str) -> Result<(), TestCaseError> {
    let want = s.parse::<f64>().ok();
    let got = parse_f64(s.as_bytes());
    match (want, got) {
        (Some(a), Some(b)) => prop_assert_eq!(a.to_bits(), b.to_bits(), "{}", s),
        (None, None) => {}
        _ => prop_assert!(false, "{}: std {:?}, ours {:?}", s, want, got),
    }
    Ok(())
}

/// One atom line of the shapes found in XYZ files (and some broken ones):
/// blanks, a symbol in any case or an atomic number, three or four decimal
/// fields, blanks, an optional carriage return. (No line without a symbol:
/// there the first number would be read as an atomic number, and the extra
/// column of the test would become the z coordinate.)
fn atom_line() -> impl Strategy<Value = String> {
    let blank = prop_oneof![Just(" "), Just("  "), Just("\t"), Just("     ")];
    (
        prop_oneof![Just(""), Just(" "), Just("\t ")],
        prop_oneof![
            Just("C"),
            Just("h"),
            Just("O"),
            Just("Cl"),
            Just("BR"),
            Just("D"),
            Just("6"),
            Just("Xx"),
            Just("Cll")
        ],
        prop::collection::vec(
            (
                blank.clone(),
                decimal_string().prop_filter("a field", |s| !s.is_empty()),
            ),
            3..5,
        ),
        prop_oneof![Just(""), Just(" "), Just("\t  ")],
        prop_oneof![Just(""), Just("\r")],
    )
        .prop_map(|(lead, sym, fields, trail, cr)| {
            let mut s = format!("{lead}{sym}");
            for (b, f) in fields {
                s.push_str(b);
                s.push_str(&f);
            }
            format!("{s}{trail}{cr}")
        })
}

fn read_xyz(text: &str) -> Result<Vec<Frame>, String> {
    let input: Box<dyn BufRead> = Box::new(Cursor::new(text.as_bytes().to_vec()));
    let mut r = XyzReader::new(input, PathBuf::from("<prop>"), ReadOptions::default());
    let mut out = Vec::new();
    let mut f = Frame::default();
    while r.read_frame(&mut f).map_err(|e| e.to_string())? {
        out.push(f.clone());
    }
    Ok(out)
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(2000))]

    /// The reader's one-pass path for plain atom lines agrees with its general
    /// path: the same lines with an extra (ignored) column, which only the
    /// general path reads, give the same atoms, bit for bit, or both fail.
    #[test]
    fn plain_atom_lines_read_as_the_general_path_does(
        lines in prop::collection::vec(atom_line(), 1..6),
        final_newline in any::<bool>(),
    ) {
        let head = format!("{}\ntitle\n", lines.len());
        let end = if final_newline { "\n" } else { "" };
        let plain = format!("{head}{}{end}", lines.join("\n"));
        let extra: Vec<String> = lines
            .iter()
            .map(|l| format!("{} 9", l.trim_end_matches('\r')))
            .collect();
        let general = format!("{head}{}{end}", extra.join("\n"));
        match (read_xyz(&plain), read_xyz(&general)) {
            (Ok(a), Ok(b)) => {
                prop_assert_eq!(a.len(), b.len());
                for (p, q) in a.iter().zip(&b) {
                    prop_assert_eq!(&p.elements, &q.elements);
                    for (u, v) in p.coords.iter().zip(&q.coords) {
                        for k in 0..3 {
                            prop_assert_eq!(u[k].to_bits(), v[k].to_bits(), "{:?}", plain);
                        }
                    }
                }
            }
            (Err(_), Err(_)) => {}
            (a, b) => prop_assert!(false, "{:?}: plain {:?}, general {:?}", plain, a.is_ok(), b.is_ok()),
        }
    }

    #[test]
    fn float_strings_parse_like_std(s in decimal_string()) {
        same_as_std(&s)?;
    }

    #[test]
    fn displayed_floats_parse_back_exactly(v in finite_f64()) {
        same_as_std(&v.to_string())?;
        same_as_std(&format!("{v:e}"))?;
        same_as_std(&format!("{v:.6}"))?;
        same_as_std(&format!("{v:.17e}"))?;
    }

    #[test]
    fn written_frames_read_back_identically(frames in prop::collection::vec(frame(), 1..4)) {
        let mut text = Vec::new();
        for f in &frames {
            write_frame(&mut text, f).unwrap();
        }
        let input: Box<dyn BufRead> = Box::new(Cursor::new(text));
        let mut r = XyzReader::new(input, PathBuf::from("<prop>"), ReadOptions::default());
        let mut back = Frame::default();
        for f in &frames {
            prop_assert!(r.read_frame(&mut back).unwrap());
            prop_assert_eq!(&back.elements, &f.elements);
            prop_assert_eq!(back.coords.len(), f.coords.len());
            for (p, q) in back.coords.iter().zip(&f.coords) {
                for k in 0..3 {
                    prop_assert_eq!(p[k].to_bits(), q[k].to_bits());
                }
            }
            prop_assert_eq!(&back.title, &f.title);
        }
        prop_assert!(!r.read_frame(&mut back).unwrap());
    }
}
