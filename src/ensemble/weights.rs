//! Conformer weights: energy units, Boltzmann populations, energy windows,
//! equal and user-given weights, and summaries of a population vector.
//!
//! Physical constants are the CODATA 2018 values (E. Tiesinga, P. J. Mohr,
//! D. B. Newell, B. N. Taylor, Rev. Mod. Phys. 2021, 93, 025010):
//!
//! * Avogadro constant N_A = 6.022 140 76 × 10²³ mol⁻¹ (exact, SI 2019);
//! * Boltzmann constant k = 1.380 649 × 10⁻²³ J/K (exact, SI 2019), so the
//!   molar gas constant R = N_A k = 8.314 462 618… J/(mol K) is exact;
//! * Hartree energy E_h = 4.359 744 722 2071 × 10⁻¹⁸ J;
//! * electronvolt 1 eV = 1.602 176 634 × 10⁻¹⁹ J (exact, SI 2019);
//! * thermochemical calorie 1 cal = 4.184 J (exact by definition).
//!
//! Hence 1 E_h = 627.509 474 0631 kcal/mol and 1 eV = 23.060 547 830 619
//! kcal/mol. All energies inside the library are kcal/mol.

use std::fmt;
use std::str::FromStr;

use crate::error::{Error, Result};

/// Avogadro constant N_A in mol⁻¹ (CODATA 2018, exact).
pub const AVOGADRO_PER_MOL: f64 = 6.022_140_76e23;
/// Boltzmann constant k in J/K (CODATA 2018, exact).
pub const BOLTZMANN_J_PER_K: f64 = 1.380_649e-23;
/// Molar gas constant R = N_A k in J/(mol K) (CODATA 2018, exact).
pub const GAS_CONSTANT_J_PER_MOL_K: f64 = AVOGADRO_PER_MOL * BOLTZMANN_J_PER_K;
/// Joules per thermochemical kilocalorie (exact by definition).
pub const J_PER_KCAL: f64 = 4184.0;
/// Molar gas constant in kcal/(mol K).
pub const GAS_CONSTANT_KCAL_PER_MOL_K: f64 = GAS_CONSTANT_J_PER_MOL_K / J_PER_KCAL;
/// Hartree energy in J (CODATA 2018).
pub const HARTREE_J: f64 = 4.359_744_722_207_1e-18;
/// Electronvolt in J (CODATA 2018, exact).
pub const ELECTRONVOLT_J: f64 = 1.602_176_634e-19;
/// Default temperature for Boltzmann weights, 298.15 K.
pub const DEFAULT_TEMPERATURE_K: f64 = 298.15;
/// A population above this fraction makes the ensemble effectively a single
/// conformer (our choice); see [`Summary::dominated`].
pub const DOMINANT_POPULATION: f64 = 0.99;

/// Unit of conformer energies in an input file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default)]
pub enum EnergyUnit {
    /// kcal/mol (thermochemical calorie).
    #[default]
    KcalPerMol,
    /// kJ/mol.
    KjPerMol,
    /// Hartree (atomic unit of energy) per molecule.
    Hartree,
    /// Electronvolt per molecule.
    Ev,
}

impl EnergyUnit {
    /// How many kcal/mol one of this unit is (CODATA 2018; see the module
    /// documentation).
    pub fn kcal_per_mol(self) -> f64 {
        match self {
            EnergyUnit::KcalPerMol => 1.0,
            EnergyUnit::KjPerMol => 1000.0 / J_PER_KCAL,
            EnergyUnit::Hartree => HARTREE_J * AVOGADRO_PER_MOL / J_PER_KCAL,
            EnergyUnit::Ev => ELECTRONVOLT_J * AVOGADRO_PER_MOL / J_PER_KCAL,
        }
    }

    /// Converts an energy in this unit to kcal/mol.
    pub fn to_kcal_per_mol(self, energy: f64) -> f64 {
        energy * self.kcal_per_mol()
    }

    /// Canonical name of the unit ("kcal/mol", "kJ/mol", "hartree", "eV").
    pub fn name(self) -> &'static str {
        match self {
            EnergyUnit::KcalPerMol => "kcal/mol",
            EnergyUnit::KjPerMol => "kJ/mol",
            EnergyUnit::Hartree => "hartree",
            EnergyUnit::Ev => "eV",
        }
    }
}

impl fmt::Display for EnergyUnit {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for EnergyUnit {
    type Err = Error;

    /// Parses a unit name, case-insensitively: "kcal/mol" ("kcal", "kcal mol-1",
    /// "kcalmol"), "kJ/mol" ("kj", "kj mol-1"), "hartree" ("Eh", "Ha", "au",
    /// "a.u."), "eV".
    fn from_str(s: &str) -> Result<Self> {
        let key: String = s
            .trim()
            .to_ascii_lowercase()
            .chars()
            .filter(|c| !c.is_whitespace() && *c != '_')
            .collect();
        match key.as_str() {
            "kcal/mol" | "kcal" | "kcalmol-1" | "kcalmol" | "kcal/mole" => {
                Ok(EnergyUnit::KcalPerMol)
            }
            "kj/mol" | "kj" | "kjmol-1" | "kjmol" | "kj/mole" => Ok(EnergyUnit::KjPerMol),
            "hartree" | "hartrees" | "eh" | "ha" | "au" | "a.u." => Ok(EnergyUnit::Hartree),
            "ev" => Ok(EnergyUnit::Ev),
            _ => Err(Error::Usage(format!(
                "unknown energy unit '{}' (use kcal/mol, kJ/mol, hartree or eV)",
                s.trim()
            ))),
        }
    }
}

/// Checks a temperature in K: finite and positive.
fn check_temperature(temperature_k: f64) -> Result<()> {
    if temperature_k.is_finite() && temperature_k > 0.0 {
        Ok(())
    } else {
        Err(Error::Usage(format!(
            "temperature must be a positive number of kelvin, got {temperature_k}"
        )))
    }
}

/// Lists 1-based conformer numbers, at most ten of them, for messages.
fn list_conformers(idx: &[usize]) -> String {
    let mut s: Vec<String> = idx.iter().take(10).map(|i| (i + 1).to_string()).collect();
    if idx.len() > 10 {
        s.push(format!("and {} more", idx.len() - 10));
    }
    s.join(", ")
}

/// Checks that every energy is finite; names the first bad one (1-based).
fn check_energies(energies_kcal: &[f64]) -> Result<()> {
    if energies_kcal.is_empty() {
        return Err(Error::Usage("no conformers to weight".into()));
    }
    if let Some(i) = energies_kcal.iter().position(|e| !e.is_finite()) {
        return Err(Error::Usage(format!(
            "conformer {}: energy is not a finite number ({})",
            i + 1,
            energies_kcal[i]
        )));
    }
    Ok(())
}

/// Boltzmann populations p_i = exp(−(E_i − E_min)/RT) / Σ_j exp(−(E_j −
/// E_min)/RT) for energies in kcal/mol at `temperature_k` K, with R the
/// CODATA 2018 gas constant. Shifting by the minimum keeps every exponent ≤ 0,
/// so the sum is at least 1 and nothing overflows whatever the energies'
/// offset. Fails for an empty list, non-finite energies or a non-positive
/// temperature.
pub fn boltzmann(energies_kcal: &[f64], temperature_k: f64) -> Result<Vec<f64>> {
    check_temperature(temperature_k)?;
    check_energies(energies_kcal)?;
    let e_min = energies_kcal.iter().copied().fold(f64::INFINITY, f64::min);
    let rt = GAS_CONSTANT_KCAL_PER_MOL_K * temperature_k;
    let mut p: Vec<f64> = energies_kcal
        .iter()
        .map(|e| (-(e - e_min) / rt).exp())
        .collect();
    let sum: f64 = p.iter().sum();
    for x in &mut p {
        *x /= sum;
    }
    Ok(p)
}

/// Boltzmann populations for energies that may be missing (as read from
/// conformer files). Fails, naming the conformers without an energy
/// (1-based), if any is missing; otherwise as [`boltzmann`].
pub fn boltzmann_checked(energies_kcal: &[Option<f64>], temperature_k: f64) -> Result<Vec<f64>> {
    let missing: Vec<usize> = energies_kcal
        .iter()
        .enumerate()
        .filter(|(_, e)| e.is_none())
        .map(|(i, _)| i)
        .collect();
    if !missing.is_empty() {
        return Err(Error::Usage(format!(
            "Boltzmann weighting needs an energy for every conformer; none for conformer{} {}",
            if missing.len() == 1 { "" } else { "s" },
            list_conformers(&missing)
        )));
    }
    let e: Vec<f64> = energies_kcal.iter().flatten().copied().collect();
    boltzmann(&e, temperature_k)
}

/// Indices (0-based, increasing) of the conformers with E − E_min ≤
/// `window_kcal` (kcal/mol); the others are dropped. Fails for an empty
/// list, non-finite energies or a negative or non-finite window.
pub fn energy_window(energies_kcal: &[f64], window_kcal: f64) -> Result<Vec<usize>> {
    check_energies(energies_kcal)?;
    if !(window_kcal.is_finite() && window_kcal >= 0.0) {
        return Err(Error::Usage(format!(
            "energy window must be a non-negative number of kcal/mol, got {window_kcal}"
        )));
    }
    let e_min = energies_kcal.iter().copied().fold(f64::INFINITY, f64::min);
    Ok(energies_kcal
        .iter()
        .enumerate()
        .filter(|(_, e)| *e - e_min <= window_kcal)
        .map(|(i, _)| i)
        .collect())
}

/// Equal weights 1/n for `n` conformers (empty for n = 0).
pub fn equal(n: usize) -> Vec<f64> {
    if n == 0 {
        return Vec::new();
    }
    vec![1.0 / n as f64; n]
}

/// Normalises user-given weights to sum 1. Fails, naming the conformer
/// (1-based), for a negative or non-finite weight, and fails when the list is
/// empty or every weight is zero.
pub fn user(weights: &[f64]) -> Result<Vec<f64>> {
    if weights.is_empty() {
        return Err(Error::Usage("no conformer weights given".into()));
    }
    if let Some(i) = weights.iter().position(|w| !w.is_finite() || *w < 0.0) {
        return Err(Error::Usage(format!(
            "conformer {}: weight must be a non-negative number, got {}",
            i + 1,
            weights[i]
        )));
    }
    let sum: f64 = weights.iter().sum();
    if !(sum > 0.0 && sum.is_finite()) {
        return Err(Error::Usage(
            "conformer weights are all zero (or their sum overflows)".into(),
        ));
    }
    Ok(weights.iter().map(|w| w / sum).collect())
}

/// Effective number of conformers exp(−Σ p_i ln p_i) (the exponential of
/// the Shannon entropy of the populations; terms with p_i = 0 contribute 0).
/// Equals n for n equal populations and 1 for a single conformer.
pub fn effective_count(populations: &[f64]) -> f64 {
    let h: f64 = populations
        .iter()
        .filter(|p| **p > 0.0)
        .map(|p| -p * p.ln())
        .sum();
    h.exp()
}

/// A short account of a population vector.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Summary {
    /// Effective number of conformers, see [`effective_count`].
    pub effective_count: f64,
    /// Index (0-based) of the most populated conformer.
    pub top: usize,
    /// Its population (fraction, 0–1).
    pub top_population: f64,
    /// True when `top_population` exceeds [`DOMINANT_POPULATION`]: the
    /// ensemble average is then the value of one conformer.
    pub dominated: bool,
}

impl Summary {
    /// Summarises populations (fractions summing to 1). `None` for an empty
    /// list.
    pub fn of(populations: &[f64]) -> Option<Summary> {
        let (top, &top_population) = populations
            .iter()
            .enumerate()
            .max_by(|a, b| a.1.total_cmp(b.1))?;
        Some(Summary {
            effective_count: effective_count(populations),
            top,
            top_population,
            dominated: top_population > DOMINANT_POPULATION,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use proptest::prelude::*;

    // CODATA 2018 (Tiesinga et al., Rev. Mod. Phys. 2021, 93, 025010): E_h =
    // 4.3597447222071e-18 J, eV exact, N_A exact, 1 kcal = 4.184 kJ exact:
    // 1 E_h = 627.5094740631 kcal/mol = 2625.4996394799 kJ/mol,
    // 1 eV = 23.060547830619 kcal/mol = 96.485332123310 kJ/mol.
    #[test]
    fn codata_2018_conversions() {
        assert_relative_eq!(
            EnergyUnit::Hartree.kcal_per_mol(),
            627.509_474_063_1,
            max_relative = 1e-12
        );
        assert_relative_eq!(
            EnergyUnit::Ev.kcal_per_mol(),
            23.060_547_830_619,
            max_relative = 1e-12
        );
        assert_relative_eq!(
            EnergyUnit::Hartree.kcal_per_mol() / EnergyUnit::KjPerMol.kcal_per_mol(),
            2_625.499_639_479_9,
            max_relative = 1e-12
        );
        assert_relative_eq!(
            EnergyUnit::Ev.kcal_per_mol() / EnergyUnit::KjPerMol.kcal_per_mol(),
            96.485_332_123_310,
            max_relative = 1e-12
        );
        assert_relative_eq!(
            EnergyUnit::KjPerMol.to_kcal_per_mol(4.184),
            1.0,
            max_relative = 1e-15
        );
        // R = 8.314462618 J/(mol K) (CODATA 2018, exact from N_A k).
        assert_relative_eq!(
            GAS_CONSTANT_J_PER_MOL_K,
            8.314_462_618,
            max_relative = 1e-10
        );
        assert_relative_eq!(
            GAS_CONSTANT_KCAL_PER_MOL_K,
            1.987_204_259e-3,
            max_relative = 1e-9
        );
    }

    #[test]
    fn unit_names_parse() {
        for (s, u) in [
            ("kcal/mol", EnergyUnit::KcalPerMol),
            ("KCAL", EnergyUnit::KcalPerMol),
            ("kcal mol-1", EnergyUnit::KcalPerMol),
            ("kJ/mol", EnergyUnit::KjPerMol),
            ("kj", EnergyUnit::KjPerMol),
            ("hartree", EnergyUnit::Hartree),
            ("Eh", EnergyUnit::Hartree),
            ("au", EnergyUnit::Hartree),
            ("a.u.", EnergyUnit::Hartree),
            ("eV", EnergyUnit::Ev),
        ] {
            assert_eq!(s.parse::<EnergyUnit>().unwrap(), u, "{s}");
            assert_eq!(u.name().parse::<EnergyUnit>().unwrap(), u);
        }
        let e = "kelvin".parse::<EnergyUnit>().unwrap_err().to_string();
        assert!(e.contains("kelvin"), "{e}");
    }

    // Two states 1.00 kcal/mol apart at 298.15 K: 84.4 : 15.6 (common
    // practice), checked to 0.05 % of each value.
    #[test]
    fn two_state_one_kcal() {
        let p = boltzmann(&[0.0, 1.0], DEFAULT_TEMPERATURE_K).unwrap();
        assert_relative_eq!(p[0], 0.844, max_relative = 5e-4);
        assert_relative_eq!(p[1], 0.156, max_relative = 5e-4);
    }

    #[test]
    fn large_offsets_are_stable() {
        let base = boltzmann(&[0.0, 0.3, 1.2, 2.5], 298.15).unwrap();
        let shifted = boltzmann(&[1e6, 1e6 + 0.3, 1e6 + 1.2, 1e6 + 2.5], 298.15).unwrap();
        for (a, b) in base.iter().zip(&shifted) {
            assert_relative_eq!(a, b, max_relative = 1e-9);
        }
        let neg = boltzmann(&[-1e6, -1e6 + 0.3, -1e6 + 1.2, -1e6 + 2.5], 298.15).unwrap();
        for (a, b) in base.iter().zip(&neg) {
            assert_relative_eq!(a, b, max_relative = 1e-9);
        }
        // Enormous gaps underflow to exactly zero, never NaN.
        let p = boltzmann(&[0.0, 1e9], 298.15).unwrap();
        assert_eq!(p, vec![1.0, 0.0]);
    }

    #[test]
    fn bad_inputs_are_errors() {
        assert!(boltzmann(&[], 298.15).is_err());
        assert!(boltzmann(&[0.0, f64::NAN], 298.15).is_err());
        assert!(boltzmann(&[0.0], 0.0).is_err());
        assert!(boltzmann(&[0.0], -5.0).is_err());
        let e = boltzmann_checked(&[Some(0.0), None, Some(1.0), None], 298.15)
            .unwrap_err()
            .to_string();
        assert!(e.contains("conformers 2, 4"), "{e}");
        let p = boltzmann_checked(&[Some(0.0), Some(1.0)], 298.15).unwrap();
        assert_relative_eq!(p[0] + p[1], 1.0);
        assert!(user(&[]).is_err());
        assert!(user(&[0.0, 0.0]).is_err());
        let e = user(&[1.0, -0.5]).unwrap_err().to_string();
        assert!(e.contains("conformer 2"), "{e}");
        assert!(user(&[1.0, f64::NAN]).is_err());
        assert!(user(&[f64::MAX, f64::MAX]).is_err());
        assert!(energy_window(&[0.0], -1.0).is_err());
        assert!(energy_window(&[0.0], f64::NAN).is_err());
    }

    #[test]
    fn window_equal_user_and_summary() {
        let kept = energy_window(&[3.0, 0.5, 2.5, 5.0, 0.5], 2.0).unwrap();
        assert_eq!(kept, vec![1, 2, 4]);
        assert_eq!(equal(4), vec![0.25; 4]);
        assert!(equal(0).is_empty());
        assert_eq!(user(&[1.0, 3.0]).unwrap(), vec![0.25, 0.75]);
        assert_relative_eq!(effective_count(&equal(7)), 7.0, max_relative = 1e-12);
        assert_relative_eq!(effective_count(&[1.0, 0.0, 0.0]), 1.0);
        let s = Summary::of(&[0.005, 0.993, 0.002]).unwrap();
        assert!(s.dominated);
        assert_eq!(s.top, 1);
        assert!(!Summary::of(&[0.5, 0.5]).unwrap().dominated);
        assert!(Summary::of(&[]).is_none());
    }

    proptest! {
        #[test]
        fn populations_sum_to_one(
            e in proptest::collection::vec(-1e5f64..1e5, 1..50),
            t in 1.0f64..2000.0,
        ) {
            let p = boltzmann(&e, t).unwrap();
            let s: f64 = p.iter().sum();
            prop_assert!((s - 1.0).abs() < 1e-12);
            prop_assert!(p.iter().all(|x| x.is_finite() && *x >= 0.0 && *x <= 1.0));
            let n = effective_count(&p);
            prop_assert!(n >= 1.0 - 1e-9 && n <= e.len() as f64 + 1e-9);
        }

        #[test]
        fn shift_invariance(
            e in proptest::collection::vec(0.0f64..10.0, 1..20),
            shift in -1e6f64..1e6,
        ) {
            let a = boltzmann(&e, 298.15).unwrap();
            let shifted: Vec<f64> = e.iter().map(|x| x + shift).collect();
            let b = boltzmann(&shifted, 298.15).unwrap();
            for (x, y) in a.iter().zip(&b) {
                prop_assert!((x - y).abs() < 1e-6);
            }
        }

        #[test]
        fn user_weights_sum_to_one(w in proptest::collection::vec(0.0f64..1e6, 1..30)) {
            prop_assume!(w.iter().any(|x| *x > 0.0));
            let p = user(&w).unwrap();
            prop_assert!((p.iter().sum::<f64>() - 1.0).abs() < 1e-12);
        }
    }
}
