//! The comparator against what is physically certain about the real campaign (public CC0 sweeps of one
//! cryostat coax path, tests/data/real/campaign-1 and tests/data/real/cryostat-a; the facts are listed in
//! the README there), on a line of unknown construction (velocity factor 0.70), states not given:
//!
//! - a file at 295 K against the same file at ~3 K is a healthy cooldown: no finding above info, states
//!   inferred warm -> cold;
//! - two terminations of one cooldown differ only at the far end: the rank-1 change and every finding above
//!   info lie there;
//! - an offset short against the flush short of the same port moves the far end by its air line (5, 10.8, 18
//!   and 30 mm, at c0), within 1 mm;
//! - one switch-board standard (never re-mated) in two cooldowns, at one temperature, is a healthy repeat
//!   across a thermal cycle: no finding above info, one state for both sweeps left open.
//!
//! The checks themselves are in tests/common/real_campaign.rs, shared with `examples/real_campaign.rs`, which
//! runs them over the whole campaign. Which files count as "one cooldown": the switch-board standards of one
//! letter (`ecal_open_A`, `ecal_short_A`) certainly; one port's standards at one temperature are taken as
//! such because the README lists "one port's standards against each other" among the pairs that differ only
//! in the termination (it does not say in which cooldown each port file was measured: the standards were
//! rotated across the ports, so they may come from different cooldowns of the same line).

#[path = "common/real_campaign.rs"]
mod checks;

use checks::{FarRegion, OffsetMove};
use coldtrace::compare::CompareReport;
use coldtrace::Network;
use std::path::PathBuf;

/// A sweep of the copied subset: `t` is `295k` or `3k`; the switch-board standards of cooldown A live under
/// their plain names in cryostat-a/.
fn path(t: &str, name: &str) -> PathBuf {
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/data/real");
    match name {
        "ecal_open_A" => root.join(format!("cryostat-a/{t}/open.s1p")),
        "ecal_short_A" => root.join(format!("cryostat-a/{t}/short.s1p")),
        _ => root.join(format!("campaign-1/{t}/{name}.s1p")),
    }
}

fn sweep(t: &str, name: &str) -> Network {
    checks::read(&path(t, name)).unwrap_or_else(|e| panic!("{e}"))
}

/// `t/name`, for messages.
fn label(t: &str, name: &str) -> String {
    format!("{t}/{name}")
}

fn compare(b: (&str, &str), c: (&str, &str)) -> Result<CompareReport, String> {
    let (nb, nc) = (sweep(b.0, b.1), sweep(c.0, c.1));
    checks::compare_pair((&label(b.0, b.1), &nb), (&label(c.0, c.1), &nc))
}

/// Fail with every pair's problem, one per line, if any.
fn assert_all(what: &str, pairs: usize, failures: &[String]) {
    assert!(pairs > 0, "{what}: no pair was checked");
    assert!(
        failures.is_empty(),
        "{what}: {} of {pairs} pair(s) failed:\n{}",
        failures.len(),
        failures.join("\n")
    );
}

/// Files measured at both temperatures in the subset.
const BOTH_TEMPERATURES: [&str; 6] = [
    "port1_MOS1",
    "port1_MOS3",
    "port1_MOS6",
    "port3_MOS6",
    "ecal_open_A",
    "ecal_short_A",
];

#[test]
fn warm_to_cold_of_one_file_is_a_healthy_cooldown_inferred_warm_to_cold() {
    let mut failures = Vec::new();
    for name in BOTH_TEMPERATURES {
        let pair = format!("{} -> {}", label("295k", name), label("3k", name));
        match compare(("295k", name), ("3k", name)) {
            Ok(r) => {
                if let Err(e) = checks::check_cooldown(&r) {
                    failures.push(format!("{pair}: {e}"));
                }
            }
            Err(e) => failures.push(format!("{pair}: {e}")),
        }
    }
    assert_all(
        "warm -> cold (no finding above info, inferred warm -> cold)",
        BOTH_TEMPERATURES.len(),
        &failures,
    );
}

#[test]
fn one_switch_board_standard_in_two_cooldowns_is_a_healthy_repeat() {
    let mut failures = Vec::new();
    for t in ["295k", "3k"] {
        let pair = format!(
            "{} -> {}",
            label(t, "ecal_short_A"),
            label(t, "ecal_short_B")
        );
        match compare((t, "ecal_short_A"), (t, "ecal_short_B")) {
            Ok(r) => {
                if let Err(e) = checks::check_repeat(&r) {
                    failures.push(format!("{pair}: {e}"));
                }
            }
            Err(e) => failures.push(format!("{pair}: {e}")),
        }
    }
    assert_all(
        "repeats across a thermal cycle (no finding above info, one state left open)",
        2,
        &failures,
    );
}

/// Pairs of terminations of one cooldown (temperature, baseline, current): opens against shorts, and shorts
/// at different places (the air-line test checks how far the offset shorts moved).
const TERMINATION_PAIRS: [(&str, &str, &str); 8] = [
    ("295k", "ecal_open_A", "ecal_short_A"),
    ("3k", "ecal_open_A", "ecal_short_A"),
    ("295k", "port1_MOS1", "port1_MOS6"),
    ("295k", "port1_MOS1", "port1_MOS3"),
    ("3k", "port1_MOS1", "port1_MOS2"),
    ("3k", "port1_MOS2", "port1_MOS3"),
    ("3k", "port1_MOS3", "port1_MOS5"),
    ("3k", "port1_MOS4", "port1_MOS6"),
];

#[test]
fn terminations_of_one_cooldown_differ_only_at_the_far_end() {
    let mut failures = Vec::new();
    for (t, b, c) in TERMINATION_PAIRS {
        let pair = format!("{} -> {}", label(t, b), label(t, c));
        let (nb, nc) = (sweep(t, b), sweep(t, c));
        let ends: Vec<_> = [(b, &nb), (c, &nc)]
            .into_iter()
            .filter(|(name, _)| checks::reflects(name))
            .map(|(_, n)| checks::far_end(n).unwrap_or_else(|e| panic!("{pair}: {e}")))
            .collect();
        let region = FarRegion::around(&ends).expect("each pair has an open or a short");
        match checks::compare_pair((&label(t, b), &nb), (&label(t, c), &nc)) {
            Ok(r) => {
                if let Err(e) = checks::check_far_end(&r, &region) {
                    failures.push(format!("{pair}: {e}"));
                }
            }
            Err(e) => failures.push(format!("{pair}: {e}")),
        }
    }
    assert_all(
        "terminations of one cooldown (rank 1 and every finding above info at the far end)",
        TERMINATION_PAIRS.len(),
        &failures,
    );
}

/// The offset shorts of the subset (all at 3 K, port 1).
const OFFSET_SHORTS: [&str; 4] = ["port1_MOS2", "port1_MOS3", "port1_MOS4", "port1_MOS5"];

/// The premise of the next test, without the comparator: the far-end echoes themselves (through
/// `coldtrace::transform`) move by the air line, within 1 mm.
#[test]
fn far_end_echoes_of_the_offset_shorts_move_by_their_air_line() {
    let flush = checks::far_end(&sweep("3k", "port1_MOS1")).unwrap();
    let mut failures = Vec::new();
    for name in OFFSET_SHORTS {
        let nominal = checks::offset_short_mm(name).unwrap();
        let offset = checks::far_end(&sweep("3k", name)).unwrap();
        let measured = checks::air_mm(&flush, &offset);
        if let Err(e) = checks::check_echo_move(measured, nominal) {
            failures.push(format!("3k/port1_MOS1 -> 3k/{name}: {e}"));
        }
    }
    assert_all(
        "far-end echoes of the offset shorts",
        OFFSET_SHORTS.len(),
        &failures,
    );
}

#[test]
fn offset_shorts_move_the_far_end_by_their_air_line() {
    let flush = ("3k", "port1_MOS1");
    let f_flush = checks::far_end(&sweep(flush.0, flush.1)).unwrap();
    let mut failures = Vec::new();
    for name in OFFSET_SHORTS {
        let offset = ("3k", name);
        let pair = format!("{} <-> {}", label(flush.0, flush.1), label("3k", name));
        let nominal = checks::offset_short_mm(name).unwrap();
        let f_offset = checks::far_end(&sweep("3k", name)).unwrap();
        match (compare(flush, offset), compare(offset, flush)) {
            (Ok(to_offset), Ok(to_flush)) => {
                let mv = OffsetMove::of(&to_offset, &to_flush, &f_flush, &f_offset, nominal);
                if let Err(e) = mv.check() {
                    failures.push(format!(
                        "{pair}: {e}; rank 1 flush -> offset: {}; offset -> flush: {}",
                        checks::top(&to_offset).map_or("none".into(), checks::describe),
                        checks::top(&to_flush).map_or("none".into(), checks::describe)
                    ));
                }
            }
            (Err(e), _) | (_, Err(e)) => failures.push(format!("{pair}: {e}")),
        }
    }
    assert_all(
        "offset shorts against the flush short (far-end move within 1 mm of the air line)",
        OFFSET_SHORTS.len(),
        &failures,
    );
}

/// A valid pair of sweeps never ends in an internal error: warm against cold of port 1's open made the
/// comparator ask for a gate past the alias-free range.
#[test]
fn gate_error_on_port1_mos6_warm_cold() {
    if let Err(e) = compare(("295k", "port1_MOS6"), ("3k", "port1_MOS6")) {
        panic!("295k/port1_MOS6 -> 3k/port1_MOS6: {e}");
    }
}
