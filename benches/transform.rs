//! Transform speed: band-pass FFT trace and chirp-z zoom of a 10001-point sweep, each beside the direct DFT
//! sum on fewer output bins (so the per-bin ratio is measured in the same run).

use coldtrace::transform::{FftCache, TraceEngine, TracePlan, UniformLine, Window};
use criterion::{criterion_group, criterion_main, Criterion};
use num_complex::Complex64;
use std::f64::consts::PI;
use std::hint::black_box;

const N: usize = 10001;

fn sweep() -> (Vec<f64>, Vec<Complex64>) {
    let freqs: Vec<f64> = (0..N).map(|k| 1e6 + k as f64 * 2e6).collect();
    let values = freqs
        .iter()
        .map(|&f| {
            Complex64::from_polar(0.5, -2.0 * PI * f * 11e-9)
                + Complex64::from_polar(0.05, -2.0 * PI * f * 37e-9)
        })
        .collect();
    (freqs, values)
}

/// Direct sum h(t) = sum W G e^{+j 2 pi f t} at `times`.
fn direct(freqs: &[f64], wg: &[Complex64], times: &[f64]) -> Vec<Complex64> {
    times
        .iter()
        .map(|&t| {
            freqs
                .iter()
                .zip(wg)
                .map(|(f, x)| {
                    let ph = 2.0 * PI * f * t;
                    x * Complex64::new(ph.cos(), ph.sin())
                })
                .sum()
        })
        .collect()
}

fn bench(c: &mut Criterion) {
    let (freqs, values) = sweep();
    let map = UniformLine::new(0.695).unwrap();
    let plan = TracePlan {
        padding: 8,
        ..TracePlan::default()
    };
    let mut engine = TraceEngine::new();
    engine.trace(&freqs, &values, &plan, &map).unwrap();
    c.bench_function("band-pass trace, 10001 points, 8x padding (FFT)", |b| {
        b.iter(|| black_box(engine.trace(&freqs, &values, &plan, &map).unwrap()))
    });
    c.bench_function(
        "band-pass trace, 10001 points, 8x padding (FFT), recycled buffers",
        |b| {
            b.iter(|| {
                let t = engine.trace(&freqs, &values, &plan, &map).unwrap();
                black_box(t.values[7]);
                engine.recycle(t);
            })
        },
    );

    // The bare inverse FFT the whole-range trace runs (length fast(8 x 10001) = 81000), for the overhead ratio.
    let len = coldtrace::transform::czt::fast_len(8 * N);
    let ifft = FftCache::new().inverse(len);
    let mut buf = vec![Complex64::new(0.0, 0.0); len];
    c.bench_function("bare inverse FFT, 81000 points", |b| {
        b.iter(|| {
            buf[..N].copy_from_slice(&values);
            buf[N..]
                .iter_mut()
                .for_each(|v| *v = Complex64::new(0.0, 0.0));
            ifft.process(&mut buf);
            black_box(buf[1])
        })
    });

    let w = Window::Kaiser { beta: 6.0 }.coefficients(N);
    let wg: Vec<Complex64> = values.iter().zip(&w).map(|(v, w)| v * *w).collect();
    let mut cache = FftCache::new();
    let m = 4096;
    let (t0, dt) = (5e-9, 10e-9 / m as f64);
    let czt = cache.chirp_z(N, m, 2e6 * t0, 2e6 * dt);
    c.bench_function("chirp-z zoom, 10001 points -> 4096 bins", |b| {
        b.iter(|| black_box(czt.process(&wg)))
    });
    let span_plan = TracePlan {
        span_m: Some((0.5, 1.5)),
        step_m: Some(1.0 / 4095.0),
        ..TracePlan::default()
    };
    engine.trace(&freqs, &values, &span_plan, &map).unwrap();
    c.bench_function(
        "band-pass trace with span, 10001 points -> 4096 bins (chirp-z)",
        |b| b.iter(|| black_box(engine.trace(&freqs, &values, &span_plan, &map).unwrap())),
    );
    let few: Vec<f64> = (0..64).map(|k| t0 + k as f64 * dt).collect();
    c.bench_function("direct DFT sum, 10001 points -> 64 bins", |b| {
        b.iter(|| black_box(direct(&freqs, &wg, &few)))
    });
}

criterion_group! {
    name = benches;
    config = Criterion::default()
        .sample_size(20)
        .warm_up_time(std::time::Duration::from_millis(500))
        .measurement_time(std::time::Duration::from_secs(2));
    targets = bench
}
criterion_main!(benches);
