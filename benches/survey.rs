//! `survey` of a fleet of line pairs (1601-point sweeps, 0.5-10 GHz, of the 12-element demo line
//! north-fridge/in-07, warm baseline against a cold current, every fourth pair with a pin gap at J2), the
//! whole job from the manifest (read, compare, rank) on two worker threads, beside one thread and reading
//! the same sweeps only, so the ratios are measured in the same run; then a fleet of 1000 such pairs, the
//! size the survey's target is stated for, on two threads. The sweeps are simulated once, before timing,
//! into `target/bench-survey/` and `target/bench-survey-1000/` (kept, so that `benches/survey_numpy.py` can
//! time its numpy pipeline on the very same files; docs/performance.md).

use coldtrace::compare::AnalysisConfig;
use coldtrace::line::{simulate, Fault, SimConfig, State};
use coldtrace::survey::{read_manifest, run_survey, SurveyConfig};
use coldtrace::touchstone::{read_file, write_file, WriteOptions};
use criterion::{criterion_group, criterion_main, Criterion};
use std::hint::black_box;
use std::path::{Path, PathBuf};

/// Line pairs in the small benched fleet, which also runs on one thread and beside reading only.
const PAIRS: usize = 40;
/// Line pairs in the fleet the target is stated for (docs/performance.md): timed on two threads only.
const FLEET_PAIRS: usize = 1000;
const POINTS: usize = 1601;

/// Simulate `pairs` line pairs into `target/<folder>/` (kept: `benches/survey_numpy.py` times its numpy
/// pipeline on the very same files) and write their manifest.
fn fixtures(folder: &str, pairs: usize) -> PathBuf {
    use rayon::prelude::*;
    let dir = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("target")
        .join(folder);
    std::fs::create_dir_all(&dir).unwrap();
    let line_path =
        Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-sweeps/north-fridge/in-07.toml");
    let line = coldtrace::line::file::read_file(&line_path).unwrap();
    let manifest: Vec<String> = (0..pairs)
        .into_par_iter()
        .map(|i| {
            let mut names = Vec::new();
            for (state, cold) in [(State::Warm, false), (State::Cold, true)] {
                let name = format!("pair{i:04}-{}.s1p", state.name());
                let mut cfg = SimConfig::linear(state, 0.5e9, 10e9, POINTS);
                cfg.noise_db = Some(-85.0);
                cfg.seed = 2 * i as u64 + cold as u64;
                if cold && i % 4 == 0 {
                    cfg.faults = vec![Fault::parse("J2:gap=15um").unwrap()];
                }
                let n = simulate(&line, &cfg).unwrap();
                write_file(&dir.join(&name), &n, &WriteOptions::default(), true, &[]).unwrap();
                names.push(name);
            }
            format!(
                "[[line]]\nline = {:?}\nbaseline = {:?}\ncurrent = {:?}\nbaseline_state = \"warm\"\ncurrent_state = \"cold\"\n\n",
                line_path, names[0], names[1]
            )
        })
        .collect();
    let m = dir.join("survey.toml");
    std::fs::write(&m, manifest.concat()).unwrap();
    m
}

fn bench(c: &mut Criterion) {
    let manifest = fixtures("bench-survey", PAIRS);
    let items = read_manifest(&manifest).unwrap();
    let cfg = SurveyConfig {
        jobs: Some(2),
        record_db: None,
        analysis: AnalysisConfig::default(),
    };
    let mut g = c.benchmark_group(format!("survey-{PAIRS}-pairs-{POINTS}-points"));
    g.sample_size(10);
    g.bench_function("survey, 2 threads", |b| {
        b.iter(|| black_box(run_survey(&items, &cfg, &|_| {}).unwrap()))
    });
    // The same on one thread: how the survey scales over the machine's two cores.
    let one = SurveyConfig {
        jobs: Some(1),
        ..cfg.clone()
    };
    g.bench_function("survey, 1 thread", |b| {
        b.iter(|| black_box(run_survey(&items, &one, &|_| {}).unwrap()))
    });
    g.bench_function("read the sweeps only, 1 thread", |b| {
        b.iter(|| {
            for it in &items {
                black_box(read_file(&it.baseline).unwrap());
                black_box(read_file(&it.current).unwrap());
            }
        })
    });
    g.finish();

    // The fleet the target is stated for, on the machine's two cores.
    let fleet = read_manifest(&fixtures("bench-survey-1000", FLEET_PAIRS)).unwrap();
    let mut g = c.benchmark_group(format!("survey-{FLEET_PAIRS}-pairs-{POINTS}-points"));
    g.sample_size(10);
    g.bench_function("survey, 2 threads", |b| {
        b.iter(|| black_box(run_survey(&fleet, &cfg, &|_| {}).unwrap()))
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
