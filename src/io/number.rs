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

/// True if all eight bytes of the little-endian word are ASCII digits.
#[inline]
fn is_8_digits(v: u64) -> bool {
    let a = v.wrapping_add(0x4646_4646_4646_4646);
    let b = v.wrapping_sub(0x3030_3030_3030_3030);
    (a | b) & 0x8080_8080_8080_8080 == 0
}

/// Value of eight ASCII digits in a little-endian word (first digit in the
/// lowest byte), by the multiply-and-shift method of Lemire's fast_float.
#[inline]
fn parse_8_digits(v: u64) -> u64 {
    const MASK: u64 = 0x0000_00FF_0000_00FF;
    const MUL1: u64 = 0x000F_4240_0000_0064; // 100 + (1_000_000 << 32)
    const MUL2: u64 = 0x0000_2710_0000_0001; // 1 + (10_000 << 32)
    let v = v.wrapping_sub(0x3030_3030_3030_3030);
    let v = v.wrapping_mul(10).wrapping_add(v >> 8);
    let v1 = (v & MASK).wrapping_mul(MUL1);
    let v2 = ((v >> 16) & MASK).wrapping_mul(MUL2);
    (v1.wrapping_add(v2) >> 32) as u32 as u64
}

#[inline]
fn load8(s: &[u8], i: usize) -> Option<u64> {
    let b: [u8; 8] = s.get(i..i + 8)?.try_into().ok()?;
    Some(u64::from_le_bytes(b))
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
    let neg = match s.first() {
        Some(b'-') => {
            i = 1;
            true
        }
        Some(b'+') => {
            i = 1;
            false
        }
        _ => false,
    };
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
        let eneg = match s.get(j) {
            Some(b'-') => {
                j += 1;
                true
            }
            Some(b'+') => {
                j += 1;
                false
            }
            _ => false,
        };
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
    Some((if neg { -v } else { v }, i))
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

    #[test]
    fn number_prefix() {
        assert_eq!(number_prefix_len(b"-12.5kcal"), 5);
        assert_eq!(number_prefix_len(b"1e-3,"), 4);
        assert_eq!(number_prefix_len(b"1e,"), 1);
        assert_eq!(number_prefix_len(b"abc"), 0);
        assert_eq!(number_prefix_len(b"-."), 0);
    }
}
