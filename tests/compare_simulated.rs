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
    sim_n(line, state, faults, seed, 4001)
}

fn sim_n(
    line: &Line,
    state: State,
    faults: &[&str],
    seed: u64,
    points: usize,
) -> coldtrace::Network {
    let mut cfg = SimConfig::linear(state, 0.5e9, 10e9, points);
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
        coldtrace::compare::states::Hypothesis::of(b, c),
        StateReport::given(b, c),
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

/// The healthy cooldown seen through an amplifier in front of the line: the whole reflection scaled by its
/// round-trip gain, 36 dB warm and 40 dB cold with a gentle tilt across the band (|S11| well above 1 at the
/// far end), the states given and inferred. A gain change is a level change of the whole trace (the
/// report's `alignment.level_change_db`), not a finding.
#[test]
fn an_amplifiers_gain_change_is_a_level_not_a_finding() {
    let l = line();
    let through = |mut n: coldtrace::Network, gain_db: f64, tilt_db: f64| {
        let (f0, f1) = (n.freqs_hz[0], n.freqs_hz[n.len() - 1]);
        let freqs = n.freqs_hz.clone();
        for (s, f) in n.s.iter_mut().zip(&freqs) {
            let g = gain_db + tilt_db * (f - f0) / (f1 - f0);
            *s *= 10f64.powf(g / 20.0);
        }
        n
    };
    let base = through(sim(&l, State::Warm, &[], 21), 36.0, -1.0);
    let cur = through(sim(&l, State::Cold, &[], 22), 40.0, -1.5);
    assert!(
        cur.s11().iter().any(|g| g.norm() > 1.0),
        "the sweep should read above 1"
    );
    let r = run(&l, State::Warm, State::Cold, &base, &cur);
    assert!(serious(&r).is_empty(), "{:?}", serious(&r));
    assert!(
        (r.alignment.level_change_db - 4.0).abs() < 1.0,
        "level change {} dB",
        r.alignment.level_change_db
    );
    let inferred =
        coldtrace::compare::job::compare_networks(&coldtrace::compare::job::PairRequest {
            baseline: ("baseline", &base),
            current: ("current", &cur),
            line: coldtrace::compare::job::LineModel::Line(&l),
            baseline_state: None,
            current_state: None,
            analysis: &AnalysisConfig::default(),
        })
        .unwrap();
    assert!(serious(&inferred).is_empty(), "{:?}", serious(&inferred));
}

/// Two cold sweeps of the test chain, before and after, compared.
fn cold_pair(l: &Line, before: &[&str], after: &[&str], seed: u64) -> CompareReport {
    let base = sim(l, State::Cold, before, seed);
    let cur = sim(l, State::Cold, after, seed + 1);
    run(l, State::Cold, State::Cold, &base, &cur)
}

fn serious(r: &CompareReport) -> Vec<&coldtrace::compare::Finding> {
    r.findings
        .iter()
        .filter(|f| f.severity > Severity::Info)
        .collect()
}

#[test]
fn crushed_section_mid_segment_is_placed_within_its_uncertainty() {
    // 0.12 m into the 0.25 m stainless run from room to 50 K (as built 0.80 + 0.004 + 0.12 m: the run
    // starts 4 mm past the joint at J1, whose 8 mm section is half in it).
    let l = line();
    let base = sim(&l, State::Warm, &[], 21);
    let cur = sim(&l, State::Cold, &["room to 50K@0.12m:crush=30ohm,6mm"], 22);
    let r = run(&l, State::Warm, State::Cold, &base, &cur);
    let top = &r.findings[0];
    assert_eq!(top.place.element, "room to 50K", "{top:?}");
    assert!(
        (top.place.offset_m - 0.12).abs() <= top.uncertainty_m.max(0.003),
        "offset {} +/- {}",
        top.place.offset_m,
        top.uncertainty_m
    );
    assert_eq!(top.kind, FaultKind::Crush, "{top:?}");
    assert!(top.severity >= Severity::Minor, "{top:?}");
}

#[test]
fn open_after_a_connector_is_critical_and_hides_the_rest() {
    let l = line();
    let r = cold_pair(&l, &[], &["J2:open"], 31);
    let top = &r.findings[0];
    assert_eq!(
        top.place.nearest_connector.as_deref(),
        Some("J2"),
        "{top:?}"
    );
    assert_eq!(top.kind, FaultKind::Open, "{top:?}");
    assert_eq!(top.severity, Severity::Critical);
    // Nothing behind an open is claimed as a fault of its own.
    for f in serious(&r).iter().skip(1) {
        assert!(
            f.place.distance_m < top.place.distance_m + 0.05 || f.likely_ghost,
            "{f:?}"
        );
    }
}

#[test]
fn contact_resistance_growing_between_two_cold_sweeps() {
    let l = line();
    let r = cold_pair(&l, &["J2:contact=0.3ohm"], &["J2:contact=4ohm"], 41);
    let top = &r.findings[0];
    assert_eq!(
        top.place.nearest_connector.as_deref(),
        Some("J2"),
        "{top:?}"
    );
    assert_eq!(top.kind, FaultKind::Contact, "{top:?}");
    // 4 ohm in series on 50 ohm: Gamma = 4/104, transmission (100/104)^2, a 0.34 dB drop (circuit theory).
    assert!((top.model.value - 4.0).abs() < 0.4, "{:?}", top.model);
    assert!(top.severity >= Severity::Minor, "{top:?}");
}

#[test]
fn healthy_line_over_100_noise_seeds_has_nothing_above_info() {
    let l = line();
    for seed in 0..100u64 {
        let base = sim_n(&l, State::Warm, &[], 1000 + 2 * seed, 2001);
        let cur = sim_n(&l, State::Cold, &[], 1001 + 2 * seed, 2001);
        let r = run(&l, State::Warm, State::Cold, &base, &cur);
        assert!(serious(&r).is_empty(), "seed {seed}: {:?}", serious(&r));
    }
}

#[test]
fn two_faults_five_centimetres_apart_are_both_reported() {
    // In the 0.30 m stainless run from 50 K to 4 K: crushes at 0.10 m and 0.15 m.
    let l = line();
    let after = [
        "50K to 4K@0.10m:crush=35ohm,5mm",
        "50K to 4K@0.15m:crush=35ohm,5mm",
    ];
    let r = cold_pair(&l, &[], &after, 51);
    let found: Vec<f64> = serious(&r)
        .iter()
        .filter(|f| f.place.element == "50K to 4K")
        .map(|f| f.place.offset_m)
        .collect();
    for want in [0.10, 0.15] {
        assert!(
            found.iter().any(|x| (x - want).abs() < 0.006),
            "{want}: {found:?} in {:?}",
            r.findings
        );
    }
}

#[test]
fn weak_fault_20_db_below_a_strong_one_is_still_found() {
    // A strong crush and, 8 cm further, a weak one about 20 dB below it.
    let l = line();
    let after = [
        "50K to 4K@0.05m:crush=20ohm,6mm",
        "50K to 4K@0.13m:crush=46.5ohm,6mm",
    ];
    let r = cold_pair(&l, &[], &after, 61);
    let strong = r
        .findings
        .iter()
        .find(|f| (f.place.offset_m - 0.05).abs() < 0.006 && f.place.element == "50K to 4K");
    let weak = r
        .findings
        .iter()
        .find(|f| (f.place.offset_m - 0.13).abs() < 0.006 && f.place.element == "50K to 4K");
    let (s, w) = (strong.expect("strong fault"), weak.expect("weak fault"));
    // A 6 mm section of Z1 reflects about |G1| |1 - exp(-j 2 beta l)| (G1 = (Z1 - Z0)/(Z1 + Z0)): about
    // -3.5 dB for 20 ohm and -25 dB for 46.5 ohm at 5 GHz on PTFE line (calc, transmission-line theory).
    let gap = s.reflection_db - w.reflection_db;
    assert!(
        gap > 18.0,
        "levels {} and {}",
        s.reflection_db,
        w.reflection_db
    );
}

#[test]
fn with_s21_the_observed_drop_is_set_beside_what_the_findings_explain() {
    // Two-port sweeps (S21 through the chain to a matched port 2): the contact's loss shows in S21 too.
    let l = line();
    let mk = |faults: &[&str], seed: u64| {
        let mut cfg = SimConfig::linear(State::Cold, 0.5e9, 10e9, 2001);
        cfg.noise_db = Some(-90.0);
        cfg.seed = seed;
        cfg.two_port = true;
        cfg.faults = faults.iter().map(|f| Fault::parse(f).unwrap()).collect();
        simulate(&l, &cfg).unwrap()
    };
    let base = mk(&[], 71);
    let cur = mk(&["J2:contact=10ohm"], 72);
    let r = run(&l, State::Cold, State::Cold, &base, &cur);
    let p = r.power.as_ref().expect("both sweeps have S21");
    assert_eq!(p.source, "s21");
    // 10 ohm in series on 50 ohm passes (100/110)^2 of the power: 0.83 dB at every frequency (circuit theory).
    assert!((p.observed_drop_db - 0.828).abs() < 0.1, "{p:?}");
    assert!(
        (p.explained_drop_db - p.observed_drop_db).abs() < 0.3,
        "{p:?}"
    );
}

/// The test chain as built, its first three cables longer than the line file says (9, 8 and 7 mm: cut
/// assemblies measured to a centimetre), so the declared delay to the attenuator's joints is 24 mm short:
/// nearly the whole 28 mm between its two joints.
fn as_built_longer() -> Line {
    let path = Path::new("tests/data/compare/south-fridge-in-02.toml");
    let text = std::fs::read_to_string(path).unwrap();
    let text = text
        .replacen("length_m = 0.80", "length_m = 0.809", 1)
        .replacen("length_m = 0.25", "length_m = 0.258", 1)
        .replacen("length_m = 0.30", "length_m = 0.307", 1);
    coldtrace::line::file::parse(&text, path).unwrap()
}

#[test]
fn a_joint_either_side_of_an_attenuator_is_named_right_when_declared_lengths_are_short() {
    let (declared, built) = (line(), as_built_longer());
    for (joint, fault) in [("J3", "J3:contact=5ohm"), ("J4", "J4:gap=30fF")] {
        let base = sim(&built, State::Warm, &[], 1);
        let cur = sim(&built, State::Cold, &[fault], 2);
        let r = run(&declared, State::Warm, State::Cold, &base, &cur);
        let top = &r.findings[0];
        assert_eq!(
            top.place.nearest_connector.as_deref(),
            Some(joint),
            "{fault}: {top:?}"
        );
        assert!(top.severity > Severity::Info, "{fault}: {top:?}");
        // Placed in the line file's terms: at the joint's declared middle, within a few millimetres.
        let want = declared
            .elements
            .iter()
            .find(|e| e.name == joint)
            .map(|e| 0.5 * (e.start_m + e.end_m()))
            .unwrap();
        assert!(
            (top.place.distance_m - want).abs() < 5e-3,
            "{fault}: at {} m, declared {want} m",
            top.place.distance_m
        );
    }
}

/// Another open hypothesis is run only as far as its findings above info (`Detail::AboveInfo`): those must
/// be the full comparison's, field for field but their ranks, under every hypothesis, on a pair with a
/// fault and with joints whose small changes are noted at info.
#[test]
fn a_comparison_above_info_only_or_findings_only_finds_what_the_full_one_finds() {
    use coldtrace::compare::run::{compare_in, Detail};
    use coldtrace::compare::states::Hypothesis;
    let l = line();
    let base = sim(&l, State::Warm, &[], 1);
    let cur = sim(&l, State::Cold, &["J3:gap=300fF"], 2);
    let mut claimed = 0;
    for h in Hypothesis::ALL {
        let (b, c) = h.states();
        let chain = ChainView::from_line(&l, b, c, 0.5e9, 10e9, 5e9);
        let name = |s: State| if s == State::Warm { "warm" } else { "cold" };
        let go = |detail: Detail| {
            compare_in(
                Sweep {
                    name: "baseline",
                    network: &base,
                    state: name(b),
                },
                Sweep {
                    name: "current",
                    network: &cur,
                    state: name(c),
                },
                &chain,
                &AnalysisConfig::default(),
                h,
                StateReport::given(b, c),
                detail,
                &mut coldtrace::transform::TraceEngine::new(),
            )
            .unwrap()
        };
        let above = |r: &CompareReport| -> Vec<coldtrace::compare::Finding> {
            r.findings
                .iter()
                .filter(|f| f.severity > Severity::Info)
                .map(|f| {
                    let mut f = f.clone();
                    f.rank = 0;
                    f
                })
                .collect()
        };
        let (full, part) = (go(Detail::Full), go(Detail::AboveInfo));
        assert_eq!(above(&full), above(&part), "{h:?}");
        assert!(part.findings.len() <= full.findings.len(), "{h:?}");
        // What a survey keeps: every finding the full comparison gives, in its order, without the
        // evidence curves; and no plot data.
        let kept = go(Detail::Findings);
        let bare = |r: &CompareReport| -> Vec<coldtrace::compare::Finding> {
            r.findings
                .iter()
                .map(|f| {
                    let mut f = f.clone();
                    f.evidence = Default::default();
                    f
                })
                .collect()
        };
        assert_eq!(bare(&full), kept.findings, "{h:?}");
        assert!(
            kept.findings.iter().all(|f| f.evidence.freqs_hz.is_empty()),
            "{h:?}"
        );
        assert!(kept.plot.traces.is_empty(), "{h:?}");
        claimed += above(&full).len();
    }
    assert!(claimed > 0, "no hypothesis found the gap above info");
}

#[test]
fn one_engine_kept_across_pairs_on_several_grids_gives_what_fresh_engines_give() {
    // A survey's worker keeps one transform engine (plans, window coefficients) for all its lines: the
    // reports must not depend on what the engine already holds. Pairs on two grids, interleaved, states
    // given and inferred, one with a fault.
    use coldtrace::compare::job::{compare_networks, compare_networks_in, LineModel, PairRequest};
    use coldtrace::transform::TraceEngine;
    let l = line();
    let cfg = AnalysisConfig::default();
    let pairs = [
        (
            sim_n(&l, State::Warm, &[], 31, 1601),
            sim_n(&l, State::Cold, &["J3:gap=300fF"], 32, 1601),
        ),
        (
            sim_n(&l, State::Warm, &[], 33, 2001),
            sim_n(&l, State::Cold, &[], 34, 2001),
        ),
    ];
    let request = |k: usize, given: bool| PairRequest {
        baseline: ("baseline", &pairs[k].0),
        current: ("current", &pairs[k].1),
        line: LineModel::Line(&l),
        baseline_state: given.then_some(State::Warm),
        current_state: given.then_some(State::Cold),
        analysis: &cfg,
    };
    let json = |r: &CompareReport| serde_json::to_string(r).unwrap();
    let mut engine = TraceEngine::new();
    for (k, given) in [(0, true), (1, false), (0, false), (1, true), (0, true)] {
        let kept = compare_networks_in(&request(k, given), &mut engine).unwrap();
        let fresh = compare_networks(&request(k, given)).unwrap();
        assert_eq!(json(&kept), json(&fresh), "pair {k}, states given: {given}");
    }
}

#[test]
fn a_room_temperature_joint_is_judged_across_a_cooldown_as_in_one_state() {
    // J1 of the test chain sits at room temperature behind a room-temperature cable: a cooldown leaves it
    // and everything in front of it as they were. It carries 60 fF of shunt capacitance in both sweeps
    // (|G| = w C Z0 / 2 = 0.05 at 5.25 GHz, circuit theory); in the cold sweep a 1.2 ohm contact adds
    // R / (2 Z0 + R) = 0.012 to it. Its strength barely moves; its complex change counts as one in one
    // state, not under the wider rule for a change of state. Measured with this build: judged as a steady
    // echo it is the top finding (significance 1.7); judged as any echo across a change of state it is not,
    // and a joint at 4 K behind it comes first.
    let l = line();
    let base = sim(&l, State::Warm, &["J1:shunt=60fF"], 41);
    let healthy = sim(&l, State::Cold, &["J1:shunt=60fF"], 42);
    let faulty = sim(&l, State::Cold, &["J1:shunt=60fF", "J1:contact=1.2ohm"], 42);
    let quiet = run(&l, State::Warm, State::Cold, &base, &healthy);
    assert!(serious(&quiet).is_empty(), "{:?}", serious(&quiet));
    assert!(
        quiet.findings.iter().all(|f| f.place.element != "J1"),
        "{:?}",
        quiet.findings
    );
    let found = run(&l, State::Warm, State::Cold, &base, &faulty);
    let top = &found.findings[0];
    assert_eq!(top.place.element, "J1", "{:?}", found.findings);
    assert!(top.significance >= 1.0, "{top:?}");
    // The chain: J1 and everything in front of it steady; J2 (at 50 K) not.
    let chain = ChainView::from_line(&l, State::Warm, State::Cold, 0.5e9, 10e9, 5e9);
    let mid = |name: &str| {
        let s = chain.segments.iter().find(|s| s.name == name).unwrap();
        0.5 * (s.start_m + s.end_m)
    };
    assert!(chain.steady_to(mid("J1"), 0.06));
    assert!(!chain.steady_to(mid("J2"), 0.06));
    // The cable behind J1 cools from room temperature along its length: a joint within reach of its start
    // is still steady, but not once a cold joint lies within reach.
    let to_j2 = mid("J2") - mid("J1");
    assert!(!chain.steady_to(mid("J1"), to_j2 + 0.01));
    // Both sweeps in one state: all of it.
    let cold = ChainView::from_line(&l, State::Cold, State::Cold, 0.5e9, 10e9, 5e9);
    assert!(cold.steady_to(mid("J2"), 0.06));
}

/// The demo line (north-fridge/in-07, 24.9 ns round trip when cold) swept over 0.5-40 GHz with 801 points:
/// an alias-free record of 20.25 ns, shorter than the line, so its far part (J4 onwards and the open end)
/// folds back onto the first 0.55 m of the room-temperature cable. Read there, the folded open end moved
/// with the whole line's cooldown, and it was taken for a landmark in that cable: the cable was stretched by
/// 1.6 %, the feedthrough behind it misplaced by 23 mm, and a healthy cooldown raised a minor impedance step
/// while a 15 um pin gap at J2 raised nothing. Nothing in the folded part is now a landmark or a finding
/// above info: the healthy pair is quiet, the gap is found at J2, states given or inferred.
#[test]
fn a_line_longer_than_the_record_takes_nothing_folded_for_a_landmark_or_a_finding() {
    use coldtrace::compare::job::{compare_networks, LineModel, PairRequest};
    let line = coldtrace::line::file::read_file(Path::new("sample-sweeps/north-fridge/in-07.toml"))
        .unwrap();
    let sweep = |state: State, faults: &[&str], seed: u64| {
        let mut cfg = SimConfig::linear(state, 0.5e9, 40e9, 801);
        cfg.noise_db = Some(-90.0);
        cfg.seed = seed;
        cfg.faults = faults.iter().map(|f| Fault::parse(f).unwrap()).collect();
        simulate(&line, &cfg).unwrap()
    };
    let warm = sweep(State::Warm, &[], 1);
    // The premise: the record is shorter than the line.
    let alias_free_s = 1.0 / (warm.freqs_hz[1] - warm.freqs_hz[0]);
    let end_s = line.round_trip_s(line.length_m(), State::Cold);
    assert!(
        alias_free_s < end_s,
        "{alias_free_s:e} s against {end_s:e} s"
    );
    for (faults, want) in [(&[][..], None), (&["J2:gap=15um"][..], Some("J2"))] {
        let cold = sweep(State::Cold, faults, 2);
        for given in [true, false] {
            let r = compare_networks(&PairRequest {
                baseline: ("warm", &warm),
                current: ("cold", &cold),
                line: LineModel::Line(&line),
                baseline_state: given.then_some(State::Warm),
                current_state: given.then_some(State::Cold),
                analysis: &AnalysisConfig::default(),
            })
            .unwrap();
            let above: Vec<_> = r
                .findings
                .iter()
                .filter(|f| f.severity > Severity::Info)
                .map(|f| {
                    (
                        f.place.element.clone(),
                        f.place.nearest_connector.clone(),
                        f.place.distance_m,
                        f.severity,
                    )
                })
                .collect();
            match want {
                None => assert!(above.is_empty(), "given {given}: {above:?}"),
                // At the joint: named as it, or as the nearest connector within a few millimetres (J2's
                // centre at 1.800 m; the resolution is 6.8 mm).
                Some(j) => assert!(
                    above.first().is_some_and(|(e, near, x, _)| {
                        e == j || (near.as_deref() == Some(j) && (x - 1.8).abs() < 0.01)
                    }),
                    "given {given}: {above:?}"
                ),
            }
            // No landmark in the folded part (the first 0.6 m).
            assert!(
                r.alignment.landmarks_m.iter().all(|&x| x > 0.6),
                "given {given}: {:?}",
                r.alignment.landmarks_m
            );
        }
    }
}
