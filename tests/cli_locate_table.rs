//! `locate`'s table is `compare`'s: the same columns, ranks 1, 2, ... without gaps, a sentence for each
//! anomaly in the text as in the JSON, "how bad" the severity and predicted drop as in `compare`; and the
//! echoes the line file expects (its connectors, its designed open) set apart from anomalies.

#[path = "common/first_hour.rs"]
mod first_hour;

use first_hour::*;
use std::path::{Path, PathBuf};

fn chain() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/line/two-cables-open.toml")
}

/// A warm sweep of the test chain, with `faults`.
fn sweep(dir: &Path, name: &str, faults: &[&str]) -> PathBuf {
    let out = dir.join(name);
    let line = chain();
    let mut args = vec![
        "simulate",
        s(&line),
        "--state",
        "warm",
        "--noise-db",
        "-80dB",
        "-o",
        s(&out),
    ];
    for f in faults {
        args.extend(["--fault", f]);
    }
    let o = run(&args);
    assert!(o.status.success(), "{}", stderr(&o));
    out
}

fn locate(sweep: &Path, extra: &[&str]) -> std::process::Output {
    let line = chain();
    let mut args = vec!["locate", s(sweep), "--line", s(&line), "--state", "warm"];
    args.extend(extra);
    run(&args)
}

#[test]
fn the_designed_open_and_the_joint_are_expected_echoes_not_anomalies() {
    let dir = tempfile::tempdir().unwrap();
    let healthy = sweep(dir.path(), "healthy.s1p", &[]);
    let o = locate(&healthy, &["--fail-on", "minor"]);
    // The designed open at 2 m would be a critical open if it were not the design.
    assert_eq!(o.status.code(), Some(0), "{}", stdout(&o));
    let text = stdout(&o);
    assert!(
        text.contains("no anomaly that costs the line power was found."),
        "{text}"
    );
    let section = text
        .split("echoes the line file expects")
        .nth(1)
        .unwrap_or_else(|| panic!("no expected echoes:\n{text}"));
    assert!(section.contains("1.000 m J1"), "{section}");
    assert!(section.contains("open end"), "{section}");
    let v: serde_json::Value =
        serde_json::from_str(&stdout(&locate(&healthy, &["--json"]))).unwrap();
    let events = v["events"].as_array().unwrap();
    let open = events
        .iter()
        .find(|e| e["kind"] == "open")
        .expect("the far open");
    assert_eq!(open["expected"], true);
    assert_eq!(open["severity"], "info");
    assert!(open["rank"].is_null());
    assert!(open["expected_reflection_db"].as_f64().unwrap() > -1.0);
}

#[test]
fn the_table_has_compares_columns_ranks_without_gaps_and_a_sentence_each() {
    let dir = tempfile::tempdir().unwrap();
    let healthy = sweep(dir.path(), "healthy.s1p", &[]);
    let faulty = sweep(dir.path(), "faulty.s1p", &["J1:gap=15um"]);
    let o = locate(&faulty, &["--all"]);
    let text = stdout(&o);
    // compare's header row, column for column.
    let c = run(&[
        "compare",
        s(&healthy),
        s(&faulty),
        "--line",
        s(&chain()),
        "--baseline-state",
        "warm",
        "--current-state",
        "warm",
    ]);
    let header = |t: &str| {
        t.lines()
            .find(|l| l.starts_with("rank "))
            .map(str::to_string)
    };
    let compare_header = header(&stdout(&c)).unwrap_or_else(|| panic!("{}", stdout(&c)));
    assert_eq!(
        header(&text).as_deref(),
        Some(compare_header.as_str()),
        "{text}"
    );
    // Ranks 1..n in order, each with its sentence.
    let v: serde_json::Value =
        serde_json::from_str(&stdout(&locate(&faulty, &["--json"]))).unwrap();
    let events = v["events"].as_array().unwrap();
    let mut ranks: Vec<u64> = events.iter().filter_map(|e| e["rank"].as_u64()).collect();
    ranks.sort();
    assert!(!ranks.is_empty());
    assert_eq!(ranks, (1..=ranks.len() as u64).collect::<Vec<_>>());
    for e in events.iter().filter(|e| !e["rank"].is_null()) {
        assert_eq!(e["expected"], false);
        let k = e["rank"].as_u64().unwrap();
        let sentence = format!("{k}. {}", e["explanation"].as_str().unwrap());
        assert!(text.contains(&sentence), "missing {sentence:?} in\n{text}");
        // How bad: the severity and the predicted drop, as compare prints a finding's.
        let bad = format!(
            "{:<8} {:.2} dB",
            e["severity"].as_str().unwrap(),
            e["power_drop_db"].as_f64().unwrap()
        );
        let row = text
            .lines()
            .find(|l| l.starts_with(&format!("{k} ")))
            .unwrap_or_else(|| panic!("no row {k}:\n{text}"));
        assert!(row.contains(&bad), "{row} lacks {bad}");
    }
    // The gap at J1 is the anomaly that costs most; its sentence says what it reflects.
    let first = events.iter().find(|e| e["rank"] == 1).unwrap();
    assert_eq!(first["element"], "J1");
    assert_eq!(first["kind"], "pin-gap");
    assert!(first["explanation"].as_str().unwrap().contains("reflects "));
    // The JSON keeps its contract order, along the line.
    let along: Vec<f64> = events
        .iter()
        .map(|e| e["distance_m"].as_f64().unwrap())
        .collect();
    assert!(along.windows(2).all(|w| w[0] <= w[1]), "{along:?}");
}

#[test]
fn a_short_where_the_line_file_designs_an_open_is_never_its_echo() {
    // The test chain ends in a designed open; a short a few millimetres before it reflects as strongly, at
    // the same place to within the resolution. The nominal line's echo there is the open the file names,
    // so the short is an anomaly, and a critical one (an open or a short cuts the line).
    let dir = tempfile::tempdir().unwrap();
    let shorted = sweep(dir.path(), "shorted.s1p", &["second cable@0.995m:short"]);
    let v: serde_json::Value =
        serde_json::from_str(&stdout(&locate(&shorted, &["--json"]))).unwrap();
    let events = v["events"].as_array().unwrap();
    let short = events
        .iter()
        .find(|e| e["kind"] == "short")
        .unwrap_or_else(|| panic!("no short among {events:#?}"));
    assert_eq!(short["expected"], false, "{short:#}");
    assert_eq!(short["severity"], "critical", "{short:#}");
    assert_eq!(short["rank"], 1, "{short:#}");
}
