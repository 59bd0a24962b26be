//! Fuzz the fault grammar of `simulate --fault`: no specification may panic, and one that parses and fits
//! the demo line must simulate to finite values or be refused with a message.
//!
//! Run from `fuzz/` (cargo-afl; DEVELOPERS.md, "How to test"): `cargo afl build --release`, then
//! `cargo afl fuzz -i seeds/fault -o out/fault -x dict/fault.dict target/release/fault`.

use coldtrace::line::{file, simulate, Fault, SimConfig, State};
use std::path::Path;

/// The demo line the faults are placed on (invented demo data).
const LINE: &str = include_str!("../../tests/data/line/north-fridge-in-07.toml");

fn main() {
    afl::fuzz!(|data: &[u8]| {
        let Ok(spec) = std::str::from_utf8(data) else {
            return;
        };
        let Ok(fault) = Fault::parse(spec) else {
            return;
        };
        let line = file::parse(LINE, Path::new("in-07.toml")).expect("the demo line reads");
        let mut config = SimConfig::linear(State::Cold, 0.5e9, 10e9, 11);
        config.faults.push(fault);
        if let Ok(net) = simulate(&line, &config) {
            assert!(net.s.iter().all(|v| v.is_finite()), "not finite: {spec}");
        }
    });
}
