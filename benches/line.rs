//! Simulate the 12-element demo line (north-fridge/in-07) at 10001 points, warm and cold, beside a naive
//! path that rebuilds every section's temperature state at every frequency (what the block precompute
//! avoids), so the ratio is measured in the same run.

use coldtrace::line::abcd::{reflection, Abcd};
use coldtrace::line::physics::SectionState;
use coldtrace::line::position::slices;
use coldtrace::line::{simulate, ElementKind, Line, Load, SimConfig, State};
use criterion::{criterion_group, criterion_main, Criterion};
use num_complex::Complex64;
use std::hint::black_box;
use std::path::Path;

fn demo() -> Line {
    coldtrace::line::file::read_file(
        &Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/line/north-fridge-in-07.toml"),
    )
    .unwrap()
}

/// Naive: per frequency, walk the elements and recompute each slice's state.
fn naive(line: &Line, state: State, freqs: &[f64]) -> Vec<Complex64> {
    freqs
        .iter()
        .map(|&f| {
            let mut m = Abcd::IDENTITY;
            let mut end = Load::Match;
            for e in line.visible() {
                match &e.kind {
                    ElementKind::Cable { cable: k } | ElementKind::Connector { section: k, .. } => {
                        for s in slices(e, state, 0.0, e.length_m) {
                            let st = SectionState::new(k, s.t_k, line.ptfe_model);
                            let (g, z0) = st.gamma_z0(f);
                            m = m.then(&Abcd::line(z0, g, s.length_m * st.length_scale));
                        }
                    }
                    ElementKind::Attenuator {
                        loss_db,
                        impedance_ohm,
                        er,
                    } => {
                        let t = 10f64.powf(-loss_db / 20.0)
                            * Complex64::from_polar(
                                1.0,
                                -2.0 * std::f64::consts::PI * f * e.length_m * er.sqrt()
                                    / coldtrace::line::materials::C0,
                            );
                        let z = Complex64::new(0.0, 0.0);
                        m = m.then(&Abcd::from_s([z, t, t, z], *impedance_ohm));
                    }
                    ElementKind::Device { load } => end = *load,
                }
            }
            let zin = match end {
                Load::Open => m.input_impedance_open(),
                Load::Short => m.input_impedance_short(),
                Load::Ohms(r) => m.input_impedance(Complex64::new(r, 0.0)),
                _ => m.input_impedance(Complex64::new(line.impedance_ohm, 0.0)),
            };
            reflection(zin, line.impedance_ohm)
        })
        .collect()
}

fn bench(c: &mut Criterion) {
    let line = demo();
    let mut g = c.benchmark_group("simulate in-07 10001 points");
    g.sample_size(10);
    for state in [State::Warm, State::Cold] {
        let cfg = SimConfig::linear(state, 0.5e9, 10e9, 10001);
        g.bench_function(format!("{state:?} cascade"), |b| {
            b.iter(|| simulate(black_box(&line), black_box(&cfg)).unwrap())
        });
    }
    let cfg = SimConfig::linear(State::Cold, 0.5e9, 10e9, 1001);
    g.bench_function("Cold naive (1001 points)", |b| {
        b.iter(|| naive(black_box(&line), State::Cold, black_box(&cfg.freqs_hz)))
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
