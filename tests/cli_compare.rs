//! The whole binary: `simulate`, then `locate` and `compare` on the result, in a temporary folder; exit
//! codes, the JSON contract keys, and errors that name the file and the fix.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_coldtrace"))
}

fn line_file() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/compare/south-fridge-in-02.toml")
}

fn simulate(dir: &Path, name: &str, state: &str, fault: Option<&str>, seed: u32) -> PathBuf {
    let out = dir.join(name);
    let mut c = bin();
    c.args(["simulate"]).arg(line_file()).args([
        "--state",
        state,
        "--points",
        "2001",
        "--noise-db",
        "-90",
    ]);
    c.args(["--seed", &seed.to_string()]);
    if let Some(f) = fault {
        c.args(["--fault", f]);
    }
    let o = c.arg("-o").arg(&out).output().unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    out
}

fn run(args: &[&str], files: &[&Path]) -> Output {
    let mut c = bin();
    c.args(args);
    for f in files {
        c.arg(f);
    }
    c.output().unwrap()
}

#[test]
fn compare_reports_the_gap_with_the_contract_keys_and_exit_1() {
    let dir = tempfile::tempdir().unwrap();
    let warm = simulate(dir.path(), "warm.s1p", "warm", None, 3);
    let cold = simulate(dir.path(), "cold.s1p", "cold", Some("J2:gap=20um"), 4);
    let line = line_file();
    let o = run(
        &["compare"],
        &[
            &warm,
            &cold,
            Path::new("--line"),
            &line,
            Path::new("--json"),
        ],
    );
    assert_eq!(
        o.status.code(),
        Some(1),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    for k in [
        "line",
        "resolution_m",
        "alignment",
        "findings",
        "not_visible",
        "warnings",
    ] {
        assert!(v.get(k).is_some(), "missing {k}");
    }
    for k in ["residual_m", "segments"] {
        assert!(v["alignment"].get(k).is_some(), "missing alignment.{k}");
    }
    for k in ["element", "delay_scale", "loss_change_db"] {
        assert!(
            v["alignment"]["segments"][0].get(k).is_some(),
            "missing segments[].{k}"
        );
    }
    let f = &v["findings"][0];
    for k in [
        "rank",
        "distance_m",
        "element",
        "offset_m",
        "nearest_connector",
        "kind",
        "severity",
        "reflection_db",
        "change_db",
        "mismatch_loss_db",
        "uncertainty_m",
        "model",
    ] {
        assert!(f.get(k).is_some(), "missing findings[].{k}");
    }
    for k in ["type", "value", "unit", "fit_error"] {
        assert!(f["model"].get(k).is_some(), "missing model.{k}");
    }
    assert_eq!(f["rank"], 1);
    assert_eq!(f["kind"], "pin-gap");
    assert_eq!(f["nearest_connector"], "J2");
    // The states were inferred (not given) and said so.
    assert_eq!(v["states"]["inferred"], true);
    assert_eq!(v["states"]["baseline"], "warm");
    assert_eq!(v["states"]["current"], "cold");

    // The same comparison passes with --fail-on above what it found... unless it is critical.
    let sev = f["severity"].as_str().unwrap().to_string();
    let o = run(
        &["compare", "--fail-on", "critical"],
        &[&warm, &cold, Path::new("--line"), &line],
    );
    let want = if sev == "critical" { 1 } else { 0 };
    assert_eq!(o.status.code(), Some(want));
    let text = String::from_utf8_lossy(&o.stdout);
    assert!(text.contains("J2") && text.contains("pin-gap"), "{text}");
}

#[test]
fn healthy_cooldown_exits_0_and_locate_lists_the_connectors() {
    let dir = tempfile::tempdir().unwrap();
    let warm = simulate(dir.path(), "warm.s1p", "warm", None, 5);
    let cold = simulate(dir.path(), "cold.s1p", "cold", None, 6);
    let line = line_file();
    let o = run(&["compare"], &[&warm, &cold, Path::new("--line"), &line]);
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stdout)
    );

    let plot = dir.path().join("locate.svg");
    let o = run(
        &["locate", "--state", "cold", "--json"],
        &[
            &cold,
            Path::new("--line"),
            &line,
            Path::new("--plot"),
            &plot,
        ],
    );
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let events = v["events"].as_array().unwrap();
    for k in [
        "distance_m",
        "element",
        "offset_m",
        "nearest_connector",
        "reflection_db",
        "visible",
    ] {
        assert!(events[0].get(k).is_some(), "missing events[].{k}");
    }
    for j in ["J1", "J2", "J3"] {
        assert!(
            events.iter().any(|e| e["element"] == j),
            "{j} not among the events"
        );
    }
    let svg = std::fs::read_to_string(&plot).unwrap();
    assert!(svg.contains("J2"), "the plot marks the connectors");
    // The plot exists now: without --force it is not replaced.
    let o = run(
        &["locate"],
        &[
            &cold,
            Path::new("--line"),
            &line,
            Path::new("--plot"),
            &plot,
        ],
    );
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("--force"));
}

#[test]
fn bad_inputs_exit_2_naming_the_file_and_the_fix() {
    let dir = tempfile::tempdir().unwrap();
    let warm = simulate(dir.path(), "warm.s1p", "warm", None, 7);
    let missing = dir.path().join("nope.s1p");
    let o = run(
        &["compare"],
        &[&warm, &missing, Path::new("--vf"), Path::new("0.7")],
    );
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("nope.s1p"));

    let bad_line = dir.path().join("bad.toml");
    std::fs::write(&bad_line, "name = \"x\"\n[[element]]\nkind = \"cable\"\nname = \"a\"\ncable = \"no-such\"\nlength_m = 1.0\n").unwrap();
    let o = run(&["locate"], &[&warm, Path::new("--line"), &bad_line]);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("bad.toml") && err.contains("no-such"), "{err}");

    let o = run(&["compare", "--fail-on", "severe"], &[&warm, &warm]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("info, minor, major or critical"));
}

/// The report says which connector-length convention the line file used (the line file as people write
/// it: mated pairs add no length by default), in the table and in the JSON.
#[test]
fn compare_names_the_connector_length_convention() {
    let dir = tempfile::tempdir().unwrap();
    let w = simulate(dir.path(), "w.s1p", "warm", None, 21);
    let c = simulate(dir.path(), "c.s1p", "cold", None, 22);
    let line = line_file();
    let o = run(&["compare", "--line"], &[&line, &w, &c]);
    let text = String::from_utf8_lossy(&o.stdout);
    assert!(text.contains("connector lengths: in-cables"), "{text}");
    let o = run(&["compare", "--json", "--line"], &[&line, &w, &c]);
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(v["connector_lengths"], "in-cables", "{v}");
    // The states were inferred from the data and the report says how.
    assert_eq!(v["states"]["inferred"], true);
    assert!(
        v["states"]["signatures"]
            .as_array()
            .is_some_and(|s| !s.is_empty()),
        "{v}"
    );
    assert!(
        v["states"]["hypotheses_open"]
            .as_array()
            .is_some_and(|s| !s.is_empty()),
        "{v}"
    );
}
