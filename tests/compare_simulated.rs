//! The comparator against the forward simulator (an exact ABCD cascade built independently of the
//! time-domain code), on a test chain of our own (tests/data/compare/south-fridge-in-02.toml).

use coldtrace::compare::report::StateReport;
use coldtrace::compare::{
    compare, AnalysisConfig, ChainView, CompareReport, FaultKind, Severity, Sweep,
};
use coldtrace::line::{simulate, Fault, Line, SimConfig, State};
use std::path::Path;

fn line() -> Line {
    coldtrace::line::file::read_file(Path::new("tests/data/compare/south-fridge-in-02.toml"))
        .unwrap()
}

fn sim(line: &Line, state: State, faults: &[&str], seed: u64) -> coldtrace::Network {
    let mut cfg = SimConfig::linear(state, 0.5e9, 10e9, 4001);
    cfg.noise_db = Some(-90.0);
    cfg.seed = seed;
    cfg.faults = faults.iter().map(|f| Fault::parse(f).unwrap()).collect();
    simulate(line, &cfg).unwrap()
}

fn run(
    line: &Line,
    b: State,
    c: State,
    base: &coldtrace::Network,
    cur: &coldtrace::Network,
) -> CompareReport {
    let chain = ChainView::from_line(line, b, c, 0.5e9, 10e9, 5e9);
    let name = |s: State| if s == State::Warm { "warm" } else { "cold" };
    compare(
        Sweep {
            name: "baseline",
            network: base,
            state: name(b),
        },
        Sweep {
            name: "current",
            network: cur,
            state: name(c),
        },
        &chain,
        &AnalysisConfig::default(),
        StateReport {
            baseline: name(b),
            current: name(c),
            inferred: false,
            basis: "given".into(),
        },
    )
    .unwrap()
}

#[test]
fn cold_pin_gap_behind_stainless_is_ranked_first_at_its_connector() {
    let l = line();
    let base = sim(&l, State::Warm, &[], 1);
    let cur = sim(&l, State::Cold, &["J3:gap=300fF"], 2);
    let r = run(&l, State::Warm, State::Cold, &base, &cur);
    eprintln!("{}", serde_json::to_string_pretty(&r).unwrap());
    let top = &r.findings[0];
    assert_eq!(
        top.place.nearest_connector.as_deref(),
        Some("J3"),
        "{top:?}"
    );
    assert_eq!(top.kind, FaultKind::PinGap, "{top:?}");
    assert!(top.severity >= Severity::Minor, "{top:?}");
    assert!(r.alignment.residual_m < 1e-3, "{:?}", r.alignment);
}

#[test]
fn healthy_line_warm_to_cold_has_nothing_above_info() {
    let l = line();
    let base = sim(&l, State::Warm, &[], 11);
    let cur = sim(&l, State::Cold, &[], 12);
    let r = run(&l, State::Warm, State::Cold, &base, &cur);
    eprintln!("{}", serde_json::to_string_pretty(&r).unwrap());
    assert!(
        r.findings.iter().all(|f| f.severity == Severity::Info),
        "{:?}",
        r.findings
    );
}
