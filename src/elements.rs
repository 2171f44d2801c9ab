//! Element data: symbol, atomic number, covalent radius and Huggins
//! electronegativity, read from `params/elements.csv`, which is embedded in the
//! binary at build time. Sources are named in that file, row by row.

use std::sync::OnceLock;

/// The element table as shipped, embedded at build time.
pub const ELEMENTS_CSV: &str = include_str!("../params/elements.csv");

/// One row of the element table.
#[derive(Debug, Clone, PartialEq)]
pub struct ElementData {
    /// Chemical symbol with conventional capitalisation (`C`, `Cl`).
    pub symbol: String,
    /// Atomic number Z.
    pub atomic_number: u8,
    /// Single-bond covalent radius in Å (Cordero et al., Dalton Trans. 2008, 2832).
    pub covalent_radius: f64,
    /// Electronegativity on the Huggins scale (J. Am. Chem. Soc. 1953, 75, 4123),
    /// `None` where the table has no value.
    pub chi_huggins: Option<f64>,
    /// Source of the electronegativity value, as written in the table.
    pub chi_source: String,
}

/// A chemical element, stored as its atomic number. Only elements listed in
/// `params/elements.csv` can be constructed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct Element(u8);

impl Element {
    /// Hydrogen.
    pub const H: Element = Element(1);
    /// Boron.
    pub const B: Element = Element(5);
    /// Carbon.
    pub const C: Element = Element(6);
    /// Nitrogen.
    pub const N: Element = Element(7);
    /// Oxygen.
    pub const O: Element = Element(8);
    /// Fluorine.
    pub const F: Element = Element(9);
    /// Silicon.
    pub const SI: Element = Element(14);
    /// Phosphorus.
    pub const P: Element = Element(15);
    /// Sulfur.
    pub const S: Element = Element(16);
    /// Chlorine.
    pub const CL: Element = Element(17);
    /// Bromine.
    pub const BR: Element = Element(35);
    /// Iodine.
    pub const I: Element = Element(53);

    /// The element with this atomic number, if the table lists it.
    pub fn from_atomic_number(z: u8) -> Option<Element> {
        table()
            .by_z
            .get(z as usize)
            .and_then(|i| i.map(|_| Element(z)))
    }

    /// The element for a symbol, case-insensitive (`c`, `CL`, `Cl`); `D` and `T`
    /// are read as hydrogen isotopes.
    pub fn from_symbol(symbol: &str) -> Option<Element> {
        let s = symbol.trim();
        let b = s.as_bytes();
        match b.len() {
            1 => {
                let c = b[0].to_ascii_uppercase();
                match c {
                    b'H' | b'D' | b'T' => return Some(Element::H),
                    b'C' => return Some(Element::C),
                    b'N' => return Some(Element::N),
                    b'O' => return Some(Element::O),
                    _ => {}
                }
            }
            2 | 3 => {}
            _ => return None,
        }
        let t = table();
        t.rows
            .iter()
            .find(|r| r.symbol.eq_ignore_ascii_case(s))
            .map(|r| Element(r.atomic_number))
    }

    /// Atomic number Z.
    pub fn atomic_number(self) -> u8 {
        self.0
    }

    /// The table row of this element. Element values are made from table
    /// rows, so the row exists, unless the built-in table itself is broken
    /// (see [`check_builtin_table`]): then a row without data stands in.
    pub fn data(self) -> &'static ElementData {
        let t = table();
        t.by_z
            .get(self.0 as usize)
            .copied()
            .flatten()
            .and_then(|i| t.rows.get(i))
            .unwrap_or(&MISSING)
    }

    /// Chemical symbol.
    pub fn symbol(self) -> &'static str {
        &self.data().symbol
    }

    /// Single-bond covalent radius in Å (Cordero et al. 2008).
    pub fn covalent_radius(self) -> f64 {
        self.data().covalent_radius
    }

    /// Huggins electronegativity, if tabulated.
    pub fn chi_huggins(self) -> Option<f64> {
        self.data().chi_huggins
    }

    /// True for hydrogen (including D and T as read).
    pub fn is_hydrogen(self) -> bool {
        self.0 == 1
    }
}

impl std::fmt::Display for Element {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.symbol())
    }
}

struct Table {
    rows: Vec<ElementData>,
    by_z: Vec<Option<usize>>,
}

/// The row [`Element::data`] gives when the built-in table is broken.
static MISSING: ElementData = ElementData {
    symbol: String::new(),
    atomic_number: 0,
    covalent_radius: f64::NAN,
    chi_huggins: None,
    chi_source: String::new(),
};

/// The built-in table, parsed once.
fn builtin() -> &'static Result<Table, String> {
    static TABLE: OnceLock<Result<Table, String>> = OnceLock::new();
    TABLE.get_or_init(|| parse_table_checked(ELEMENTS_CSV))
}

/// The built-in table, or an empty one if it does not parse.
fn table() -> &'static Table {
    static EMPTY: Table = Table {
        rows: Vec::new(),
        by_z: Vec::new(),
    };
    builtin().as_ref().unwrap_or(&EMPTY)
}

/// Checks that the element table built into the binary
/// (`params/elements.csv`) parses; the message names the bad row. The table
/// is checked by a unit test, so a failure is a broken build, not bad input:
/// the command line calls this first and stops with the message, rather than
/// run with no element data.
pub fn check_builtin_table() -> Result<(), String> {
    builtin().as_ref().map(|_| ()).map_err(Clone::clone)
}

/// Parses an element table in the format of `params/elements.csv`
/// (`#` comment lines, then a header and rows).
pub fn parse_table(text: &str) -> Result<Vec<ElementData>, String> {
    parse_rows(text)
}

fn parse_rows(text: &str) -> Result<Vec<ElementData>, String> {
    let body: String = text
        .lines()
        .filter(|l| !l.trim_start().starts_with('#'))
        .collect::<Vec<_>>()
        .join("\n");
    let mut rdr = csv::ReaderBuilder::new()
        .has_headers(true)
        .from_reader(body.as_bytes());
    let mut rows = Vec::new();
    for (i, rec) in rdr.records().enumerate() {
        let rec = rec.map_err(|e| format!("elements table row {}: {e}", i + 1))?;
        let get = |k: usize| rec.get(k).unwrap_or("").trim();
        let z: u8 = get(1)
            .parse()
            .map_err(|_| format!("elements table row {}: bad atomic number", i + 1))?;
        let r: f64 = get(2)
            .parse()
            .map_err(|_| format!("elements table row {}: bad covalent radius", i + 1))?;
        let chi = match get(3) {
            "" => None,
            s => Some(
                s.parse::<f64>()
                    .map_err(|_| format!("elements table row {}: bad electronegativity", i + 1))?,
            ),
        };
        rows.push(ElementData {
            symbol: get(0).to_string(),
            atomic_number: z,
            covalent_radius: r,
            chi_huggins: chi,
            chi_source: get(4).to_string(),
        });
    }
    Ok(rows)
}

impl Table {
    fn build(rows: Vec<ElementData>) -> Table {
        let mut by_z = vec![None; 256];
        for (i, r) in rows.iter().enumerate() {
            by_z[r.atomic_number as usize] = Some(i);
        }
        Table { rows, by_z }
    }
}

fn parse_table_checked(text: &str) -> Result<Table, String> {
    parse_rows(text).map(Table::build)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn embedded_table_parses() {
        let t = parse_table_checked(ELEMENTS_CSV).unwrap();
        assert!(t.rows.len() > 50);
        assert_eq!(check_builtin_table(), Ok(()));
    }

    // Huggins 1953 values as quoted by Haasnoot, de Leeuw & Altona 1980.
    #[test]
    fn huggins_values() {
        assert_eq!(Element::H.chi_huggins(), Some(2.20));
        assert_eq!(Element::C.chi_huggins(), Some(2.60));
        assert_eq!(Element::N.chi_huggins(), Some(3.05));
        assert_eq!(Element::O.chi_huggins(), Some(3.50));
        assert_eq!(Element::F.chi_huggins(), Some(3.90));
        assert_eq!(Element::CL.chi_huggins(), Some(3.15));
        assert_eq!(Element::BR.chi_huggins(), Some(2.95));
        assert_eq!(Element::I.chi_huggins(), Some(2.65));
    }

    // S, Si and P: Huggins values recalled from memory; the table must say so,
    // and the HLA preparation warns on them.
    #[test]
    fn unchecked_values_are_marked() {
        for e in [Element::S, Element::SI, Element::P] {
            assert!(e.chi_huggins().is_some());
            assert!(e.data().chi_source.contains("from memory"), "{e}");
        }
        assert!(!Element::O.data().chi_source.contains("from memory"));
    }

    // Cordero et al. 2008, Table 2 (from memory).
    #[test]
    fn cordero_radii() {
        assert_eq!(Element::H.covalent_radius(), 0.31);
        assert_eq!(Element::C.covalent_radius(), 0.76);
        assert_eq!(Element::O.covalent_radius(), 0.66);
    }

    #[test]
    fn symbols() {
        assert_eq!(Element::from_symbol("cl"), Some(Element::CL));
        assert_eq!(Element::from_symbol("D"), Some(Element::H));
        assert_eq!(Element::from_symbol("Xx"), None);
        assert_eq!(Element::from_symbol("Br").unwrap().symbol(), "Br");
        assert_eq!(Element::from_atomic_number(6), Some(Element::C));
    }
}
