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
        match bytes.iter().position(|&b| b == b'\n' || b == b'\r') {
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
    let b = token.as_bytes();
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
    let mut mantissa: u64 = 0;
    let mut digits = 0usize; // significant digits taken into `mantissa`
    let mut any_digit = false;
    let mut exp10: i64 = 0;
    let mut overflow = false;
    while i < b.len() && b[i].is_ascii_digit() {
        any_digit = true;
        accumulate(
            &mut mantissa,
            &mut digits,
            &mut overflow,
            &mut exp10,
            b[i],
            false,
        );
        i += 1;
    }
    if i < b.len() && b[i] == b'.' {
        i += 1;
        while i < b.len() && b[i].is_ascii_digit() {
            any_digit = true;
            accumulate(
                &mut mantissa,
                &mut digits,
                &mut overflow,
                &mut exp10,
                b[i],
                true,
            );
            i += 1;
        }
    }
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
    if i != b.len() {
        return None;
    }
    if !overflow && mantissa <= MAX_EXACT_MANTISSA && exp10.abs() <= 22 {
        let m = mantissa as f64;
        let v = if exp10 >= 0 {
            m * POW10[exp10 as usize]
        } else {
            m / POW10[(-exp10) as usize]
        };
        return Some(if negative { -v } else { v });
    }
    // Slow path: the grammar is already checked, and std accepts all of it.
    token.parse::<f64>().ok().filter(|v| v.is_finite())
}

#[inline]
fn accumulate(
    mantissa: &mut u64,
    digits: &mut usize,
    overflow: &mut bool,
    exp10: &mut i64,
    d: u8,
    fraction: bool,
) {
    if *mantissa == 0 && d == b'0' {
        // Leading zeros carry no significance.
        if fraction {
            *exp10 -= 1;
        }
        return;
    }
    if *digits < 19 {
        *mantissa = *mantissa * 10 + u64::from(d - b'0');
        *digits += 1;
        if fraction {
            *exp10 -= 1;
        }
    } else {
        *overflow = true;
        if !fraction {
            *exp10 += 1;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

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
            let want: f64 = t.parse().unwrap();
            assert_eq!(
                parse_number(t).map(f64::to_bits),
                Some(want.to_bits()),
                "{t}"
            );
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
                let want: f64 = t.parse().unwrap();
                assert_eq!(
                    parse_number(&t).map(f64::to_bits),
                    Some(want.to_bits()),
                    "{t}"
                );
            }
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
