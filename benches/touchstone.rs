//! Reading speed of the Touchstone reader on a 100k-point RI 1-port file generated in memory, beside a
//! plain baseline (split lines and whitespace, `str::parse::<f64>`), both as bytes per second; and the
//! streaming reader that `read_file` uses (`read_pieces`, pieces of `READ_PIECE_BYTES`) on the same text,
//! beside `read_bytes` (the whole text checked to be UTF-8, then parsed: what `read_file` did before).
//! Target: the reader at >= 200 MB/s on one core. Results: docs/performance.md (section touchstone).

use coldtrace::touchstone::{
    read_bytes, read_pieces, read_str, write, Format, WriteOptions, READ_PIECE_BYTES,
};
use coldtrace::Network;
use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use num_complex::Complex64 as C;
use std::hint::black_box;
use std::path::Path;

const POINTS: usize = 100_000;

/// A realistic instrument-like file: `# GHZ S RI R 50.0`, 9-decimal frequencies, 7-decimal values,
/// leading and trailing spaces (like the real cryostat sweeps in tests/data/real).
fn instrument_like() -> String {
    let mut s = String::with_capacity(POINTS * 45);
    s.push_str("! generated for the benchmark\n# GHZ S RI R 50.0\n");
    for k in 0..POINTS {
        let f = 0.001 + k as f64 * 0.0002;
        let (re, im) = (
            (k as f64 * 0.01).cos() * 0.9,
            (k as f64 * 0.01).sin() * -0.9,
        );
        s.push_str(&format!("  {f:12.9}  {re:11.7}  {im:11.7}  \n"));
    }
    s
}

/// The same network as the writer emits it (shortest round-trip exponent form).
fn written_by_us() -> String {
    let f: Vec<f64> = (0..POINTS).map(|k| 1e6 + k as f64 * 2e5).collect();
    let s: Vec<C> = (0..POINTS)
        .map(|k| C::from_polar(0.9, k as f64 * 0.01))
        .collect();
    let n = Network::one_port(f, s, 50.0);
    write(
        &n,
        &WriteOptions {
            format: Format::RI,
            ..Default::default()
        },
    )
    .unwrap()
}

/// Baseline: what a minimal reader does (no validation, no structure).
fn baseline(text: &str) -> f64 {
    let mut sum = 0.0;
    for line in text.lines() {
        let line = line.split('!').next().unwrap_or("");
        if line.trim_start().starts_with('#') {
            continue;
        }
        for tok in line.split_whitespace() {
            sum += tok.parse::<f64>().unwrap_or(0.0);
        }
    }
    sum
}

fn bench(c: &mut Criterion) {
    for (name, text) in [
        ("instrument-like", instrument_like()),
        ("written-by-coldtrace", written_by_us()),
    ] {
        let mut g = c.benchmark_group(format!("read-1port-100k-{name}"));
        g.throughput(Throughput::Bytes(text.len() as u64));
        g.bench_function("coldtrace-read_str", |b| {
            b.iter(|| read_str(black_box(&text), Path::new("bench.s1p")).unwrap())
        });
        g.bench_function("coldtrace-read_bytes", |b| {
            b.iter(|| read_bytes(black_box(text.as_bytes()), Path::new("bench.s1p")).unwrap())
        });
        g.bench_function("coldtrace-read_pieces", |b| {
            b.iter(|| {
                read_pieces(
                    black_box(text.as_bytes()),
                    Path::new("bench.s1p"),
                    u64::MAX,
                    READ_PIECE_BYTES,
                )
                .unwrap()
            })
        });
        g.bench_function("baseline-split-parse-f64", |b| {
            b.iter(|| baseline(black_box(&text)))
        });
        g.finish();
    }
}

criterion_group! {
    name = benches;
    config = Criterion::default().sample_size(20).measurement_time(std::time::Duration::from_secs(3));
    targets = bench
}
criterion_main!(benches);
