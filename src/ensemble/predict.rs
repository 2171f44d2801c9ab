//! The main job: couplings of every vicinal pair in every conformer, ring
//! shapes and axial/equatorial positions per conformer, and the
//! population-weighted ensemble averages.
//!
//! Conformers are streamed from their files once. Per conformer only the
//! dihedrals, couplings, ring coordinates and energies are kept, never the
//! coordinates themselves, so memory grows with (conformers × pairs), not
//! with the size of the files.

use std::collections::BTreeMap;
use std::path::PathBuf;

use serde::Serialize;

use super::average::{spread, Spread};
use super::relabel::ProtonPairing;
use super::source::EnsembleSource;
use super::weights::{self, EnergyUnit};
use crate::error::{Error, Result};
use crate::fragments::{self, FragmentKind, Fragments};
use crate::io::Frame;
use crate::karplus::{self, ModelChoice, NotEvaluated, ParamLibrary, PreparedSet};
use crate::pucker::{Position, Pucker};
use crate::topology::Topology;

/// How conformers are weighted.
#[derive(Debug, Clone, PartialEq)]
pub enum Weighting {
    /// Boltzmann populations from the energies in the files.
    Boltzmann {
        /// Temperature in K.
        temperature_k: f64,
        /// Unit of the energies as read.
        unit: EnergyUnit,
        /// Drop conformers more than this many kcal/mol above the lowest.
        window_kcal: Option<f64>,
    },
    /// Equal weights (a time average over molecular-dynamics frames).
    Equal,
    /// Populations given by the user, one per conformer in file order.
    Given(Vec<f64>),
}

/// Options of a prediction.
#[derive(Debug, Clone)]
pub struct PredictOptions {
    /// Conformer weighting.
    pub weighting: Weighting,
    /// Parameter sets available (built-in plus any user files).
    pub library: ParamLibrary,
    /// Which set for which fragment.
    pub choice: ModelChoice,
}

/// One conformer as the report shows it.
#[derive(Debug, Clone, Serialize)]
pub struct ConformerInfo {
    /// 1-based index in the ensemble.
    pub index: usize,
    /// File it came from.
    pub file: PathBuf,
    /// 1-based line where its record starts.
    pub line: usize,
    /// Title or comment line.
    pub title: String,
    /// Energy as read, in the stated unit.
    pub energy: Option<f64>,
    /// Energy relative to the lowest kept conformer, kcal/mol.
    pub relative_kcal_mol: Option<f64>,
    /// Population (0 for conformers outside the energy window).
    pub population: f64,
    /// False when the energy window dropped the conformer.
    pub kept: bool,
}

/// Ring shape of one ring in one conformer (Cremer & Pople 1975).
#[derive(Debug, Clone, Serialize)]
pub struct RingShape {
    /// Total puckering amplitude Q in Å.
    pub q_angstrom: f64,
    /// θ in degrees (six-membered rings only).
    pub theta_deg: Option<f64>,
    /// φ in degrees (φ2 for five- and six-membered rings).
    pub phi_deg: f64,
    /// Conventional shape name.
    pub shape: String,
}

/// A ring of the molecule and its shape in every conformer.
#[derive(Debug, Clone, Serialize)]
pub struct RingSeries {
    /// 1-based atom indices in ring order.
    pub atoms: Vec<usize>,
    /// Shape per conformer.
    pub shapes: Vec<RingShape>,
}

/// A proton on a six-membered ring and its position in every conformer.
#[derive(Debug, Clone, Serialize)]
pub struct RingProton {
    /// 1-based index of the proton.
    pub proton: usize,
    /// 1-based index of the ring carbon carrying it.
    pub carbon: usize,
    /// 1-based index of the ring (into the ring list).
    pub ring: usize,
    /// `axial`, `equatorial` or `ambiguous (reason)` per conformer.
    pub positions: Vec<String>,
}

/// One reported coupling: a vicinal pair, or a pair with a fast-rotating
/// group averaged over its three protons.
#[derive(Debug, Clone)]
pub struct Coupling {
    /// Proton(s) on the first side, 0-based (three for a rotor group).
    pub side1: Vec<usize>,
    /// Proton(s) on the second side, 0-based.
    pub side2: Vec<usize>,
    /// Heavy atom carrying side 1.
    pub x: usize,
    /// Heavy atom carrying side 2.
    pub y: usize,
    /// Fragment kind.
    pub kind: FragmentKind,
    /// Parameter set id.
    pub model: String,
    /// Published RMS of the set in Hz, where known.
    pub model_rms_hz: Option<f64>,
    /// True when averaged over the protons of a rotor group.
    pub rotor_averaged: bool,
    /// Per conformer, the H–X–Y–H dihedral in radians of every proton
    /// combination averaged (one for a plain pair).
    pub dihedral_rad: Vec<Vec<f64>>,
    /// Per conformer, 3J in Hz (rotor mean where `rotor_averaged`).
    pub j_hz: Vec<f64>,
    /// Population-weighted statistics of `j_hz`.
    pub spread: Spread,
    /// For a hexopyranose H5–H6 pair under an ω model: whether this H6 is the
    /// pro-R proton (judged in conformer 1; CH2 protons keep their conformer-1
    /// positions throughout, see [`super::relabel`]).
    pub h6_pro_r: Option<bool>,
}

/// Everything `predict` reports.
#[derive(Debug, Clone)]
pub struct Prediction {
    /// Input files.
    pub files: Vec<PathBuf>,
    /// Topology of the molecule.
    pub topology: Topology,
    /// Conformers with energies and populations.
    pub conformers: Vec<ConformerInfo>,
    /// How the weights were made, for the report header.
    pub weighting: String,
    /// Effective number of conformers exp(−Σ p ln p).
    pub effective_conformers: f64,
    /// Couplings, in pair order.
    pub couplings: Vec<Coupling>,
    /// Pairs without a model.
    pub not_evaluated: Vec<NotEvaluated>,
    /// Rings with their shapes per conformer.
    pub rings: Vec<RingSeries>,
    /// Six-membered ring protons with axial/equatorial labels per conformer.
    pub ring_protons: Vec<RingProton>,
    /// Warnings for the reader (domain of models, dominant conformer, ...).
    pub warnings: Vec<String>,
}

struct Accumulator {
    prepared: PreparedSet,
    frags: Fragments,
    phi: Vec<Vec<f64>>,
    j: Vec<Vec<f64>>,
    ring_shapes: Vec<Vec<RingShape>>,
    ring_protons: Vec<(usize, usize, usize, usize)>,
    positions: Vec<Vec<String>>,
    pairing: ProtonPairing,
    scratch: Vec<crate::geometry::Vec3>,
    repaired: usize,
    pro_r: Vec<Option<bool>>,
}

impl Accumulator {
    fn new(top: &Topology, first: &Frame, opts: &PredictOptions) -> Result<Accumulator> {
        let frags = fragments::enumerate(top);
        let prepared = karplus::prepare_all(&frags.pairs, top, &opts.library, &opts.choice)?;
        let n = prepared.pairs.len();
        let mut ring_protons = Vec::new();
        for (r, ring) in top.rings.iter().enumerate() {
            if ring.len() != 6 {
                continue;
            }
            for (k, &c) in ring.iter().enumerate() {
                for h in top.hydrogens(c) {
                    ring_protons.push((h, c, r, k));
                }
            }
        }
        Ok(Accumulator {
            positions: vec![Vec::new(); ring_protons.len()],
            ring_protons,
            ring_shapes: vec![Vec::new(); top.rings.len()],
            prepared,
            frags,
            phi: vec![Vec::new(); n],
            j: vec![Vec::new(); n],
            pairing: ProtonPairing::new(top, &first.coords),
            scratch: Vec::new(),
            repaired: 0,
            pro_r: Vec::new(),
        })
    }

    fn add(&mut self, top: &Topology, frame: &Frame, conformer: usize) -> Result<()> {
        let mut scratch = std::mem::take(&mut self.scratch);
        if self.pairing.apply(&frame.coords, &mut scratch) > 0 {
            self.repaired += 1;
        }
        let result = self.add_coords(top, frame, &scratch, conformer);
        self.scratch = scratch;
        result
    }

    fn add_coords(
        &mut self,
        top: &Topology,
        frame: &Frame,
        c: &[crate::geometry::Vec3],
        conformer: usize,
    ) -> Result<()> {
        let at = |e: Error| match e {
            Error::Model(m) => Error::Conformer {
                path: frame.path.clone(),
                line: frame.line,
                conformer,
                msg: m,
            },
            e => e,
        };
        if self.pro_r.is_empty() {
            self.pro_r = self
                .prepared
                .pairs
                .iter()
                .map(|p| p.h6_is_pro_r(c))
                .collect();
        }
        for (k, p) in self.prepared.pairs.iter().enumerate() {
            let (phi, j) = p.evaluate(c).map_err(at)?;
            self.phi[k].push(phi);
            self.j[k].push(j);
        }
        let mut puckers = Vec::with_capacity(top.rings.len());
        for (r, ring) in top.rings.iter().enumerate() {
            let pk = if (5..=6).contains(&ring.len()) {
                Pucker::from_indices(c, ring).ok()
            } else {
                None
            };
            let shape = match &pk {
                Some(p) => RingShape {
                    q_angstrom: p.q_total,
                    theta_deg: p.theta_deg(),
                    phi_deg: p.phi2_deg(),
                    shape: p.shape().name().to_string(),
                },
                None => RingShape {
                    q_angstrom: 0.0,
                    theta_deg: None,
                    phi_deg: 0.0,
                    shape: if ring.len() > 6 {
                        format!("{}-membered (not classified)", ring.len())
                    } else {
                        "undefined".to_string()
                    },
                },
            };
            self.ring_shapes[r].push(shape);
            puckers.push(pk);
        }
        for (slot, &(h, carbon, r, k)) in self.ring_protons.iter().enumerate() {
            let label = match &puckers[r] {
                Some(p) => match p.position(k, &c[carbon], &c[h]) {
                    Position::Ambiguous(why) => format!("ambiguous ({why})"),
                    pos => pos.label().to_string(),
                },
                None => "ambiguous (ring shape undefined)".to_string(),
            };
            self.positions[slot].push(label);
        }
        Ok(())
    }
}

/// Reads the ensemble from `source`, evaluates every pair in every
/// conformer, weights the conformers and averages.
pub fn predict(mut source: EnsembleSource, opts: &PredictOptions) -> Result<Prediction> {
    let mut frame = Frame::default();
    let mut acc: Option<Accumulator> = None;
    let mut conformers = Vec::new();
    while source.read_frame(&mut frame)? {
        let n = source.count();
        let top = source
            .topology()
            .ok_or_else(|| Error::Structure("no topology after the first conformer".into()))?;
        if acc.is_none() {
            acc = Some(Accumulator::new(top, &frame, opts)?);
        }
        if let Some(a) = acc.as_mut() {
            a.add(top, &frame, n)?;
        }
        conformers.push(ConformerInfo {
            index: n,
            file: frame.path.clone(),
            line: frame.line,
            title: frame.title.clone(),
            energy: frame.energy,
            relative_kcal_mol: None,
            population: 0.0,
            kept: true,
        });
    }
    let files = source.files().to_vec();
    let topology = source
        .topology()
        .cloned()
        .ok_or_else(|| Error::Usage("the input files hold no conformers".into()))?;
    let acc = acc.ok_or_else(|| Error::Usage("the input files hold no conformers".into()))?;

    let mut warnings: Vec<String> = acc
        .prepared
        .warnings
        .iter()
        .map(|w| w.to_string())
        .collect();
    if acc.repaired > 0 {
        warnings.push(format!(
            "in {} conformer(s) the two protons of a CH2 (or other two-proton centre) sat the other way round from conformer 1, as conformer generators often place them; they were re-paired by geometry, so each proton keeps its conformer-1 position",
            acc.repaired
        ));
    }
    let weighting = apply_weights(&mut conformers, &opts.weighting)?;
    let p: Vec<f64> = conformers.iter().map(|c| c.population).collect();
    let n_eff = weights::effective_count(&p);
    if let Some((i, &pmax)) = p.iter().enumerate().max_by(|a, b| a.1.total_cmp(b.1)) {
        if pmax > 0.99 && p.len() > 1 {
            warnings.push(format!(
                "conformer {} holds {:.1} % of the population: the averages are essentially that conformer's couplings",
                i + 1,
                100.0 * pmax
            ));
        }
    }

    let couplings = group_couplings(&acc, &p)?;
    let rings = topology
        .rings
        .iter()
        .zip(acc.ring_shapes)
        .map(|(r, shapes)| RingSeries {
            atoms: r.iter().map(|i| i + 1).collect(),
            shapes,
        })
        .collect();
    let ring_protons = acc
        .ring_protons
        .iter()
        .zip(acc.positions)
        .map(|(&(h, c, r, _), positions)| RingProton {
            proton: h + 1,
            carbon: c + 1,
            ring: r + 1,
            positions,
        })
        .collect();
    Ok(Prediction {
        files,
        topology,
        conformers,
        weighting,
        effective_conformers: n_eff,
        couplings,
        not_evaluated: acc.prepared.not_evaluated,
        rings,
        ring_protons,
        warnings,
    })
}

/// Fills populations (and relative energies) and returns a description of
/// the weighting for the report.
fn apply_weights(conformers: &mut [ConformerInfo], w: &Weighting) -> Result<String> {
    let n = conformers.len();
    match w {
        Weighting::Equal => {
            for c in conformers.iter_mut() {
                c.population = 1.0 / n as f64;
            }
            Ok("equal weights".into())
        }
        Weighting::Given(p) => {
            if p.len() != n {
                return Err(Error::Usage(format!(
                    "{} populations given for {n} conformers",
                    p.len()
                )));
            }
            let q = weights::user(p)?;
            for (c, v) in conformers.iter_mut().zip(q) {
                c.population = v;
            }
            Ok("populations given by the user".into())
        }
        Weighting::Boltzmann {
            temperature_k,
            unit,
            window_kcal,
        } => {
            let missing: Vec<usize> = conformers
                .iter()
                .filter(|c| c.energy.is_none())
                .map(|c| c.index)
                .collect();
            if !missing.is_empty() {
                let list: Vec<String> = missing.iter().take(10).map(|i| i.to_string()).collect();
                return Err(Error::Usage(format!(
                    "Boltzmann weighting needs an energy for every conformer; conformer(s) {}{} have none (name the energy field or key, or use equal weights)",
                    list.join(", "),
                    if missing.len() > 10 { ", ..." } else { "" }
                )));
            }
            let e_kcal: Vec<f64> = conformers
                .iter()
                .map(|c| unit.to_kcal_per_mol(c.energy.unwrap_or(0.0)))
                .collect();
            let emin = e_kcal.iter().copied().fold(f64::INFINITY, f64::min);
            let keep: Vec<bool> = e_kcal
                .iter()
                .map(|&e| window_kcal.is_none_or(|w| e - emin <= w))
                .collect();
            let kept_e: Vec<f64> = e_kcal
                .iter()
                .zip(&keep)
                .filter(|(_, &k)| k)
                .map(|(&e, _)| e)
                .collect();
            let pk = weights::boltzmann(&kept_e, *temperature_k)?;
            let mut it = pk.into_iter();
            for ((c, &e), &k) in conformers.iter_mut().zip(&e_kcal).zip(&keep) {
                c.relative_kcal_mol = Some(e - emin);
                c.kept = k;
                c.population = if k { it.next().unwrap_or(0.0) } else { 0.0 };
            }
            let dropped = keep.iter().filter(|k| !**k).count();
            let mut s = format!(
                "Boltzmann at {temperature_k:.2} K from energies in {}",
                unit.name()
            );
            if let Some(w) = window_kcal {
                s.push_str(&format!(
                    "; window {w} kcal/mol ({dropped} conformer(s) dropped)"
                ));
            }
            Ok(s)
        }
    }
}

fn group_couplings(acc: &Accumulator, p: &[f64]) -> Result<Vec<Coupling>> {
    let rotor_of: BTreeMap<(usize, usize), (Option<usize>, Option<usize>)> = acc
        .frags
        .pairs
        .iter()
        .map(|v| ((v.h1, v.h2), (v.rotor1, v.rotor2)))
        .collect();
    // Group key: each side is either a proton or a rotor group.
    #[derive(PartialEq, Eq, PartialOrd, Ord, Clone, Copy)]
    enum Side {
        Proton(usize),
        Rotor(usize),
    }
    let mut groups: BTreeMap<(usize, usize, Side, Side), Vec<usize>> = BTreeMap::new();
    for (k, pp) in acc.prepared.pairs.iter().enumerate() {
        let (r1, r2) = rotor_of
            .get(&(pp.h1, pp.h2))
            .copied()
            .unwrap_or((None, None));
        let s1 = r1.map_or(Side::Proton(pp.h1), Side::Rotor);
        let s2 = r2.map_or(Side::Proton(pp.h2), Side::Rotor);
        groups.entry((pp.x, pp.y, s1, s2)).or_default().push(k);
    }
    let mut out = Vec::with_capacity(groups.len());
    for (_, members) in groups {
        let first = &acc.prepared.pairs[members[0]];
        let mut side1: Vec<usize> = members.iter().map(|&k| acc.prepared.pairs[k].h1).collect();
        let mut side2: Vec<usize> = members.iter().map(|&k| acc.prepared.pairs[k].h2).collect();
        side1.sort_unstable();
        side1.dedup();
        side2.sort_unstable();
        side2.dedup();
        let n_conf = p.len();
        let m = members.len() as f64;
        let mut j_hz = Vec::with_capacity(n_conf);
        let mut dihedral_rad = Vec::with_capacity(n_conf);
        for c in 0..n_conf {
            let mut s = 0.0;
            let mut d = Vec::with_capacity(members.len());
            for &k in &members {
                s += acc.j[k][c];
                d.push(acc.phi[k][c]);
            }
            j_hz.push(s / m);
            dihedral_rad.push(d);
        }
        let spread = spread(&j_hz, p)
            .ok_or_else(|| Error::Usage("no conformer carries any population".to_string()))?;
        out.push(Coupling {
            side1,
            side2,
            x: first.x,
            y: first.y,
            kind: first.kind,
            model: first.set_id.clone(),
            model_rms_hz: first.rms_hz,
            rotor_averaged: members.len() > 1,
            dihedral_rad,
            j_hz,
            spread,
            h6_pro_r: acc.pro_r.get(members[0]).copied().flatten(),
        });
    }
    // Report in the order of the first proton, as the atom listing does.
    out.sort_by_key(|c| (c.side1[0].min(c.side2[0]), c.side1[0].max(c.side2[0])));
    Ok(out)
}
