//! Evaluation of a fixed list of prepared pairs on frame after frame, for
//! trajectories: the Haasnoot–de Leeuw–Altona pairs run in one flat loop
//! (no call, no `Result` and no model dispatch per pair), the other models
//! through [`PreparedPair::evaluate_j`].

use super::{hla_sum, HlaCoefficients, Kernel, PreparedPair, PreparedSub};
use crate::error::Result;
use crate::geometry::{DihedralParts, Vec3};

/// A list of pairs made ready for repeated evaluation; see the module docs.
#[derive(Debug, Clone)]
pub struct PairBatch {
    hla: Vec<HlaJob>,
    subs: Vec<PreparedSub>,
    other: Vec<usize>,
    /// Largest atom index any pair reads.
    max_index: usize,
    len: usize,
}

#[derive(Debug, Clone)]
struct HlaJob {
    /// Index of the pair in the caller's list.
    k: usize,
    /// H1, X, Y, H2.
    atoms: [usize; 4],
    p: HlaCoefficients,
    /// This pair's substituents: `subs[from..to]`.
    from: usize,
    to: usize,
}

impl PairBatch {
    /// A batch for `pairs`, evaluated in [`PairBatch::evaluate`] in this order.
    pub fn new(pairs: &[PreparedPair]) -> PairBatch {
        let mut batch = PairBatch {
            hla: Vec::new(),
            subs: Vec::new(),
            other: Vec::new(),
            max_index: 0,
            len: pairs.len(),
        };
        for (k, pair) in pairs.iter().enumerate() {
            batch.max_index = batch.max_index.max(pair.max_index);
            match &pair.kernel {
                Kernel::Hla { p, subs, n } => {
                    let from = batch.subs.len();
                    batch.subs.extend_from_slice(&subs[..*n]);
                    batch.hla.push(HlaJob {
                        k,
                        atoms: [pair.h1, pair.x, pair.y, pair.h2],
                        p: *p,
                        from,
                        to: batch.subs.len(),
                    });
                }
                _ => batch.other.push(k),
            }
        }
        batch
    }

    /// 3J in Hz of every pair of `pairs` (the list the batch was made from)
    /// in the conformer `coords`, into `out[k]` for `pairs[k]`. The values
    /// are those of [`PreparedPair::evaluate_j`], bit for bit, and so is the
    /// error: that of the first pair, in list order, that cannot be evaluated.
    pub fn evaluate(&self, pairs: &[PreparedPair], coords: &[Vec3], out: &mut [f64]) -> Result<()> {
        if coords.len() <= self.max_index || pairs.len() != self.len || out.len() != self.len {
            return evaluate_each(pairs, coords, out);
        }
        let mut ok = true;
        #[cfg(target_arch = "x86_64")]
        let rest = {
            let mut jobs = self.hla.chunks_exact(2);
            for two in &mut jobs {
                ok &= sse2::evaluate_two(&two[0], &two[1], &self.subs, coords, out);
            }
            jobs.remainder()
        };
        #[cfg(not(target_arch = "x86_64"))]
        let rest = &self.hla[..];
        for job in rest {
            ok &= evaluate_one(job, &self.subs, coords, out);
        }
        if !ok {
            // Some pair fails: find the first one in list order, as the
            // pair-by-pair loop would have.
            return evaluate_each(pairs, coords, out);
        }
        for &k in &self.other {
            out[k] = pairs[k].evaluate_j(coords)?;
        }
        Ok(())
    }
}

/// One HLA pair into `out[job.k]`; false when it cannot be evaluated.
#[inline(always)]
fn evaluate_one(job: &HlaJob, subs: &[PreparedSub], coords: &[Vec3], out: &mut [f64]) -> bool {
    let [h1, x, y, h2] = job.atoms;
    let (x, y) = (&coords[x], &coords[y]);
    let j = DihedralParts::new(&coords[h1], x, y, &coords[h2])
        .and_then(|parts| hla_sum(&job.p, &subs[job.from..job.to], coords, x, y, &parts));
    match j {
        Some(j) => {
            out[job.k] = j;
            j.is_finite()
        }
        None => false,
    }
}

/// Two HLA pairs at once in the two lanes of SSE2 registers (x86_64
/// baseline), so that the long chain of square roots and divisions of one
/// pair runs beside the other's. Every lane does the IEEE operations of
/// [`DihedralParts::new`] and [`hla_sum`] in their order (nalgebra's dot
/// product is `(a.x b.x + a.y b.y) + a.z b.z`, its cross product the
/// textbook one), so each J has the bits of the scalar path; the tests
/// compare them.
#[cfg(target_arch = "x86_64")]
mod sse2 {
    use super::{HlaJob, PreparedSub};
    use crate::geometry::{Vec3, COLLINEAR_EPS};
    use std::arch::x86_64::{
        __m128d, _mm_add_pd, _mm_and_pd, _mm_andnot_pd, _mm_castsi128_pd, _mm_cmpeq_pd,
        _mm_cmpgt_pd, _mm_cmple_pd, _mm_cmplt_pd, _mm_div_pd, _mm_movemask_pd, _mm_mul_pd,
        _mm_or_pd, _mm_set1_pd, _mm_set_epi64x, _mm_set_pd, _mm_setzero_pd, _mm_sqrt_pd,
        _mm_storeh_pd, _mm_storel_pd, _mm_sub_pd, _mm_xor_pd,
    };

    #[derive(Clone, Copy)]
    struct V3 {
        x: __m128d,
        y: __m128d,
        z: __m128d,
    }

    // SAFETY (every `unsafe` block here): SSE2 is part of the x86_64
    // baseline, and the intrinsics used touch no memory but their operands
    // (the two stores write into local variables).

    /// Lane 0 from `a`, lane 1 from `b`.
    #[inline(always)]
    fn pair(a: f64, b: f64) -> __m128d {
        unsafe { _mm_set_pd(b, a) }
    }

    #[inline(always)]
    fn v3(a: &Vec3, b: &Vec3) -> V3 {
        V3 {
            x: pair(a.x, b.x),
            y: pair(a.y, b.y),
            z: pair(a.z, b.z),
        }
    }

    #[inline(always)]
    fn sub(a: V3, b: V3) -> V3 {
        unsafe {
            V3 {
                x: _mm_sub_pd(a.x, b.x),
                y: _mm_sub_pd(a.y, b.y),
                z: _mm_sub_pd(a.z, b.z),
            }
        }
    }

    #[inline(always)]
    fn cross(a: V3, b: V3) -> V3 {
        unsafe {
            V3 {
                x: _mm_sub_pd(_mm_mul_pd(a.y, b.z), _mm_mul_pd(a.z, b.y)),
                y: _mm_sub_pd(_mm_mul_pd(a.z, b.x), _mm_mul_pd(a.x, b.z)),
                z: _mm_sub_pd(_mm_mul_pd(a.x, b.y), _mm_mul_pd(a.y, b.x)),
            }
        }
    }

    #[inline(always)]
    fn dot(a: V3, b: V3) -> __m128d {
        unsafe {
            _mm_add_pd(
                _mm_add_pd(_mm_mul_pd(a.x, b.x), _mm_mul_pd(a.y, b.y)),
                _mm_mul_pd(a.z, b.z),
            )
        }
    }

    /// `m ? a : b` per lane (`m` all ones or all zeros).
    #[inline(always)]
    fn select(m: __m128d, a: __m128d, b: __m128d) -> __m128d {
        unsafe { _mm_or_pd(_mm_and_pd(m, a), _mm_andnot_pd(m, b)) }
    }

    #[inline(always)]
    fn mask(a: bool, b: bool) -> __m128d {
        unsafe { _mm_castsi128_pd(_mm_set_epi64x(-i64::from(b), -i64::from(a))) }
    }

    /// The pairs `a` and `b` into `out[a.k]` and `out[b.k]`; false when
    /// either cannot be evaluated (its value is then not to be used).
    #[inline(always)]
    pub(super) fn evaluate_two(
        a: &HlaJob,
        b: &HlaJob,
        subs: &[PreparedSub],
        coords: &[Vec3],
        out: &mut [f64],
    ) -> bool {
        let at = |ja: usize, jb: usize| v3(&coords[ja], &coords[jb]);
        let h1 = at(a.atoms[0], b.atoms[0]);
        let x = at(a.atoms[1], b.atoms[1]);
        let y = at(a.atoms[2], b.atoms[2]);
        let h2 = at(a.atoms[3], b.atoms[3]);
        let (sa, sb) = (&subs[a.from..a.to], &subs[b.from..b.to]);
        unsafe {
            // DihedralParts::new, lane by lane.
            let b1 = sub(x, h1);
            let b2 = sub(y, x);
            let b3 = sub(h2, y);
            let n1 = cross(b1, b2);
            let n2 = cross(b2, b3);
            let b2n2 = dot(b2, b2);
            let eps = _mm_set1_pd(COLLINEAR_EPS);
            let zero = _mm_setzero_pd();
            let bad = _mm_or_pd(
                _mm_cmpeq_pd(b2n2, zero),
                _mm_or_pd(
                    _mm_cmple_pd(dot(n1, n1), _mm_mul_pd(_mm_mul_pd(eps, dot(b1, b1)), b2n2)),
                    _mm_cmple_pd(dot(n2, n2), _mm_mul_pd(_mm_mul_pd(eps, dot(b3, b3)), b2n2)),
                ),
            );
            let yy = _mm_mul_pd(dot(b1, n2), _mm_sqrt_pd(b2n2));
            let xx = dot(n1, n2);
            let r = _mm_sqrt_pd(_mm_add_pd(_mm_mul_pd(xx, xx), _mm_mul_pd(yy, yy)));
            // r > 0 and finite (r < ∞ is false for NaN too).
            let good_r = _mm_and_pd(
                _mm_cmpgt_pd(r, zero),
                _mm_cmplt_pd(r, _mm_set1_pd(f64::INFINITY)),
            );
            if _mm_movemask_pd(bad) != 0 || _mm_movemask_pd(good_r) != 3 {
                return false;
            }
            // hla_sum, lane by lane.
            let c = _mm_div_pd(xx, r);
            let sin_phi = _mm_div_pd(yy, r);
            let p = |f: fn(&HlaJob) -> f64| pair(f(a), f(b));
            let mut j = _mm_add_pd(
                _mm_add_pd(
                    _mm_mul_pd(_mm_mul_pd(p(|q| q.p.p1), c), c),
                    _mm_mul_pd(p(|q| q.p.p2), c),
                ),
                p(|q| q.p.p3),
            );
            let (p4, p5) = (p(|q| q.p.p4), p(|q| q.p.p5));
            let minus_zero = _mm_set1_pd(-0.0);
            let (one, minus_one) = (_mm_set1_pd(1.0), _mm_set1_pd(-1.0));
            // A lane without an i-th substituent computes a dummy term and
            // keeps its sum.
            let dummy = |q: &HlaJob| PreparedSub {
                atom: q.atoms[1],
                on_x: true,
                dchi: 0.0,
                cos_a: 0.0,
                sin_a: 0.0,
            };
            for i in 0..sa.len().max(sb.len()) {
                let ua = sa.get(i).copied().unwrap_or_else(|| dummy(a));
                let ub = sb.get(i).copied().unwrap_or_else(|| dummy(b));
                let sp = at(ua.atom, ub.atom);
                let tx = dot(sub(sp, x), n1);
                let ty = _mm_xor_pd(dot(sub(sp, y), n2), minus_zero);
                let t = select(mask(ua.on_x, ub.on_x), tx, ty);
                let xi = select(_mm_cmplt_pd(t, zero), minus_one, one);
                let u = _mm_sub_pd(
                    _mm_mul_pd(c, pair(ua.cos_a, ub.cos_a)),
                    _mm_mul_pd(_mm_mul_pd(xi, sin_phi), pair(ua.sin_a, ub.sin_a)),
                );
                let term = _mm_mul_pd(
                    pair(ua.dchi, ub.dchi),
                    _mm_add_pd(p4, _mm_mul_pd(_mm_mul_pd(p5, u), u)),
                );
                j = select(mask(i < sa.len(), i < sb.len()), _mm_add_pd(j, term), j);
            }
            let (mut ja, mut jb) = (0.0, 0.0);
            _mm_storel_pd(&mut ja, j);
            _mm_storeh_pd(&mut jb, j);
            out[a.k] = ja;
            out[b.k] = jb;
            ja.is_finite() && jb.is_finite()
        }
    }
}

/// [`PairBatch::evaluate`] pair by pair.
fn evaluate_each(pairs: &[PreparedPair], coords: &[Vec3], out: &mut [f64]) -> Result<()> {
    for (j, p) in out.iter_mut().zip(pairs) {
        *j = p.evaluate_j(coords)?;
    }
    Ok(())
}
