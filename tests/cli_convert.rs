//! `convert` writes frequencies in their shortest exact form: `504.75` MHz, never `5.0475000000000006e2`,
//! and a conversion to another unit and back gives the file's own frequencies again.

#[path = "common/first_hour.rs"]
mod first_hour;

use first_hour::*;
use std::path::Path;

/// The first token of every data line.
fn freq_tokens(p: &Path) -> Vec<String> {
    std::fs::read_to_string(p)
        .unwrap()
        .lines()
        .filter(|l| !l.starts_with('!') && !l.starts_with('#') && !l.trim().is_empty())
        .map(|l| l.split_whitespace().next().unwrap().to_string())
        .collect()
}

fn convert(input: &Path, out: &Path, unit: &str) {
    let o = run(&["convert", s(input), "-o", s(out), "--unit", unit]);
    assert!(o.status.success(), "{}", stderr(&o));
}

#[test]
fn frequencies_are_written_short_and_come_back_as_written() {
    let dir = tempfile::tempdir().unwrap();
    // 0.50475 GHz and its neighbours are not binary fractions: 0.50475 * 1e9 is held as
    // 504750000.00000006 Hz, which divided by 1e6 is 504.75000000000006 (IEEE 754 binary64; checked with
    // CPython 3.11 floats: 0.50475*1e9/1e6).
    let ghz = ["0.5", "0.50475", "0.5095", "0.51425", "0.519", "1.7", "10"];
    let mut text = String::from("! invented values\n# GHz S RI R 50\n");
    for (k, f) in ghz.iter().enumerate() {
        text.push_str(&format!("{f} {} -{}\n", 0.01 * k as f64, 0.001 * k as f64));
    }
    let input = dir.path().join("in.s1p");
    std::fs::write(&input, &text).unwrap();
    let mhz = dir.path().join("mhz.s1p");
    convert(&input, &mhz, "MHz");
    assert_eq!(
        freq_tokens(&mhz),
        ["500", "504.75", "509.5", "514.25", "519", "1700", "10000"]
    );
    let hz = dir.path().join("hz.s1p");
    convert(&mhz, &hz, "Hz");
    assert_eq!(freq_tokens(&hz)[1], "504750000");
    let back = dir.path().join("back.s1p");
    convert(&hz, &back, "GHz");
    assert_eq!(freq_tokens(&back), ghz);
    // The values ride along untouched: RI is written in full (shortest round-trip form).
    let values = |p: &Path| -> Vec<String> {
        std::fs::read_to_string(p)
            .unwrap()
            .lines()
            .filter(|l| !l.starts_with('!') && !l.starts_with('#'))
            .flat_map(|l| {
                l.split_whitespace()
                    .skip(1)
                    .map(str::to_string)
                    .collect::<Vec<_>>()
            })
            .collect()
    };
    assert_eq!(values(&back), values(&mhz));
    // The shipped sample (GHz, a 4.75 MHz step, 504.75 MHz the second point) to MHz: every frequency a short decimal.
    let sample_mhz = dir.path().join("sample.s1p");
    convert(&sample("in-07-cold.s1p"), &sample_mhz, "MHz");
    let tokens = freq_tokens(&sample_mhz);
    assert_eq!(tokens[1], "504.75");
    assert!(
        tokens.iter().all(|t| t.len() <= 8),
        "{:?}",
        tokens.iter().filter(|t| t.len() > 8).collect::<Vec<_>>()
    );
}
