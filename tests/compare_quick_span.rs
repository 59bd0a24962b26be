//! How far the state check's quick analyses read: with a line file, three times its warm round-trip delay
//! to the visible end (`states::quick_span`), never the whole alias-free record of a dense sweep, which
//! past the far end's first multiples holds only noise; without one, or for a visible line under ten
//! resolution cells, the whole record. On a line of our own (tests/data/compare/south-fridge-in-02.toml)
//! simulated by the forward model.

use coldtrace::compare::chain::Which;
use coldtrace::compare::job::decide_pair_states;
use coldtrace::compare::states::{line_models, quick_span, QUICK_SPAN_LINES, QUICK_SPAN_MIN_CELLS};
use coldtrace::compare::{AnalysisConfig, ChainView};
use coldtrace::line::{simulate, Line, SimConfig, State};
use coldtrace::transform::TraceEngine;
use std::path::Path;

fn line() -> Line {
    coldtrace::line::file::read_file(Path::new("tests/data/compare/south-fridge-in-02.toml"))
        .unwrap()
}

#[test]
fn the_span_is_three_warm_round_trips_to_the_visible_end() {
    let l = line();
    let (lo, hi) = (0.5e9, 10e9);
    let warm = ChainView::from_line(&l, State::Warm, State::Warm, lo, hi, 0.5 * (lo + hi));
    let t_end = warm.delay_to(warm.visible_end_m(), Which::Baseline, None);
    assert!(t_end > 0.0);
    let span =
        quick_span(&line_models(&l, lo, hi), lo, hi).expect("a line of metres spans many cells");
    assert_eq!(span.to_bits(), (QUICK_SPAN_LINES * t_end).to_bits());
    // A band so narrow that the visible line is under QUICK_SPAN_MIN_CELLS cells: the whole record.
    let narrow = (QUICK_SPAN_MIN_CELLS / span) * 0.5;
    assert_eq!(
        quick_span(&line_models(&l, lo, lo + narrow), lo, lo + narrow),
        None
    );
}

#[test]
fn a_dense_cooldown_is_still_read_warm_to_cold() {
    // 8001 points over 0.5-10 GHz: an alias-free record of 842 ns, many times the line's round trip, of
    // which the quick analyses read three round trips. The pair's states come out as they are.
    let l = line();
    let sweep = |state: State, seed: u64| {
        let mut sim = SimConfig::linear(state, 0.5e9, 10e9, 8001);
        sim.noise_db = Some(-90.0);
        sim.seed = seed;
        simulate(&l, &sim).unwrap()
    };
    let (w, c) = (sweep(State::Warm, 1), sweep(State::Cold, 2));
    let alias = 8000.0 / 9.5e9;
    let span = quick_span(&line_models(&l, 0.5e9, 10e9), 0.5e9, 10e9).unwrap();
    assert!(span < 0.5 * alias, "span {span} of {alias}");
    let mut engine = TraceEngine::new();
    let (report, _) = decide_pair_states(
        &w,
        &c,
        Some(&l),
        (None, None),
        &AnalysisConfig::default(),
        &mut engine,
    )
    .unwrap();
    assert_eq!(
        (report.baseline, report.current),
        ("warm", "cold"),
        "{report:?}"
    );
    assert!(!report.signatures.is_empty());
}
