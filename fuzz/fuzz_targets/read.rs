//! Fuzz the Touchstone reader: no input may panic. The first byte picks the port count implied by the
//! file name (1..=8), so version 1 layouts of every size are reached; the rest is the file.
//!
//! Run from `fuzz/` (cargo-afl; DEVELOPERS.md, "How to test"): `cargo afl build --release`, then
//! `cargo afl fuzz -i seeds/read -o out/read -x dict/read.dict target/release/read`.

use std::path::PathBuf;

fn main() {
    afl::fuzz!(|data: &[u8]| {
        let Some((&first, rest)) = data.split_first() else {
            return;
        };
        let name = PathBuf::from(format!("fuzz.s{}p", 1 + first % 8));
        if let Ok(t) = coldtrace::touchstone::read_bytes(rest, &name) {
            // A file that reads must also write and read back.
            let opts = coldtrace::touchstone::WriteOptions {
                version: coldtrace::touchstone::WriteVersion::V2,
                ..Default::default()
            };
            if let Ok(text) = coldtrace::touchstone::write(&t.network, &opts) {
                coldtrace::touchstone::read_str(&text, &name).expect("written file reads back");
            }
        }
    });
}
