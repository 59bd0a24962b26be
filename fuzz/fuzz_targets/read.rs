//! Fuzz the Touchstone reader: no input may panic. The first byte picks the port count implied by the
//! file name (1..=8, its low three bits), so version 1 layouts of every size are reached, and the size of
//! the pieces the streaming reader reads the same file in (its high five bits: 1 to 218 bytes); the rest is
//! the file. The streaming reader (`read_pieces`, what `read_file` uses) must agree with the whole-text
//! reader: both refuse the file, or both read the same network, header and warnings.
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
        let piece = 1 + 7 * (first >> 3) as usize;
        let whole = coldtrace::touchstone::read_bytes(rest, &name);
        let streamed = coldtrace::touchstone::read_pieces(rest, &name, u64::MAX, piece);
        match (&whole, &streamed) {
            (Ok(a), Ok(b)) => assert_eq!(a, b, "read in pieces of {piece} bytes"),
            (Err(_), Err(_)) => {}
            _ => panic!(
                "the readers disagree (pieces of {piece} bytes): whole {:?}, streamed {:?}",
                whole.as_ref().map(|_| ()),
                streamed.as_ref().map(|_| ())
            ),
        }
        if let Ok(t) = whole {
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
