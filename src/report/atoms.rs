//! The atom listing: atoms with their neighbours, rings, and every vicinal
//! pair with both atom references, so a spectrum can be mapped onto the
//! structure.

use std::io::{self, Write};

use serde::Serialize;

use super::table::{Align, Table};
use crate::atomref;
use crate::fragments::{Fragments, RotorKind};
use crate::topology::{BondSource, Hybridization, Topology};

fn hyb(h: Hybridization) -> &'static str {
    match h {
        Hybridization::Sp3 => "sp3",
        Hybridization::Sp2 => "sp2",
        Hybridization::Sp => "sp",
        Hybridization::Other => "-",
    }
}

/// One atom of the listing (JSON form).
#[derive(Debug, Serialize)]
pub struct AtomEntry {
    /// 1-based index.
    pub index: usize,
    /// Element symbol.
    pub element: String,
    /// Name from the file, if any.
    pub name: Option<String>,
    /// Hybridisation (`sp3`, `sp2`, `sp`, `-`).
    pub hybridization: String,
    /// Formal charge.
    pub charge: i8,
    /// 1-based indices of the bonded atoms.
    pub neighbors: Vec<usize>,
}

/// One vicinal pair of the listing (JSON form).
#[derive(Debug, Serialize)]
pub struct PairEntry {
    /// 1-based indices of the path H–X–Y–H.
    pub path: [usize; 4],
    /// Names of the two protons, if the file has them.
    pub names: [Option<String>; 2],
    /// Fragment kind label.
    pub kind: String,
    /// Number of non-hydrogen substituents on X and Y together.
    pub substituents: usize,
    /// Rotor groups the protons belong to (`methyl`, `ammonium`), if any.
    pub rotor: [Option<String>; 2],
}

/// The whole listing (JSON form).
#[derive(Debug, Serialize)]
pub struct AtomListing {
    /// Atoms in file order.
    pub atoms: Vec<AtomEntry>,
    /// Where bonds came from: `file` or `distance`.
    pub bonds_from: String,
    /// Rings (1-based atom indices in ring order).
    pub rings: Vec<Vec<usize>>,
    /// Vicinal pairs.
    pub pairs: Vec<PairEntry>,
}

fn rotor_name(frags: &Fragments, r: Option<usize>) -> Option<String> {
    r.and_then(|k| frags.rotors.get(k)).map(|r| match r.kind {
        RotorKind::Methyl => "methyl".to_string(),
        RotorKind::Ammonium => "ammonium".to_string(),
    })
}

/// Builds the listing.
pub fn listing(top: &Topology, frags: &Fragments) -> AtomListing {
    let atoms = (0..top.len())
        .map(|i| AtomEntry {
            index: i + 1,
            element: top.atoms[i].element.symbol().to_string(),
            name: top.atoms[i].name.clone(),
            hybridization: hyb(top.hybridization[i]).to_string(),
            charge: top.atoms[i].charge,
            neighbors: top.neighbors[i].iter().map(|j| j + 1).collect(),
        })
        .collect();
    let pairs = frags
        .pairs
        .iter()
        .map(|p| PairEntry {
            path: [p.h1 + 1, p.x + 1, p.y + 1, p.h2 + 1],
            names: [top.atoms[p.h1].name.clone(), top.atoms[p.h2].name.clone()],
            kind: p.kind.label().to_string(),
            substituents: p.n_substituents(),
            rotor: [rotor_name(frags, p.rotor1), rotor_name(frags, p.rotor2)],
        })
        .collect();
    AtomListing {
        atoms,
        bonds_from: match top.bond_source {
            BondSource::File => "file".into(),
            BondSource::Distance => "distance".into(),
        },
        rings: top
            .rings
            .iter()
            .map(|r| r.iter().map(|i| i + 1).collect())
            .collect(),
        pairs,
    }
}

/// Writes the listing as aligned tables for people.
pub fn write_table(w: &mut dyn Write, top: &Topology, frags: &Fragments) -> io::Result<()> {
    let src = match top.bond_source {
        BondSource::File => "as written in the file",
        BondSource::Distance => "perceived from distances (Cordero et al. 2008 radii)",
    };
    writeln!(w, "Atoms ({}; bonds {src})", top.len())?;
    let mut t = Table::new(&[
        ("index", Align::Right),
        ("atom", Align::Left),
        ("name", Align::Left),
        ("hybrid.", Align::Left),
        ("charge", Align::Right),
        ("bonded to", Align::Left),
    ]);
    for i in 0..top.len() {
        t.row(vec![
            (i + 1).to_string(),
            atomref::label(top, i),
            atomref::name(top, i).to_string(),
            hyb(top.hybridization[i]).to_string(),
            top.atoms[i].charge.to_string(),
            top.neighbors[i]
                .iter()
                .map(|&j| atomref::label(top, j))
                .collect::<Vec<_>>()
                .join(" "),
        ]);
    }
    t.write(w, 2)?;
    writeln!(w)?;
    if top.rings.is_empty() {
        writeln!(w, "Rings: none")?;
    } else {
        writeln!(w, "Rings (smallest set of smallest rings)")?;
        for (k, r) in top.rings.iter().enumerate() {
            let atoms: Vec<String> = r.iter().map(|&i| atomref::label(top, i)).collect();
            writeln!(
                w,
                "  ring {}: {}-membered: {}",
                k + 1,
                r.len(),
                atoms.join(" ")
            )?;
        }
    }
    writeln!(w)?;
    writeln!(w, "Vicinal pairs ({})", frags.pairs.len())?;
    let mut t = Table::new(&[
        ("proton 1", Align::Left),
        ("name 1", Align::Left),
        ("proton 2", Align::Left),
        ("name 2", Align::Left),
        ("path", Align::Left),
        ("kind", Align::Left),
        ("subst.", Align::Right),
        ("rotor", Align::Left),
    ]);
    for p in &frags.pairs {
        let rot = [rotor_name(frags, p.rotor1), rotor_name(frags, p.rotor2)]
            .iter()
            .flatten()
            .cloned()
            .collect::<Vec<_>>()
            .join("+");
        t.row(vec![
            atomref::label(top, p.h1),
            atomref::name(top, p.h1).to_string(),
            atomref::label(top, p.h2),
            atomref::name(top, p.h2).to_string(),
            format!(
                "{}-{}-{}-{}",
                atomref::label(top, p.h1),
                atomref::label(top, p.x),
                atomref::label(top, p.y),
                atomref::label(top, p.h2)
            ),
            p.kind.label().to_string(),
            p.n_substituents().to_string(),
            rot,
        ]);
    }
    t.write(w, 2)
}
