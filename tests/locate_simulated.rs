//! `locate` against the forward simulator: connectors of a mixed chain found where they were built, warm
//! and cold, and a known reflection behind lossy line and an attenuator read at its own level once the
//! modelled loss and dispersion are undone.

use coldtrace::compare::report::LocateReport;
use coldtrace::compare::{locate, AnalysisConfig, ChainView, Sweep};
use coldtrace::line::{simulate, Fault, Line, SimConfig, State};
use std::path::Path;

fn read(name: &str) -> Line {
    coldtrace::line::file::read_file(Path::new(&format!("tests/data/compare/{name}"))).unwrap()
}

fn run(line: &Line, state: State, faults: &[&str], seed: u64) -> LocateReport {
    let mut cfg = SimConfig::linear(state, 0.5e9, 12e9, 4001);
    cfg.noise_db = Some(-95.0);
    cfg.seed = seed;
    cfg.faults = faults.iter().map(|f| Fault::parse(f).unwrap()).collect();
    let n = simulate(line, &cfg).unwrap();
    let chain = ChainView::from_line(line, state, state, 0.5e9, 12e9, 6.25e9);
    locate(
        Sweep {
            name: "sim",
            network: &n,
            state: "",
        },
        &chain,
        &AnalysisConfig::default(),
    )
    .unwrap()
}

#[test]
fn every_connector_of_a_mixed_chain_within_3_mm_warm_and_cold() {
    let line = read("mixed-chain.toml");
    for (state, seed) in [(State::Warm, 5), (State::Cold, 6)] {
        let r = run(&line, state, &[], seed);
        for e in line
            .elements
            .iter()
            .filter(|e| e.kind_name() == "connector")
        {
            let centre = e.start_m + 0.5 * e.length_m;
            let best = r
                .events
                .iter()
                .map(|ev| (ev.place.distance_m - centre).abs())
                .fold(f64::INFINITY, f64::min);
            assert!(
                best < 3e-3,
                "{state:?}: {} at {centre:.4} m: nearest event {best:.4} m away",
                e.name
            );
        }
    }
}

#[test]
fn known_reflection_behind_stainless_and_an_attenuator_reads_its_own_level() {
    // 1 m of stainless 0.086-in line, a 10 dB attenuator, 0.1 m of copper, then a 100 ohm load:
    // Gamma = (100 - 50)/(100 + 50) = 1/3, -9.54 dB (DOMAIN check value; calc). Raw, it reads about 2 x 10 dB
    // plus twice the stainless loss lower; compensated, within 1 dB of -9.54 dB.
    let text = r#"
name = "test-bench/behind"
impedance_ohm = 50.0
[[element]]
kind = "cable"
name = "stainless"
cable = "ss-086"
length_m = 1.0
from = "room"
to = "room"
[[element]]
kind = "attenuator"
name = "A10"
loss_db = 10.0
stage = "room"
[[element]]
kind = "cable"
name = "tail"
cable = "cu-086"
length_m = 0.1
from = "room"
to = "room"
[[element]]
kind = "device"
name = "load"
load = 100.0
"#;
    let line = coldtrace::line::file::parse(text, Path::new("behind.toml")).unwrap();
    let r = run(&line, State::Warm, &[], 9);
    let end = line.elements.last().unwrap().start_m;
    let ev = r
        .events
        .iter()
        .min_by(|a, b| {
            (a.place.distance_m - end)
                .abs()
                .total_cmp(&(b.place.distance_m - end).abs())
        })
        .unwrap();
    assert!((ev.place.distance_m - end).abs() < 3e-3, "{ev:?}");
    let want = 20.0 * (1.0f64 / 3.0).log10();
    assert!(
        (ev.reflection_db - want).abs() < 1.0,
        "read {} dB, want {want:.2} dB",
        ev.reflection_db
    );
}

/// The demo line swept through a gain of 16 dB warm and 20 dB cold, too small to show in the healthy warm
/// sweep (no frequency reads 3 dB over all it was sent, nor the band's power), its line file saying so
/// (`gain_in_path = true`): located as through gain, with the warning naming the line file, the warm sweep
/// showing nothing above info and the cold one the pin gap at J2 first.
#[test]
fn a_line_file_that_declares_the_gain_is_located_through_it() {
    locate_demo_through_gain((16.0, 20.0), true, |faulty, peak_db, power_db| {
        // On the healthy sweep (a pin gap reflects too strongly to hide any gain).
        faulty
            || (peak_db <= coldtrace::compare::sweep::PASSIVE_PEAK_LIMIT_DB
                && power_db <= coldtrace::compare::sweep::PASSIVE_POWER_LIMIT_DB)
    });
}

/// The shipped demo line (north-fridge/in-07: attenuators, a lossy run and an open far end behind them)
/// simulated warm, and cold with a pin gap at J2, each swept through a round-trip gain of 36 and 40 dB:
/// |S11| reads over 1.41 at some frequencies, while the healthy sweep's band-averaged power stays under
/// what a passive line returns. Read as a passive line's, every joint was a critical finding (J5 reflecting +12 dB). Now the
/// gain is found (no passive port reads 3 dB over all it was sent at any frequency) and taken out until the
/// joints read as joints (the open end lies behind the compensation's cap, so it cannot set the scale): the
/// warm sweep shows nothing above info, and the cold one the pin gap at J2, first.
#[test]
fn a_sweep_through_an_amplifier_is_located_as_the_passive_lines() {
    locate_demo_through_gain((36.0, 40.0), false, |faulty, peak_db, power_db| {
        // The gain shows at some frequency; on the healthy line, not in the power over the band.
        peak_db > coldtrace::compare::sweep::PASSIVE_PEAK_LIMIT_DB
            && (faulty || power_db <= coldtrace::compare::sweep::PASSIVE_POWER_LIMIT_DB)
    });
}

/// The demo line simulated warm (healthy) and cold (a pin gap at J2), each swept through a round-trip gain
/// of `gains_db` (warm, cold) and located with the states given, its line file declaring the gain when
/// `declared`. `premise(faulty, peak_db, power_db)` checks each sweep is the case the test means (its
/// largest |S11| and its band's returned power, dB). Each result carries the `gain-in-path` warning (naming
/// the line file when `declared`); the warm one shows nothing above info, the cold one J2 first.
fn locate_demo_through_gain(
    gains_db: (f64, f64),
    declared: bool,
    premise: impl Fn(bool, f64, f64) -> bool,
) {
    use coldtrace::compare::job::{locate_network, LineModel};
    use coldtrace::compare::Severity;
    let mut line =
        coldtrace::line::file::read_file(Path::new("sample-sweeps/north-fridge/in-07.toml"))
            .unwrap();
    line.gain_in_path = declared;
    for (state, faults, gain_db) in [
        (State::Warm, &[][..], gains_db.0),
        (State::Cold, &["J2:gap=15um"][..], gains_db.1),
    ] {
        let mut cfg = SimConfig::linear(state, 0.5e9, 10e9, 2001);
        cfg.noise_db = Some(-85.0);
        cfg.seed = 7;
        cfg.faults = faults.iter().map(|f| Fault::parse(f).unwrap()).collect();
        let mut n = simulate(&line, &cfg).unwrap();
        let g = 10f64.powf(gain_db / 20.0);
        for s in n.s.iter_mut() {
            *s *= g;
        }
        let s11 = n.s11();
        let peak = s11.iter().map(|v| v.norm()).fold(0.0, f64::max);
        let power = coldtrace::compare::sweep::returned_power_db(&s11);
        assert!(
            premise(!faults.is_empty(), 20.0 * peak.log10(), power),
            "{state:?}: the premise: peak {peak:.2}, power {power:.1} dB"
        );
        let r = locate_network(
            "amplified",
            &n,
            LineModel::Line(&line),
            Some(state),
            &AnalysisConfig::default(),
        )
        .unwrap();
        assert!(
            r.warnings.iter().any(|w| w.kind == "gain-in-path"
                && w.message.contains("gain_in_path = true") == declared),
            "{state:?}: {:?}",
            r.warnings
        );
        let above: Vec<_> = r
            .events
            .iter()
            .filter(|e| e.severity > Severity::Info)
            .map(|e| (e.place.element.clone(), e.severity))
            .collect();
        if faults.is_empty() {
            assert!(above.is_empty(), "{state:?}: {above:?}");
        } else {
            assert_eq!(
                above.first().map(|a| a.0.as_str()),
                Some("J2"),
                "{state:?}: {above:?}"
            );
        }
    }
}

/// `locate_in` on an engine that already located sweeps on other grids (its plans, window coefficients and
/// gate sources kept), with and without evidence, gives what `locate` on a fresh engine gives: the same
/// events, field for field, but for the evidence curves left out.
#[test]
fn a_used_engine_locates_as_a_fresh_one() {
    use coldtrace::compare::locate::locate_in;
    use coldtrace::transform::TraceEngine;
    let line = read("south-fridge-in-02.toml");
    let sweep_of = |points: usize, state: State, seed: u64| {
        let mut cfg = SimConfig::linear(state, 0.5e9, 12e9, points);
        cfg.noise_db = Some(-95.0);
        cfg.seed = seed;
        cfg.faults = vec![Fault::parse("J2:gap=30fF").unwrap()];
        simulate(&line, &cfg).unwrap()
    };
    let chain = ChainView::from_line(&line, State::Cold, State::Cold, 0.5e9, 12e9, 6.25e9);
    fn sweep(n: &coldtrace::Network) -> Sweep<'_> {
        Sweep {
            name: "sim",
            network: n,
            state: "",
        }
    }
    let cfg = AnalysisConfig::default();
    let mut engine = TraceEngine::new();
    for (points, seed) in [(1201, 3), (2001, 4)] {
        let other = sweep_of(points, State::Cold, seed);
        locate_in(sweep(&other), &chain, &cfg, true, &mut engine).unwrap();
    }
    let n = sweep_of(1601, State::Cold, 5);
    let fresh = locate(sweep(&n), &chain, &cfg).unwrap();
    let used = locate_in(sweep(&n), &chain, &cfg, true, &mut engine).unwrap();
    assert_eq!(format!("{used:?}"), format!("{fresh:?}"));
    let bare = locate_in(sweep(&n), &chain, &cfg, false, &mut engine).unwrap();
    assert_eq!(bare.events.len(), fresh.events.len());
    for (b, f) in bare.events.iter().zip(&fresh.events) {
        assert!(b.evidence.is_empty() && !f.evidence.is_empty());
        let (mut b, mut f) = (b.clone(), f.clone());
        b.evidence = Default::default();
        f.evidence = Default::default();
        assert_eq!(format!("{b:?}"), format!("{f:?}"));
    }
}

/// A line longer than the sweep's record (tests/data/compare/south-fridge-in-02.toml, cold, over 0.5-40 GHz
/// with 401 points: a record of 10.1 ns): the events in the record's first stretch, where the line's far
/// part folds back, are never claimed above info and say why.
#[test]
fn events_where_a_long_line_folds_back_are_not_claimed() {
    use coldtrace::compare::job::{locate_network, LineModel};
    use coldtrace::compare::Severity;
    let line = read("south-fridge-in-02.toml");
    let mut cfg = SimConfig::linear(State::Cold, 0.5e9, 40e9, 401);
    cfg.noise_db = Some(-90.0);
    cfg.faults = vec![Fault::parse("J4:gap=15um").unwrap()];
    let n = simulate(&line, &cfg).unwrap();
    let alias_free_s = 1.0 / (n.freqs_hz[1] - n.freqs_hz[0]);
    let end_s = line.round_trip_s(line.length_m(), State::Cold);
    assert!(
        end_s > 1.2 * alias_free_s,
        "{end_s:e} s, {alias_free_s:e} s"
    );
    let r = locate_network(
        "long",
        &n,
        LineModel::Line(&line),
        Some(State::Cold),
        &AnalysisConfig::default(),
    )
    .unwrap();
    // The folded stretch, as far as the line reaches past the record (less a margin for the model).
    let folded_m = line.length_m() * (end_s - alias_free_s) / end_s * 0.9;
    let inside: Vec<_> = r
        .events
        .iter()
        .filter(|e| e.place.distance_m < folded_m)
        .collect();
    assert!(!inside.is_empty());
    for e in inside {
        assert_eq!(e.severity, Severity::Info, "{}", e.explanation);
        assert!(e.explanation.contains("folded back"), "{}", e.explanation);
    }
}
