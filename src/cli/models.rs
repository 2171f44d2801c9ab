//! `vicinal models` and `vicinal curve`.

use std::io::Write;
use std::path::PathBuf;

use anyhow::{bail, Context, Result};
use clap::Args;

use vicinal::elements::Element;
use vicinal::fragments::FragmentKind;
use vicinal::karplus::{self, ModelChoice, PatternSubstituent};
use vicinal::output;
use vicinal::report;

use super::load_library;

#[derive(Args, Debug)]
pub(crate) struct ModelsArgs {
    /// Also load parameter sets from this CSV file (repeatable).
    #[arg(long = "params", value_name = "FILE")]
    pub(crate) params: Vec<PathBuf>,
}

#[derive(Args, Debug)]
pub(crate) struct CurveArgs {
    /// Parameter set id (see `vicinal models`).
    #[arg(long = "model", value_name = "SET", default_value = "hla-general-beta")]
    pub(crate) model: String,
    /// A substituent for the HLA equation: element, orientation sign and optional
    /// beta elements, e.g. `O+`, `C-`, `C+:O,C` (repeatable; at most six).
    #[arg(long = "subst", value_name = "SPEC")]
    pub(crate) subst: Vec<String>,
    /// Step of the dihedral grid in degrees.
    #[arg(long = "step", value_name = "DEG", default_value_t = 5.0)]
    pub(crate) step: f64,
    /// Write the table here (CSV; default standard output).
    #[arg(long = "csv", value_name = "FILE")]
    pub(crate) csv: Option<PathBuf>,
    /// Also write an SVG plot of the curve here.
    #[arg(long = "svg", value_name = "FILE")]
    pub(crate) svg: Option<PathBuf>,
    /// Also load parameter sets from this CSV file (repeatable).
    #[arg(long = "params", value_name = "FILE")]
    pub(crate) params: Vec<PathBuf>,
}

pub(crate) fn run_models(a: &ModelsArgs) -> Result<()> {
    let lib = load_library(&a.params)?;
    let mut t = report::table::Table::new(&[
        ("set", report::table::Align::Left),
        ("fragment", report::table::Align::Left),
        ("form", report::table::Align::Left),
        ("RMS Hz", report::table::Align::Right),
        ("default for", report::table::Align::Left),
        ("source", report::table::Align::Left),
    ]);
    for s in lib.sets() {
        let defaults: Vec<String> = default_uses(&s.id);
        t.row(vec![
            s.id.clone(),
            s.kind.label().to_string(),
            s.form.name().to_string(),
            s.rms_hz
                .map(|r| format!("{r:.2}"))
                .unwrap_or_else(|| "-".into()),
            defaults.join("; "),
            s.source.clone(),
        ]);
    }
    let mut out = std::io::stdout().lock();
    t.write(&mut out, 0)?;
    writeln!(out)?;
    writeln!(out, "How each set's coefficients were checked:")?;
    for s in lib.sets() {
        writeln!(out, "  {}: {}", s.id, s.status)?;
    }
    Ok(())
}

/// Where a set is used by default (for `vicinal models`).
pub(crate) fn default_uses(id: &str) -> Vec<String> {
    let mut v = Vec::new();
    for kind in FragmentKind::ALL {
        for (n, what) in [
            (0, "0-1 substituents"),
            (2, "2 substituents"),
            (3, "3 substituents"),
            (4, "4 substituents"),
        ] {
            for amide in [false, true] {
                if ModelChoice::default_set(kind, n, amide) == Some(id) {
                    let s = match kind {
                        FragmentKind::HCsp3Csp3H => format!("{} with {what}", kind.label()),
                        FragmentKind::HNCH if amide => "HNCH in amides".to_string(),
                        k => k.label().to_string(),
                    };
                    if !v.contains(&s) {
                        v.push(s);
                    }
                }
            }
        }
    }
    if ModelChoice::default().hydroxymethyl.as_deref() == Some(id) {
        v.push("hexopyranose H5-H6R/H5-H6S".into());
    }
    v
}

pub(crate) fn parse_subst(spec: &str) -> Result<PatternSubstituent> {
    let (head, beta) = match spec.split_once(':') {
        Some((h, b)) => (h, Some(b)),
        None => (spec, None),
    };
    let head = head.trim();
    let (el, sign) = match head.strip_suffix('+') {
        Some(e) => (e, 1.0),
        None => match head.strip_suffix('-') {
            Some(e) => (e, -1.0),
            None => bail!("substituent '{spec}': give the orientation sign, e.g. O+ or O-"),
        },
    };
    let element = Element::from_symbol(el)
        .with_context(|| format!("substituent '{spec}': unknown element '{el}'"))?;
    let mut b = Vec::new();
    if let Some(list) = beta {
        for e in list.split(',').map(str::trim).filter(|e| !e.is_empty()) {
            b.push(
                Element::from_symbol(e)
                    .with_context(|| format!("substituent '{spec}': unknown beta element '{e}'"))?,
            );
        }
    }
    Ok(PatternSubstituent {
        element,
        xi: sign,
        beta: b,
    })
}

pub(crate) fn run_curve(a: &CurveArgs) -> Result<()> {
    let lib = load_library(&a.params)?;
    let set = lib.require(&a.model)?;
    let pattern = a
        .subst
        .iter()
        .map(|s| parse_subst(s))
        .collect::<Result<Vec<_>>>()?;
    let points = karplus::curve(set, &pattern, a.step)?;
    let path = a.csv.clone().unwrap_or_else(|| PathBuf::from("-"));
    output::write_atomic(&path, &a.params, |mut w| {
        karplus::write_curve_csv(&mut w, &points)
    })?;
    if let Some(svg) = &a.svg {
        let label = if a.subst.is_empty() {
            set.id.clone()
        } else {
            format!("{} [{}]", set.id, a.subst.join(" "))
        };
        let text = karplus::curve_svg(
            &format!("3J(H,H) against the dihedral: {}", set.id),
            &[(label.as_str(), &points)],
        );
        output::write_atomic(svg, &a.params, |w| w.write_all(text.as_bytes()))?;
    }
    Ok(())
}
