//! Fast, exact parsing of decimal numbers from bytes.
//!
//! [`parse_f64`] gives exactly the value `str::parse::<f64>` gives (bit for
//! bit), but takes a fast path for the plain decimals that conformer files are
//! made of: when the decimal significand fits in 2^53 and the power of ten is
//! at most 10^22 in size, both are exact doubles and one IEEE multiplication or
//! division rounds the result correctly (Clinger, "How to read floating point
//! numbers accurately", PLDI 1990 — the classic "fast path"). Anything else
//! (long significands, large exponents, `inf`, `nan`, odd syntax) goes to the
//! standard library's correctly rounded parser.

use super::window::Classes;

/// Exact powers of ten representable as `f64` (10^0 ..= 10^22).
const POW10: [f64; 23] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
    1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
];

/// Largest significand that converts to `f64` exactly.
const MAX_EXACT: u64 = 1 << 53;

/// Parses a whole token as `f64`, returning exactly what
/// `std::str::parse::<f64>` returns for the same text (`None` where it fails).
/// Accepts the standard library's syntax: optional sign, digits with an
/// optional point, optional `e`/`E` exponent, `inf`, `infinity`, `nan`.
#[inline]
pub fn parse_f64(tok: &[u8]) -> Option<f64> {
    match fast(tok) {
        Some(v) => Some(v),
        None => slow(tok),
    }
}

#[cold]
fn slow(tok: &[u8]) -> Option<f64> {
    std::str::from_utf8(tok).ok()?.parse::<f64>().ok()
}

/// Parses a number at the start of `s` that ends at a blank (space, tab, CR,
/// form feed, vertical tab) or at the end of `s`. Returns the value and the
/// number of bytes it took; `None` if the field there is not a number. The
/// value is exactly what `str::parse::<f64>` gives for the field.
#[inline(always)]
pub(crate) fn parse_f64_field(s: &[u8]) -> Option<(f64, usize)> {
    if let Some((v, len)) = fast_prefix(s) {
        if s.get(len).is_none_or(|&b| is_blank(b)) {
            return Some((v, len));
        }
    }
    let len = s.iter().position(|&b| is_blank(b)).unwrap_or(s.len());
    slow(&s[..len]).map(|v| (v, len))
}

#[inline]
fn is_blank(b: u8) -> bool {
    matches!(b, b' ' | b'\t' | b'\r' | b'\x0b' | b'\x0c')
}

/// Eight ASCII zeros as a little-endian word.
const ZEROS: u64 = 0x3030_3030_3030_3030;

/// True if all eight bytes of the little-endian word are ASCII digits.
#[inline]
fn is_8_digits(v: u64) -> bool {
    let a = v.wrapping_add(0x4646_4646_4646_4646);
    let b = v.wrapping_sub(ZEROS);
    (a | b) & 0x8080_8080_8080_8080 == 0
}

/// Value of eight ASCII digits in a little-endian word (first digit in the
/// lowest byte), by the multiply-and-shift method of Lemire's fast_float.
#[inline]
fn parse_8_digits(v: u64) -> u64 {
    digit_values(v.wrapping_sub(ZEROS))
}

/// [`parse_8_digits`] of a word whose bytes are already digit values 0..=9.
#[inline(always)]
fn digit_values(v: u64) -> u64 {
    const MASK: u64 = 0x0000_00FF_0000_00FF;
    const MUL1: u64 = 0x000F_4240_0000_0064; // 100 + (1_000_000 << 32)
    const MUL2: u64 = 0x0000_2710_0000_0001; // 1 + (10_000 << 32)
    let v = v.wrapping_mul(10).wrapping_add(v >> 8);
    let v1 = (v & MASK).wrapping_mul(MUL1);
    let v2 = ((v >> 16) & MASK).wrapping_mul(MUL2);
    (v1.wrapping_add(v2) >> 32) as u32 as u64
}

/// The bytes of `keep` (all ones or all zeros each) of the ASCII word `w`
/// as a number, the other bytes read as leading zeros: the digits of a
/// field that end at the word's top byte.
#[inline(always)]
fn kept_digits(w: u64, keep: u64) -> u64 {
    parse_8_digits((w & keep) | (ZEROS & !keep))
}

/// The mask of the top `k` bytes of a word (`k` in 0..=8).
#[inline(always)]
fn top_bytes(k: u32) -> u64 {
    u64::MAX.checked_shl(8 * (8 - k)).unwrap_or(0)
}

#[inline]
fn load8(s: &[u8], i: usize) -> Option<u64> {
    let b: [u8; 8] = s.get(i..i + 8)?.try_into().ok()?;
    Some(u64::from_le_bytes(b))
}

/// Powers of ten as integers, 10^0 ..= 10^8.
const POW10_U64: [u64; 9] = [
    1,
    10,
    100,
    1_000,
    10_000,
    100_000,
    1_000_000,
    10_000_000,
    100_000_000,
];

/// The eight bytes of `line` from `i` as a little-endian word; near the end of
/// the line, the last eight bytes shifted so that byte `i` is lowest and the
/// bytes past the end read as 0 (a non-digit). `None` for lines shorter than 8.
#[inline(always)]
fn word_at(line: &[u8], i: usize) -> Option<u64> {
    if let Some(w) = load8(line, i) {
        return Some(w);
    }
    let n = line.len();
    let w = load8(line, n.checked_sub(8)?)?;
    // Here n - 8 < i <= n (or i > n, where nothing is left), so the shift is
    // 8..=64 bits; 64 leaves nothing.
    let past = i.checked_add(8)?.checked_sub(n)?;
    Some(w.checked_shr(8 * past as u32).unwrap_or(0))
}

/// Number of leading ASCII digits (0..=8) of a little-endian word, and the
/// value of those digits. Exact: the lowest non-digit byte is flagged
/// correctly, because no carry or borrow reaches it from the digits below.
#[inline(always)]
fn leading_digits(w: u64) -> (usize, u64) {
    let a = w.wrapping_add(0x4646_4646_4646_4646);
    let d = w.wrapping_sub(ZEROS);
    let k = (((a | d) & 0x8080_8080_8080_8080).trailing_zeros() / 8) as usize;
    // The low k bytes of `d` are the digit values; moving them to the top
    // makes the lower bytes leading zeros.
    let top = d.checked_shl(8 * (8 - k) as u32).unwrap_or(0);
    (k, digit_values(top))
}

/// An optional sign at `s[*i]`: true for `-`; steps `*i` past a `-` or `+`.
#[inline(always)]
fn sign_at(s: &[u8], i: &mut usize) -> bool {
    match s.get(*i) {
        Some(b'-') => {
            *i += 1;
            true
        }
        Some(b'+') => {
            *i += 1;
            false
        }
        _ => false,
    }
}

/// `v` (not negative) with its sign bit set when `neg`: `-v` without a
/// branch, which the random signs of coordinates would mispredict.
#[inline(always)]
fn with_sign(v: f64, neg: bool) -> f64 {
    f64::from_bits(v.to_bits() | (u64::from(neg) << 63))
}

#[inline(always)]
fn is_blank_or_end(line: &[u8], i: usize) -> bool {
    line.get(i).is_none_or(|&b| is_blank(b))
}

/// The common coordinate field at `line[i..]`: an optional sign, at most 7
/// integer digits, optionally a point and at most 15 fraction digits, at least
/// one digit in all, at most 19 digits and a significand of at most 2^53,
/// followed by a blank or the end of the line. Returns the value and the index
/// just past the field, or `None` for any other field (exponents included),
/// which the caller then hands to [`parse_f64_field`]. Fraction digits are
/// taken eight at a time; the value is the same Clinger fast path as [`parse_f64`], so it
/// is exactly what `str::parse::<f64>` gives.
#[inline(always)]
pub(crate) fn plain_decimal_at(line: &[u8], i: usize) -> Option<(f64, usize)> {
    plain_decimal_ending::<false>(line, i)
}

/// [`plain_decimal_at`] on a buffer that runs on past the end of the line:
/// the field may also be followed by the line's `\n`.
#[inline(always)]
pub(crate) fn plain_decimal_before_newline(buf: &[u8], i: usize) -> Option<(f64, usize)> {
    plain_decimal_ending::<true>(buf, i)
}

#[inline(always)]
fn plain_decimal_ending<const NEWLINE_ENDS: bool>(
    line: &[u8],
    mut i: usize,
) -> Option<(f64, usize)> {
    let neg = sign_at(line, &mut i);
    // Integer parts of coordinates are short: a byte loop beats a word here.
    let int_start = i;
    let mut mant: u64 = 0;
    while let Some(&b) = line.get(i) {
        let d = b.wrapping_sub(b'0');
        if d > 9 {
            break;
        }
        mant = mant.wrapping_mul(10).wrapping_add(d as u64);
        i += 1;
    }
    let k_int = i - int_start;
    if k_int > 7 {
        return None;
    }
    let mut frac = 0usize;
    if line.get(i) == Some(&b'.') {
        i += 1;
        let (k, v) = leading_digits(word_at(line, i)?);
        mant = mant * POW10_U64[k] + v;
        i += k;
        frac = k;
        if k == 8 {
            let (k2, v2) = leading_digits(word_at(line, i)?);
            if k2 == 8 || k_int + 8 + k2 > 19 {
                return None;
            }
            mant = mant.wrapping_mul(POW10_U64[k2]).wrapping_add(v2);
            i += k2;
            frac += k2;
        }
    }
    let ends = is_blank_or_end(line, i) || (NEWLINE_ENDS && line.get(i) == Some(&b'\n'));
    if k_int + frac == 0 || mant > MAX_EXACT || !ends {
        return None;
    }
    let m = mant as f64;
    let v = if frac == 0 { m } else { m / POW10[frac] };
    Some((with_sign(v, neg), i))
}

/// The plain decimal at `buf[s..=e]`, a field already cut out by a caller
/// that has `classes`, the byte classes of `buf[..64]`
/// ([`crate::io::window::classify`]), with `e < 63`: an optional `-`, at most
/// 8 integer digits, optionally a point and at most 8 fraction digits, at
/// least one digit in all. The integer and fraction digits are taken as whole
/// words, without a loop over the bytes. Returns `None` for any other field
/// (which the caller hands to the general parser) and otherwise the Clinger
/// fast path's value, so exactly what `str::parse::<f64>` gives.
#[inline(always)]
pub(crate) fn masked_decimal(buf: &[u8], classes: &Classes, s: u32, e: u32) -> Option<f64> {
    let field = (u64::MAX >> (63 - e)) & (u64::MAX << s);
    let neg = (classes.minus >> s) & 1 == 1;
    let body = field & !(classes.minus & (1u64 << s));
    // Every byte of the body is a digit but at most one, which is the point.
    let other = body & !classes.digit;
    if other & !classes.dot != 0 || other & other.wrapping_sub(1) != 0 {
        return None;
    }
    let first = s + u32::from(neg);
    let (int_end, k_frac) = if other == 0 {
        (e + 1, 0)
    } else {
        let p = other.trailing_zeros();
        (p, e - p)
    };
    let k_int = int_end - first;
    if k_int + k_frac == 0 {
        return None;
    }
    decimal_digits_value(buf, int_end, k_int, k_frac, neg)
}

/// The value of a decimal already validated by the caller: `k_int` integer
/// digits just before `buf[point]` (the point itself, or the end of a field
/// without one), `k_frac` fraction digits just after it, negative if `neg`.
/// `None` beyond 8 integer or 8 fraction digits, for a significand above
/// 2^53, or when `buf` ends within 8 bytes of the point. Otherwise the
/// Clinger fast path, so exactly what `str::parse::<f64>` gives. The digits
/// are taken as whole words, without a loop over the bytes.
#[inline(always)]
pub(crate) fn decimal_digits_value(
    buf: &[u8],
    point: u32,
    k_int: u32,
    k_frac: u32,
    neg: bool,
) -> Option<f64> {
    if k_int > 8 || k_frac > 8 {
        return None;
    }
    // The integer digits end at `point`: load the word that ends there (or
    // the buffer's first word), move the last digit to the top byte, and make
    // the bytes below the k_int digits '0' (leading zeros).
    let base = point.max(8) - 8;
    // (With no integer digits the shift may be 64 bits; `keep` is 0 then.)
    let w = load8(buf, base as usize)?.wrapping_shl(8 * (8 + base - point));
    let int = kept_digits(w, top_bytes(k_int));
    let frac = if k_frac == 0 {
        0
    } else {
        // The fraction digits are the low k_frac bytes of the word after the
        // point; subtracting '0' first keeps the borrows out of them, then
        // the shift drops the bytes past the field.
        let w = load8(buf, point as usize + 1)?;
        digit_values(w.wrapping_sub(ZEROS) << (8 * (8 - k_frac)))
    };
    let mant = int * POW10_U64[k_frac as usize] + frac;
    if mant > MAX_EXACT {
        return None;
    }
    let v = mant as f64 / POW10[k_frac as usize];
    Some(with_sign(v, neg))
}

/// A decimal in fixed columns of a 64-byte window (read with 8 bytes more,
/// so that every word is whole), its point and last
/// fraction digit known in advance (a line of a fixed-format file), with
/// what its value needs precomputed: [`FixedDecimal::value`] then takes the
/// integer and fraction digits as two words of the window, without bounds
/// failures or a loop, by the same Clinger fast path as
/// [`decimal_digits_value`], so with the same bits.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct FixedDecimal {
    /// Start of the word that ends at the last integer digit (or the
    /// window's first word), and the shift that moves that digit to the top.
    int_base: u32,
    int_shift: u32,
    /// Start of the word that ends at the last fraction digit, and the mask
    /// of its fraction bytes (the top ones).
    frac_base: u32,
    frac_keep: u64,
    /// 10^k as an integer and as a double, k the number of fraction digits.
    pow_u: u64,
    pow_f: f64,
}

impl FixedDecimal {
    /// The columns of a decimal with its point at `point` and its last
    /// fraction digit at `end` (1 to 8 fraction digits, `7 <= end < 64`);
    /// `None` otherwise.
    pub(crate) fn new(point: u32, end: u32) -> Option<FixedDecimal> {
        let k_frac = end.checked_sub(point)?;
        if !(1..=8).contains(&k_frac) || !(7..64).contains(&end) {
            return None;
        }
        let int_base = point.max(8) - 8;
        Some(FixedDecimal {
            int_base,
            int_shift: 8 * (8 + int_base - point),
            frac_base: end - 7,
            frac_keep: top_bytes(k_frac),
            pow_u: POW10_U64[k_frac as usize],
            pow_f: POW10[k_frac as usize],
        })
    }

    /// The value, given `k_int` integer digits just before the point (all
    /// digits, as the caller has checked) and the sign; `None` beyond 8
    /// integer digits or for a significand above 2^53. Exactly what
    /// `str::parse::<f64>` gives for the field.
    #[inline(always)]
    pub(crate) fn value(&self, w: &[u8; 72], k_int: u32, neg: bool) -> Option<f64> {
        if k_int > 8 {
            return None;
        }
        // Every word starts before byte 64, so it ends inside the 72 bytes.
        let word = |at: u32| {
            let at = (at & 63) as usize;
            let mut b = [0u8; 8];
            b.copy_from_slice(&w[at..at + 8]);
            u64::from_le_bytes(b)
        };
        // (With no integer digits the shift may leave garbage; `keep` is 0.)
        let wi = word(self.int_base).wrapping_shl(self.int_shift);
        let int = kept_digits(wi, top_bytes(k_int));
        let frac = kept_digits(word(self.frac_base), self.frac_keep);
        let mant = int * self.pow_u + frac;
        if mant > MAX_EXACT {
            return None;
        }
        Some(with_sign(mant as f64 / self.pow_f, neg))
    }
}

/// A decimal in fixed columns of a 64-byte window, read with SSSE3 for the
/// wide line path of the XYZ reader: its point and last fraction digit are
/// fixed, and its integer digits lie in a zone of columns that ends at the
/// point. The caller checks the zone's bytes (blanks, at most a sign, then
/// digits up to the point) and the fraction digits; [`WideDecimal::value`]
/// then lines the digits up in one register without the point, makes them
/// values and sums them in pairs, quads and octets (the classic SIMD digit
/// reduction). At most 15 digits are read, so the significand is below
/// 2^53 and the Clinger fast path gives exactly what `str::parse::<f64>`
/// gives.
#[derive(Debug, Clone, Copy, PartialEq)]
#[cfg_attr(not(target_arch = "x86_64"), allow(dead_code))]
pub(crate) struct WideDecimal {
    /// Start of the 16 bytes that end at the last fraction digit (or the
    /// window's start).
    base: u32,
    /// The byte shuffle from those 16 bytes: lane 15 the last digit, lane
    /// 15 − m the column of the digit of weight 10^m, 0x80 (zero) for lanes
    /// outside the zone and the fraction.
    gather: [u8; 16],
    /// 10^k, k the number of fraction digits.
    pow_f: f64,
}

impl WideDecimal {
    /// Most digits a field may have (integer and fraction together).
    pub(crate) const MAX_DIGITS: u32 = 15;

    /// The columns of a decimal whose integer digits may occupy columns
    /// `zone..point` (only the top `MAX_DIGITS − k` of them are read, k the
    /// number of fraction digits: the caller must check that the rest hold
    /// no digit), its point at `point` and its last fraction digit at `end`,
    /// with 1 to 8 fraction digits and `end < 64`; `None` otherwise.
    pub(crate) fn new(zone: u32, point: u32, end: u32) -> Option<WideDecimal> {
        let k_frac = end.checked_sub(point)?;
        if !(1..=8).contains(&k_frac) || end >= 64 || zone > point {
            return None;
        }
        let base = end.saturating_sub(15);
        let mut gather = [0x80u8; 16];
        for (lane, g) in (0u32..).zip(gather.iter_mut()) {
            // The column of the digit of weight 10^(15 − lane): past the
            // point for the fraction, one further left for the integer part.
            let weight = 15 - lane;
            let column = if weight < k_frac {
                Some(end - weight)
            } else {
                end.checked_sub(weight + 1)
            };
            if let Some(c) = column.filter(|&c| c >= base && c >= zone) {
                *g = (c - base) as u8;
            }
        }
        Some(WideDecimal {
            base,
            gather,
            pow_f: POW10[k_frac as usize],
        })
    }

    /// The value of the field in `w` (negative if `neg`), its bytes checked
    /// by the caller as [`WideDecimal`] says: the digits of its zone and
    /// fraction, with every other byte of the zone a blank or the sign.
    ///
    /// # Safety
    /// The CPU must have SSSE3 (a [`crate::isa::Wide`] proves it).
    /// (Not marked with the feature itself, so that it inlines into its
    /// caller, which is.)
    #[cfg(target_arch = "x86_64")]
    #[inline(always)]
    pub(crate) unsafe fn value(&self, w: &[u8; 64], neg: bool) -> f64 {
        use std::arch::x86_64::{
            __m128i, _mm_cvtsi128_si64, _mm_loadu_si128, _mm_madd_epi16, _mm_maddubs_epi16,
            _mm_packs_epi32, _mm_set1_epi16, _mm_set1_epi32, _mm_set1_epi8, _mm_shuffle_epi8,
            _mm_subs_epu8,
        };
        // SAFETY: the caller guarantees SSSE3 (the rest is SSE2, part of
        // the x86_64 baseline); the load reads bytes base..base + 16 <=
        // end + 1 <= 64 of the window, and the shuffle pattern is a 16-byte
        // array; both unaligned.
        let mant = unsafe {
            let bytes = _mm_loadu_si128(w.as_ptr().add(self.base as usize).cast::<__m128i>());
            let gather = _mm_loadu_si128(self.gather.as_ptr().cast::<__m128i>());
            // Digits become 0..=9; blanks, the sign and the zeroed lanes 0
            // (saturating subtraction).
            let d = _mm_subs_epu8(_mm_shuffle_epi8(bytes, gather), _mm_set1_epi8(b'0' as i8));
            let pairs = _mm_maddubs_epi16(d, _mm_set1_epi16(0x010a));
            let quads = _mm_madd_epi16(pairs, _mm_set1_epi32(0x0001_0064));
            let octets = _mm_madd_epi16(_mm_packs_epi32(quads, quads), _mm_set1_epi32(0x0001_2710));
            let both = _mm_cvtsi128_si64(octets) as u64;
            (both & 0xffff_ffff) * 100_000_000 + (both >> 32)
        };
        with_sign(mant as f64 / self.pow_f, neg)
    }
}

/// The Clinger fast path on a whole token; `None` when the token is not a
/// plain decimal that the fast path can round correctly.
#[inline]
fn fast(tok: &[u8]) -> Option<f64> {
    match fast_prefix(tok) {
        Some((v, len)) if len == tok.len() => Some(v),
        _ => None,
    }
}

/// The Clinger fast path on the longest plain decimal at the start of `s`:
/// the value and its length in bytes, or `None` if the fast path does not
/// apply (more than 19 digits, significand above 2^53, power of ten beyond
/// 10^±22, no digits).
#[inline(always)]
fn fast_prefix(s: &[u8]) -> Option<(f64, usize)> {
    let n = s.len();
    let mut i = 0;
    let neg = sign_at(s, &mut i);
    let mut mant: u64 = 0;
    let int_start = i;
    while i < n {
        let d = s[i].wrapping_sub(b'0');
        if d > 9 {
            break;
        }
        mant = mant.wrapping_mul(10).wrapping_add(d as u64);
        i += 1;
    }
    let mut ndigits = i - int_start;
    let mut frac_digits = 0usize;
    if i < n && s[i] == b'.' {
        i += 1;
        let frac_start = i;
        while let Some(w) = load8(s, i) {
            if !is_8_digits(w) {
                break;
            }
            mant = mant
                .wrapping_mul(100_000_000)
                .wrapping_add(parse_8_digits(w));
            i += 8;
        }
        while i < n {
            let d = s[i].wrapping_sub(b'0');
            if d > 9 {
                break;
            }
            mant = mant.wrapping_mul(10).wrapping_add(d as u64);
            i += 1;
        }
        frac_digits = i - frac_start;
        ndigits += frac_digits;
    }
    // Leading zeros count as digits here, so a long "0.000…" goes to the slow
    // path: correct, merely slower. 19 digits cannot overflow u64.
    if ndigits == 0 || ndigits > 19 {
        return None;
    }
    let mut exp: i64 = 0;
    if i < n && (s[i] | 0x20) == b'e' {
        let mut j = i + 1;
        let eneg = sign_at(s, &mut j);
        let start = j;
        while j < n {
            let d = s[j].wrapping_sub(b'0');
            if d > 9 {
                break;
            }
            if exp < 10_000 {
                exp = exp * 10 + d as i64;
            }
            j += 1;
        }
        if j == start {
            // "1e" or "1e+" is not a number the standard parser accepts.
            return None;
        }
        i = j;
        if eneg {
            exp = -exp;
        }
    }
    if mant > MAX_EXACT {
        return None;
    }
    let e10 = exp - frac_digits as i64;
    let m = mant as f64;
    let v = if e10 == 0 {
        m
    } else if (1..=22).contains(&e10) {
        m * POW10[e10 as usize]
    } else if (-22..0).contains(&e10) {
        m / POW10[(-e10) as usize]
    } else if mant == 0 {
        0.0
    } else {
        return None;
    };
    Some((with_sign(v, neg), i))
}

/// Length of the longest prefix of `s` that looks like a decimal number
/// (sign, digits, point, exponent); 0 if none.
pub(crate) fn number_prefix_len(s: &[u8]) -> usize {
    let mut i = 0;
    if matches!(s.first(), Some(b'+' | b'-')) {
        i = 1;
    }
    let mut any = false;
    while i < s.len() && s[i].is_ascii_digit() {
        i += 1;
        any = true;
    }
    if i < s.len() && s[i] == b'.' {
        i += 1;
        while i < s.len() && s[i].is_ascii_digit() {
            i += 1;
            any = true;
        }
    }
    if !any {
        return 0;
    }
    if i < s.len() && (s[i] | 0x20) == b'e' {
        let mut j = i + 1;
        if matches!(s.get(j), Some(b'+' | b'-')) {
            j += 1;
        }
        let start = j;
        while j < s.len() && s[j].is_ascii_digit() {
            j += 1;
        }
        if j > start {
            i = j;
        }
    }
    i
}

#[cfg(test)]
mod tests {
    use super::*;

    proptest::proptest! {
        /// A fixed-column decimal anywhere in a window reads as std does.
        #[test]
        fn fixed_decimal_reads_as_std(
            neg in proptest::bool::ANY,
            int in "[0-9]{0,9}",
            frac in "[0-9]{1,8}",
            at in 1usize..40,
        ) {
            let field = format!("{}{int}.{frac}", if neg { "-" } else { "" });
            let mut w = [b' '; 72];
            w[at..at + field.len()].copy_from_slice(field.as_bytes());
            let point = (at + field.len() - frac.len() - 1) as u32;
            let end = (at + field.len() - 1) as u32;
            match FixedDecimal::new(point, end) {
                None => proptest::prop_assert!(end < 7),
                Some(d) => {
                    let got = d.value(&w, int.len() as u32, neg);
                    let want: f64 = field.parse().unwrap();
                    if let Some(v) = got {
                        proptest::prop_assert_eq!(v.to_bits(), want.to_bits(), "{}", field);
                    } else {
                        proptest::prop_assert!(int.len() > 8 || int.len() + frac.len() > 15, "{}", field);
                    }
                }
            }
        }
    }

    proptest::proptest! {
        /// A [`WideDecimal`] anywhere in a window, its zone reaching from
        /// any column up to the point, reads as std does.
        #[test]
        #[cfg(target_arch = "x86_64")]
        fn wide_decimal_reads_as_std(
            neg in proptest::bool::ANY,
            int in "[0-9]{0,9}",
            frac in "[0-9]{1,8}",
            at in 1usize..40,
            room in 0usize..12,
        ) {
            let Some(_wide) = crate::isa::Wide::detect() else {
                return Ok(());
            };
            let field = format!("{}{int}.{frac}", if neg { "-" } else { "" });
            let mut w = [b'7'; 64];
            w[at..at + field.len()].copy_from_slice(field.as_bytes());
            let point = (at + field.len() - frac.len() - 1) as u32;
            let end = (at + field.len() - 1) as u32;
            // The zone starts at the sign (or first digit) or up to `room`
            // blanks before it; digits ('7') fill the window outside.
            let zone = at.saturating_sub(room).max(1);
            w[zone..at].fill(b' ');
            if int.len() + frac.len() > 15 {
                return Ok(());
            }
            let d = WideDecimal::new(zone as u32, point, end).unwrap();
            // SAFETY: `Wide::detect` found SSSE3.
            let got = unsafe { d.value(&w, neg) };
            let want: f64 = field.parse().unwrap();
            proptest::prop_assert_eq!(got.to_bits(), want.to_bits(), "{}", field);
        }
    }

    fn same(s: &str) {
        let want = s.parse::<f64>().ok();
        let got = parse_f64(s.as_bytes());
        match (want, got) {
            (Some(a), Some(b)) => assert!(
                a.to_bits() == b.to_bits() || (a.is_nan() && b.is_nan()),
                "{s}: {a} vs {b}"
            ),
            (None, None) => {}
            _ => panic!("{s}: std {want:?} vs ours {got:?}"),
        }
    }

    #[test]
    fn agrees_with_std_on_edge_cases() {
        for s in [
            "0",
            "-0",
            "-0.0",
            "+1",
            "1.",
            ".5",
            "-.5",
            ".",
            "-",
            "+",
            "",
            "1e",
            "1e+",
            "1e5",
            "1E-5",
            "1.5e3",
            "-1.234567",
            "123456789012345678",
            "9007199254740993",
            "9007199254740992",
            "0.1",
            "0.30000000000000004",
            "1e22",
            "1e23",
            "1e-22",
            "1e-23",
            "1e308",
            "1e309",
            "4.9e-324",
            "inf",
            "-inf",
            "NaN",
            "infinity",
            "1.0D+00",
            "1,5",
            "1.2.3",
            "--1",
            "0x10",
            "00000000000000000000000001.5",
            "1.00000000000000000000000",
            "123.456e-2",
            "e5",
            "12345678901234567890",
            "0.000000000000000000000000000001",
            "1e-400",
            "1e99999999999",
        ] {
            same(s);
        }
    }

    #[test]
    fn eight_digit_words() {
        assert_eq!(parse_8_digits(u64::from_le_bytes(*b"12345678")), 12_345_678);
        assert_eq!(parse_8_digits(u64::from_le_bytes(*b"00000009")), 9);
        assert!(is_8_digits(u64::from_le_bytes(*b"09090909")));
        assert!(!is_8_digits(u64::from_le_bytes(*b"0909090:")));
        assert!(!is_8_digits(u64::from_le_bytes(*b"/9090909")));
        assert_eq!(parse_f64_field(b"-1.25 x"), Some((-1.25, 5)));
        assert_eq!(parse_f64_field(b"1.2345678901\t"), Some((1.2345678901, 12)));
        assert!(parse_f64_field(b"nan ").is_some_and(|(v, n)| v.is_nan() && n == 3));
        assert_eq!(parse_f64_field(b"1.5x 2"), None);
        assert_eq!(parse_f64_field(b"1e400 2"), Some((f64::INFINITY, 5)));
    }

    /// `plain_decimal_at` must agree with `parse_f64_field` (and so with
    /// `str::parse::<f64>`) wherever it gives a value.
    fn plain_agrees(line: &[u8], i: usize) {
        if let Some((v, end)) = plain_decimal_at(line, i) {
            let rest = &line[i..];
            let (w, len) = parse_f64_field(rest).expect("generic parser accepts it");
            assert_eq!(
                (v.to_bits(), end),
                (w.to_bits(), i + len),
                "{line:?} at {i}"
            );
            let tok = std::str::from_utf8(&rest[..len]).unwrap();
            assert_eq!(v.to_bits(), tok.parse::<f64>().unwrap().to_bits(), "{tok}");
        }
    }

    #[test]
    fn plain_decimal_fast_path() {
        let line = b"C     2.665123     0.572493    -0.778180";
        assert_eq!(plain_decimal_at(line, 6), Some((2.665123, 14)));
        assert_eq!(plain_decimal_at(line, 19), Some((0.572493, 27)));
        assert_eq!(plain_decimal_at(line, 31), Some((-0.77818, 40)));
        assert_eq!(plain_decimal_at(b"H 1 2 3", 2), Some((1.0, 3)));
        assert_eq!(plain_decimal_at(b"H 1.5 2", 2), None); // line under 8 bytes
        assert_eq!(plain_decimal_at(b"H 1.5e3 2 3", 2), None);
        assert_eq!(plain_decimal_at(b"H 1,5 2 3 4", 2), None);
        assert_eq!(plain_decimal_at(b"H 12345678.5 2 3", 2), None);
        assert_eq!(
            plain_decimal_at(b"H 1.234567890123456 0", 2),
            Some((1.234567890123456, 19))
        );
        assert_eq!(plain_decimal_at(b"H -. 00000000", 2), None);
        assert_eq!(plain_decimal_at(b"H +.5\t0000000", 2), Some((0.5, 5)));
        assert_eq!(plain_decimal_at(b"H 00000000", 10), None);
        for line in [
            &b"O 0.0 0.0 0.117"[..],
            b"X 9007199254740993 1",
            b"X 0.9007199254740993 1",
            b"X 1234567.123456789012 1",
            b"X 1.00000000000000000000000 1",
            b"X 1. 2",
            b"X -0.000 2",
            b"X 123.\xff 2",
        ] {
            for i in 0..=line.len() + 1 {
                plain_agrees(line, i);
            }
        }
    }

    proptest::proptest! {
        #[test]
        fn plain_decimal_matches_generic(
            pre in "[ \t]{0,9}",
            num in "[-+]?[0-9]{0,9}(\\.[0-9]{0,18})?([eE][-+]?[0-9]{1,2})?",
            post in "([ \t\r,.a-z][ -~]{0,12})?",
        ) {
            let line = format!("{pre}{num}{post}");
            for i in 0..=line.len() {
                plain_agrees(line.as_bytes(), i);
            }
        }
    }

    #[test]
    fn number_prefix() {
        assert_eq!(number_prefix_len(b"-12.5kcal"), 5);
        assert_eq!(number_prefix_len(b"1e-3,"), 4);
        assert_eq!(number_prefix_len(b"1e,"), 1);
        assert_eq!(number_prefix_len(b"abc"), 0);
        assert_eq!(number_prefix_len(b"-."), 0);
    }
}
