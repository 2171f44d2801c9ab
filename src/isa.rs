//! Run-time choice of instruction-set extensions for the hot loops.
//!
//! The portable code uses the x86-64 baseline (SSE2) or plain Rust; the wide
//! instances of the readers' and the trajectory's loops use the features of
//! the x86-64 machines of the last decade. Both give the same bits, and the
//! tests compare them.

/// Which instructions a hot loop may use: [`Baseline`]
/// (x86-64's SSE2, or portable code elsewhere) or [`Wide`]. A loop generic
/// over `I: Isa` takes a value of `I`, so that its wide instance can only be
/// reached with the proof that [`Wide::detect`] returns.
pub(crate) trait Isa: Copy {
    /// True for [`Wide`].
    #[cfg_attr(not(target_arch = "x86_64"), allow(dead_code))]
    const WIDE: bool;
}

/// The instructions every target has.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Baseline;

impl Isa for Baseline {
    const WIDE: bool = false;
}

/// Proof that this CPU has AVX, AVX2, SSSE3, POPCNT, LZCNT, BMI1 and BMI2 (the
/// x86-64 machines of the last decade); made only by [`Wide::detect`].
#[derive(Debug, Clone, Copy)]
#[cfg_attr(not(target_arch = "x86_64"), allow(dead_code))]
pub(crate) struct Wide(());

impl Isa for Wide {
    const WIDE: bool = true;
}

impl Wide {
    /// `Some` when this CPU has the features (checked at run time, once per
    /// reader or evaluator).
    pub(crate) fn detect() -> Option<Wide> {
        #[cfg(target_arch = "x86_64")]
        {
            use std::arch::is_x86_feature_detected as has;
            (has!("avx")
                && has!("avx2")
                && has!("ssse3")
                && has!("popcnt")
                && has!("lzcnt")
                && has!("bmi1")
                && has!("bmi2"))
            .then_some(Wide(()))
        }
        #[cfg(not(target_arch = "x86_64"))]
        {
            None
        }
    }
}

/// A SIMD vector of `N` lanes of [`Lanes::Elem`] and the operations the
/// hot loops use, one intrinsic each: SSE/SSE2 (`__m128`, `__m128d`, the
/// x86-64 baseline) and AVX (`__m256`, `__m256d`). The methods are `unsafe`
/// and `#[inline(always)]`: the AVX ones need a CPU with AVX (a [`Wide`]
/// proves it), and each is to be inlined into a function compiled for its
/// instructions. Comparisons give lane masks (all bits set where true) and
/// are ordered: false for NaN, as scalar comparisons are.
#[cfg(target_arch = "x86_64")]
pub(crate) trait Lanes: Copy {
    /// The lane type (`f32` or `f64`).
    type Elem: Copy;
    /// Number of lanes.
    const N: usize;
    unsafe fn splat(x: Self::Elem) -> Self;
    /// `N` values from `p`, unaligned.
    unsafe fn load(p: *const Self::Elem) -> Self;
    /// `N` values to `p`, unaligned.
    unsafe fn store(a: Self, p: *mut Self::Elem);
    unsafe fn sqrt(a: Self) -> Self;
    /// Bit l set where lane l's sign bit is (where a mask lane is true).
    unsafe fn signs(a: Self) -> u32;
    unsafe fn add(a: Self, b: Self) -> Self;
    unsafe fn sub(a: Self, b: Self) -> Self;
    unsafe fn mul(a: Self, b: Self) -> Self;
    unsafe fn div(a: Self, b: Self) -> Self;
    unsafe fn eq(a: Self, b: Self) -> Self;
    unsafe fn le(a: Self, b: Self) -> Self;
    unsafe fn lt(a: Self, b: Self) -> Self;
    unsafe fn gt(a: Self, b: Self) -> Self;
    unsafe fn and(a: Self, b: Self) -> Self;
    unsafe fn or(a: Self, b: Self) -> Self;
    /// `!a & b`.
    unsafe fn andnot(a: Self, b: Self) -> Self;
    unsafe fn xor(a: Self, b: Self) -> Self;
}

#[cfg(target_arch = "x86_64")]
macro_rules! impl_lanes {
    ($t:ty, $elem:ty, $n:expr, splat = $set1:path, load = $loadu:path, store = $storeu:path,
     sqrt = $sqrt:path, signs = $movemask:path, $($op:ident = $f:path),* $(,)?) => {
        impl Lanes for $t {
            type Elem = $elem;
            const N: usize = $n;
            #[inline(always)]
            unsafe fn splat(x: $elem) -> Self {
                unsafe { $set1(x) }
            }
            #[inline(always)]
            unsafe fn load(p: *const $elem) -> Self {
                // SAFETY: the caller vouches for the N values at `p`.
                unsafe { $loadu(p) }
            }
            #[inline(always)]
            unsafe fn store(a: Self, p: *mut $elem) {
                // SAFETY: the caller vouches for room for N values at `p`.
                unsafe { $storeu(p, a) }
            }
            #[inline(always)]
            unsafe fn sqrt(a: Self) -> Self {
                unsafe { $sqrt(a) }
            }
            #[inline(always)]
            unsafe fn signs(a: Self) -> u32 {
                unsafe { $movemask(a) as u32 }
            }
            $(
                #[inline(always)]
                unsafe fn $op(a: Self, b: Self) -> Self {
                    unsafe { $f(a, b) }
                }
            )*
        }
    };
}

#[cfg(target_arch = "x86_64")]
mod impls {
    use super::Lanes;
    use std::arch::x86_64::*;

    impl_lanes!(
        __m128,
        f32,
        4,
        splat = _mm_set1_ps,
        load = _mm_loadu_ps,
        store = _mm_storeu_ps,
        sqrt = _mm_sqrt_ps,
        signs = _mm_movemask_ps,
        add = _mm_add_ps,
        sub = _mm_sub_ps,
        mul = _mm_mul_ps,
        div = _mm_div_ps,
        eq = _mm_cmpeq_ps,
        le = _mm_cmple_ps,
        lt = _mm_cmplt_ps,
        gt = _mm_cmpgt_ps,
        and = _mm_and_ps,
        or = _mm_or_ps,
        andnot = _mm_andnot_ps,
        xor = _mm_xor_ps,
    );

    impl_lanes!(
        __m128d,
        f64,
        2,
        splat = _mm_set1_pd,
        load = _mm_loadu_pd,
        store = _mm_storeu_pd,
        sqrt = _mm_sqrt_pd,
        signs = _mm_movemask_pd,
        add = _mm_add_pd,
        sub = _mm_sub_pd,
        mul = _mm_mul_pd,
        div = _mm_div_pd,
        eq = _mm_cmpeq_pd,
        le = _mm_cmple_pd,
        lt = _mm_cmplt_pd,
        gt = _mm_cmpgt_pd,
        and = _mm_and_pd,
        or = _mm_or_pd,
        andnot = _mm_andnot_pd,
        xor = _mm_xor_pd,
    );

    // AVX compares take the predicate as a constant: ordered and quiet, so
    // false for NaN, as the SSE ones.
    impl_lanes!(
        __m256,
        f32,
        8,
        splat = _mm256_set1_ps,
        load = _mm256_loadu_ps,
        store = _mm256_storeu_ps,
        sqrt = _mm256_sqrt_ps,
        signs = _mm256_movemask_ps,
        add = _mm256_add_ps,
        sub = _mm256_sub_ps,
        mul = _mm256_mul_ps,
        div = _mm256_div_ps,
        eq = _mm256_cmp_ps::<_CMP_EQ_OQ>,
        le = _mm256_cmp_ps::<_CMP_LE_OQ>,
        lt = _mm256_cmp_ps::<_CMP_LT_OQ>,
        gt = _mm256_cmp_ps::<_CMP_GT_OQ>,
        and = _mm256_and_ps,
        or = _mm256_or_ps,
        andnot = _mm256_andnot_ps,
        xor = _mm256_xor_ps,
    );

    impl_lanes!(
        __m256d,
        f64,
        4,
        splat = _mm256_set1_pd,
        load = _mm256_loadu_pd,
        store = _mm256_storeu_pd,
        sqrt = _mm256_sqrt_pd,
        signs = _mm256_movemask_pd,
        add = _mm256_add_pd,
        sub = _mm256_sub_pd,
        mul = _mm256_mul_pd,
        div = _mm256_div_pd,
        eq = _mm256_cmp_pd::<_CMP_EQ_OQ>,
        le = _mm256_cmp_pd::<_CMP_LE_OQ>,
        lt = _mm256_cmp_pd::<_CMP_LT_OQ>,
        gt = _mm256_cmp_pd::<_CMP_GT_OQ>,
        and = _mm256_and_pd,
        or = _mm256_or_pd,
        andnot = _mm256_andnot_pd,
        xor = _mm256_xor_pd,
    );
}
