//! Fuzz the line-file reader: no input may panic, and a file that reads must simulate (warm and cold, a few
//! points) to finite values or be refused with a message.
//!
//! Run from `fuzz/` (cargo-afl; DEVELOPERS.md, "How to test"): `cargo afl build --release`, then
//! `cargo afl fuzz -i seeds/line_file -o out/line_file -x dict/line_file.dict target/release/line_file`.

use coldtrace::line::{file, simulate, SimConfig, State};
use std::path::Path;

fn main() {
    afl::fuzz!(|data: &[u8]| {
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
}
