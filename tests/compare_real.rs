//! The comparator on real instrument data: the public CC0 cryostat sweeps in tests/data/real (see the
//! README there), treated as a line of unknown construction.

use coldtrace::compare::report::StateReport;
use coldtrace::compare::{
    compare, AnalysisConfig, ChainView, CompareReport, FaultKind, Severity, Sweep,
};
use coldtrace::touchstone::read_file;
use std::path::Path;

fn run(b: &str, c: &str, sb: &'static str, sc: &'static str) -> CompareReport {
    let nb = read_file(Path::new(&format!("tests/data/real/cryostat-a/{b}.s1p")))
        .unwrap()
        .network;
    let nc = read_file(Path::new(&format!("tests/data/real/cryostat-a/{c}.s1p")))
        .unwrap()
        .network;
    let chain = ChainView::uniform("cryostat-a", VF, 1.0, 50.0);
    compare(
        Sweep {
            name: b,
            network: &nb,
            state: sb,
        },
        Sweep {
            name: c,
            network: &nc,
            state: sc,
        },
        &chain,
        &AnalysisConfig::default(),
        coldtrace::compare::states::Hypothesis::of(sb.parse().unwrap(), sc.parse().unwrap()),
        StateReport::given(sb.parse().unwrap(), sc.parse().unwrap()),
    )
    .unwrap()
}

/// Velocity factor the tests read the line at (solid PTFE is about 0.695; the line's construction is not
/// published, so positions are metres of a uniform vf 0.7 line).
const VF: f64 = 0.7;

/// Round-trip times of two landmarks of these sweeps, warm: the vacuum feedthrough echo (about 4.07 ns) and
/// the switch termination (about 11.79 ns), as found by the independent direct-DFT estimator of
/// tests/line_real_sweeps.rs on the same files; as metres at `VF`.
fn metres(round_trip_s: f64) -> f64 {
    coldtrace::transform::C0_M_PER_S * VF * round_trip_s / 2.0
}

#[test]
fn open_against_short_of_one_cooldown_differs_only_at_the_far_end() {
    let r = run("3k/open", "3k/short", "cold", "cold");
    let end = metres(11.79e-9);
    // Nothing away from the far end is above info.
    for f in r.findings.iter().filter(|f| f.severity > Severity::Info) {
        assert!(
            (f.place.distance_m - end).abs() < 0.02,
            "a change away from the far end: {f:?}"
        );
    }
    // The far end was an open already: the line was cut there before, so its change to a short is the
    // top change but costs nothing new (an open or short that was one in the baseline is never a
    // new open or short).
    assert!(
        (r.findings[0].place.distance_m - end).abs() < 0.02,
        "the termination change must rank first: {:?}",
        r.findings[0]
    );
    assert_eq!(r.findings[0].zone, "far-end", "{:?}", r.findings[0]);
    // Open became short: the far end is explained as a short and ranked first.
    assert_eq!(r.findings[0].kind, FaultKind::Short, "{:?}", r.findings[0]);
    assert!(r.findings[0].phase_change_deg.abs() > 90.0);
    assert!(
        r.alignment.residual_m < 1e-3,
        "{:?}",
        r.alignment.residual_m
    );
}

#[test]
fn warm_against_cold_reports_the_in_cryostat_length_change_and_no_fault() {
    for t in ["short", "open"] {
        let r = run(&format!("295k/{t}"), &format!("3k/{t}"), "warm", "cold");
        assert!(
            r.findings.iter().all(|f| f.severity == Severity::Info),
            "{t}: {:?}",
            r.findings
                .iter()
                .filter(|f| f.severity > Severity::Info)
                .collect::<Vec<_>>()
        );
        assert!(
            r.alignment.residual_m < 1e-3,
            "{t}: {}",
            r.alignment.residual_m
        );
        // Feedthrough to termination: +0.321 % measured by the direct-DFT peak estimator on the short
        // (tests/line_real_sweeps.rs, MEASURED_TERMINATION_FRACTION); the alignment must agree to 0.05 %.
        let change = r
            .alignment
            .delay_change_between(metres(4.07e-9), metres(11.79e-9));
        assert!(
            (change - 0.003_209).abs() < 5e-4,
            "{t}: in-cryostat change {change}"
        );
    }
}
