//! Fuzz the line-file reader: no input may panic, and a file that reads must simulate (warm and cold, a few
//! points) to finite values or be refused with a message.
//!
//! Run: `cargo +nightly fuzz run line_file fuzz/corpus/line_file fuzz/seeds/line_file -- -dict=fuzz/dict/line_file.dict`
//! from the crate root (needs cargo-fuzz; docs/reliability.md).

#![no_main]

use coldtrace::line::{file, simulate, SimConfig, State};
use libfuzzer_sys::fuzz_target;
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    let Ok(line) = file::parse(text, Path::new("fuzz.toml")) else {
        return;
    };
    for state in [State::Warm, State::Cold] {
        let config = SimConfig::linear(state, 0.5e9, 10e9, 11);
        if let Ok(net) = simulate(&line, &config) {
            assert!(net.s.iter().all(|v| v.is_finite()), "not finite:\n{text}");
        }
    }
});
