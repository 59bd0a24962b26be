//! The comparator against generated mismatch scenarios (tests/scenario): lines whose truth departs from the
//! nominal line file the analysis is given (lengths, connector parasitics, cold physics), simulated and
//! compared with the states inferred. A fixed-seed subset of `examples/accuracy.rs`; every failure names
//! the seed, and `cargo run --release --example accuracy -- --show CASE:SEED` replays it.
//!
//! The goals asserted are the project's (docs/accuracy.md): no finding above info on a healthy cooldown or a
//! same-state repeat, the faulty element ranked first for every fault standing at least
//! `scenario::VISIBLE_LEVEL_DB` over the noise at its place, the states inferred right on healthy lines,
//! and no run ending in an error.

mod scenario;

use coldtrace::compare::Severity;
use scenario::score::{evaluate_all, Evaluated};
use scenario::{Case, Scenario, LENGTH_ERROR_M};
use std::sync::OnceLock;

/// The fixed seeds: 24 healthy warm -> cold, 8 same-state repeats, 32 faults (about 16 s in the test
/// profile on two cores).
fn list() -> Vec<(u64, Case)> {
    let mut v: Vec<(u64, Case)> = (0..24).map(|i| (7_000 + i, Case::Healthy)).collect();
    v.extend((0..8).map(|i| (7_100 + i, Case::Repeat)));
    v.extend((0..32).map(|i| (7_200 + i, Case::Fault)));
    v
}

/// Every scenario evaluated once, shared by the tests of this file.
fn all() -> &'static [Evaluated] {
    static ALL: OnceLock<Vec<Evaluated>> = OnceLock::new();
    ALL.get_or_init(|| {
        let threads = std::thread::available_parallelism()
            .map(|n| n.get())
            .unwrap_or(1);
        evaluate_all(&list(), threads)
    })
}

fn report(what: &str, bad: &[String]) {
    assert!(
        bad.is_empty(),
        "{what}: {} case(s)\n{}\n(replay one with `cargo run --release --example accuracy -- --show CASE:SEED`)",
        bad.len(),
        bad.join("\n")
    );
}

/// The fault's element is ranked first, states given or inferred as `given` says.
fn assert_right_first(e: &Evaluated, given: bool) {
    assert_eq!(
        e.right_element(given),
        Some(true),
        "{}",
        case_line(e, given)
    );
}

fn case_line(e: &Evaluated, given: bool) -> String {
    format!(
        "  {}:{} [{}]: {}",
        e.scenario.case.name(),
        e.scenario.seed,
        if given {
            "states given"
        } else {
            "states inferred"
        },
        e.what_happened(given)
    )
}

#[test]
fn no_comparison_ends_in_an_error() {
    let bad: Vec<String> = runs()
        .filter(|(e, g)| e.run(*g).error.is_some())
        .map(|(e, g)| case_line(e, g))
        .collect();
    report("comparisons that returned an error", &bad);
}

/// Every run in both modes: states inferred, then states given.
fn runs() -> impl Iterator<Item = (&'static Evaluated, bool)> {
    all().iter().flat_map(|e| [(e, false), (e, true)])
}

#[test]
fn healthy_cooldowns_and_repeats_raise_nothing_above_info() {
    let bad: Vec<String> = runs()
        .filter(|(e, g)| e.false_alarm(*g))
        .map(|(e, g)| case_line(e, g))
        .collect();
    report("false alarms", &bad);
}

/// The states are honest on every healthy line and repeat: the truth is among the hypotheses the data leave
/// open (a line almost wholly at room temperature cannot tell warm from cold, and must say so rather than
/// guess).
#[test]
fn states_left_open_include_the_truth_on_healthy_lines_and_repeats() {
    let bad: Vec<String> = all()
        .iter()
        .filter(|e| e.scenario.fault.is_none() && !e.states_honest(false))
        .map(|e| case_line(e, false))
        .collect();
    report("states decided against the truth", &bad);
}

/// The goal beyond honesty: the state chosen is the truth on every healthy line and repeat.
#[test]
#[ignore = "accuracy goal not met yet: run with --ignored; figures in docs/accuracy.md"]
fn states_are_inferred_right_on_healthy_lines_and_repeats() {
    let bad: Vec<String> = all()
        .iter()
        .filter(|e| e.scenario.fault.is_none() && !e.states_right(false))
        .map(|e| case_line(e, false))
        .collect();
    report("states inferred wrong", &bad);
}

#[test]
#[ignore = "accuracy goal not met yet: run with --ignored; figures in docs/accuracy.md"]
fn faults_over_the_noise_are_ranked_first_at_their_element() {
    let visible: Vec<&Evaluated> = all()
        .iter()
        .filter(|e| e.scenario.fault.as_ref().is_some_and(|f| f.visible()))
        .collect();
    // The subset must exercise the goal: most generated faults stand well over the noise.
    assert!(visible.len() >= 24, "only {} visible faults", visible.len());
    let bad: Vec<String> = visible
        .iter()
        .flat_map(|e| [(*e, false), (*e, true)])
        .filter(|(e, g)| e.right_element(*g) != Some(true))
        .map(|(e, g)| case_line(e, g))
        .collect();
    report("faults not ranked first at their element", &bad);
}

// ---------------------------------------------------------------------------------------------------------
// The generator itself.

/// The guard below the goal: on the fixed subset, the share of faults over the noise ranked first at their
/// element (states inferred and given) does not fall below what the comparator reaches today (55 of 60
/// runs when this guard was set; docs/accuracy.md has the full figure).
const RIGHT_ELEMENT_GUARD: f64 = 0.9;

#[test]
fn faults_over_the_noise_are_ranked_first_at_their_element_as_often_as_before() {
    let runs: Vec<(&Evaluated, bool)> = all()
        .iter()
        .filter(|e| e.scenario.fault.as_ref().is_some_and(|f| f.visible()))
        .flat_map(|e| [(e, false), (e, true)])
        .collect();
    let bad: Vec<String> = runs
        .iter()
        .filter(|(e, g)| e.right_element(*g) != Some(true))
        .map(|(e, g)| case_line(e, *g))
        .collect();
    let share = 1.0 - bad.len() as f64 / runs.len().max(1) as f64;
    assert!(
        share >= RIGHT_ELEMENT_GUARD,
        "right element first in {:.1} % of {} runs, under the guard of {:.0} %:\n{}",
        100.0 * share,
        runs.len(),
        100.0 * RIGHT_ELEMENT_GUARD,
        bad.join("\n")
    );
}

/// A lossy joint right at an open far end (seed 1500115 of the accuracy run: a pin gap of 49 fF bridged by
/// 86 ohm at J3, the last joint, with the open 4 mm behind it): the far end's echo fell 4.7 dB where the
/// landmarks in front of it predict -0.4 dB. The far end's level change was always put down to the line's
/// loss: with the states given nothing was found, and with them inferred the far echo's loss ratio (333 %)
/// read the cooldown as a warm-up at 60 sigma. Now the far end is a finding at J3, above info with the
/// states given; inferred, the loss ratio no state explains does not vote, and the truth stays open.
#[test]
fn a_lossy_joint_at_an_open_far_end_is_found_not_put_down_to_loss() {
    let e = scenario::score::evaluate(1_500_115, Case::Fault);
    for given in [true, false] {
        assert_right_first(&e, given);
    }
    assert!(
        e.given
            .alarms
            .iter()
            .any(|a| a.0 == "J3" && a.1 == "contact"),
        "{}",
        case_line(&e, true)
    );
    assert!(
        e.inferred.open.iter().any(|h| h == "warm->cold"),
        "{}",
        case_line(&e, false)
    );
}

/// A contact of 5 ohm at J4, the joint in front of the open far end, both sweeps cold (seed 1500278): the
/// far end's echo fell 0.9 dB with nothing in front of it changed. Across a change of state that is within
/// the line's loss change; told both sweeps are in one state, the loss did not change, and the far end's
/// joint is found (`difference::ONE_STATE_FAR_LEVEL_DB`). Inferred, the fall reads as a warm-up and stays
/// unfound (docs/method.md, "Where the comparator cannot tell").
#[test]
fn in_one_state_a_far_ends_small_fall_is_its_own_joints_change() {
    let e = scenario::score::evaluate(1_500_278, Case::Fault);
    assert_right_first(&e, true);
    assert!(
        e.given
            .alarms
            .iter()
            .any(|a| a.0 == "J4" && a.1 == "contact"),
        "{}",
        case_line(&e, true)
    );
}

/// A pin gap of 5 fF at J3, right behind an 18 dB attenuator (seed 1500189): the gap now reflects nearly all
/// (+9 dB where the baseline showed J3 and the attenuator), and the open far end vanished (-56 dB). Behind
/// the capped compensation the rise alone lay within the interval the model's loss error leaves (a
/// component's 6 dB, widened), so nothing above info was found. A far end does not vanish by itself: the
/// echo in front of it that rose the most is what blocks the line now, and it is found at J3, critical.
#[test]
fn a_far_end_that_vanished_is_put_down_to_the_echo_that_now_blocks_the_line() {
    let e = scenario::score::evaluate(1_500_189, Case::Fault);
    for given in [true, false] {
        assert_right_first(&e, given);
        assert!(
            e.run(given)
                .alarms
                .iter()
                .any(|a| a.2 == coldtrace::compare::Severity::Critical),
            "{}",
            case_line(&e, given)
        );
    }
}

/// A contact of 1.4 ohm at J4 of a cold -> cold repeat (seed 1500193), one resolution cell in front of the
/// stronger echo of a 0 dB attenuator and J5: it forms no peak of its own, and J5's echo, read at its peak,
/// barely moved. Judged at J4's own place (a joint probe, in one state only), its response changed by far
/// more than counts as a change: the finding is at J4, with the states given and inferred (all four left
/// open; kept at info, as it is not a change under the states it could also be).
#[test]
fn in_one_state_a_contact_beside_a_stronger_echo_is_found_at_its_own_joint() {
    let e = scenario::score::evaluate(1_500_193, Case::Fault);
    for given in [true, false] {
        assert_right_first(&e, given);
    }
}

/// Healthy cooldowns found out of sample (seeds 11000154, 11000382, 11000076 of `--seed 11`; 7000102 of
/// `--seed 7`; 11000497 and 1000170 of `--seed 11` and `--seed 1`; 13000020 of `--seed 13`; 23000205 and
/// 23000001 of `--seed 23`; 43000121, 21000353 and 59000330 of `--seed 43`, `--seed 21` and `--seed 59`).
/// Each once raised a finding above info:
/// - 11000154, 11000382, 11000076: the delay scale rested on one echo down the line (a connector either
///   side of an attenuator), which read -0.3 % to -1 % and settled the states as a warm-up at 6 to 39 sigma;
///   one echo that nothing checks is now known to a quarter of a cell, and the states stay open;
/// - 7000102: the cold dielectric changed twice as much as the model's (+1.3 %), past the bounds the
///   alignment allowed a segment, so the far echoes were misplaced by 37 mm and an attenuator's echo read as
///   a crush;
/// - 11000497: a matched far end whose echo rose from -56 dB to -37 dB on cooling (the cold cable's
///   impedance a few per cent under the load's), read as an impedance step costing the worse plausible
///   cost of a contact;
/// - 1000170: with the states left open, every hypothesis was judged by the states of the one chosen
///   (cold -> cold), so a cooldown's changes were held to one state's thresholds;
/// - 13000020: an 11 dB attenuator between two cables whose cold dielectric changed 1.8-2.0 times as far
///   as the model's (every cable the landmarks pinned shows it): the pad's fixed 50 ohm against their fallen
///   impedance reflected 0.014 cold (0.0027 warm), read as a major contact over the pad's drift bound of
///   0.01; the bound now adds the steps that the cables' impedance change makes at the pad
///   (`difference::impedance_changes`);
/// - 23000205 (`--seed 23`): a joint's echo 13 mm in front of a 7 dB pad on the aligned map, compensated
///   as behind the pad on the analysis' map and read as 0.093 in front of its step (0.019 as compensated),
///   on a line whose dielectric changed 1.97 times as far as the model's: a minor contact. Read on the side
///   its strength was compensated on (`difference::pad_front`), and against the pad's bound with the
///   cables' whole impedance change (0.022), it is the pad's drift;
/// - 23000001 (`--seed 23`, states given): the trace a cell behind a joint, 10 mm in front of an 18 dB
///   pad's step, where the current sweep's piece of the analysis straddled the step and lent it the pad's
///   36 dB round trip while the baseline's did not: a 27 dB rise of a flank, a minor finding. Near a step
///   each trace is now read with the compensation of its own place (`difference::flank_changes`);
/// - 43000121 (`--seed 43`) and 21000353 (`--seed 21`), states inferred: lines of copper at room
///   temperature and cupronickel cooled to 50 K, whose far open or short lost 99 % of its warm loss cold
///   (the line model says 98 %), read as one state against the materials' bound of 92 % while the
///   electrical length rose 0.6 %; in one state the far end, 8 mm further, read as a critical short (a
///   joint probed within its main lobe) or a critical step. A change of state's loss ratio now reaches up
///   to the model's (`states::check_loss_ratio`), and a joint within a cell of an open or short far end is
///   left to that echo (`difference::joint_probes`);
/// - 59000330 (`--seed 59`): a joint's echo the baseline showed 5 mm in front of a short, on a map a cell
///   off at the far end (a landmark beside a 4 dB pad misread), read where the current short's main lobe
///   lies: a 34 dB rise, a critical finding. A lone echo of the baseline within a cell of a current echo
///   paired with its neighbour now says only whether the reflection there fell (`difference::changes`);
/// - 113000069 (`--seed 113`), 121000250 (`--seed 121`) and 61000297 (`--seed 61`): a far end or a joint
///   behind a pad and warm niobium-titanium or stainless, where the warm sweep's compensation stopped at
///   its cap at the top of the band: the analysis then held every piece behind that place at the gain of
///   the last one, short of the capped gain the comparator reckons with by up to 12 dB at the band centre,
///   so the baseline's echo read low and the cold one rose past every bound: a critical contact at the far
///   joint, a major step at a device end, a minor contact. Pieces now follow the compensation up the
///   band until all of it is capped (`analysis::PIECE_PROBES`);
/// - 139000254 (`--seed 139`, states given): a line whose cold dielectric changed 1.87 times as far as the
///   model's; its landmark at an 11 dB pad paired the pad's front port with its back, and the front port's
///   cold drift, an echo new to the cold sweep, lay 24 mm in front of the pad on the aligned map and behind
///   the pad's step on the analysis' map, where it had been compensated: lifted by the pad's 22 dB round
///   trip, a critical discontinuity of 0.7. A new echo whose two places straddle a pad's step is read at the
///   lesser compensation (`difference::straddled_rise`).
#[test]
fn healthy_cooldowns_found_out_of_sample_raise_nothing_above_info() {
    let mut bad = Vec::new();
    for seed in [
        11_000_154,
        11_000_382,
        11_000_076,
        7_000_102,
        11_000_497,
        1_000_170,
        13_000_020,
        23_000_205,
        23_000_001,
        43_000_121,
        21_000_353,
        59_000_330,
        113_000_069,
        121_000_250,
        61_000_297,
        139_000_254,
    ] {
        let e = scenario::score::evaluate(seed, Case::Healthy);
        for given in [false, true] {
            if e.false_alarm(given) {
                bad.push(case_line(&e, given));
            }
        }
        if !e.inferred.open.iter().any(|h| h == "warm->cold") {
            bad.push(case_line(&e, false));
        }
    }
    report("healthy cooldowns with a finding above info", &bad);
}

/// Cold -> cold repeats found out of sample, each raised near an attenuator's loss step where the two
/// sweeps' pieces of compensation straddle the step differently (the baseline's follow its anchored joints):
/// - 41000103 (`--seed 41`): the first version of the flank reading took each sweep's compensation on the
///   side of a 15 dB pad's step that sweep's own map put the place on, and the two maps put them on either
///   side: a rise of the pad's round trip, a minor finding with the states given. Both sweeps are now read
///   on the current sweep's side (`difference::flank_changes`);
/// - 125000375 (`--seed 125`): the joint probe behind a 17 dB pad read the baseline with its piece behind
///   the step and the current with its piece in front: a fall of 35 dB, a minor finding with the states
///   given. The probes read both sweeps as the flanks do (`difference::joint_probes`).
#[test]
fn repeats_found_out_of_sample_raise_nothing_above_info() {
    let mut bad = Vec::new();
    for seed in [41_000_103, 125_000_375] {
        let e = scenario::score::evaluate(seed, Case::Repeat);
        for given in [false, true] {
            if e.false_alarm(given) {
                bad.push(case_line(&e, given));
            }
        }
    }
    report("cold -> cold repeats with a finding above info", &bad);
}

/// Healthy generated cooldowns swept through an amplifier in front of the line: the whole reflection scaled
/// by a round-trip gain of 36 dB warm and 40 dB cold, tilted by 1 and 1.5 dB across the band, so |S11|
/// reads well above 1 and the sweeps return more power than they were sent. The gain's change is a level change of the whole trace, which the alignment finds
/// however few landmarks the line shows, and nothing is raised above info, states given or inferred.
/// Seeds 9000022, 9000023 and 9000031 raised a minor to critical finding while the sweep was read at its
/// amplified level (every echo a component's, every cost a total reflection's) and a line of fewer than
/// three amplitude landmarks held the level near 0.
#[test]
fn healthy_cooldowns_through_an_amplifier_raise_nothing_above_info() {
    let bad = through_an_amplifier(
        &[
            9_000_022, 9_000_023, 9_000_031, 9_000_002, 9_000_003, 9_000_005,
        ],
        true,
        false,
    );
    report("healthy cooldowns through an amplifier", &bad);
}

/// Healthy cooldowns through the same amplifier on lines matched so well that neither sweep returns more
/// power than a passive line may (seeds 9000050, 9000101 and 9000167 of `amplified_accuracy --seed 9`):
/// nothing in the sweeps' power tells the gain, and each was read as a passive line whose joints reflect
/// a third or more, with a major or critical finding. Every joint of the line file the sweeps show reads at
/// a component's level in both sweeps: that is the gain, and it is taken out as where it shows.
#[test]
fn healthy_cooldowns_through_an_amplifier_that_returns_little_power_raise_nothing_above_info() {
    let bad = through_an_amplifier(&[9_000_050, 9_000_101, 9_000_167], false, false);
    report(
        "healthy cooldowns through an amplifier, the gain hidden in power",
        &bad,
    );
}

/// A line on which nothing in the data tells the gain (seed 9000109 of `amplified_accuracy --seed 9`: one
/// joint of the line file, too few to read the gain from, and a matched end), read as a passive line,
/// raised a critical open at its far end: the matched end's echo rose 15 dB on cooling as the cable's
/// impedance moved away from the load's, to a level only a total reflection reaches without gain. Its line
/// file may say what the data cannot (`gain_in_path = true`), and then the sweeps are read as sweeps
/// through gain.
#[test]
fn a_line_file_that_declares_the_gain_has_its_sweeps_read_through_it() {
    let bad = through_an_amplifier(&[9_000_109], false, true);
    report(
        "healthy cooldowns through an amplifier, the gain hidden in power and declared",
        &bad,
    );
}

/// A line whose pad of 7 dB sits within a resolution cell of the joints either side of it (seed 17000123
/// of `amplified_accuracy --seed 17`), matched so well that neither sweep through the gain returns more
/// power than a passive line may. The compensation steps by the pad's loss between the two joints, so the
/// echo read at the nearer one is the other's in one sweep and its own in the other: read as a passive
/// line, it rose 22 dB, a critical open, for the gain's 4 dB. Every other joint the sweeps show reads at a
/// component's level in both; that is the gain, though one joint reads low. A minor contact is left at the
/// pad, as where the line file declares the gain (docs/accuracy.md, "Amplified lines").
#[test]
fn joints_lifted_by_a_hidden_gain_show_it_though_one_reads_low() {
    let bad = through_a_gain(&[17_000_123], false, false, false, Severity::Minor);
    report(
        "a healthy cooldown through a hidden gain, one joint read low",
        &bad,
    );
}

/// A line of two joints about a 5 dB pad within a cell of each other, read through a band-limited gain
/// that the line file declares (seed 17000056 of `amplified_accuracy --seed 17`): each sweep's scale was
/// set by its own joints, whose median moved 16 dB between the sweeps where the gain moved 4, and what was
/// left was more than the alignment takes for a level change: a critical unknown echo at the pad. The
/// current sweep's scale is now the baseline's times the change the joints both show agree on. A minor
/// finding is left there: the joints set the scale at a good joint's few per cent, and this line's read
/// lower, so what changed at the pad reads several times its size (docs/accuracy.md, "Amplified lines").
#[test]
fn a_pairs_gain_change_is_read_from_the_joints_both_sweeps_show() {
    let bad = through_a_gain(&[17_000_056], false, true, true, Severity::Minor);
    report(
        "a healthy cooldown through a declared band-limited gain",
        &bad,
    );
}

/// Each healthy cooldown of `seeds` swept through a round-trip gain of 36 dB warm and 40 dB cold, tilted by
/// 1 and 1.5 dB across the band; the sweeps return more power than a passive line when `shows`, and no more
/// otherwise; the line file declares the gain when `declared`. Whatever is wrong with the comparisons, one
/// line each.
fn through_an_amplifier(seeds: &[u64], shows: bool, declared: bool) -> Vec<String> {
    through_a_gain(seeds, shows, declared, false, Severity::Info)
}

/// [`through_an_amplifier`], the gain band-limited when `band`: rolled off outside the middle 60 % of the
/// band (an eighth-order edge) whose width grows 5 % on cooling (as `amplified_accuracy`'s `band` shape),
/// and findings up to `allowed` let pass.
fn through_a_gain(
    seeds: &[u64],
    shows: bool,
    declared: bool,
    band: bool,
    allowed: Severity,
) -> Vec<String> {
    let through = |n, gain_db: f64, tilt_db: f64, width: f64| {
        scenario::through_gain(n, |_, u| {
            let x = (u - 0.5) / (0.3 * width);
            gain_db + tilt_db * u
                - if band {
                    10.0 * (1.0 + x.powi(8)).log10()
                } else {
                    0.0
                }
        })
    };
    let mut bad = Vec::new();
    for &seed in seeds {
        let mut s = Scenario::generate(seed, Case::Healthy);
        s.nominal.gain_in_path = declared;
        let (b, c) = s.sweeps().unwrap();
        let (b, c) = (through(b, 36.0, -1.0, 1.0), through(c, 40.0, -1.5, 1.05));
        let power_db =
            |n: &coldtrace::Network| coldtrace::compare::sweep::returned_power_db(&n.s11());
        assert_eq!(
            power_db(&b).max(power_db(&c)) > coldtrace::compare::sweep::PASSIVE_POWER_LIMIT_DB,
            shows,
            "seed {seed}: the gain should {}show in the power returned",
            if shows { "" } else { "not " }
        );
        for given in [true, false] {
            let r = s.compare(&b, &c, given).unwrap();
            let alarms: Vec<String> = r
                .findings
                .iter()
                .filter(|f| f.severity > allowed)
                .map(|f| {
                    format!(
                        "{:?} {:?} at {:.3} m",
                        f.severity, f.kind, f.place.distance_m
                    )
                })
                .collect();
            if !alarms.is_empty() {
                bad.push(format!(
                    "  seed {seed}, states given {given}: {}",
                    alarms.join("; ")
                ));
            }
            let declared_said = |w: &coldtrace::Warning| w.message.contains("gain_in_path = true");
            if !r.warnings.iter().any(|w| w.kind == "gain-in-path")
                || r.warnings.iter().any(declared_said) != declared
            {
                bad.push(format!(
                    "  seed {seed}, states given {given}: no gain-in-path warning{}",
                    if declared {
                        " saying the line file declares it"
                    } else {
                        ""
                    }
                ));
            }
            if given && (r.alignment.level_change_db - 4.0).abs() > 1.5 {
                bad.push(format!(
                    "  seed {seed}: level change {:.2} dB, the gain moved by 4 dB",
                    r.alignment.level_change_db
                ));
            }
        }
    }
    bad
}

/// A contact of 0.63 ohm at J3 of a cold -> cold repeat (seed 1500119): it turns J3's echo (a 7.8 fF joint,
/// 60 dB over the noise) by 21 degrees and 0.45 dB, a relative complex change of 0.37, under the 0.41 that
/// counts as a change. It costs nothing yet (info), but it is reported, and ranked first, rather than lost.
#[test]
fn a_small_change_of_a_strong_joint_in_one_state_is_reported_at_info() {
    let e = scenario::score::evaluate(1_500_119, Case::Fault);
    for given in [true, false] {
        assert_right_first(&e, given);
        assert!(e.run(given).alarms.is_empty(), "{}", case_line(&e, given));
    }
}

/// A gap of 18 fF bridged by 24 ohm at J3 of a warm -> cold pair (seed 1500194), J3 the joint right in
/// front of a device of 5.4 dB return loss: the two share one resolution cell, and what the port sees is the
/// device's echo falling by 2.8 dB (2.2 dB beyond the calibration), under the 6 dB a component's echo may
/// move by on cooling. Nothing was reported. It is now noted at info at the far end, whose nearest connector
/// is J3, and ranked first; nothing is raised above info (it may as well be the device's own cooling).
#[test]
fn a_fault_in_front_of_a_device_across_a_cooldown_is_noted_at_the_far_end() {
    let e = scenario::score::evaluate(1_500_194, Case::Fault);
    assert!(
        e.scenario.fault_masked_by_end(),
        "the seed should place the fault in front of the device: {}",
        case_line(&e, true)
    );
    for given in [true, false] {
        assert_right_first(&e, given);
        assert!(e.run(given).alarms.is_empty(), "{}", case_line(&e, given));
    }
}

/// A crush of 35 ohm in c7 (seed 1500157) lies behind 93 dB of round-trip loss at 10 GHz, past where the
/// compensation stops: its echo stands some 28 dB over the current sweep's noise where the warm baseline
/// shows only noise. Its rise is judged against what the baseline shows there, not against the baseline's
/// detection threshold, and it ranks first at its element.
#[test]
fn a_crush_just_over_the_noise_behind_a_lossy_line_is_ranked_first() {
    let e = scenario::score::evaluate(1_500_157, Case::Fault);
    for given in [true, false] {
        assert_right_first(&e, given);
    }
}

/// A pin gap of 8.6 fF at J3 (seed 1500144) reflects 0.999 across 0.01-20 GHz: an open. What appears behind
/// it (multiple reflections, lifted by the compensation of the attenuators behind) is not claimed, and the
/// pin gap ranks first.
#[test]
fn nothing_behind_a_pin_gap_that_reflects_as_an_open_is_claimed() {
    let e = scenario::score::evaluate(1_500_144, Case::Fault);
    for given in [true, false] {
        assert_right_first(&e, given);
        assert_eq!(e.run(given).alarms.len(), 1, "{}", case_line(&e, given));
    }
}

#[test]
fn generator_is_reproducible_from_its_seed() {
    for (seed, case) in [(1, Case::Healthy), (2, Case::Fault), (3, Case::Repeat)] {
        let a = Scenario::generate(seed, case);
        let b = Scenario::generate(seed, case);
        assert_eq!(a.truth_text, b.truth_text);
        assert_eq!(a.fault, b.fault);
        assert_eq!(a.band, b.band);
        let (na, ca) = a.sweeps().unwrap();
        let (nb, cb) = b.sweeps().unwrap();
        assert_eq!((na.s, ca.s), (nb.s, cb.s), "seed {seed}");
    }
    assert_ne!(
        Scenario::generate(1, Case::Fault).truth_text,
        Scenario::generate(2, Case::Fault).truth_text
    );
}

#[test]
fn generated_lines_stay_within_their_stated_ranges() {
    use coldtrace::line::ElementKind;
    for seed in 0..300u64 {
        let case = [Case::Healthy, Case::Repeat, Case::Fault][seed as usize % 3];
        let s = Scenario::generate(seed, case);
        let why = || s.describe();
        // Declared lengths within +/- 8 mm of the as-built ones, and the two files otherwise alike.
        assert_eq!(
            s.nominal.elements.len(),
            s.truth.elements.len(),
            "{}",
            why()
        );
        for (n, t) in s.nominal.elements.iter().zip(&s.truth.elements) {
            assert_eq!(n.name, t.name);
            if matches!(n.kind, ElementKind::Cable { .. }) {
                let d = t.length_m - n.length_m;
                assert!(
                    d.abs() <= LENGTH_ERROR_M + 1e-6,
                    "{}: {d}\n{}",
                    n.name,
                    why()
                );
                assert!((0.1..=1.5 + 1e-9).contains(&n.length_m), "{}", why());
            } else {
                assert_eq!(n.length_m, t.length_m, "{}", why());
            }
        }
        let cables = s
            .nominal
            .elements
            .iter()
            .filter(|e| matches!(e.kind, ElementKind::Cable { .. }))
            .count();
        assert!((2..=8).contains(&cables), "{}", why());
        // The nominal file says nothing of the connectors' true impedance (only the line's); the truth does.
        assert_eq!(s.nominal_text.matches("impedance_ohm").count(), 1);
        for e in &s.truth.elements {
            if let ElementKind::Connector { section, .. } = &e.kind {
                let z = section.impedance_ohm();
                assert!((48.0 - 1e-6..=53.0 + 1e-6).contains(&z), "{z}\n{}", why());
            }
        }
        // The line ends in a device and fits in the alias-free range.
        assert!(s.nominal.first_device().is_some());
        let rt = s
            .nominal
            .round_trip_s(s.nominal.length_m(), coldtrace::line::State::Warm);
        let df = (s.band.stop_hz - s.band.start_hz) / (s.band.points - 1) as f64;
        assert!(rt < 1.0 / df, "{}", why());
        assert!((1601..=4001).contains(&s.band.points));
        assert!((-100.0..=-80.0).contains(&s.band.noise_db));
        let p = s.perturbation;
        assert!((0.5..=2.0).contains(&p.permittivity_change_scale));
        assert!((0.8..=1.2).contains(&p.contraction_scale));
        assert!((0.7..=1.3).contains(&p.surface_resistance_scale));
        match case {
            Case::Healthy => {
                assert!(s.fault.is_none());
                assert_eq!(
                    (s.baseline_state, s.current_state),
                    (coldtrace::line::State::Warm, coldtrace::line::State::Cold)
                );
            }
            Case::Repeat => {
                assert!(s.fault.is_none());
                assert_eq!(s.baseline_state, s.current_state);
                assert_ne!(s.baseline_noise_seed, s.current_noise_seed);
            }
            Case::Fault => {
                let f = s.fault.as_ref().expect("a fault case has a fault");
                assert_eq!(s.current_state, coldtrace::line::State::Cold);
                // Inside what reflection can see, on an element before the device.
                assert!(
                    f.position_m > 0.0 && f.position_m < s.nominal.length_m(),
                    "{}",
                    why()
                );
                let (i, e) = s.nominal.element(&f.element).expect("the fault's element");
                assert!(i < s.nominal.first_device().unwrap());
                assert!(
                    f.position_m >= e.start_m && f.position_m <= e.end_m(),
                    "{}",
                    why()
                );
                assert_eq!(
                    f.at_connector,
                    matches!(e.kind, ElementKind::Connector { .. })
                );
                assert!(f.local_rho > 0.0 && f.local_rho <= 1.0 && f.level_db.is_finite());
            }
        }
    }
}

#[test]
fn every_fault_kind_and_several_bands_are_generated() {
    use scenario::TrueKind;
    let mut kinds = std::collections::BTreeSet::new();
    let mut bands = std::collections::BTreeSet::new();
    let mut in_cable = 0;
    for seed in 0..200u64 {
        let s = Scenario::generate(seed, Case::Fault);
        let f = s.fault.unwrap();
        kinds.insert(f.kind);
        in_cable += (!f.at_connector) as usize;
        bands.insert((s.band.start_hz as u64, s.band.stop_hz as u64));
    }
    for k in [
        TrueKind::PinGap,
        TrueKind::PartialGap,
        TrueKind::Contact,
        TrueKind::Crush,
        TrueKind::Open,
    ] {
        assert!(kinds.contains(&k), "{k:?} never generated");
    }
    assert!(in_cable >= 40, "{in_cable} faults inside cables");
    assert!(bands.len() >= 4, "{bands:?}");
}

/// The level as the port sees it against the lumped estimate, on a fault in the open with nothing beside it:
/// a crush inside a cable of a line without attenuators and with under 10 dB of round-trip loss in front of
/// it (the seeds below), where the two measures share
/// their physics (the same reflection, the same round-trip loss) and must agree within what the lumped
/// estimate leaves out (the perturbed surface resistance, the crush's own length against the window's main
/// lobe, the connectors' mismatches): a few dB.
#[test]
fn fault_level_as_the_port_sees_it_agrees_with_the_lumped_estimate_in_the_open() {
    let mut checked = 0;
    for seed in 0..400u64 {
        let s = Scenario::generate(seed, Case::Fault);
        let f = s.fault.clone().unwrap();
        let plain = !s
            .nominal
            .elements
            .iter()
            .any(|e| matches!(e.kind, coldtrace::line::ElementKind::Attenuator { .. }));
        // Little loss in front of it: the surface resistance the truth perturbs by up to 30 % moves a
        // 10 dB round trip by 3 dB at most.
        if f.kind != scenario::TrueKind::Crush || !plain || f.loss_db > 10.0 {
            continue;
        }
        checked += 1;
        assert!(
            (f.level_db - f.lumped_level_db).abs() < 6.0,
            "seed {seed}: seen {:.1} dB, lumped {:.1} dB",
            f.level_db,
            f.lumped_level_db
        );
    }
    assert!(checked >= 5, "only {checked} crushes in plain lines");
}

#[test]
fn fault_level_follows_the_noise_and_the_fault_size() {
    // The level is 20 log10(|rho| 10^(-loss/20) / noise_rms) (module documentation).
    let mut s = Scenario::generate(5, Case::Fault);
    let f = s.fault.clone().unwrap();
    let n0 = s.band.trace_noise_rms();
    let want = 20.0 * (f.local_rho * 10f64.powf(-f.loss_db / 20.0) / n0).log10();
    assert!((f.lumped_level_db - want).abs() < 1e-9);
    // Band-pass noise RMS of N points under a window: sigma sqrt(sum w^2) / sum w, which is sigma / sqrt(N)
    // for a flat window; any taper raises it (Cauchy-Schwarz), the Kaiser beta 9 by under a factor 2.
    let flat = 10f64.powf(s.band.noise_db / 20.0) / (s.band.points as f64).sqrt();
    assert!(n0 > flat && n0 < 2.0 * flat, "{n0} vs {flat}");
    // 20 dB less noise, 20 dB more level.
    s.band.noise_db -= 20.0;
    let n1 = s.band.trace_noise_rms();
    assert!((20.0 * (n0 / n1).log10() - 20.0).abs() < 1e-9);
}
