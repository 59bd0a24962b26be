//! The trend rule against the simulator (tests/trend): degrading connectors warn at least two cooldowns
//! before their finding reaches major, and lines whose connectors are only re-made never warn. A
//! fixed-seed subset of `examples/trend_accuracy.rs`, which measures the figures of docs/accuracy.md
//! (replay a line with `cargo run --release --example trend_accuracy -- --show SEED:KIND`).

mod trend;

use coldtrace::history::TrendRule;
use std::sync::OnceLock;
use trend::{run_all, Degradation, LineRun};

/// 4 gaps, 2 contacts, 4 healthy lines of 20 cooldowns (about 20 s in the test profile on two cores).
fn runs() -> &'static [LineRun] {
    static RUNS: OnceLock<Vec<LineRun>> = OnceLock::new();
    RUNS.get_or_init(|| {
        let mut jobs: Vec<(u64, Option<Degradation>)> = (0..4)
            .map(|i| (9_000 + i, Some(Degradation::Gap)))
            .collect();
        jobs.extend((0..2).map(|i| (9_100 + i, Some(Degradation::Contact))));
        jobs.extend((0..4).map(|i| (9_500 + i, None)));
        let threads = std::thread::available_parallelism().map_or(1, |n| n.get());
        run_all(&jobs, &TrendRule::default(), threads)
    })
}

fn failures(pred: impl Fn(&LineRun) -> bool) -> Vec<String> {
    runs()
        .iter()
        .filter(|r| pred(r))
        .map(LineRun::describe)
        .collect()
}

#[test]
fn opening_gaps_warn_two_cooldowns_before_major() {
    let bad = failures(|r| {
        r.degradation == Some(Degradation::Gap)
            && (r.first_major.is_none() || r.lead().map_or(true, |l| l < 2))
    });
    assert!(bad.is_empty(), "{bad:#?}");
}

#[test]
fn growing_contacts_warn() {
    // A 5 ohm contact costs about 0.4 dB (rho = R / (2 Z0 + R), |S21| = 1 - rho: circuit theory), so it
    // never reaches major; the rule must still see it climb before the run ends.
    let bad =
        failures(|r| r.degradation == Some(Degradation::Contact) && r.first_warning.is_none());
    assert!(bad.is_empty(), "{bad:#?}");
}

#[test]
fn remade_connectors_do_not_warn() {
    let bad = failures(|r| r.degradation.is_none() && !r.false_warnings.is_empty());
    assert!(bad.is_empty(), "{bad:#?}");
    // Nor does a degrading line's other connector, before its fault reaches major.
    let bad = failures(|r| {
        r.false_warnings
            .iter()
            .any(|(k, _)| r.first_major.map_or(true, |m| *k < m))
            && r.degradation.is_some()
    });
    assert!(bad.is_empty(), "{bad:#?}");
}
