//! `coldtrace trace --line` end to end in a temp dir: a line is simulated with a fault at one connector
//! (the simulate command), traced with the line as the distance map, and the strongest peak must land at
//! that connector's as-built position (from the line file: the sum of the cables' lengths before it, its
//! centre sitting at the joint), warm and cold. The plot must carry the connector labels.

use std::path::{Path, PathBuf};
use std::process::Command;

fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_coldtrace"))
}

fn demo() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/line/north-fridge-in-07.toml")
}

fn ok(o: &std::process::Output) {
    assert_eq!(
        o.status.code(),
        Some(0),
        "stderr: {}",
        String::from_utf8_lossy(&o.stderr)
    );
}

/// Simulate `state` with a 100 fF gap at J2, then trace it with `--line --state map_state --json`.
fn trace(dir: &Path, state: &str, map_state: &str) -> serde_json::Value {
    let sweep = dir.join(format!("{state}.s1p"));
    if !sweep.exists() {
        let o = bin()
            .arg("simulate")
            .arg(demo())
            .args(["--state", state, "--points", "2001", "--noise-db", "-90"])
            .args(["--fault", "J2:gap=100fF", "-o"])
            .arg(&sweep)
            .output()
            .unwrap();
        ok(&o);
    }
    let plot = dir.join(format!("{state}-{map_state}.svg"));
    let o = bin()
        .arg("trace")
        .arg(&sweep)
        .arg("--line")
        .arg(demo())
        .args(["--state", map_state, "--json", "--plot"])
        .arg(&plot)
        .output()
        .unwrap();
    ok(&o);
    serde_json::from_slice(&o.stdout).unwrap()
}

/// J2's as-built centre from the line file: room cable 1.50 m + room to 50K 0.30 m = 1.800 m (a connector
/// without length_m adds no length and its centre sits at the joint: connector_lengths = "in-cables", the
/// default, docs/line-file.md).
const J2_M: f64 = 1.800;

fn strongest(v: &serde_json::Value) -> f64 {
    v["peaks"][0]["distance_m"].as_f64().unwrap()
}

#[test]
fn strongest_peak_lands_at_the_faulted_connector_warm_and_cold() {
    let dir = tempfile::tempdir().unwrap();
    for state in ["warm", "cold"] {
        let v = trace(dir.path(), state, state);
        let x = strongest(&v);
        assert!(
            (x - J2_M).abs() < 3e-3,
            "{state}: strongest peak at {x} m, J2 at {J2_M} m"
        );
        let j2 = v["landmarks"]
            .as_array()
            .unwrap()
            .iter()
            .find(|l| l["name"] == "J2")
            .expect("J2 among the landmarks");
        assert!((j2["distance_m"].as_f64().unwrap() - J2_M).abs() < 1e-9);
        assert_eq!(j2["kind"], "connector");
        let map = v["distance_map"].as_str().unwrap();
        assert!(
            map.contains("north-fridge/in-07") && map.contains(state),
            "{map}"
        );
        let svg = std::fs::read_to_string(dir.path().join(format!("{state}-{state}.svg"))).unwrap();
        for label in ["feedthrough", "J2", "J3", "A4", "J5"] {
            assert!(svg.contains(label), "{state} plot lacks the label {label}");
        }
    }
}

#[test]
fn the_state_of_the_map_matters() {
    // A cold sweep read with the warm map: the cold line's delay to J2 differs by ~0.25 % from warm
    // (the model's contraction and permittivity change), a few mm at 1.8 m; reading it with the right
    // state must be closer than with the wrong one.
    let dir = tempfile::tempdir().unwrap();
    let right = (strongest(&trace(dir.path(), "cold", "cold")) - J2_M).abs();
    let wrong = (strongest(&trace(dir.path(), "cold", "warm")) - J2_M).abs();
    assert!(
        wrong > 2.0 * right && wrong > 1e-3,
        "right {right} m, wrong {wrong} m"
    );
}

#[test]
fn line_and_velocity_factor_conflict_and_state_needs_a_line() {
    let dir = tempfile::tempdir().unwrap();
    let sweep = dir.path().join("x.s1p");
    std::fs::write(&sweep, "# GHz S RI R 50\n1 0.1 0\n2 0.1 0\n3 0.1 0\n").unwrap();
    let o = bin()
        .arg("trace")
        .arg(&sweep)
        .arg("--line")
        .arg(demo())
        .args(["--vf", "0.7"])
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("--vf"));
    let o = bin()
        .arg("trace")
        .arg(&sweep)
        .args(["--state", "cold"])
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2));
    let o = bin()
        .arg("trace")
        .arg(&sweep)
        .arg("--line")
        .arg(demo())
        .args(["--state", "tepid"])
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("--state"));
}
