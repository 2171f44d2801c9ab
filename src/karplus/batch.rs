//! Evaluation of a fixed list of prepared pairs on frame after frame, for
//! trajectories: the Haasnoot–de Leeuw–Altona pairs run in one flat loop
//! (no call, no `Result` and no model dispatch per pair), the other models
//! through [`PreparedPair::evaluate_j`].
//!
//! The HLA pairs are laid out once, in packs of four lanes (coefficients and
//! substituents as lane arrays, atom indices checked against the coordinates
//! once per frame), and each pack is evaluated in SIMD registers: four lanes
//! per AVX register on CPUs that have it, two per SSE2 register otherwise,
//! and pair by pair on other targets. Every lane does the IEEE operations of
//! [`DihedralParts::new`] and [`hla_sum`] in their order, so each J has the
//! bits of the pair-by-pair path; the tests compare them.

use super::{hla_sum, HlaCoefficients, Kernel, PreparedPair, PreparedSub};
use crate::error::Result;
use crate::geometry::{DihedralParts, Vec3};
use crate::isa::Wide;

/// Lanes of a pack.
const LANES: usize = 4;

/// A list of pairs made ready for repeated evaluation; see the module docs.
#[derive(Debug, Clone)]
// (Other targets evaluate the jobs pair by pair and never read the packs.)
#[cfg_attr(not(target_arch = "x86_64"), allow(dead_code))]
pub struct PairBatch {
    /// The pairs, in the order of [`PairBatch::evaluate`]'s output.
    pairs: Vec<PreparedPair>,
    hla: Vec<HlaJob>,
    subs: Vec<PreparedSub>,
    packs: Vec<Pack>,
    slots: Vec<SubSlot>,
    other: Vec<usize>,
    /// Largest atom index any pair reads.
    max_index: usize,
    /// Set when this CPU runs the AVX instance of the pack loop.
    wide: Option<Wide>,
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

/// Four HLA pairs, one per lane. A pack of fewer pairs repeats its first
/// pair in the empty lanes, which are computed and not stored.
#[derive(Debug, Clone)]
#[cfg_attr(not(target_arch = "x86_64"), allow(dead_code))]
struct Pack {
    /// H1, X, Y, H2 of each lane.
    atoms: [[usize; LANES]; 4],
    /// Where each lane's J goes in the caller's list; `None` for a repeat.
    out: [Option<usize>; LANES],
    /// P1 … P5 of each lane.
    p: [[f64; LANES]; 5],
    /// The pack's substituent slots: `slots[from..to]`.
    from: usize,
    to: usize,
}

/// The i-th substituent of each lane of a pack. A lane without one holds a
/// dummy term (on X, Δχ = 0) that is computed and not added.
#[derive(Debug, Clone)]
#[cfg_attr(not(target_arch = "x86_64"), allow(dead_code))]
struct SubSlot {
    atom: [usize; LANES],
    /// Lane masks (all bits set where true): on X, and not a dummy.
    on_x: [f64; LANES],
    live: [f64; LANES],
    dchi: [f64; LANES],
    cos_a: [f64; LANES],
    sin_a: [f64; LANES],
}

impl PairBatch {
    /// A batch of `pairs`, evaluated in [`PairBatch::evaluate`] in this
    /// order.
    pub fn new(pairs: Vec<PreparedPair>) -> PairBatch {
        let mut batch = PairBatch {
            pairs: Vec::new(),
            hla: Vec::new(),
            subs: Vec::new(),
            packs: Vec::new(),
            slots: Vec::new(),
            other: Vec::new(),
            max_index: 0,
            wide: Wide::detect(),
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
        for jobs in batch.hla.chunks(LANES) {
            let pack = Pack::new(jobs, &batch.subs, &mut batch.slots);
            batch.packs.push(pack);
        }
        batch.pairs = pairs;
        batch
    }

    /// The pairs, in the order of [`PairBatch::evaluate`]'s output.
    pub fn pairs(&self) -> &[PreparedPair] {
        &self.pairs
    }

    /// The same batch, evaluated with the baseline instructions only (SSE2
    /// on x86-64) whatever the CPU has: the bits are the same, so this is
    /// for tests and timings that compare the two instances.
    pub fn baseline_only(mut self) -> PairBatch {
        self.wide = None;
        self
    }

    /// 3J in Hz of every pair of the batch in the conformer `coords`, into
    /// `out[k]` for `pairs()[k]` (`out` as long as the list). The values are
    /// those of [`PreparedPair::evaluate_j`], bit for bit, and so is the
    /// error: that of the first pair, in list order, that cannot be evaluated.
    pub fn evaluate(&self, coords: &[Vec3], out: &mut [f64]) -> Result<()> {
        let pairs = &self.pairs[..];
        if coords.len() <= self.max_index || out.len() != pairs.len() {
            return evaluate_each(pairs, coords, out);
        }
        #[cfg(target_arch = "x86_64")]
        let ok = match self.wide {
            // SAFETY: `wide` proves the CPU has AVX.
            Some(_) => unsafe { lanes::packs_avx(&self.packs, &self.slots, coords, out) },
            None => lanes::packs_sse2(&self.packs, &self.slots, coords, out),
        };
        #[cfg(not(target_arch = "x86_64"))]
        let ok = self.hla.iter().fold(true, |ok, job| {
            ok & evaluate_one(job, &self.subs, coords, out)
        });
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

impl Pack {
    /// The pack of `jobs` (1 to 4), its substituent slots appended to `slots`.
    fn new(jobs: &[HlaJob], subs: &[PreparedSub], slots: &mut Vec<SubSlot>) -> Pack {
        let lane = |l: usize| &jobs[if l < jobs.len() { l } else { 0 }];
        let from = slots.len();
        let most = jobs.iter().map(|j| j.to - j.from).max().unwrap_or(0);
        for i in 0..most {
            let sub = |l: usize| {
                let job = lane(l);
                subs[job.from..job.to].get(i).copied()
            };
            let dummy = |l: usize| PreparedSub {
                atom: lane(l).atoms[1],
                on_x: true,
                dchi: 0.0,
                cos_a: 0.0,
                sin_a: 0.0,
            };
            let s: [PreparedSub; LANES] =
                std::array::from_fn(|l| sub(l).unwrap_or_else(|| dummy(l)));
            slots.push(SubSlot {
                atom: s.map(|s| s.atom),
                on_x: s.map(|s| lane_mask(s.on_x)),
                live: std::array::from_fn(|l| lane_mask(sub(l).is_some())),
                dchi: s.map(|s| s.dchi),
                cos_a: s.map(|s| s.cos_a),
                sin_a: s.map(|s| s.sin_a),
            });
        }
        Pack {
            atoms: std::array::from_fn(|r| std::array::from_fn(|l| lane(l).atoms[r])),
            out: std::array::from_fn(|l| jobs.get(l).map(|j| j.k)),
            p: [
                std::array::from_fn(|l| lane(l).p.p1),
                std::array::from_fn(|l| lane(l).p.p2),
                std::array::from_fn(|l| lane(l).p.p3),
                std::array::from_fn(|l| lane(l).p.p4),
                std::array::from_fn(|l| lane(l).p.p5),
            ],
            from,
            to: slots.len(),
        }
    }
}

/// A lane mask: a double with all bits set for true, zero for false.
fn lane_mask(b: bool) -> f64 {
    f64::from_bits(if b { u64::MAX } else { 0 })
}

/// One HLA pair into `out[job.k]`; false when it cannot be evaluated.
#[cfg_attr(target_arch = "x86_64", allow(dead_code))]
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

/// The pack loop over SIMD lanes of doubles: [`Lanes`] for SSE2 (two lanes,
/// the x86-64 baseline) and AVX (four lanes). Each lane does the IEEE
/// operations of [`DihedralParts::new`] and [`hla_sum`] in their order
/// (nalgebra's dot product is `(a.x b.x + a.y b.y) + a.z b.z`, its cross
/// product the textbook one), so each J has the bits of the scalar path.
#[cfg(target_arch = "x86_64")]
mod lanes {
    use super::{Pack, SubSlot, LANES};
    use crate::geometry::{Vec3, COLLINEAR_EPS};
    use crate::isa::Lanes as SimdLanes;
    use std::arch::x86_64::{__m128d, __m256d};

    /// The lane vectors of doubles the pack loop runs on.
    pub(super) trait Lanes: SimdLanes<Elem = f64> {}
    impl<V: SimdLanes<Elem = f64>> Lanes for V {}

    /// Every pack, `V::N` lanes at a time; false when some pair cannot be
    /// evaluated. Lanes that hold only repeats are skipped.
    ///
    /// # Safety
    /// The CPU must have the instructions of `V`.
    #[inline(always)]
    unsafe fn packs<V: Lanes>(
        packs: &[Pack],
        slots: &[SubSlot],
        coords: &[Vec3],
        out: &mut [f64],
    ) -> bool {
        let mut ok = true;
        for pack in packs {
            for first in (0..LANES).step_by(V::N) {
                if pack.out[first].is_some() {
                    ok &= unsafe { pack_lanes::<V>(pack, first, slots, coords, out) };
                }
            }
        }
        ok
    }

    /// [`packs`] two lanes at a time in SSE2 registers.
    pub(super) fn packs_sse2(p: &[Pack], s: &[SubSlot], c: &[Vec3], out: &mut [f64]) -> bool {
        // SAFETY: SSE2 is part of the x86_64 baseline.
        unsafe { packs::<__m128d>(p, s, c, out) }
    }

    /// [`packs`] four lanes at a time in AVX registers.
    ///
    /// # Safety
    /// The CPU must have AVX (a [`crate::isa::Wide`] proves it).
    #[target_feature(enable = "avx")]
    pub(super) unsafe fn packs_avx(p: &[Pack], s: &[SubSlot], c: &[Vec3], out: &mut [f64]) -> bool {
        // SAFETY: this function runs only where AVX is.
        unsafe { packs::<__m256d>(p, s, c, out) }
    }

    #[derive(Clone, Copy)]
    struct V3<V> {
        x: V,
        y: V,
        z: V,
    }

    // The helpers below are functions, not closures: closures do not take
    // the target features of the function they are inlined into, and the
    // AVX intrinsics must be.

    /// Lanes `first..first + N` of `v`.
    #[inline(always)]
    unsafe fn lanes<V: Lanes>(v: &[f64; LANES], first: usize) -> V {
        // (The slice bounds the N values read.)
        unsafe { V::load(v[first..first + V::N].as_ptr()) }
    }

    /// The positions of `atoms[first..first + N]`.
    #[inline(always)]
    unsafe fn at<V: Lanes>(coords: &[Vec3], atoms: &[usize; LANES], first: usize) -> V3<V> {
        let mut v = [[0.0f64; LANES]; 3];
        for l in 0..V::N {
            let c = &coords[atoms[first + l]];
            (v[0][l], v[1][l], v[2][l]) = (c.x, c.y, c.z);
        }
        unsafe {
            V3 {
                x: lanes(&v[0], 0),
                y: lanes(&v[1], 0),
                z: lanes(&v[2], 0),
            }
        }
    }

    #[inline(always)]
    unsafe fn sub<V: Lanes>(a: V3<V>, b: V3<V>) -> V3<V> {
        unsafe {
            V3 {
                x: V::sub(a.x, b.x),
                y: V::sub(a.y, b.y),
                z: V::sub(a.z, b.z),
            }
        }
    }

    #[inline(always)]
    unsafe fn cross<V: Lanes>(a: V3<V>, b: V3<V>) -> V3<V> {
        unsafe {
            V3 {
                x: V::sub(V::mul(a.y, b.z), V::mul(a.z, b.y)),
                y: V::sub(V::mul(a.z, b.x), V::mul(a.x, b.z)),
                z: V::sub(V::mul(a.x, b.y), V::mul(a.y, b.x)),
            }
        }
    }

    #[inline(always)]
    unsafe fn dot<V: Lanes>(a: V3<V>, b: V3<V>) -> V {
        unsafe { V::add(V::add(V::mul(a.x, b.x), V::mul(a.y, b.y)), V::mul(a.z, b.z)) }
    }

    /// `m ? a : b` per lane (`m` all ones or all zeros).
    #[inline(always)]
    unsafe fn select<V: Lanes>(m: V, a: V, b: V) -> V {
        unsafe { V::or(V::and(m, a), V::andnot(m, b)) }
    }

    /// Lanes `first..first + V::N` of `pack` into `out`; false when one of
    /// them cannot be evaluated (its value is then not to be used). The
    /// caller has checked that `coords` covers every atom of the batch.
    ///
    /// # Safety
    /// The CPU must have the instructions of `V`.
    #[inline(always)]
    unsafe fn pack_lanes<V: Lanes>(
        pack: &Pack,
        first: usize,
        slots: &[SubSlot],
        coords: &[Vec3],
        out: &mut [f64],
    ) -> bool {
        unsafe {
            // DihedralParts::new, lane by lane.
            let h1 = at::<V>(coords, &pack.atoms[0], first);
            let x = at::<V>(coords, &pack.atoms[1], first);
            let y = at::<V>(coords, &pack.atoms[2], first);
            let h2 = at::<V>(coords, &pack.atoms[3], first);
            let b1 = sub(x, h1);
            let b2 = sub(y, x);
            let b3 = sub(h2, y);
            let n1 = cross(b1, b2);
            let n2 = cross(b2, b3);
            let b2n2 = dot(b2, b2);
            let eps = V::splat(COLLINEAR_EPS);
            let zero = V::splat(0.0);
            let bad = V::or(
                V::eq(b2n2, zero),
                V::or(
                    V::le(dot(n1, n1), V::mul(V::mul(eps, dot(b1, b1)), b2n2)),
                    V::le(dot(n2, n2), V::mul(V::mul(eps, dot(b3, b3)), b2n2)),
                ),
            );
            let yy = V::mul(dot(b1, n2), V::sqrt(b2n2));
            let xx = dot(n1, n2);
            let r = V::sqrt(V::add(V::mul(xx, xx), V::mul(yy, yy)));
            // r > 0 and finite (r < ∞ is false for NaN too).
            let good_r = V::and(V::gt(r, zero), V::lt(r, V::splat(f64::INFINITY)));
            let all = (1u32 << V::N) - 1;
            if V::signs(bad) != 0 || V::signs(good_r) != all {
                return false;
            }
            // hla_sum, lane by lane.
            let c = V::div(xx, r);
            let sin_phi = V::div(yy, r);
            let [p1, p2, p3, p4, p5] = &pack.p;
            let (p1, p2, p3) = (lanes::<V>(p1, first), lanes(p2, first), lanes(p3, first));
            let (p4, p5) = (lanes::<V>(p4, first), lanes::<V>(p5, first));
            let mut j = V::add(V::add(V::mul(V::mul(p1, c), c), V::mul(p2, c)), p3);
            let minus_zero = V::splat(-0.0);
            let (one, minus_one) = (V::splat(1.0), V::splat(-1.0));
            for s in &slots[pack.from..pack.to] {
                let sp = at::<V>(coords, &s.atom, first);
                let tx = dot(sub(sp, x), n1);
                let ty = V::xor(dot(sub(sp, y), n2), minus_zero);
                let t = select(lanes(&s.on_x, first), tx, ty);
                let xi = select(V::lt(t, zero), minus_one, one);
                let u = V::sub(
                    V::mul(c, lanes(&s.cos_a, first)),
                    V::mul(V::mul(xi, sin_phi), lanes(&s.sin_a, first)),
                );
                let term = V::mul(lanes(&s.dchi, first), V::add(p4, V::mul(V::mul(p5, u), u)));
                j = select(lanes(&s.live, first), V::add(j, term), j);
            }
            let mut js = [0.0f64; LANES];
            V::store(j, js.as_mut_ptr());
            let mut ok = true;
            for (l, &j) in js.iter().enumerate().take(V::N) {
                if let Some(k) = pack.out[first + l] {
                    out[k] = j;
                    ok &= j.is_finite();
                }
            }
            ok
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
