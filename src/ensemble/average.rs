//! Population-weighted statistics of a per-conformer quantity (a coupling in
//! Hz, a dihedral): mean, standard deviation, minimum and maximum.

use serde::Serialize;

/// Weighted summary of one quantity over an ensemble.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Spread {
    /// Population-weighted mean Σ pᵢ xᵢ.
    pub mean: f64,
    /// Population-weighted standard deviation sqrt(Σ pᵢ (xᵢ − mean)²).
    pub sd: f64,
    /// Smallest value among conformers with non-zero population.
    pub min: f64,
    /// Largest value among conformers with non-zero population.
    pub max: f64,
}

/// Weighted mean, standard deviation, minimum and maximum of `values` with
/// populations `p` (which must sum to 1; conformers with p = 0 are ignored
/// for min and max). Returns `None` for an empty ensemble or mismatched lengths.
pub fn spread(values: &[f64], p: &[f64]) -> Option<Spread> {
    if values.is_empty() || values.len() != p.len() {
        return None;
    }
    let mut mean = 0.0;
    let mut min = f64::INFINITY;
    let mut max = f64::NEG_INFINITY;
    for (&x, &w) in values.iter().zip(p) {
        mean += w * x;
        if w > 0.0 {
            min = min.min(x);
            max = max.max(x);
        }
    }
    if !min.is_finite() {
        return None;
    }
    let var: f64 = values
        .iter()
        .zip(p)
        .map(|(&x, &w)| w * (x - mean) * (x - mean))
        .sum();
    Some(Spread {
        mean,
        sd: var.max(0.0).sqrt(),
        min,
        max,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;
    use proptest::prelude::*;

    #[test]
    fn two_values() {
        let s = spread(&[10.0, 2.0], &[0.75, 0.25]).unwrap();
        assert_abs_diff_eq!(s.mean, 8.0, epsilon = 1e-12);
        assert_abs_diff_eq!(s.sd, (0.75f64 * 4.0 + 0.25 * 36.0).sqrt(), epsilon = 1e-12);
        assert_eq!((s.min, s.max), (2.0, 10.0));
    }

    #[test]
    fn zero_population_ignored_for_range() {
        let s = spread(&[10.0, 2.0, 99.0], &[0.5, 0.5, 0.0]).unwrap();
        assert_eq!(s.max, 10.0);
    }

    proptest! {
        // A rigid ensemble (identical copies) averages to its own value, with
        // zero spread, whatever the populations.
        #[test]
        fn rigid_ensemble_averages_to_itself(x in -5.0f64..20.0, w in proptest::collection::vec(0.01f64..1.0, 1..20)) {
            let total: f64 = w.iter().sum();
            let p: Vec<f64> = w.iter().map(|v| v / total).collect();
            let vals = vec![x; p.len()];
            let s = spread(&vals, &p).unwrap();
            prop_assert!((s.mean - x).abs() < 1e-9);
            prop_assert!(s.sd < 1e-6);
            prop_assert_eq!(s.min, x);
            prop_assert_eq!(s.max, x);
        }

        #[test]
        fn mean_within_range(v in proptest::collection::vec(-5.0f64..20.0, 1..30)) {
            let p = vec![1.0 / v.len() as f64; v.len()];
            let s = spread(&v, &p).unwrap();
            prop_assert!(s.mean >= s.min - 1e-9 && s.mean <= s.max + 1e-9);
        }
    }
}
