//! A conservative single-precision screen of every atom pair of a small
//! molecule, so that [`super::perceive::FrameChecker`] can pass the usual
//! frame of a trajectory without the exact double-precision checks.
//!
//! The screen never passes a frame that the exact checks would reject: it
//! flags every pair that might be closer than its alarm distance (a new bond
//! or duplicate atoms) or, for a bond, longer than its cutoff, with a margin
//! of [`MARGIN_A`] that is far larger than the error of the single-precision
//! arithmetic for coordinates up to [`MAX_COORD_A`] in size; a frame with a
//! larger or non-finite coordinate is not screened at all. A frame with any
//! flag goes to the exact checks, which decide and name the atoms.

use crate::geometry::Vec3;
#[cfg(target_arch = "x86_64")]
use crate::isa::Lanes;
use crate::isa::Wide;

/// Margin (Å) by which the screen widens every alarm distance and narrows
/// every bond cutoff.
pub(crate) const MARGIN_A: f64 = 0.02;

/// Largest coordinate size (Å) the screen accepts. There a coordinate's
/// rounding to `f32` is at most 2⁻¹¹ Å, so a distance of the few Å that
/// matter is off by less than 0.002 Å, a tenth of [`MARGIN_A`].
pub(crate) const MAX_COORD_A: f64 = 1.0e4;

/// Lanes of the pair loop (one AVX register of `f32`, or two SSE ones);
/// rows of the pair table are padded to a multiple.
const LANES: usize = 8;

/// The pair table and scratch of the screen for one molecule.
#[derive(Debug, Clone)]
pub(crate) struct PairScreen {
    n: usize,
    /// Per atom i: start of its row (pairs i–j, j > i) in `lo2` and `hi2`,
    /// and the row's length padded to a multiple of [`LANES`].
    rows: Vec<(usize, usize)>,
    /// Per pair: squared widened alarm distance (flag when closer).
    lo2: Vec<f32>,
    /// Per pair: squared narrowed bond cutoff (flag when farther); +∞ for
    /// pairs that are not bonded.
    hi2: Vec<f32>,
    /// Coordinates as three `f32` arrays, each padded with [`LANES`] zeros.
    xs: Vec<f32>,
    ys: Vec<f32>,
    zs: Vec<f32>,
    /// Set when this CPU runs the AVX loop.
    #[cfg_attr(not(target_arch = "x86_64"), allow(dead_code))]
    wide: Option<Wide>,
}

impl PairScreen {
    /// A screen for `n` atoms. `alarm(i, j)` is the exact alarm distance of
    /// pair i < j in Å, `cutoff(i, j)` its bond cutoff in Å if bonded.
    pub(crate) fn new(
        n: usize,
        alarm: impl Fn(usize, usize) -> f64,
        cutoff: impl Fn(usize, usize) -> Option<f64>,
    ) -> PairScreen {
        let mut rows = Vec::with_capacity(n);
        let (mut lo2, mut hi2) = (Vec::new(), Vec::new());
        for i in 0..n {
            let m = n - i - 1;
            let padded = m.div_ceil(LANES) * LANES;
            rows.push((lo2.len(), padded));
            for j in i + 1..i + 1 + padded {
                if j < n {
                    let a = alarm(i, j) + MARGIN_A;
                    lo2.push((a * a) as f32);
                    hi2.push(match cutoff(i, j) {
                        Some(c) => ((c - MARGIN_A).max(0.0).powi(2)) as f32,
                        None => f32::INFINITY,
                    });
                } else {
                    // Padding: never flagged.
                    lo2.push(-1.0);
                    hi2.push(f32::INFINITY);
                }
            }
        }
        let pad = vec![0.0f32; n + LANES];
        let screen = PairScreen {
            n,
            rows,
            lo2,
            hi2,
            xs: pad.clone(),
            ys: pad.clone(),
            zs: pad,
            wide: Wide::detect(),
        };
        // The shape the unchecked SSE loads rely on.
        assert!(screen.rows.iter().enumerate().all(|(i, &(start, len))| {
            start + len <= screen.lo2.len()
                && start + len <= screen.hi2.len()
                && i + 1 + len <= n + LANES
                && len % LANES == 0
        }));
        screen
    }

    /// True when no pair of `coords` is flagged (see the module docs); false
    /// when some pair is, or a coordinate is too large or not finite, or the
    /// atom count differs.
    pub(crate) fn clear(&mut self, coords: &[Vec3]) -> bool {
        let n = self.n;
        if coords.len() != n {
            return false;
        }
        // False for NaN too, as every comparison with NaN is.
        let fits = |v: f64| v.abs() <= MAX_COORD_A;
        let mut all_fit = true;
        for (k, c) in coords.iter().enumerate() {
            all_fit &= fits(c.x) & fits(c.y) & fits(c.z);
            self.xs[k] = c.x as f32;
            self.ys[k] = c.y as f32;
            self.zs[k] = c.z as f32;
        }
        if !all_fit {
            return false;
        }
        #[cfg(target_arch = "x86_64")]
        match self.wide {
            // SAFETY: `wide` proves the CPU has AVX.
            Some(_) => !unsafe { self.any_row_flagged_avx() },
            // SAFETY: SSE is part of the x86_64 baseline.
            None => !unsafe { self.any_row_flagged::<std::arch::x86_64::__m128>() },
        }
        #[cfg(not(target_arch = "x86_64"))]
        {
            !self.rows().any(|row| row.flagged_scalar())
        }
    }

    /// The rows of the pair table with this frame's coordinates.
    #[cfg_attr(target_arch = "x86_64", allow(dead_code))]
    fn rows(&self) -> impl Iterator<Item = Row<'_>> {
        self.rows.iter().enumerate().map(|(i, &(start, len))| Row {
            at: [self.xs[i], self.ys[i], self.zs[i]],
            lo2: &self.lo2[start..start + len],
            hi2: &self.hi2[start..start + len],
            xs: &self.xs[i + 1..i + 1 + len],
            ys: &self.ys[i + 1..i + 1 + len],
            zs: &self.zs[i + 1..i + 1 + len],
        })
    }

    /// True when some pair of some row is flagged, `V::N` pairs per
    /// compare: [`Row::flagged_scalar`] over all rows in one loop, without
    /// building the rows' slices.
    ///
    /// # Safety
    /// The CPU must have the instructions of `V`.
    #[cfg(target_arch = "x86_64")]
    #[inline(always)]
    unsafe fn any_row_flagged<V: Lanes<Elem = f32>>(&self) -> bool {
        let (xs, ys, zs) = (self.xs.as_ptr(), self.ys.as_ptr(), self.zs.as_ptr());
        let (lo2, hi2) = (self.lo2.as_ptr(), self.hi2.as_ptr());
        // SAFETY: every load reads N <= LANES f32 inside the arrays: `new`
        // asserted that each row lies inside them with a length that is a
        // multiple of LANES (so of N), and no other code changes the rows or
        // the arrays' lengths (j + N <= len). The caller vouches for the
        // instructions.
        unsafe {
            let mut any = V::splat(0.0);
            for (i, &(start, len)) in self.rows.iter().enumerate() {
                let (xi, yi, zi) = (
                    V::splat(*xs.add(i)),
                    V::splat(*ys.add(i)),
                    V::splat(*zs.add(i)),
                );
                let (xj, yj, zj) = (xs.add(i + 1), ys.add(i + 1), zs.add(i + 1));
                let (lo, hi) = (lo2.add(start), hi2.add(start));
                let mut j = 0;
                while j < len {
                    let dx = V::sub(V::load(xj.add(j)), xi);
                    let dy = V::sub(V::load(yj.add(j)), yi);
                    let dz = V::sub(V::load(zj.add(j)), zi);
                    let d2 = V::add(V::add(V::mul(dx, dx), V::mul(dy, dy)), V::mul(dz, dz));
                    let l = V::lt(d2, V::load(lo.add(j)));
                    let h = V::gt(d2, V::load(hi.add(j)));
                    any = V::or(any, V::or(l, h));
                    j += V::N;
                }
            }
            V::signs(any) != 0
        }
    }
}

#[cfg(target_arch = "x86_64")]
impl PairScreen {
    /// [`PairScreen::any_row_flagged`] eight pairs per AVX compare.
    ///
    /// # Safety
    /// The CPU must have AVX (a [`Wide`] proves it).
    #[target_feature(enable = "avx")]
    unsafe fn any_row_flagged_avx(&self) -> bool {
        // SAFETY: this function runs only where AVX is.
        unsafe { self.any_row_flagged::<std::arch::x86_64::__m256>() }
    }
}

/// One row of the pair table: atom i at `at` against the atoms after it,
/// all slices of the same length, a multiple of [`LANES`].
struct Row<'a> {
    at: [f32; 3],
    lo2: &'a [f32],
    hi2: &'a [f32],
    xs: &'a [f32],
    ys: &'a [f32],
    zs: &'a [f32],
}

impl Row<'_> {
    /// True when some pair of the row is flagged, one pair at a time: the
    /// portable definition, which the SSE loop must match.
    #[cfg_attr(target_arch = "x86_64", allow(dead_code))]
    fn flagged_scalar(&self) -> bool {
        let [xi, yi, zi] = self.at;
        (0..self.lo2.len()).any(|j| {
            let (dx, dy, dz) = (self.xs[j] - xi, self.ys[j] - yi, self.zs[j] - zi);
            let d2 = dx * dx + dy * dy + dz * dz;
            d2 < self.lo2[j] || d2 > self.hi2[j]
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn v(x: f64, y: f64, z: f64) -> Vec3 {
        Vec3::new(x, y, z)
    }

    /// Three atoms in a row, 1–2 bonded (cutoff 1.6 Å), alarm 1.2 Å for 1–3
    /// and 2–3, 0.1 Å for the bond.
    fn screen() -> PairScreen {
        PairScreen::new(
            3,
            |i, j| if (i, j) == (0, 1) { 0.1 } else { 1.2 },
            |i, j| ((i, j) == (0, 1)).then_some(1.6),
        )
    }

    #[test]
    fn flags_close_pairs_long_bonds_and_bad_coordinates() {
        let mut s = screen();
        assert!(s.clear(&[v(0.0, 0.0, 0.0), v(1.5, 0.0, 0.0), v(3.0, 0.0, 0.0)]));
        // A bond just inside its cutoff but within the margin: flagged.
        assert!(!s.clear(&[v(0.0, 0.0, 0.0), v(1.59, 0.0, 0.0), v(3.0, 0.0, 0.0)]));
        // A non-bonded pair at its alarm distance: flagged.
        assert!(!s.clear(&[v(0.0, 0.0, 0.0), v(1.5, 0.0, 0.0), v(2.7, 0.0, 0.0)]));
        assert!(!s.clear(&[v(0.0, 0.0, 0.0), v(1.5, 0.0, 0.0), v(f64::NAN, 0.0, 0.0)]));
        assert!(!s.clear(&[
            v(0.0, 0.0, 0.0),
            v(1.5, 0.0, 0.0),
            v(0.0, f64::INFINITY, 0.0)
        ]));
        let far = MAX_COORD_A * 2.0;
        assert!(!s.clear(&[
            v(far, 0.0, 0.0),
            v(far + 1.5, 0.0, 0.0),
            v(far + 3.0, 0.0, 0.0)
        ]));
        assert!(!s.clear(&[v(0.0, 0.0, 0.0), v(1.5, 0.0, 0.0)]));
    }

    #[cfg(target_arch = "x86_64")]
    proptest::proptest! {
        /// The SSE and AVX loops over all rows flag a frame exactly when
        /// some row's scalar test does.
        #[test]
        fn sse_rows_flag_as_scalar_rows(
            pts in proptest::collection::vec(proptest::array::uniform3(-3.0..3.0f64), 2..12),
            alarm in 0.2..2.0f64,
        ) {
            let n = pts.len();
            let mut s = PairScreen::new(n, |i, j| alarm * (1.0 + 0.1 * ((i * 7 + j) % 5) as f64), |i, j| (j == i + 1).then_some(3.5));
            let c: Vec<Vec3> = pts.iter().map(|p| v(p[0], p[1], p[2])).collect();
            // The loop as made (AVX where the CPU has it), and the SSE one;
            // `clear` fills the coordinates the scalar rows read.
            let made = !s.clear(&c);
            let scalar = s.rows().any(|row| row.flagged_scalar());
            proptest::prop_assert_eq!(made, scalar);
            s.wide = None;
            proptest::prop_assert_eq!(!s.clear(&c), scalar);
        }
    }

    proptest::proptest! {
        /// Conservative: whatever the exact double-precision distances say is
        /// too close or too long is flagged, at any offset up to the largest
        /// accepted coordinate.
        #[test]
        fn never_passes_what_the_exact_test_rejects(
            offset in -9000.0..9000.0f64,
            pts in proptest::collection::vec((-3.0..3.0f64, -3.0..3.0f64, -3.0..3.0f64), 6),
        ) {
            let n = pts.len();
            let alarm = |i: usize, j: usize| 0.8 + 0.1 * ((i + j) % 4) as f64;
            let cutoff = |i: usize, j: usize| (j == i + 1).then_some(2.5);
            let mut s = PairScreen::new(n, alarm, cutoff);
            let c: Vec<Vec3> = pts.iter().map(|p| v(p.0 + offset, p.1, p.2 - offset)).collect();
            let mut exact_ok = true;
            for i in 0..n {
                for j in i + 1..n {
                    let d = (c[j] - c[i]).norm();
                    exact_ok &= d >= alarm(i, j) && cutoff(i, j).is_none_or(|cut| d <= cut);
                }
            }
            if s.clear(&c) {
                proptest::prop_assert!(exact_ok);
            }
        }
    }
}
