//! Atom references: one scheme for the command line, input CSVs and outputs.
//! An atom is named by its 1-based index as in the file (`7`), by element and
//! index as vicinal prints it (`H7`), or by its name in the file (PDB atom
//! name, SDF alias, e.g. `H2A`).

use crate::error::{Error, Result};
use crate::topology::Topology;

/// Resolves an atom reference to a 0-based atom index.
///
/// Order of interpretation: an exact (case-sensitive) atom name; a bare
/// 1-based index; an element symbol followed by a 1-based index whose element
/// must match; a case-insensitive atom name.
pub fn resolve(top: &Topology, text: &str) -> Result<usize> {
    let t = text.trim();
    if t.is_empty() {
        return Err(Error::Usage("empty atom reference".into()));
    }
    let by_name: Vec<usize> = (0..top.len())
        .filter(|&i| top.atoms[i].name.as_deref() == Some(t))
        .collect();
    if by_name.len() == 1 {
        return Ok(by_name[0]);
    }
    if by_name.len() > 1 {
        return Err(Error::Usage(format!(
            "atom name '{t}' is used by {} atoms ({}); refer to one by its index",
            by_name.len(),
            list(top, &by_name)
        )));
    }
    if let Ok(n) = t.parse::<usize>() {
        return index(top, n, t);
    }
    let split = t.find(|c: char| c.is_ascii_digit()).unwrap_or(t.len());
    let (sym, num) = t.split_at(split);
    if !sym.is_empty() && !num.is_empty() && sym.chars().all(|c| c.is_ascii_alphabetic()) {
        if let Ok(n) = num.parse::<usize>() {
            let i = index(top, n, t)?;
            let el = top.atoms[i].element;
            if el.symbol().eq_ignore_ascii_case(sym)
                || (sym.eq_ignore_ascii_case("D") && el.is_hydrogen())
            {
                return Ok(i);
            }
            return Err(Error::Usage(format!(
                "atom reference '{t}': atom {n} is {el}, not {sym}"
            )));
        }
    }
    let ci: Vec<usize> = (0..top.len())
        .filter(|&i| {
            top.atoms[i]
                .name
                .as_deref()
                .is_some_and(|n| n.eq_ignore_ascii_case(t))
        })
        .collect();
    match ci.len() {
        1 => Ok(ci[0]),
        0 => Err(Error::Usage(format!(
            "atom reference '{t}' matches no atom (use a 1-based index 1..{}, an element and index such as H7, or an atom name)",
            top.len()
        ))),
        _ => Err(Error::Usage(format!(
            "atom name '{t}' matches {} atoms ({}); refer to one by its index",
            ci.len(),
            list(top, &ci)
        ))),
    }
}

fn index(top: &Topology, n: usize, t: &str) -> Result<usize> {
    if n == 0 || n > top.len() {
        return Err(Error::Usage(format!(
            "atom reference '{t}': the molecule has atoms 1..{}",
            top.len()
        )));
    }
    Ok(n - 1)
}

fn list(top: &Topology, idx: &[usize]) -> String {
    idx.iter()
        .map(|&i| label(top, i))
        .collect::<Vec<_>>()
        .join(", ")
}

/// Short label of an atom: element and 1-based index (`H7`).
pub fn label(top: &Topology, i: usize) -> String {
    format!("{}{}", top.atoms[i].element, i + 1)
}

/// The atom's name from the file, or an empty string.
pub fn name(top: &Topology, i: usize) -> &str {
    top.atoms[i].name.as_deref().unwrap_or("")
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::elements::Element;
    use crate::topology::{Atom, BondSource};

    fn top() -> Topology {
        let atoms = vec![
            Atom {
                element: Element::C,
                name: Some("C1".into()),
                charge: 0,
            },
            Atom {
                element: Element::H,
                name: Some("H1A".into()),
                charge: 0,
            },
            Atom {
                element: Element::H,
                name: Some("H1B".into()),
                charge: 0,
            },
            Atom {
                element: Element::O,
                name: None,
                charge: 0,
            },
        ];
        Topology {
            neighbors: vec![vec![]; atoms.len()],
            hybridization: vec![crate::topology::Hybridization::Other; atoms.len()],
            atoms,
            bonds: vec![],
            bond_source: BondSource::Distance,
            rings: vec![],
        }
    }

    #[test]
    fn forms() {
        let t = top();
        assert_eq!(resolve(&t, "2").unwrap(), 1);
        assert_eq!(resolve(&t, "H3").unwrap(), 2);
        assert_eq!(resolve(&t, "H1B").unwrap(), 2);
        assert_eq!(resolve(&t, "h1a").unwrap(), 1);
        assert_eq!(resolve(&t, "O4").unwrap(), 3);
        assert!(resolve(&t, "C4")
            .unwrap_err()
            .to_string()
            .contains("is O, not C"));
        assert!(resolve(&t, "9")
            .unwrap_err()
            .to_string()
            .contains("atoms 1..4"));
        assert!(resolve(&t, "HX")
            .unwrap_err()
            .to_string()
            .contains("matches no atom"));
    }
}
