//! Lines and numbers: the hand-written fast path of the reader.
//!
//! The structure of a file (option line, keywords) is parsed with nom in `options.rs` and `keywords.rs`;
//! the data section, which is nearly all of a file's bytes, is split here into lines and numbers without
//! allocating. Numbers are parsed with Clinger's fast path (W. D. Clinger, "How to read floating point numbers
//! accurately", PLDI 1990): a decimal mantissa below 2^53 and a power of ten up to 10^22 are both exact in
//! binary64, so one multiplication or division gives the correctly rounded result. Everything else falls back
//! to `str::parse::<f64>`, which is correctly rounded too, so both paths agree bit for bit.

/// One physical line of a file: its 1-based number and its text without the line end.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Line<'a> {
    pub number: usize,
    pub text: &'a str,
}

/// Splits text at LF, CRLF and CR (Touchstone 2.0, section "Rules for Version 2.0 files" allows each as a
/// line end; section number from memory).
pub(crate) struct Lines<'a> {
    rest: &'a str,
    number: usize,
    done: bool,
}

impl<'a> Lines<'a> {
    pub fn new(text: &'a str) -> Self {
        Lines {
            rest: text,
            number: 0,
            done: text.is_empty(),
        }
    }
}

impl<'a> Iterator for Lines<'a> {
    type Item = Line<'a>;

    fn next(&mut self) -> Option<Line<'a>> {
        if self.done {
            return None;
        }
        self.number += 1;
        let bytes = self.rest.as_bytes();
        match memchr::memchr2(b'\n', b'\r', bytes) {
            Some(i) => {
                let text = &self.rest[..i];
                let skip = if bytes[i] == b'\r' && bytes.get(i + 1) == Some(&b'\n') {
                    2
                } else {
                    1
                };
                self.rest = &self.rest[i + skip..];
                if self.rest.is_empty() {
                    self.done = true;
                }
                Some(Line {
                    number: self.number,
                    text,
                })
            }
            None => {
                self.done = true;
                Some(Line {
                    number: self.number,
                    text: self.rest,
                })
            }
        }
    }
}

/// The part of a line before its comment (`!` starts a comment anywhere on a line).
pub(crate) fn strip_comment(text: &str) -> (&str, Option<&str>) {
    match text.as_bytes().iter().position(|&b| b == b'!') {
        Some(i) => (&text[..i], Some(&text[i + 1..])),
        None => (text, None),
    }
}

/// Whitespace between tokens: space and TAB (other control characters are rejected earlier).
#[inline]
pub(crate) fn is_space(b: u8) -> bool {
    b == b' ' || b == b'\t'
}

/// Iterates over whitespace-separated tokens of a comment-free line, with their 0-based byte offsets.
pub(crate) struct Tokens<'a> {
    text: &'a str,
    pos: usize,
}

impl<'a> Tokens<'a> {
    pub fn new(text: &'a str) -> Self {
        Tokens { text, pos: 0 }
    }
}

impl<'a> Iterator for Tokens<'a> {
    type Item = (usize, &'a str);

    #[inline]
    fn next(&mut self) -> Option<(usize, &'a str)> {
        let b = self.text.as_bytes();
        let mut i = self.pos;
        while i < b.len() && is_space(b[i]) {
            i += 1;
        }
        if i == b.len() {
            self.pos = i;
            return None;
        }
        let start = i;
        while i < b.len() && !is_space(b[i]) {
            i += 1;
        }
        self.pos = i;
        Some((start, &self.text[start..i]))
    }
}

/// Powers of ten that u64 holds (10^0 ..= 10^19).
const POW10_U64: [u64; 20] = {
    let mut t = [1u64; 20];
    let mut i = 1;
    while i < 20 {
        t[i] = t[i - 1] * 10;
        i += 1;
    }
    t
};

/// Largest k for which [`exact_wide`] divides by 10^k: 10^21 < 2^70, so a dividend whose top bit is bit
/// 127 leaves a quotient of at least 58 bits, room for the 53 kept, the rounding bit and a sticky bit
/// below them.
const MAX_WIDE_DIVISOR_EXP: i64 = 21;

/// `mantissa` x 10^`exp10`, correctly rounded (to nearest, ties to even), by exact integer arithmetic, for
/// the numbers the fast path leaves: mantissas of 16 to 19 digits (over 2^53, as shortest round-trip
/// output writes them) with 0 <= exp10 <= 19 or -21 <= exp10 < 0. `None` outside that range.
///
/// Method: a product mantissa x 10^e (e <= 19) is exact in u128, and u128 -> f64 rounds to nearest, ties
/// to even (the Rust reference, "Numeric cast"). A quotient mantissa / 10^k: the mantissa shifted left by
/// s until bit 127 is set, q = floor(m 2^s / 10^k) and r its remainder; q has at least 58 bits, so setting
/// its lowest bit where r != 0 (a sticky bit, below the rounding bit) makes the rounding of q to 53 bits
/// that of the exact quotient (the guard, round and sticky argument of IEEE 754 rounding; D. Goldberg,
/// "What every computer scientist should know about floating-point arithmetic", ACM Computing Surveys
/// 23(1), 1991, from memory); the scaling by 2^-s is exact (the result lies far from the subnormals).
#[inline]
fn exact_wide(mantissa: u64, exp10: i64) -> Option<f64> {
    if mantissa == 0 {
        return Some(0.0);
    }
    if (0..=19).contains(&exp10) {
        let p = u128::from(mantissa) * u128::from(POW10_U64[exp10 as usize]);
        return Some(p as f64);
    }
    if (-MAX_WIDE_DIVISOR_EXP..0).contains(&exp10) {
        let d = 10u128.pow((-exp10) as u32);
        let s = u128::from(mantissa).leading_zeros();
        let n = u128::from(mantissa) << s;
        let (q, r) = (n / d, n % d);
        let t = q | u128::from(r != 0);
        // 2^-s as binary64 (s is 64..=127: a normal number).
        let scale = f64::from_bits(u64::from(1023 - s) << 52);
        return Some(t as f64 * scale);
    }
    None
}

/// Exact powers of ten in binary64 (10^0 ..= 10^22).
const POW10: [f64; 23] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
    1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
];

/// Largest mantissa that binary64 holds exactly: 2^53.
const MAX_EXACT_MANTISSA: u64 = 1 << 53;

/// Parse a decimal number `[+-]digits[.digits][(e|E)[+-]digits]` (at least one mantissa digit; `1.` and
/// `.5` allowed). Returns `None` for anything else, including `inf` and `nan`, which Touchstone does not
/// allow.
#[inline]
pub(crate) fn parse_number(token: &str) -> Option<f64> {
    match parse_number_prefix(token.as_bytes()) {
        Some((v, len)) if len == token.len() => Some(v),
        _ => None,
    }
}

/// Parse the longest number at the start of `b`: its value and how many bytes it took. `None` when `b`
/// does not start with a number (or an exponent marker has no digits).
#[inline(always)]
pub(crate) fn parse_number_prefix(b: &[u8]) -> Option<(f64, usize)> {
    let mut i = 0;
    let negative = match b.first() {
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
    // Every digit goes into `mantissa`, leading zeros included; more than 19 digits (which could overflow
    // u64) leave the fast path.
    let mut mantissa: u64 = 0;
    let int_start = i;
    i = digits_into(b, i, &mut mantissa);
    let mut digits = i - int_start;
    let mut exp10: i64 = 0;
    if i < b.len() && b[i] == b'.' {
        i += 1;
        let frac_start = i;
        i = digits_into(b, i, &mut mantissa);
        let frac = i - frac_start;
        digits += frac;
        exp10 = -(frac as i64);
    }
    let any_digit = digits > 0;
    let overflow = digits > 19;
    if !any_digit {
        return None;
    }
    if i < b.len() && (b[i] == b'e' || b[i] == b'E') {
        i += 1;
        let mut eneg = false;
        if i < b.len() && (b[i] == b'+' || b[i] == b'-') {
            eneg = b[i] == b'-';
            i += 1;
        }
        let start = i;
        let mut e: i64 = 0;
        while i < b.len() && b[i].is_ascii_digit() {
            e = (e * 10 + i64::from(b[i] - b'0')).min(1 << 40);
            i += 1;
        }
        if i == start {
            return None;
        }
        exp10 += if eneg { -e } else { e };
    }
    if !overflow && mantissa <= MAX_EXACT_MANTISSA && exp10.abs() <= 22 {
        let m = mantissa as f64;
        let v = if exp10 >= 0 {
            m * POW10[exp10 as usize]
        } else {
            m / POW10[(-exp10) as usize]
        };
        return Some((if negative { -v } else { v }, i));
    }
    if !overflow {
        if let Some(v) = exact_wide(mantissa, exp10) {
            return Some((if negative { -v } else { v }, i));
        }
    }
    // Slow path: the grammar is already checked (ASCII only), and std accepts all of it.
    let text = std::str::from_utf8(&b[..i]).ok()?;
    let v = text.parse::<f64>().ok().filter(|v| v.is_finite())?;
    Some((v, i))
}

/// The fast path for a data line: numbers separated by spaces or tabs, up to the end of the line. Fills
/// `vals` and `cols` (1-based byte columns) and returns true when the line is exactly that (no comment)
/// and holds at least one number; false sends the line to the general path, which also produces the precise error.
#[inline]
pub(crate) fn lex_data_line(b: &[u8], vals: &mut Vec<f64>, cols: &mut Vec<u32>) -> bool {
    vals.clear();
    cols.clear();
    let mut i = 0;
    loop {
        while i < b.len() && is_space(b[i]) {
            i += 1;
        }
        if i == b.len() {
            return !vals.is_empty();
        }
        if b[i] == b'!' {
            // Comments go through the general path, which also checks them for control characters.
            return false;
        }
        match parse_number_prefix(&b[i..]) {
            Some((v, len)) => {
                let j = i + len;
                if j < b.len() && !is_space(b[j]) && b[j] != b'!' {
                    return false;
                }
                vals.push(v);
                cols.push((i + 1) as u32);
                i = j;
            }
            None => return false,
        }
    }
}

/// Append the decimal digits starting at `i` to `m` (wrapping: the caller checks the digit count) and
/// return the index after them. Eight digits at a time where possible (the SWAR method of D. Lemire,
/// "Number parsing at a gigabyte per second", Software: Practice and Experience 51(8), 2021).
#[inline(always)]
fn digits_into(b: &[u8], mut i: usize, m: &mut u64) -> usize {
    while let Some(chunk) = b.get(i..i + 8) {
        let mut bytes = [0u8; 8];
        bytes.copy_from_slice(chunk);
        let v = u64::from_le_bytes(bytes);
        if !is_eight_digits(v) {
            break;
        }
        *m = m
            .wrapping_mul(100_000_000)
            .wrapping_add(eight_digits_value(v));
        i += 8;
    }
    while let Some(&c) = b.get(i) {
        let d = c.wrapping_sub(b'0');
        if d >= 10 {
            break;
        }
        *m = m.wrapping_mul(10).wrapping_add(u64::from(d));
        i += 1;
    }
    i
}

/// All eight bytes (little-endian in `v`) are ASCII digits.
#[inline]
fn is_eight_digits(v: u64) -> bool {
    let a = v.wrapping_add(0x4646_4646_4646_4646);
    let b = v.wrapping_sub(0x3030_3030_3030_3030);
    (a | b) & 0x8080_8080_8080_8080 == 0
}

/// The value of eight ASCII digits, the first in the lowest byte.
#[inline]
fn eight_digits_value(v: u64) -> u64 {
    const MASK: u64 = 0x0000_00FF_0000_00FF;
    const MUL1: u64 = 0x000F_4240_0000_0064; // 100 + (1_000_000 << 32)
    const MUL2: u64 = 0x0000_2710_0000_0001; // 1 + (10_000 << 32)
    let mut v = v.wrapping_sub(0x3030_3030_3030_3030);
    v = v.wrapping_mul(10).wrapping_add(v >> 8);
    (((v & MASK).wrapping_mul(MUL1)).wrapping_add(((v >> 16) & MASK).wrapping_mul(MUL2))) >> 32
}

#[cfg(test)]
mod tests {
    use super::*;

    /// `parse_number` gives std's correctly rounded value for `t`, bit for bit.
    fn agrees_with_std(t: &str) {
        let want: f64 = t.parse().unwrap();
        assert_eq!(
            parse_number(t).map(f64::to_bits),
            Some(want.to_bits()),
            "{t}"
        );
    }

    #[test]
    fn fast_path_agrees_with_std() {
        for t in [
            "0",
            "-0",
            "1",
            "+1.5",
            "1.",
            ".5",
            "-9.99999996e-01",
            "1e22",
            "1e23",
            "123456789012345678901",
            "0.000000000000000000000001",
            "20.000000000",
            "1E-300",
            "4.9e-324",
            "17976931348623157e292",
            "0.1",
            "0.2",
            "0.3",
            "2.2250738585072014e-308",
            "9007199254740993",
            "1.0286000",
        ] {
            agrees_with_std(t);
        }
        for bad in [
            "", "-", ".", "e5", "1e", "1e+", "inf", "nan", "1.2.3", "1,5", "0x10", "1e400",
        ] {
            assert_eq!(parse_number(bad), None, "{bad}");
        }
    }

    #[test]
    fn seeded_random_numbers_agree_with_std() {
        // xorshift64 (Marsaglia 2003), seeded: reproducible without a dependency.
        let mut x: u64 = 0x9E37_79B9_7F4A_7C15;
        for _ in 0..20_000 {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            let v = f64::from_bits(x >> 2) * if x & 1 == 0 { 1.0 } else { -1.0 };
            if !v.is_finite() {
                continue;
            }
            for t in [
                format!("{v:e}"),
                format!("{v:.9e}"),
                format!("{:.7}", v.rem_euclid(100.0)),
            ] {
                agrees_with_std(&t);
            }
        }
    }

    #[test]
    fn wide_mantissas_agree_with_std() {
        // Mantissas of 16 to 19 digits (over 2^53: the exact-integer path) at every exponent it takes and
        // a few beyond (std's path), against std's correctly rounded parse. xorshift64 (Marsaglia 2003).
        let mut x: u64 = 0x2545_F491_4F6C_DD1D;
        let mut next = || {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            x
        };
        for _ in 0..40_000 {
            let digits = 16 + (next() % 4) as u32;
            let m = next() % 10u64.pow(digits - 1) * 9 + 10u64.pow(digits - 1);
            let m = m.min(10u64.pow(digits) - 1);
            let e = (next() % 60) as i64 - 30;
            for t in [
                format!("{m}e{e}"),
                format!("-{m}E{e}"),
                format!("{}.{}e{e}", m / 10, m % 10),
            ] {
                agrees_with_std(&t);
            }
        }
        // Halfway cases and their neighbours: 2^53 + 1 (exactly half an ulp over 2^53) and friends,
        // scaled by powers of ten so that the quotient path sees them.
        for t in [
            "9007199254740993",
            "9007199254740995",
            "90071992547409930e-1",
            "9007199254740993000e-3",
            "9007199254740992999e-3",
            "9007199254740993001e-3",
            "18014398509481985",
            "1.8014398509481985e-5",
            "1.7976931348623157e19",
            "9999999999999999999e-21",
            "1000000000000000001e-21",
        ] {
            agrees_with_std(t);
        }
    }

    #[test]
    fn data_line_fast_path() {
        let (mut v, mut c) = (Vec::new(), Vec::new());
        assert!(lex_data_line(b"  1.5\t-2e3 +.5  ", &mut v, &mut c));
        assert_eq!(
            (v.as_slice(), c.as_slice()),
            (&[1.5, -2e3, 0.5][..], &[3, 7, 12][..])
        );
        for other in [
            &b"1 2x"[..],
            b"1 2 ! note",
            b"",
            b"  ! only",
            b"# GHz",
            b"1 \x00",
            b"[End]",
            b"1e",
        ] {
            assert!(!lex_data_line(other, &mut v, &mut c), "{other:?}");
        }
    }

    #[test]
    fn line_ends_lf_crlf_cr() {
        let lines: Vec<_> = Lines::new("a\r\nb\rc\nd")
            .map(|l| (l.number, l.text))
            .collect();
        assert_eq!(lines, vec![(1, "a"), (2, "b"), (3, "c"), (4, "d")]);
        assert_eq!(Lines::new("a\n").count(), 1);
        assert_eq!(Lines::new("").count(), 0);
    }
}
