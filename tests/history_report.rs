//! `history show LINE --report F.html`: a line's history as one self-contained HTML report, parsed with an
//! HTML parser (scraper): its sections in order, the records table against `history show --json`, one
//! figure per connector with its trend and the severity levels, the database's SHA-256, nothing fetched
//! from elsewhere, and the database and existing files never written over. On the shipped demo fleet's
//! output line (invented scenario), whose J3 degrades over six cooldowns.

use scraper::Html;

#[path = "common/html_page.rs"]
mod html_page;
use html_page::sel;
use sha2::{Digest, Sha256};
use std::path::{Path, PathBuf};

#[path = "common/history_cli.rs"]
mod history_cli;
use history_cli::{expect_code, run};

const LINE: &str = "north-fridge/out-03";

fn fleet(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("sample-sweeps/north-fridge/fleet")
        .join(name)
}

fn sha256(path: &Path) -> String {
    Sha256::digest(std::fs::read(path).unwrap())
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect()
}

/// The six cold cooldowns of out-03 recorded, the first chosen as baseline before the others.
fn history(dir: &Path) -> PathBuf {
    let db = dir.join("h.sqlite");
    let line = fleet("out-03.toml");
    for i in 1..=6 {
        let sweep = fleet(&format!("out-03-cooldown-{i}.s1p"));
        let at = format!("2026-0{i}-15T08:00:00Z");
        let o = run(
            &db,
            &[
                "history",
                "record",
                sweep.to_str().unwrap(),
                "--line",
                line.to_str().unwrap(),
                "--state",
                "cold",
                "--at",
                &at,
            ],
        );
        expect_code(&o, 0);
        if i == 1 {
            expect_code(&run(&db, &["history", "baseline", LINE, "1"]), 0);
        }
    }
    db
}

/// (`history show --json`, `history trend --json`, the parsed report, the report's path).
fn show_with_report(dir: &Path) -> (serde_json::Value, serde_json::Value, Html, PathBuf) {
    let db = history(dir);
    let report = dir.join("out-03.html");
    let o = run(
        &db,
        &[
            "history",
            "show",
            LINE,
            "--json",
            "--report",
            report.to_str().unwrap(),
        ],
    );
    expect_code(&o, 0);
    let show: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let trend: serde_json::Value =
        serde_json::from_slice(&run(&db, &["history", "trend", LINE, "--json"]).stdout).unwrap();
    let html = Html::parse_document(&std::fs::read_to_string(&report).unwrap());
    (show, trend, html, db)
}

#[test]
fn the_history_report_has_its_sections_rows_and_plots() {
    let dir = tempfile::tempdir().unwrap();
    let (show, trend, html, db) = show_with_report(dir.path());
    let ids: Vec<&str> = html
        .select(&sel("body > section"))
        .filter_map(|s| s.value().attr("id"))
        .collect();
    assert_eq!(ids, coldtrace::report::html::SECTIONS);
    let summary: String = html
        .select(&sel("#summary p.summary"))
        .next()
        .unwrap()
        .text()
        .collect();
    assert!(
        summary.contains("6 record(s)") && summary.contains("J3 (cold)"),
        "{summary}"
    );

    // One row per record of `history show --json`, in its order.
    let rows: Vec<Vec<String>> = html
        .select(&sel("#findings table.records tr"))
        .skip(1)
        .map(|tr| {
            tr.select(&sel("td"))
                .map(|td| td.text().collect())
                .collect()
        })
        .collect();
    let records = show["records"].as_array().unwrap();
    assert_eq!(rows.len(), records.len());
    assert_eq!(rows.len(), 6);
    for (row, r) in rows.iter().zip(records) {
        let id = r["id"].as_i64().unwrap();
        let baseline = if show["baseline"].as_i64() == Some(id) {
            " (baseline)"
        } else {
            ""
        };
        assert_eq!(row[0], format!("{id}{baseline}"));
        assert_eq!(row[1], r["at"].as_str().unwrap());
        assert_eq!(row[2], r["state"].as_str().unwrap());
        assert_eq!(row[3], r["sweep"].as_str().unwrap());
        assert_eq!(row[4], r["worst_severity"].as_str().unwrap_or("-"));
        assert_eq!(
            row[5],
            r["compared_with"]
                .as_i64()
                .map_or("-".to_string(), |b| b.to_string())
        );
        let above = r["findings"]
            .as_array()
            .unwrap()
            .iter()
            .filter(|f| f["severity"] != "info")
            .count();
        assert_eq!(
            row[6].matches('(').count(),
            above,
            "record {id}: {}",
            row[6]
        );
    }
    assert_eq!(rows[0][0], "1 (baseline)");
    assert_ne!(
        rows[5][4], "-",
        "the last cooldown was compared with the baseline"
    );

    // One figure per connector of the trend, the climbing one first and saying so, each with the
    // trend line and the three severity levels in its legend.
    let figures: Vec<String> = html
        .select(&sel("#plots figure.trend"))
        .map(|f| f.text().collect())
        .collect();
    let landmarks = trend["landmarks"].as_array().unwrap();
    assert_eq!(figures.len(), landmarks.len());
    assert_eq!(
        html.select(&sel("#plots figure.trend svg")).count(),
        landmarks.len()
    );
    assert!(figures[0].contains("J3 (cold), climbing"), "{}", figures[0]);
    for (f, l) in figures.iter().zip(
        landmarks
            .iter()
            .filter(|l| l["warning"] == true)
            .chain(landmarks.iter().filter(|l| l["warning"] != true)),
    ) {
        assert!(f.contains(l["element"].as_str().unwrap()), "{f}");
        assert!(f.contains("trend (Theil-Sen)"), "{f}");
        for sev in ["minor from", "major from", "critical from"] {
            assert!(f.contains(sev), "{sev} missing: {f}");
        }
    }

    // The database with its SHA-256, as it stands after the report (the report did not change it).
    let inputs: Vec<Vec<String>> = html
        .select(&sel("#inputs table tr"))
        .skip(1)
        .map(|tr| {
            tr.select(&sel("td"))
                .map(|td| td.text().collect())
                .collect()
        })
        .collect();
    assert_eq!(inputs.len(), 1);
    assert_eq!(inputs[0][0], "history database");
    assert_eq!(inputs[0][2], sha256(&db));
}

#[test]
fn the_history_report_fetches_nothing_and_keeps_every_file() {
    let dir = tempfile::tempdir().unwrap();
    let (_, _, html, db) = show_with_report(dir.path());
    html_page::assert_self_contained(&html);

    // An existing report is kept without --force, and replaced with it.
    let report = dir.path().join("out-03.html");
    let before = sha256(&db);
    let o = run(
        &db,
        &[
            "history",
            "show",
            LINE,
            "--report",
            report.to_str().unwrap(),
        ],
    );
    expect_code(&o, 2);
    assert!(String::from_utf8_lossy(&o.stderr).contains("--force"));
    std::fs::write(&report, "mine").unwrap();
    let o = run(
        &db,
        &[
            "history",
            "show",
            LINE,
            "--report",
            report.to_str().unwrap(),
        ],
    );
    expect_code(&o, 2);
    assert_eq!(std::fs::read_to_string(&report).unwrap(), "mine");
    let o = run(
        &db,
        &[
            "history",
            "show",
            LINE,
            "--report",
            report.to_str().unwrap(),
            "--force",
        ],
    );
    expect_code(&o, 0);
    assert!(std::fs::read_to_string(&report)
        .unwrap()
        .starts_with("<!DOCTYPE html>"));
    // Never over the database, even one named like a report and with --force.
    let odd = dir.path().join("history.html");
    std::fs::copy(&db, &odd).unwrap();
    let odd_before = sha256(&odd);
    let o = run(
        &odd,
        &[
            "history",
            "show",
            LINE,
            "--report",
            odd.to_str().unwrap(),
            "--force",
        ],
    );
    expect_code(&o, 2);
    assert_eq!(sha256(&odd), odd_before, "the database was written over");
    // Only as .html.
    let txt = dir.path().join("out-03.txt");
    let o = run(
        &db,
        &["history", "show", LINE, "--report", txt.to_str().unwrap()],
    );
    expect_code(&o, 2);
    assert!(String::from_utf8_lossy(&o.stderr).contains(".html"));
    assert!(!txt.exists());
    assert_eq!(sha256(&db), before, "the database changed");
}
