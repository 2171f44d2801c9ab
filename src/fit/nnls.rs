//! Non-negative least squares: minimise ‖E x − f‖₂ subject to x ≥ 0.
//!
//! This is the active-set algorithm NNLS of Lawson & Hanson, *Solving Least
//! Squares Problems* (Prentice-Hall, 1974; SIAM reprint 1995), chapter 23,
//! Algorithm 23.10, with two implementation choices of our own:
//!
//! * The least-squares sub-problem on the passive (free) set P is solved from
//!   the normal equations E_Pᵀ E_P z = E_Pᵀ f through a Cholesky factor R
//!   (E_Pᵀ E_P = RᵀR) that is *updated* when a column enters P (one forward
//!   substitution) and rebuilt when columns leave it — the same device as the
//!   "fast NNLS" of Bro & de Jong, J. Chemometrics 11 (1997) 393–401. Lawson
//!   and Hanson update a QR factorisation instead; both give the same iterates
//!   in exact arithmetic. Normal equations square the condition number of E_P,
//!   which is harmless for population fits (the columns are couplings in units
//!   of their standard errors) and is guarded by the column-independence test
//!   below (Lawson & Hanson's step 6 test, in Cholesky form).
//! * The solver can be warm-started from a previous passive set, which makes
//!   Monte Carlo refits cheap: the warm set is pruned until its least-squares
//!   solution is strictly positive, which restores the algorithm's invariant
//!   (x_P > 0 solves the LS problem on P, x_Z = 0), and the main loop then runs
//!   as usual, so the result is still the exact NNLS optimum.
//!
//! On return the Karush–Kuhn–Tucker conditions hold to rounding: with
//! g = Eᵀ(f − E x), g_j ≈ 0 for x_j > 0 and g_j ≤ tol for x_j = 0.

use nalgebra::{DMatrix, DVector};

use crate::error::{Error, Result};

/// Relative size, squared, of the part of a new column orthogonal to the
/// columns already in the passive set below which the column is treated as
/// linearly dependent and refused (sin² of the angle to their span).
const DEPENDENCE_TOL: f64 = 1e-12;

/// The result of [`nnls`].
#[derive(Debug, Clone)]
pub struct NnlsSolution {
    /// The minimiser x ≥ 0.
    pub x: DVector<f64>,
    /// Indices of the strictly positive components (the passive set).
    pub passive_set: Vec<usize>,
    /// Number of main-loop iterations (columns brought in).
    pub iterations: usize,
    /// ‖E x − f‖₂ at the solution.
    pub residual_norm: f64,
}

/// Buffers for repeated NNLS solves of the same size (no allocation per
/// solve once warmed up).
#[derive(Debug, Clone, Default)]
pub struct NnlsWorkspace {
    x: Vec<f64>,
    passive: Vec<bool>,
    /// Passive set in the column order of the Cholesky factor.
    set: Vec<usize>,
    /// Upper-triangular Cholesky factor, column-major with leading dim `cap`.
    r: Vec<f64>,
    /// Reciprocals of the diagonal of R (the substitutions multiply instead
    /// of dividing: a division's latency would sit on their critical path).
    dinv: Vec<f64>,
    cap: usize,
    /// E_Pᵀ f in factor order.
    b: Vec<f64>,
    /// Least-squares solution on P in factor order.
    z: Vec<f64>,
    u: Vec<f64>,
    resid: Vec<f64>,
    grad: Vec<f64>,
    rejected: Vec<bool>,
    rejected_list: Vec<usize>,
    iterations: usize,
    removals: usize,
    full_checks: usize,
    /// Number of leading entries of `u` that are valid for the current R.
    u_valid: usize,
    /// Working set of candidate columns.
    cand: Vec<usize>,
    is_cand: Vec<bool>,
    scratch: Vec<(f64, usize)>,
    /// Columns whose dual value is due (kernel input).
    cols: Vec<usize>,
    /// E_Pᵀ E_j of the column being appended.
    cross: Vec<f64>,
    /// The column being appended, E_j = E0_j − s, when E is shifted.
    col: Vec<f64>,
    /// Use the portable code even where AVX2 and FMA are available (for
    /// tests of the fallback on machines that have them).
    portable: bool,
}

/// The matrix of a solve, column-major m×n: E = E0 − s 1ᵀ, every column of
/// the stored E0 shifted by the same vector s (none when `shift` is
/// `None`). The shifted matrix is never formed: E_j·r = E0_j·r − s·r, and
/// r = f − E x = f − E0 x + (Σx) s, so a Monte Carlo refit that shifts the
/// data need not copy the matrix.
#[derive(Clone, Copy)]
struct Mat<'a> {
    e0: &'a [f64],
    m: usize,
    shift: Option<&'a [f64]>,
    /// Whether the AVX2 kernel may be used (x86-64 only).
    #[cfg_attr(not(target_arch = "x86_64"), allow(dead_code))]
    simd: bool,
}

impl Mat<'_> {
    /// Column j of E0.
    #[inline(always)]
    fn col0(&self, j: usize) -> &[f64] {
        &self.e0[j * self.m..(j + 1) * self.m]
    }

    /// Column j of E = E0 − s1ᵀ: a view of E0 when there is no shift, else
    /// written into `buf`.
    #[inline(always)]
    fn col<'b>(&'b self, j: usize, buf: &'b mut Vec<f64>) -> &'b [f64] {
        match self.shift {
            None => self.col0(j),
            Some(s) => {
                buf.clear();
                buf.extend(self.col0(j).iter().zip(s).map(|(&e, &s)| e - s));
                &buf[..]
            }
        }
    }

    /// E_j · r for every j in `cols` (into `out[j]`, or with `PACKED` into
    /// `out[k]` for the k-th entry of `cols`).
    #[inline(always)]
    fn column_dots<const PACKED: bool>(&self, r: &[f64], cols: &[usize], out: &mut [f64]) {
        let sr = self.shift.map_or(0.0, |s| dot(s, r));
        kernel::column_dots::<PACKED>(*self, r, sr, cols, out);
    }
}

/// Dot product with eight independent accumulators (lets the compiler
/// vectorise; a single running sum cannot be reordered).
#[inline(always)]
fn dot(a: &[f64], b: &[f64]) -> f64 {
    let n = a.len().min(b.len());
    let (a, b) = (&a[..n], &b[..n]);
    let mut acc = [0.0; 8];
    let mut ca = a.chunks_exact(8);
    let mut cb = b.chunks_exact(8);
    for (x, y) in (&mut ca).zip(&mut cb) {
        for l in 0..8 {
            acc[l] += x[l] * y[l];
        }
    }
    let mut tail = 0.0;
    for (x, y) in ca.remainder().iter().zip(cb.remainder()) {
        tail += x * y;
    }
    ((acc[0] + acc[1]) + (acc[2] + acc[3])) + ((acc[4] + acc[5]) + (acc[6] + acc[7])) + tail
}

/// Dual-vector kernel: g_j = E_j · r for a list of columns of a column-major
/// matrix. On x86-64 CPUs with AVX2 and FMA (detected at run time) four
/// columns share each load of r; elsewhere it falls back to [`dot`].
mod kernel {
    use super::{dot, Mat};

    /// Writes `E0_j · r − sub` for every `j` in `cols` (the column `j` of
    /// `a.e0`): into `out[j]`, or with `PACKED` into `out[k]` for the k-th
    /// entry of `cols`. Without `a.simd` the portable code runs whatever the
    /// CPU.
    pub(super) fn column_dots<const PACKED: bool>(
        a: Mat<'_>,
        r: &[f64],
        sub: f64,
        cols: &[usize],
        out: &mut [f64],
    ) {
        #[cfg(target_arch = "x86_64")]
        {
            if a.simd
                && std::arch::is_x86_feature_detected!("avx2")
                && std::arch::is_x86_feature_detected!("fma")
                && r.len() >= a.m
            {
                // SAFETY: the CPU supports AVX2 and FMA (checked above), and
                // r holds at least m entries (checked above).
                unsafe { avx2::column_dots::<PACKED>(a, r, sub, cols, out) };
                return;
            }
        }
        for (k, &j) in cols.iter().enumerate() {
            out[if PACKED { k } else { j }] = dot(a.col0(j), r) - sub;
        }
    }

    #[cfg(target_arch = "x86_64")]
    mod avx2 {
        use std::arch::x86_64::*;

        /// Horizontal sum of the four lanes.
        #[inline]
        #[target_feature(enable = "avx2,fma")]
        unsafe fn hsum(v: __m256d) -> f64 {
            let lo = _mm256_castpd256_pd128(v);
            let hi = _mm256_extractf128_pd(v, 1);
            let s = _mm_add_pd(lo, hi);
            let h = _mm_unpackhi_pd(s, s);
            _mm_cvtsd_f64(_mm_add_sd(s, h))
        }

        /// Columns and outputs are indexed with bounds checks (a bad index
        /// panics, as in the scalar path).
        ///
        /// # Safety
        /// The CPU must support AVX2 and FMA, and `r.len() >= m`.
        #[target_feature(enable = "avx2,fma")]
        pub(super) unsafe fn column_dots<const PACKED: bool>(
            a: super::Mat<'_>,
            r: &[f64],
            sub: f64,
            cols: &[usize],
            out: &mut [f64],
        ) {
            let (es, m) = (a.e0, a.m);
            let m4 = m - m % 4;
            let rp = r.as_ptr();
            let mut quads = cols.chunks_exact(4);
            let mut k = 0;
            for q in &mut quads {
                let col = |j: usize| es[j * m..(j + 1) * m].as_ptr();
                let (p0, p1, p2, p3) = (col(q[0]), col(q[1]), col(q[2]), col(q[3]));
                let mut a0 = _mm256_setzero_pd();
                let mut a1 = _mm256_setzero_pd();
                let mut a2 = _mm256_setzero_pd();
                let mut a3 = _mm256_setzero_pd();
                let mut i = 0;
                while i < m4 {
                    let rv = _mm256_loadu_pd(rp.add(i));
                    a0 = _mm256_fmadd_pd(_mm256_loadu_pd(p0.add(i)), rv, a0);
                    a1 = _mm256_fmadd_pd(_mm256_loadu_pd(p1.add(i)), rv, a1);
                    a2 = _mm256_fmadd_pd(_mm256_loadu_pd(p2.add(i)), rv, a2);
                    a3 = _mm256_fmadd_pd(_mm256_loadu_pd(p3.add(i)), rv, a3);
                    i += 4;
                }
                let (mut s0, mut s1, mut s2, mut s3) = (hsum(a0), hsum(a1), hsum(a2), hsum(a3));
                while i < m {
                    let rv = *rp.add(i);
                    s0 += *p0.add(i) * rv;
                    s1 += *p1.add(i) * rv;
                    s2 += *p2.add(i) * rv;
                    s3 += *p3.add(i) * rv;
                    i += 1;
                }
                let at = |l: usize| if PACKED { k + l } else { q[l] };
                out[at(0)] = s0 - sub;
                out[at(1)] = s1 - sub;
                out[at(2)] = s2 - sub;
                out[at(3)] = s3 - sub;
                k += 4;
            }
            for &j in quads.remainder() {
                let p = es[j * m..(j + 1) * m].as_ptr();
                let mut a = _mm256_setzero_pd();
                let mut i = 0;
                while i < m4 {
                    a = _mm256_fmadd_pd(_mm256_loadu_pd(p.add(i)), _mm256_loadu_pd(rp.add(i)), a);
                    i += 4;
                }
                let mut s = hsum(a);
                while i < m {
                    s += *p.add(i) * *rp.add(i);
                    i += 1;
                }
                out[if PACKED { k } else { j }] = s - sub;
                k += 1;
            }
        }
    }
}

/// (a·r, a·a) in one pass.
#[inline]
fn dot2(a: &[f64], r: &[f64]) -> (f64, f64) {
    (dot(a, r), dot(a, a))
}

impl NnlsWorkspace {
    /// An empty workspace; it sizes itself on first use.
    pub fn new() -> Self {
        Self::default()
    }

    /// The solution of the last [`solve`](Self::solve).
    pub fn x(&self) -> &[f64] {
        &self.x
    }

    /// Passive set (indices with x_j > 0) of the last solve, in no
    /// particular order.
    pub fn passive_set(&self) -> &[usize] {
        &self.set
    }

    /// Main-loop iterations (columns brought in) of the last solve.
    pub fn iterations(&self) -> usize {
        self.iterations
    }

    /// Full passes over all columns (optimality checks) and final size of
    /// the working set of the last solve.
    pub fn full_checks(&self) -> (usize, usize) {
        (self.full_checks, self.cand.len())
    }

    /// Columns dropped from the passive set during the last solve (warm-start
    /// pruning and inner-loop steps).
    pub fn removals(&self) -> usize {
        self.removals
    }

    fn resize(&mut self, m: usize, n: usize) {
        let cap = m.min(n).max(1);
        if self.cap != cap {
            self.cap = cap;
            self.r = vec![0.0; cap * cap];
        }
        self.x.clear();
        self.x.resize(n, 0.0);
        self.passive.clear();
        self.passive.resize(n, false);
        self.rejected.clear();
        self.rejected.resize(n, false);
        self.rejected_list.clear();
        self.resid.resize(m, 0.0);
        self.grad.resize(n, 0.0);
        self.set.clear();
        self.b.clear();
        self.dinv.clear();
        self.z.clear();
        self.u.clear();
        self.u_valid = 0;
    }

    /// Appends column `j` to the Cholesky factor; false if it is (nearly)
    /// dependent on the columns already there or the factor is full.
    #[inline(always)]
    fn push(&mut self, a: Mat<'_>, f: &[f64], j: usize) -> bool {
        let k = self.set.len();
        if k >= self.cap {
            return false;
        }
        let mut col = std::mem::take(&mut self.col);
        let ej = a.col(j, &mut col);
        let pushed = self.push_col(a, f, j, ej);
        self.col = col;
        pushed
    }

    /// [`push`](Self::push) with column j of E given as `ej`.
    #[inline(always)]
    fn push_col(&mut self, a: Mat<'_>, f: &[f64], j: usize, ej: &[f64]) -> bool {
        let k = self.set.len();
        let cap = self.cap;
        let nj = dot(ej, ej);
        if nj <= 0.0 {
            return false;
        }
        // Forward substitution Rᵀ s = E_Pᵀ E_j, written into column k of R.
        if self.cross.len() < k {
            self.cross.resize(k, 0.0);
        }
        a.column_dots::<true>(ej, &self.set, &mut self.cross);
        let mut ss = 0.0;
        for i in 0..k {
            let v = self.cross[i];
            let acc = v - dot(&self.r[i * cap..i * cap + i], &self.r[k * cap..k * cap + i]);
            let s = acc * self.dinv[i];
            self.r[k * cap + i] = s;
            ss += s * s;
        }
        let d = nj - ss;
        if d.is_nan() || d <= DEPENDENCE_TOL * nj {
            return false;
        }
        let dk = d.sqrt();
        self.r[k * cap + k] = dk;
        self.dinv.push(1.0 / dk);
        self.set.push(j);
        self.b.push(dot(ej, f));
        true
    }

    #[inline(always)]
    fn pop(&mut self) {
        self.set.pop();
        self.b.pop();
        self.dinv.pop();
        self.u_valid = self.u_valid.min(self.set.len());
    }

    /// Brings the forward part u = R⁻ᵀ b up to date. It is kept between
    /// calls: appending a column extends it by one entry, so only the entries
    /// past `u_valid` are computed.
    #[inline(always)]
    fn solve_u(&mut self) {
        let k = self.set.len();
        let cap = self.cap;
        self.u.truncate(self.u_valid.min(k));
        for i in self.u.len()..k {
            let acc = self.b[i] - dot(&self.r[i * cap..i * cap + i], &self.u[..i]);
            self.u.push(acc * self.dinv[i]);
        }
        self.u_valid = k;
    }

    /// The last component of the least-squares solution on P, z_k = u_k / R_kk
    /// (the first step of the back substitution, so the same number that
    /// [`solve_z`](Self::solve_z) gives), without the rest of z.
    #[inline(always)]
    fn last_z(&mut self) -> Option<f64> {
        self.solve_u();
        let k = self.set.len();
        let uk = *self.u.last()?;
        Some(uk * self.dinv[k - 1])
    }

    /// Solves RᵀR z = b into `self.z` ([`solve_u`](Self::solve_u), then the
    /// back substitution, column by column for contiguous access).
    #[inline(always)]
    fn solve_z(&mut self) {
        let k = self.set.len();
        let cap = self.cap;
        self.solve_u();
        self.z.clear();
        self.z.extend_from_slice(&self.u);
        for i in (0..k).rev() {
            let zi = self.z[i] * self.dinv[i];
            self.z[i] = zi;
            let col = &self.r[i * cap..i * cap + i];
            for (zl, &rl) in self.z[..i].iter_mut().zip(col) {
                *zl -= zi * rl;
            }
        }
    }

    /// Drops from the factor every column whose `passive` flag is cleared,
    /// by deleting its column of R and restoring the triangle with Givens
    /// rotations (Golub & Van Loan, *Matrix Computations*, 4th ed., §6.5.2):
    /// O(k²) per column instead of a refactorisation.
    #[inline(always)]
    fn drop_inactive(&mut self) {
        let cap = self.cap;
        let mut pos = 0;
        while pos < self.set.len() {
            if self.passive[self.set[pos]] {
                pos += 1;
                continue;
            }
            let k = self.set.len();
            // Shift columns pos+1..k left by one (rows 0..=j+1 are live).
            for j in pos..k - 1 {
                let (dst, src) = self.r.split_at_mut((j + 1) * cap);
                dst[j * cap..j * cap + j + 2].copy_from_slice(&src[..j + 2]);
            }
            // Columns pos..k−1 now have one sub-diagonal entry each.
            for c in pos..k - 1 {
                let a = self.r[c * cap + c];
                let b = self.r[c * cap + c + 1];
                let h = (a * a + b * b).sqrt();
                let hinv = 1.0 / h;
                // Column c's diagonal is now h (or a = 0 when there is no
                // rotation to make); its reciprocal moves down from c + 1.
                self.dinv[c] = hinv;
                if h == 0.0 {
                    continue;
                }
                let (cs, sn) = (a * hinv, b * hinv);
                self.r[c * cap + c] = h;
                self.r[c * cap + c + 1] = 0.0;
                for j in c + 1..k - 1 {
                    let u = self.r[j * cap + c];
                    let v = self.r[j * cap + c + 1];
                    self.r[j * cap + c] = cs * u + sn * v;
                    self.r[j * cap + c + 1] = -sn * u + cs * v;
                }
            }
            self.set.remove(pos);
            self.b.remove(pos);
            self.dinv.truncate(k - 1);
            self.removals += 1;
            // The rotations changed R from column `pos` on.
            self.u_valid = self.u_valid.min(pos);
        }
    }

    /// Solves min ‖E x − f‖ subject to x ≥ 0 for the column-major m×n matrix
    /// `e` (as stored by nalgebra), optionally warm-started from the passive
    /// set `warm` of an earlier, similar problem (pruned until its
    /// least-squares solution is positive). Returns whether the algorithm
    /// converged within its iteration limit (3n + |warm| + 10); the solution
    /// is in [`x`](Self::x) either way.
    pub fn solve(&mut self, e: &DMatrix<f64>, f: &[f64], warm: &[usize]) -> bool {
        self.solve_impl(e, None, f, Start::Set(warm), &Hint::default())
    }

    /// Like [`solve`](Self::solve), started from the feasible point `x0`
    /// (n entries, all ≥ 0), e.g. the solution of a nearby problem: the
    /// Lawson–Hanson inner loop walks from `x0` towards the least-squares
    /// solution on its support, dropping only the columns that block.
    /// `hint` can spare the solver its first full pass over E.
    pub fn solve_from(&mut self, e: &DMatrix<f64>, f: &[f64], x0: &[f64], hint: &Hint<'_>) -> bool {
        self.solve_impl(e, None, f, Start::Point(x0), hint)
    }

    /// Like [`solve_from`](Self::solve_from) for the matrix E = E0 − s 1ᵀ
    /// (the vector `shift` = s subtracted from every column of `e0`), which
    /// is not formed. Errors if `shift` does not have one entry per row.
    pub fn solve_shifted_from(
        &mut self,
        e0: &DMatrix<f64>,
        shift: &[f64],
        f: &[f64],
        x0: &[f64],
        hint: &Hint<'_>,
    ) -> Result<bool> {
        if shift.len() != e0.nrows() {
            return Err(Error::Fit(format!(
                "non-negative least squares: the matrix has {} rows but the shift {} entries",
                e0.nrows(),
                shift.len()
            )));
        }
        Ok(self.solve_impl(e0, Some(shift), f, Start::Point(x0), hint))
    }

    /// The Lawson–Hanson inner loop (steps 8–11): from a feasible x with
    /// x_P > 0 and z = LS solution on P, step towards z until feasible.
    #[inline(always)]
    fn inner_loop(&mut self) {
        loop {
            if self.set.is_empty() {
                return;
            }
            self.solve_z();
            if self.z.iter().all(|&v| v > 0.0) {
                for i in 0..self.set.len() {
                    self.x[self.set[i]] = self.z[i];
                }
                return;
            }
            let mut alpha = f64::INFINITY;
            let mut arg = usize::MAX;
            for i in 0..self.set.len() {
                if self.z[i] <= 0.0 {
                    let xi = self.x[self.set[i]];
                    let a = xi / (xi - self.z[i]);
                    if a < alpha {
                        alpha = a;
                        arg = i;
                    }
                }
            }
            for i in 0..self.set.len() {
                let j = self.set[i];
                let xj = self.x[j] + alpha * (self.z[i] - self.x[j]);
                self.x[j] = if i == arg || xj <= 0.0 { 0.0 } else { xj };
                if self.x[j] == 0.0 {
                    self.passive[j] = false;
                }
            }
            self.drop_inactive();
        }
    }

    /// The solver proper. Speed-up of our own over the textbook loop: the
    /// dual vector g = Eᵀ(f − E x), whose full evaluation costs m·n per
    /// iteration, is evaluated only on a working set of candidate columns
    /// (the start support plus the 2m columns of largest g); when no
    /// candidate can enter, g is evaluated on all columns and any violators
    /// join the working set. The algorithm stops only when no column at all
    /// violates the optimality test, so the optimum is the same as Lawson and
    /// Hanson's.
    fn solve_impl(
        &mut self,
        e: &DMatrix<f64>,
        shift: Option<&[f64]>,
        f: &[f64],
        start: Start<'_>,
        hint: &Hint<'_>,
    ) -> bool {
        let job = Job {
            e,
            shift,
            f,
            start,
            hint: *hint,
        };
        #[cfg(target_arch = "x86_64")]
        {
            if !self.portable
                && std::arch::is_x86_feature_detected!("avx2")
                && std::arch::is_x86_feature_detected!("fma")
            {
                // SAFETY: the CPU supports AVX2 and FMA (checked above).
                return unsafe { self.solve_avx2(job) };
            }
        }
        self.solve_body(job)
    }

    /// [`solve_body`](Self::solve_body) compiled for AVX2 and FMA, so that
    /// its inlined helpers (factor updates, substitutions) use 256-bit
    /// vectors.
    ///
    /// # Safety
    /// The CPU must support AVX2 and FMA.
    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2,fma")]
    unsafe fn solve_avx2(&mut self, job: Job<'_>) -> bool {
        self.solve_body(job)
    }

    /// The solver loop proper (see [`solve_impl`](Self::solve_impl)).
    #[inline(always)]
    fn solve_body(&mut self, job: Job<'_>) -> bool {
        let Job {
            e,
            shift,
            f,
            start,
            hint,
        } = job;
        let hint = &hint;
        let (m, n) = e.shape();
        let a = Mat {
            e0: e.as_slice(),
            m,
            shift: shift.map(|s| &s[..m]),
            simd: !self.portable,
        };
        self.resize(m, n);
        self.iterations = 0;
        self.removals = 0;
        self.full_checks = 0;
        if m == 0 || n == 0 {
            return true;
        }
        let mut extra = 0;
        match start {
            Start::Set(warm) => {
                extra = warm.len();
                for &j in warm {
                    if j < n && !self.passive[j] && self.push(a, f, j) {
                        self.passive[j] = true;
                    }
                }
                // Prune until the LS solution on the warm set is positive.
                while !self.set.is_empty() {
                    self.solve_z();
                    if self.z.iter().all(|&v| v > 0.0) {
                        break;
                    }
                    for i in 0..self.set.len() {
                        if self.z[i] <= 0.0 {
                            self.passive[self.set[i]] = false;
                        }
                    }
                    self.drop_inactive();
                }
                for i in 0..self.set.len() {
                    self.x[self.set[i]] = self.z[i];
                }
            }
            Start::Point(x0) => {
                // Largest components first: the small ones are the likeliest
                // to leave, and dropping a column costs O((k − pos)²) for
                // the columns after it in the factor.
                let mut order = std::mem::take(&mut self.scratch);
                order.clear();
                order.extend(
                    x0.iter()
                        .take(n)
                        .enumerate()
                        .filter(|&(_, &v)| v > 0.0 && v.is_finite())
                        .map(|(j, &v)| (v, j)),
                );
                order.sort_unstable_by(|p, q| q.0.total_cmp(&p.0).then(p.1.cmp(&q.1)));
                for &(v, j) in &order {
                    if self.push(a, f, j) {
                        self.passive[j] = true;
                        self.x[j] = v;
                        extra += 1;
                    }
                }
                self.scratch = order;
                self.inner_loop();
            }
        }
        let fnorm = dot(f, f).sqrt();
        let max_iter = 3 * n + extra + 10;
        let limit = (2 * m).max(16).min(n);
        self.cand.clear();
        self.is_cand.clear();
        self.is_cand.resize(n, false);
        for i in 0..self.set.len() {
            let j = self.set[i];
            self.is_cand[j] = true;
            self.cand.push(j);
        }
        self.compute_resid(a, f);
        let tol;
        let mut fresh;
        if let (Some(col), false) = (hint.max_column_norm, hint.candidates.is_empty()) {
            tol = 1e-13 * (m.max(n) as f64) * col * fnorm.max(f64::MIN_POSITIVE);
            for &j in hint.candidates {
                if j < n && !self.is_cand[j] {
                    self.is_cand[j] = true;
                    self.cand.push(j);
                }
            }
            fresh = false;
        } else {
            // Full dual vector at the start; its pass also gives the largest
            // column norm, which scales the tolerance.
            let mut max_col2 = 0.0_f64;
            let mut col = std::mem::take(&mut self.col);
            for j in 0..n {
                let ej = a.col(j, &mut col);
                let (g, nn) = dot2(ej, &self.resid);
                max_col2 = max_col2.max(nn);
                self.grad[j] = g;
            }
            self.col = col;
            let col = hint.max_column_norm.unwrap_or(max_col2.sqrt());
            tol = 1e-13 * (m.max(n) as f64) * col * fnorm.max(f64::MIN_POSITIVE);
            self.add_violators(tol, limit);
            fresh = true;
        }

        loop {
            if !fresh {
                self.compute_resid(a, f);
                self.cols.clear();
                for &j in &self.cand {
                    if self.passive[j] {
                        self.grad[j] = 0.0;
                    } else {
                        self.cols.push(j);
                    }
                }
                a.column_dots::<false>(&self.resid, &self.cols, &mut self.grad);
            }
            fresh = false;
            // Bring in the most promising candidate that keeps the LS
            // solution positive in its own component (Lawson & Hanson
            // steps 5–7).
            let entered = loop {
                let mut best = None;
                let mut best_g = tol;
                for &j in &self.cand {
                    if !self.passive[j] && !self.rejected[j] && self.grad[j] > best_g {
                        best_g = self.grad[j];
                        best = Some(j);
                    }
                }
                let Some(j) = best else { break false };
                if !self.push(a, f, j) {
                    self.rejected[j] = true;
                    self.rejected_list.push(j);
                    continue;
                }
                // Only the sign of the new column's component decides; the
                // inner loop below computes the whole z.
                if self.last_z().is_some_and(|v| v > 0.0) {
                    self.passive[j] = true;
                    break true;
                }
                self.pop();
                self.rejected[j] = true;
                self.rejected_list.push(j);
            };
            for &j in &self.rejected_list {
                self.rejected[j] = false;
            }
            self.rejected_list.clear();
            if !entered {
                // Optimal on the working set: check every other column.
                self.full_checks += 1;
                self.cols.clear();
                self.cols.extend((0..n).filter(|&j| !self.is_cand[j]));
                a.column_dots::<false>(&self.resid, &self.cols, &mut self.grad);
                if !self.add_violators(tol, limit) {
                    return true;
                }
                fresh = true;
                continue;
            }
            self.iterations += 1;
            self.inner_loop();
            if self.iterations > max_iter {
                return false;
            }
        }
    }

    /// r = f − E x over the passive set (with a shift, f − E0 x + (Σx) s).
    #[inline(always)]
    fn compute_resid(&mut self, a: Mat<'_>, f: &[f64]) {
        self.resid.copy_from_slice(f);
        let mut sum = 0.0;
        for &j in &self.set {
            let xj = self.x[j];
            sum += xj;
            for (r, &ev) in self.resid.iter_mut().zip(a.col0(j)) {
                *r -= xj * ev;
            }
        }
        if let Some(s) = a.shift {
            for (r, &sv) in self.resid.iter_mut().zip(s) {
                *r += sum * sv;
            }
        }
    }

    /// Adds to the working set the (up to `limit`) non-candidate columns
    /// with the largest dual value above `tol`; false if there are none.
    #[inline(always)]
    fn add_violators(&mut self, tol: f64, limit: usize) -> bool {
        self.scratch.clear();
        for j in 0..self.grad.len() {
            if !self.is_cand[j] && !self.passive[j] && self.grad[j] > tol {
                self.scratch.push((self.grad[j], j));
            }
        }
        if self.scratch.is_empty() {
            return false;
        }
        if self.scratch.len() > limit {
            self.scratch
                .select_nth_unstable_by(limit - 1, |a, b| b.0.total_cmp(&a.0));
            self.scratch.truncate(limit);
        }
        for &(_, j) in &self.scratch {
            self.is_cand[j] = true;
            self.cand.push(j);
        }
        true
    }
}

/// Optional knowledge that spares [`NnlsWorkspace::solve_from`] its first
/// full pass over the matrix.
#[derive(Debug, Clone, Copy, Default)]
pub struct Hint<'a> {
    /// An upper bound on the largest column norm of E (scales the
    /// optimality tolerance).
    pub max_column_norm: Option<f64>,
    /// Columns likely to enter (for example the support and the columns of
    /// largest dual value of a nearby problem); used with
    /// `max_column_norm` as the initial working set.
    pub candidates: &'a [usize],
}

/// The arguments of one solve, passed whole through the CPU dispatch.
struct Job<'a> {
    e: &'a DMatrix<f64>,
    shift: Option<&'a [f64]>,
    f: &'a [f64],
    start: Start<'a>,
    hint: Hint<'a>,
}

/// How a solve starts.
enum Start<'a> {
    /// From a set of columns, pruned to a positive LS solution.
    Set(&'a [usize]),
    /// From a feasible point.
    Point(&'a [f64]),
}

/// Solves min ‖E x − f‖₂ subject to x ≥ 0 (Lawson & Hanson 1974, Algorithm
/// 23.10). Errors if the input is not finite, the shapes disagree, or the
/// algorithm fails to converge (which rounding can cause only for extremely
/// ill-conditioned E).
pub fn nnls(e: &DMatrix<f64>, f: &DVector<f64>) -> Result<NnlsSolution> {
    if e.nrows() != f.len() {
        return Err(Error::Fit(format!(
            "non-negative least squares: the matrix has {} rows but the right-hand side {} entries",
            e.nrows(),
            f.len()
        )));
    }
    if e.iter().chain(f.iter()).any(|v| !v.is_finite()) {
        return Err(Error::Fit(
            "non-negative least squares: the input holds a value that is not a finite number"
                .into(),
        ));
    }
    let mut ws = NnlsWorkspace::new();
    if !ws.solve(e, f.as_slice(), &[]) {
        return Err(Error::Fit(
            "non-negative least squares did not converge (the columns are nearly dependent)".into(),
        ));
    }
    let x = DVector::from_column_slice(ws.x());
    let residual_norm = (e * &x - f).norm();
    let mut passive_set = ws.passive_set().to_vec();
    passive_set.sort_unstable();
    Ok(NnlsSolution {
        x,
        passive_set,
        iterations: ws.iterations(),
        residual_norm,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// Brute force: the unconstrained LS solution on every subset of columns;
    /// the best feasible one is the NNLS optimum (the optimum solves the
    /// unconstrained LS on its own support).
    fn brute_force(e: &DMatrix<f64>, f: &DVector<f64>) -> f64 {
        let n = e.ncols();
        let mut best = f.norm_squared();
        for mask in 1u32..(1 << n) {
            let cols: Vec<usize> = (0..n).filter(|j| mask & (1 << j) != 0).collect();
            let sub = e.select_columns(&cols);
            let svd = sub.clone().svd(true, true);
            let Ok(z) = svd.solve(f, 1e-12) else { continue };
            if z.iter().all(|&v| v >= -1e-12) {
                let r = (&sub * &z - f).norm_squared();
                best = best.min(r);
            }
        }
        best
    }

    fn check_kkt(e: &DMatrix<f64>, f: &DVector<f64>, s: &NnlsSolution) {
        let g = e.transpose() * (f - e * &s.x);
        let scale = e.norm() * f.norm() + 1e-300;
        for j in 0..e.ncols() {
            assert!(s.x[j] >= 0.0);
            if s.x[j] > 0.0 {
                assert!(
                    g[j].abs() <= 1e-8 * scale,
                    "passive gradient {} at {j}",
                    g[j]
                );
            } else {
                assert!(
                    g[j] <= 1e-8 * scale,
                    "zero component {j} could still descend: {}",
                    g[j]
                );
            }
        }
    }

    #[test]
    fn textbook_example() {
        // E = I: the solution is max(f, 0).
        let e = DMatrix::identity(3, 3);
        let f = DVector::from_vec(vec![1.0, -2.0, 0.5]);
        let s = nnls(&e, &f).unwrap();
        assert!((s.x - DVector::from_vec(vec![1.0, 0.0, 0.5])).norm() < 1e-14);
    }

    #[test]
    fn wide_problem_is_sparse() {
        let mut rng = crate::fit::rng::Xoshiro256StarStar::seed_from_u64(3);
        let e = DMatrix::from_fn(10, 200, |_, _| rng.next_f64());
        let f = DVector::from_fn(10, |_, _| rng.next_f64() * 3.0);
        let s = nnls(&e, &f).unwrap();
        assert!(s.passive_set.len() <= 10);
        check_kkt(&e, &f, &s);
    }

    #[test]
    fn warm_start_gives_same_optimum() {
        let mut rng = crate::fit::rng::Xoshiro256StarStar::seed_from_u64(11);
        let e = DMatrix::from_fn(30, 60, |_, _| rng.next_f64() - 0.3);
        let f = DVector::from_fn(30, |_, _| rng.next_f64());
        let cold = nnls(&e, &f).unwrap();
        let mut ws = NnlsWorkspace::new();
        let warm: Vec<usize> = (0..60).step_by(3).collect();
        assert!(ws.solve(&e, f.as_slice(), &warm));
        let x = DVector::from_column_slice(ws.x());
        assert!((x - &cold.x).norm() < 1e-9 * (1.0 + cold.x.norm()));
    }

    /// The portable column-dot code against the AVX2 kernel (the same code
    /// twice on a CPU without AVX2), for row counts with and without a tail
    /// and column lists with and without a partial group of four.
    #[test]
    fn portable_column_dots_match_simd_kernel() {
        let mut rng = crate::fit::rng::Xoshiro256StarStar::seed_from_u64(23);
        for m in [1, 3, 4, 7, 51, 52] {
            let n = 13;
            let es: Vec<f64> = (0..m * n).map(|_| rng.next_f64() - 0.5).collect();
            let r: Vec<f64> = (0..m).map(|_| rng.next_f64() - 0.5).collect();
            let mat = |simd| Mat {
                e0: &es,
                m,
                shift: None,
                simd,
            };
            for cols in [vec![0, 5, 2, 12, 7, 1, 9, 3, 11, 4], (0..n).collect()] {
                let mut a = vec![0.0; n];
                let mut b = vec![0.0; n];
                kernel::column_dots::<false>(mat(true), &r, 0.25, &cols, &mut a);
                kernel::column_dots::<false>(mat(false), &r, 0.25, &cols, &mut b);
                let mut pa = vec![0.0; cols.len()];
                let mut pb = vec![0.0; cols.len()];
                kernel::column_dots::<true>(mat(true), &r, 0.25, &cols, &mut pa);
                kernel::column_dots::<true>(mat(false), &r, 0.25, &cols, &mut pb);
                for (k, &j) in cols.iter().enumerate() {
                    let exact: f64 = (0..m).map(|i| es[j * m + i] * r[i]).sum::<f64>() - 0.25;
                    for v in [a[j], b[j], pa[k], pb[k]] {
                        assert!((v - exact).abs() < 1e-13 * m as f64, "m {m} col {j}");
                    }
                }
            }
        }
    }

    /// The workspace's last solution as an [`NnlsSolution`] of E x ≈ f (for
    /// [`check_kkt`]).
    fn solution_of(e: &DMatrix<f64>, f: &DVector<f64>, ws: &NnlsWorkspace) -> NnlsSolution {
        let x = DVector::from_column_slice(ws.x());
        NnlsSolution {
            residual_norm: (e * &x - f).norm(),
            x,
            passive_set: Vec::new(),
            iterations: 0,
        }
    }

    /// A random m × n problem E0, f, a shift s of the rows and E = E0 − s1ᵀ.
    #[allow(clippy::type_complexity)]
    fn shifted_problem(
        seed: u64,
        m: usize,
        n: usize,
        f_scale: f64,
        shift_scale: f64,
    ) -> (DMatrix<f64>, DVector<f64>, Vec<f64>, DMatrix<f64>) {
        let mut rng = crate::fit::rng::Xoshiro256StarStar::seed_from_u64(seed);
        let e0 = DMatrix::from_fn(m, n, |_, _| rng.next_f64() * 4.0 - 1.0);
        let f = DVector::from_fn(m, |_, _| rng.next_f64() * f_scale);
        let shift: Vec<f64> = (0..m).map(|_| rng.next_normal() * shift_scale).collect();
        let e = DMatrix::from_fn(m, n, |i, j| e0[(i, j)] - shift[i]);
        (e0, f, shift, e)
    }

    /// The whole solver with the portable code forced, against the default
    /// (AVX2 where the CPU has it), cold and shifted: same optimum, KKT.
    #[test]
    fn portable_solver_matches_default() {
        let (e0, f, shift, e) = shifted_problem(29, 21, 300, 3.0, 0.3);
        let as_solution = |e: &DMatrix<f64>, ws: &NnlsWorkspace| solution_of(e, &f, ws);
        let mut fast = NnlsWorkspace::new();
        let mut portable = NnlsWorkspace::new();
        portable.portable = true;
        assert!(fast.solve(&e0, f.as_slice(), &[]));
        assert!(portable.solve(&e0, f.as_slice(), &[]));
        let (sf, sp) = (as_solution(&e0, &fast), as_solution(&e0, &portable));
        check_kkt(&e0, &f, &sp);
        assert!(portable.passive_set().len() > 1);
        assert!((&sf.x - &sp.x).norm() < 1e-9 * (1.0 + sf.x.norm()));
        let x0 = sf.x.as_slice().to_vec();
        let hint = Hint::default();
        for ws in [&mut fast, &mut portable] {
            assert!(ws
                .solve_shifted_from(&e0, &shift, f.as_slice(), &x0, &hint)
                .unwrap());
        }
        let (sf, sp) = (as_solution(&e, &fast), as_solution(&e, &portable));
        check_kkt(&e, &f, &sp);
        assert!((&sf.x - &sp.x).norm() < 1e-9 * (1.0 + sf.x.norm()));
    }

    #[test]
    fn shifted_matrix_gives_same_optimum_as_formed_one() {
        let n = 80;
        let (e0, f, shift, e) = shifted_problem(17, 12, n, 2.0, 0.5);
        let formed = nnls(&e, &f).unwrap();
        let x0 = vec![0.1; n];
        let mut ws = NnlsWorkspace::new();
        assert!(ws
            .solve_shifted_from(&e0, &shift, f.as_slice(), &x0, &Hint::default())
            .unwrap());
        let s = solution_of(&e, &f, &ws);
        check_kkt(&e, &f, &s);
        assert!((&s.x - &formed.x).norm() < 1e-9 * (1.0 + formed.x.norm()));
        assert!(ws
            .solve_shifted_from(&e0, &shift[1..], f.as_slice(), &x0, &Hint::default())
            .is_err());
    }

    proptest! {
        #[test]
        fn kkt_and_brute_force(
            m in 1usize..7,
            n in 1usize..5,
            vals in proptest::collection::vec(-5.0f64..5.0, 64),
        ) {
            let e = DMatrix::from_fn(m, n, |i, j| vals[i * 5 + j]);
            let f = DVector::from_fn(m, |i, _| vals[40 + i]);
            let s = nnls(&e, &f).unwrap();
            check_kkt(&e, &f, &s);
            let best = brute_force(&e, &f);
            let got = s.residual_norm * s.residual_norm;
            prop_assert!(got <= best + 1e-9 * (1.0 + best), "nnls {got} brute {best}");
        }
    }
}
