//! Fuzz the parser of quantities people type (`0.5GHz`, `1mm`, `0m..3m`): no text may panic, and what
//! parses is finite. The first byte picks the family.
//!
//! Run: `cargo +nightly fuzz run units fuzz/corpus/units fuzz/seeds/units -- -dict=fuzz/dict/units.dict`
//! from the crate root (needs cargo-fuzz; docs/reliability.md).

#![no_main]

use coldtrace::units::{parse, parse_range, Family};
use libfuzzer_sys::fuzz_target;

const FAMILIES: [Family; 6] = [
    Family::Frequency,
    Family::Length,
    Family::Time,
    Family::Resistance,
    Family::Capacitance,
    Family::Inductance,
];

fuzz_target!(|data: &[u8]| {
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
        assert!(a.is_finite() && b.is_finite() && a < b, "{text} -> {a}..{b}");
    }
});
