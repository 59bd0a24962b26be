//! Fuzz the parser of quantities people type (`0.5GHz`, `1mm`, `0m..3m`): no text may panic, and what
//! parses is finite. The first byte picks the family.
//!
//! Run from `fuzz/` (cargo-afl; DEVELOPERS.md, "How to test"): `cargo afl build --release`, then
//! `cargo afl fuzz -i seeds/units -o out/units -x dict/units.dict target/release/units`.

use coldtrace::units::{parse, parse_range, Family};

const FAMILIES: [Family; 6] = [
    Family::Frequency,
    Family::Length,
    Family::Time,
    Family::Resistance,
    Family::Capacitance,
    Family::Inductance,
];

fn main() {
    afl::fuzz!(|data: &[u8]| {
        let Some((&first, rest)) = data.split_first() else {
            return;
        };
        let Ok(text) = std::str::from_utf8(rest) else {
            return;
        };
        let family = FAMILIES[first as usize % FAMILIES.len()];
        if let Ok(v) = parse(text, family) {
            assert!(v.is_finite(), "{text} -> {v}");
        }
        if let Ok((a, b)) = parse_range(text, family) {
            assert!(
                a.is_finite() && b.is_finite() && a < b,
                "{text} -> {a}..{b}"
            );
        }
    });
}
