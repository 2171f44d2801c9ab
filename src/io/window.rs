//! Byte classes of a 64-byte window as bit masks (bit k stands for byte k),
//! for parsers that find a line's fields with bit operations instead of a
//! byte loop. On x86_64 the masks come from SSE2 compares (16 bytes at a
//! time; SSE2 is part of the x86_64 baseline, so no run-time check is
//! needed), or from AVX2 compares (32 at a time) where [`crate::isa::Wide`]
//! is detected; elsewhere from a plain byte loop that gives the same masks.

use crate::isa::Isa;
#[cfg(doc)]
use crate::isa::Wide;

/// The classes of the 64 bytes of a window, one bit per byte.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub(crate) struct Classes {
    /// `' '` (only the space: tabs and other blanks are left to slower paths).
    pub(crate) space: u64,
    /// `'0'..='9'`.
    pub(crate) digit: u64,
    /// `'.'`.
    pub(crate) dot: u64,
    /// `'-'`.
    pub(crate) minus: u64,
    /// `'\n'`.
    pub(crate) newline: u64,
}

/// The byte classes of `w`.
#[inline(always)]
pub(crate) fn classify(w: &[u8; 64]) -> Classes {
    #[cfg(target_arch = "x86_64")]
    {
        sse2::classify(w)
    }
    #[cfg(not(target_arch = "x86_64"))]
    {
        classify_bytes(w)
    }
}

/// The space, digit and minus masks of [`classify`] only, for the layout
/// check of the XYZ reader: by AVX2 for a [`Wide`] `isa`, else as
/// [`classify`] computes them.
#[inline(always)]
pub(crate) fn space_digit_minus<I: Isa>(_isa: I, w: &[u8; 64]) -> (u64, u64, u64) {
    #[cfg(target_arch = "x86_64")]
    {
        if I::WIDE {
            // SAFETY: a value of an `Isa` type with WIDE is a `Wide`, made
            // only by `Wide::detect` on a CPU with AVX2.
            return unsafe { space_digit_minus_avx2(w) };
        }
        sse2::space_digit_minus(w)
    }
    #[cfg(not(target_arch = "x86_64"))]
    {
        let c = classify_bytes(w);
        (c.space, c.digit, c.minus)
    }
}

/// The space, digit and minus masks of [`classify`] by AVX2 compares, 32
/// bytes at a time, for the wide line path.
///
/// # Safety
/// The CPU must have AVX2 (a [`crate::isa::Wide`] proves it).
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
#[inline]
pub(crate) unsafe fn space_digit_minus_avx2(w: &[u8; 64]) -> (u64, u64, u64) {
    use std::arch::x86_64::{
        __m256i, _mm256_cmpeq_epi8, _mm256_loadu_si256, _mm256_min_epu8, _mm256_movemask_epi8,
        _mm256_set1_epi8, _mm256_sub_epi8,
    };
    // SAFETY: the two loads read bytes 0..32 and 32..64 of the 64-byte
    // array, unaligned.
    let (lo, hi) = unsafe {
        (
            _mm256_loadu_si256(w.as_ptr().cast::<__m256i>()),
            _mm256_loadu_si256(w.as_ptr().add(32).cast::<__m256i>()),
        )
    };
    let space = _mm256_set1_epi8(b' ' as i8);
    let minus = _mm256_set1_epi8(b'-' as i8);
    let (zero, nine) = (_mm256_set1_epi8(b'0' as i8), _mm256_set1_epi8(9));
    // A digit is a byte whose distance above '0' is at most 9.
    let (dlo, dhi) = (_mm256_sub_epi8(lo, zero), _mm256_sub_epi8(hi, zero));
    let s = [_mm256_cmpeq_epi8(lo, space), _mm256_cmpeq_epi8(hi, space)];
    let d = [
        _mm256_cmpeq_epi8(_mm256_min_epu8(dlo, nine), dlo),
        _mm256_cmpeq_epi8(_mm256_min_epu8(dhi, nine), dhi),
    ];
    let m = [_mm256_cmpeq_epi8(lo, minus), _mm256_cmpeq_epi8(hi, minus)];
    // (No closure: closures do not take the function's target features.)
    let (s0, s1) = (
        _mm256_movemask_epi8(s[0]) as u32,
        _mm256_movemask_epi8(s[1]) as u32,
    );
    let (d0, d1) = (
        _mm256_movemask_epi8(d[0]) as u32,
        _mm256_movemask_epi8(d[1]) as u32,
    );
    let (m0, m1) = (
        _mm256_movemask_epi8(m[0]) as u32,
        _mm256_movemask_epi8(m[1]) as u32,
    );
    let join = |lo: u32, hi: u32| u64::from(lo) | u64::from(hi) << 32;
    (join(s0, s1), join(d0, d1), join(m0, m1))
}

/// [`classify`] one byte at a time: the portable definition of the masks.
#[cfg_attr(target_arch = "x86_64", allow(dead_code))]
#[inline]
pub(crate) fn classify_bytes(w: &[u8; 64]) -> Classes {
    let mut c = Classes::default();
    for (k, &b) in w.iter().enumerate() {
        let bit = 1u64 << k;
        match b {
            b' ' => c.space |= bit,
            b'0'..=b'9' => c.digit |= bit,
            b'.' => c.dot |= bit,
            b'-' => c.minus |= bit,
            b'\n' => c.newline |= bit,
            _ => {}
        }
    }
    c
}

#[cfg(target_arch = "x86_64")]
mod sse2 {
    use super::Classes;
    use std::arch::x86_64::{
        __m128i, _mm_and_si128, _mm_cmpeq_epi8, _mm_cmpgt_epi8, _mm_cmplt_epi8, _mm_loadu_si128,
        _mm_movemask_epi8, _mm_set1_epi8,
    };

    #[inline(always)]
    pub(super) fn classify(w: &[u8; 64]) -> Classes {
        masks::<true>(w)
    }

    #[inline(always)]
    pub(super) fn space_digit_minus(w: &[u8; 64]) -> (u64, u64, u64) {
        let c = masks::<false>(w);
        (c.space, c.digit, c.minus)
    }

    /// The space, digit and minus masks, and with `ALL` the other classes
    /// too.
    #[inline(always)]
    fn masks<const ALL: bool>(w: &[u8; 64]) -> Classes {
        let mut c = Classes::default();
        for k in 0..4 {
            let shift = 16 * k as u32;
            // SAFETY: SSE2 is part of the x86_64 baseline, so its intrinsics
            // can run on every x86_64 machine; bytes 16k..16k + 16 lie inside
            // the 64-byte array, and `_mm_loadu_si128` takes any alignment.
            unsafe {
                let v = _mm_loadu_si128(w.as_ptr().add(16 * k).cast::<__m128i>());
                let bits = |m: __m128i| u64::from(_mm_movemask_epi8(m) as u16) << shift;
                let is = |b: u8| bits(_mm_cmpeq_epi8(v, _mm_set1_epi8(b as i8)));
                // Signed byte compares: bytes >= 0x80 are negative, so never digits.
                let digit = _mm_and_si128(
                    _mm_cmpgt_epi8(v, _mm_set1_epi8(b'0' as i8 - 1)),
                    _mm_cmplt_epi8(v, _mm_set1_epi8(b'9' as i8 + 1)),
                );
                c.space |= is(b' ');
                c.digit |= bits(digit);
                c.minus |= is(b'-');
                if ALL {
                    c.dot |= is(b'.');
                    c.newline |= is(b'\n');
                }
            }
        }
        c
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_byte_value_in_every_position() {
        // Each byte value 0..=255 at each of the 64 positions, the rest a mix.
        for b in 0..=255u8 {
            for k in 0..64 {
                let mut w = [0u8; 64];
                const MIX: &[u8] = b"C  -12.5\n\t\r+eE09./ ";
                for (j, x) in w.iter_mut().enumerate() {
                    *x = MIX[j % MIX.len()];
                }
                w[k] = b;
                let c = classify_bytes(&w);
                assert_eq!(classify(&w), c, "byte {b:#04x} at {k}");
                let want = (c.space, c.digit, c.minus);
                let base = space_digit_minus(crate::isa::Baseline, &w);
                assert_eq!(base, want, "byte {b:#04x} at {k}");
                if let Some(wide) = crate::isa::Wide::detect() {
                    let got = space_digit_minus(wide, &w);
                    assert_eq!(got, want, "byte {b:#04x} at {k}");
                }
            }
        }
    }
}
