//! The whole binary: `survey` on the shipped demo fleet (sample-sweeps/north-fridge/fleet, invented
//! scenario) and on manifests made in a temporary folder: each line's answer is `compare`'s for that pair,
//! worst lines first, a broken line reported in its row while the run carries on, exit codes, `--record`.

use std::path::{Path, PathBuf};
use std::process::Output;

#[path = "common/history_cli.rs"]
mod history_cli;
use history_cli::{bin, expect_code};

#[path = "common/backends.rs"]
mod backends;

fn fleet() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-sweeps/north-fridge/fleet")
}

fn json(o: &Output) -> serde_json::Value {
    serde_json::from_slice(&o.stdout)
        .unwrap_or_else(|e| panic!("{e}: {}", String::from_utf8_lossy(&o.stderr)))
}

#[test]
fn the_demo_fleet_ranks_worst_first_with_compares_answers() {
    let o = bin()
        .arg("survey")
        .arg(fleet().join("survey.toml"))
        .args(["--json", "--jobs", "2"])
        .output()
        .unwrap();
    expect_code(&o, 1);
    assert!(
        o.stderr.is_empty(),
        "quiet with --json: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    let v = json(&o);
    let lines = v["lines"].as_array().unwrap();
    for l in lines {
        for k in ["line", "worst_severity", "findings", "error"] {
            assert!(l.get(k).is_some(), "lines[].{k} missing");
        }
    }
    let names: Vec<&str> = lines.iter().map(|l| l["line"].as_str().unwrap()).collect();
    assert_eq!(
        names,
        [
            "north-fridge/in-07",
            "north-fridge/out-03",
            "north-fridge/in-08"
        ]
    );
    assert_eq!(lines[0]["worst_severity"], "critical");
    // out-03's row is exactly what compare gives for that pair.
    let c = bin()
        .arg("compare")
        .arg(fleet().join("out-03-cooldown-1.s1p"))
        .arg(fleet().join("out-03-cooldown-6.s1p"))
        .arg("--line")
        .arg(fleet().join("out-03.toml"))
        .args([
            "--baseline-state",
            "cold",
            "--current-state",
            "cold",
            "--json",
        ])
        .output()
        .unwrap();
    assert_eq!(json(&c)["findings"], lines[1]["findings"]);
    assert_eq!(lines[1]["findings"][0]["element"], "J3");
}

#[test]
fn a_survey_keeps_each_lines_findings_and_no_curves() {
    // Memory bounded however large the fleet: what a survey holds of a finished line is its findings,
    // with no per-frequency data (a finding's evidence curves are a few thousand numbers).
    use coldtrace::survey::{read_manifest, run_survey, SurveyConfig};
    let items = read_manifest(&fleet().join("survey.toml")).unwrap();
    let cfg = SurveyConfig {
        jobs: Some(2),
        record_db: None,
        analysis: Default::default(),
    };
    let r = run_survey(&items, &cfg, &|_| {}).unwrap();
    let findings: Vec<_> = r.lines.iter().flat_map(|l| &l.findings).collect();
    assert!(!findings.is_empty(), "the demo fleet has findings");
    for f in findings {
        assert!(
            f.evidence.freqs_hz.is_empty()
                && f.evidence.measured.is_empty()
                && f.evidence.model.is_empty(),
            "{}: evidence curves kept",
            f.explanation
        );
    }
}

fn manifest(dir: &Path, body: &str) -> PathBuf {
    let p = dir.join("survey.toml");
    std::fs::write(&p, body).unwrap();
    p
}

fn entry(line: &Path, baseline: &Path, current: &Path) -> String {
    format!(
        "[[line]]\nline = {:?}\nbaseline = {:?}\ncurrent = {:?}\nbaseline_state = \"cold\"\ncurrent_state = \"cold\"\n\n",
        line, baseline, current
    )
}

#[test]
fn a_broken_line_is_reported_in_its_row_and_the_run_carries_on() {
    let dir = tempfile::tempdir().unwrap();
    let f = fleet();
    let mut body = entry(
        &f.join("out-03.toml"),
        &f.join("out-03-cooldown-1.s1p"),
        &f.join("out-03-cooldown-2.s1p"),
    );
    body += &entry(
        &f.join("out-03.toml"),
        &f.join("out-03-cooldown-1.s1p"),
        &dir.path().join("missing.s1p"),
    );
    let m = manifest(dir.path(), &body);
    let o = bin().arg("survey").arg(&m).arg("--json").output().unwrap();
    assert_eq!(
        o.status.code(),
        Some(1),
        "a broken line fails the fleet, not the run"
    );
    let v = json(&o);
    let lines = v["lines"].as_array().unwrap();
    assert_eq!(lines.len(), 2);
    assert!(
        lines[0]["error"].as_str().unwrap().contains("missing.s1p"),
        "broken first"
    );
    assert_eq!(lines[1]["error"], serde_json::Value::Null);
    // The healthy pair alone passes --fail-on major.
    let m = manifest(
        dir.path(),
        &entry(
            &f.join("out-03.toml"),
            &f.join("out-03-cooldown-1.s1p"),
            &f.join("out-03-cooldown-2.s1p"),
        ),
    );
    let o = bin()
        .arg("survey")
        .arg(&m)
        .args(["--fail-on", "major"])
        .output()
        .unwrap();
    expect_code(&o, 0);
    assert!(String::from_utf8_lossy(&o.stdout).contains("north-fridge/out-03"));
}

#[test]
fn a_bad_manifest_or_flag_exits_2_naming_the_place() {
    let dir = tempfile::tempdir().unwrap();
    let m = manifest(
        dir.path(),
        "[[line]]\nline = \"a.toml\"\nbaseline = \"b.s1p\"\ncurent = \"c.s1p\"\n",
    );
    let o = bin().arg("survey").arg(&m).output().unwrap();
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("survey.toml:") && err.contains("curent"),
        "{err}"
    );
    let o = bin()
        .arg("survey")
        .arg(fleet().join("survey.toml"))
        .args(["--jobs", "0"])
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("--jobs 0"));
}

#[test]
fn record_stores_each_current_sweep_once() {
    // In an SQLite file, and on a PostgreSQL server when one is given (tests/common/backends.rs).
    for b in backends::all("survey") {
        let db = b.arg();
        for _ in 0..2 {
            let o = bin()
                .arg("survey")
                .arg(fleet().join("survey.toml"))
                .args(["--record", "--json", "--db"])
                .arg(db)
                .output()
                .unwrap();
            expect_code(&o, 1);
            let v = json(&o);
            assert!(
                v["lines"]
                    .as_array()
                    .unwrap()
                    .iter()
                    .all(|l| l["record_id"].is_i64()),
                "{} {v}",
                b.kind
            );
        }
        let o = bin()
            .args(["history", "list", "--json", "--db"])
            .arg(db)
            .output()
            .unwrap();
        assert_eq!(
            json(&o)["records"].as_array().unwrap().len(),
            3,
            "no duplicates ({})",
            b.kind
        );
    }
}
