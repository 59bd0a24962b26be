//! `compare` of two 10001-point sweeps of the 12-element demo line (north-fridge/in-07, warm against cold
//! with a pin gap at J2), the whole job from files (read, align, detect, explain), beside `locate` of one
//! sweep and a single band-pass trace of the same sweep, so the ratios are measured in the same run.
//! The sweeps are simulated once, before timing, into a temporary folder.

use coldtrace::compare::job::{
    run_compare, run_locate, CompareJob, LineSource, LocateJob, SweepSource,
};
use coldtrace::compare::AnalysisConfig;
use coldtrace::line::{simulate, Fault, SimConfig, State};
use coldtrace::touchstone::{write_file, WriteOptions};
use coldtrace::transform::{trace, TracePlan, UniformLine};
use criterion::{criterion_group, criterion_main, Criterion};
use std::hint::black_box;
use std::path::{Path, PathBuf};

fn fixtures(dir: &Path) -> (PathBuf, PathBuf, PathBuf) {
    let line_path =
        Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-sweeps/north-fridge/in-07.toml");
    let line = coldtrace::line::file::read_file(&line_path).unwrap();
    let mut out = Vec::new();
    for (state, faults, seed, name) in [
        (State::Warm, vec![], 1, "warm.s1p"),
        (
            State::Cold,
            vec![Fault::parse("J2:gap=15um").unwrap()],
            2,
            "cold.s1p",
        ),
    ] {
        let mut cfg = SimConfig::linear(state, 0.5e9, 10e9, 10001);
        cfg.noise_db = Some(-85.0);
        cfg.seed = seed;
        cfg.faults = faults;
        let n = simulate(&line, &cfg).unwrap();
        let p = dir.join(name);
        write_file(&p, &n, &WriteOptions::default(), true, &[]).unwrap();
        out.push(p);
    }
    (line_path, out[0].clone(), out[1].clone())
}

fn bench(c: &mut Criterion) {
    let dir = tempfile::tempdir().unwrap();
    let (line, warm, cold) = fixtures(dir.path());
    let job = CompareJob {
        baseline: warm.clone(),
        current: cold.clone(),
        line: LineSource::File(line.clone()),
        baseline_state: Some(State::Warm),
        current_state: Some(State::Cold),
        analysis: AnalysisConfig::default(),
        source: SweepSource::default(),
    };
    let mut g = c.benchmark_group("compare-10001-points-12-elements");
    g.sample_size(20);
    g.bench_function("compare (states given)", |b| {
        b.iter(|| black_box(run_compare(&job).unwrap()))
    });
    let inferred = CompareJob {
        baseline_state: None,
        current_state: None,
        ..job.clone()
    };
    g.bench_function("compare (states inferred)", |b| {
        b.iter(|| black_box(run_compare(&inferred).unwrap()))
    });
    let loc = LocateJob {
        sweep: cold.clone(),
        line: LineSource::File(line),
        state: Some(State::Cold),
        analysis: AnalysisConfig::default(),
        source: SweepSource::default(),
    };
    g.bench_function("locate one sweep", |b| {
        b.iter(|| black_box(run_locate(&loc).unwrap()))
    });
    let n = coldtrace::touchstone::read_file(&cold).unwrap().network;
    let s11 = n.s11();
    let map = UniformLine::default();
    g.bench_function("one band-pass trace (reference)", |b| {
        b.iter(|| black_box(trace(&n.freqs_hz, &s11, &TracePlan::default(), &map).unwrap()))
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
