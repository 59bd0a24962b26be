//! The HTML report, parsed with an HTML parser (scraper): its sections in order, the findings table against
//! the JSON, the inputs' hashes, and nothing fetched from elsewhere.

use scraper::Html;

#[path = "common/html_page.rs"]
mod html_page;
use html_page::sel;
#[path = "common/first_hour.rs"]
mod first_hour;
use first_hour::{run_os as run, sample};
use std::path::Path;

/// `compare --json --report` on the shipped sample: (the JSON, the parsed report).
fn compare_with_report(dir: &Path) -> (serde_json::Value, Html) {
    let report = dir.join("in-07.html");
    let (warm, cold, line) = (
        sample("in-07-warm.s1p"),
        sample("in-07-cold.s1p"),
        sample("in-07.toml"),
    );
    let o = run(&[
        "compare".as_ref(),
        warm.as_os_str(),
        cold.as_os_str(),
        "--line".as_ref(),
        line.as_os_str(),
        "--json".as_ref(),
        "--report".as_ref(),
        report.as_os_str(),
    ]);
    assert_eq!(
        o.status.code(),
        Some(1),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let json: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let html = Html::parse_document(&std::fs::read_to_string(&report).unwrap());
    (json, html)
}

#[test]
fn the_report_has_its_sections_in_order() {
    let dir = tempfile::tempdir().unwrap();
    let (_, html) = compare_with_report(dir.path());
    let ids: Vec<&str> = html
        .select(&sel("body > section"))
        .filter_map(|s| s.value().attr("id"))
        .collect();
    assert_eq!(ids, coldtrace::report::html::SECTIONS);
    // The summary sentence comes first and names the worst finding.
    let first = html.select(&sel("section p")).next().unwrap();
    assert_eq!(first.value().attr("class"), Some("summary"));
    let text: String = first.text().collect();
    assert!(
        text.contains("pin-gap at J2") && text.contains("critical"),
        "{text}"
    );
    // The plots are inline SVG, the line diagram beside them.
    assert_eq!(
        html.select(&sel("#plots figure:not(.evidence) svg"))
            .count(),
        1
    );
    // Each finding above info (the first few) has its evidence: its gated reflection against frequency with
    // the fitted model, labelled by rank, element and kind.
    let evidence: Vec<String> = html
        .select(&sel("#plots figure.evidence"))
        .map(|f| f.text().collect())
        .collect();
    assert!(!evidence.is_empty());
    assert!(evidence[0].contains("#1 J2 pin-gap"), "{}", evidence[0]);
    assert!(html.select(&sel("#plots figure.evidence svg")).count() == evidence.len());
    assert!(html.select(&sel("#plots #line-diagram")).next().is_some());
    let cautions: String = html
        .select(&sel("#cautions"))
        .next()
        .unwrap()
        .text()
        .collect();
    assert!(cautions.contains("Cryogens displace oxygen"));
}

#[test]
fn the_findings_table_has_one_row_per_json_finding() {
    let dir = tempfile::tempdir().unwrap();
    let (json, html) = compare_with_report(dir.path());
    let findings = json["findings"].as_array().unwrap();
    let rows: Vec<Vec<String>> = html
        .select(&sel("#findings table tr"))
        .skip(1)
        .map(|tr| {
            tr.select(&sel("td"))
                .map(|td| td.text().collect::<String>())
                .collect()
        })
        .collect();
    assert_eq!(rows.len(), findings.len());
    assert!(!rows.is_empty());
    for (row, f) in rows.iter().zip(findings) {
        assert_eq!(row[0], f["rank"].to_string());
        assert_eq!(row[1], format!("{:.3}", f["distance_m"].as_f64().unwrap()));
        assert_eq!(row[2], f["element"].as_str().unwrap());
        assert_eq!(row[3], f["kind"].as_str().unwrap());
        assert_eq!(row[4], f["severity"].as_str().unwrap());
    }
}

#[test]
fn nothing_is_fetched_from_elsewhere() {
    let dir = tempfile::tempdir().unwrap();
    let (_, html) = compare_with_report(dir.path());
    html_page::assert_self_contained(&html);
    let style: String = html.select(&sel("style")).flat_map(|s| s.text()).collect();
    assert!(style.contains("@page"), "no print rules");
}

#[test]
fn the_inputs_are_named_with_their_sha256() {
    let dir = tempfile::tempdir().unwrap();
    let (_, html) = compare_with_report(dir.path());
    let rows: Vec<Vec<String>> = html
        .select(&sel("#inputs table tr"))
        .skip(1)
        .map(|tr| {
            tr.select(&sel("td"))
                .map(|td| td.text().collect())
                .collect()
        })
        .collect();
    let roles: Vec<&str> = rows.iter().map(|r| r[0].as_str()).collect();
    assert_eq!(roles, ["baseline", "current", "line file"]);
    for r in &rows {
        assert_eq!(r[2].len(), 64, "{r:?}");
        assert!(r[2].chars().all(|c| c.is_ascii_hexdigit()));
    }
    // The hash itself, on the "abc" example of FIPS 180-2, Appendix B.1 (SHA-256).
    let abc = dir.path().join("abc.txt");
    std::fs::write(&abc, b"abc").unwrap();
    let h = coldtrace::report::html::hash_inputs(&[("sweep", abc.as_path())]).unwrap();
    assert_eq!(
        h[0].sha256,
        "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
    );
    let settings: String = html
        .select(&sel("#inputs"))
        .next()
        .unwrap()
        .text()
        .collect();
    assert!(settings.contains(env!("CARGO_PKG_VERSION")) && settings.contains("kaiser:9"));
}

#[test]
fn locate_writes_its_events_as_the_table() {
    let dir = tempfile::tempdir().unwrap();
    let report = dir.path().join("cold.html");
    let (cold, line) = (sample("in-07-cold.s1p"), sample("in-07.toml"));
    let o = run(&[
        "locate".as_ref(),
        cold.as_os_str(),
        "--line".as_ref(),
        line.as_os_str(),
        "--json".as_ref(),
        "--report".as_ref(),
        report.as_os_str(),
    ]);
    assert_eq!(o.status.code(), Some(0));
    let json: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let html = Html::parse_document(&std::fs::read_to_string(&report).unwrap());
    let rows = html.select(&sel("#findings table tr")).count() - 1;
    assert_eq!(rows, json["events"].as_array().unwrap().len());
    let ids: Vec<&str> = html
        .select(&sel("body > section"))
        .filter_map(|s| s.value().attr("id"))
        .collect();
    assert_eq!(ids, coldtrace::report::html::SECTIONS);
}

#[test]
fn a_report_is_an_html_file_and_never_replaces_one_unasked() {
    let dir = tempfile::tempdir().unwrap();
    let (cold, line) = (sample("in-07-cold.s1p"), sample("in-07.toml"));
    let txt = dir.path().join("report.txt");
    let o = run(&[
        "locate".as_ref(),
        cold.as_os_str(),
        "--line".as_ref(),
        line.as_os_str(),
        "--report".as_ref(),
        txt.as_os_str(),
    ]);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("--report") && err.contains(".html"), "{err}");
    assert!(!txt.exists());
    let kept = dir.path().join("kept.html");
    std::fs::write(&kept, "mine").unwrap();
    let o = run(&[
        "locate".as_ref(),
        cold.as_os_str(),
        "--report".as_ref(),
        kept.as_os_str(),
    ]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("--force"));
    assert_eq!(std::fs::read_to_string(&kept).unwrap(), "mine");
}

#[test]
fn survey_writes_every_lines_findings_as_the_table() {
    let dir = tempfile::tempdir().unwrap();
    let report = dir.path().join("fleet.html");
    let manifest = sample("fleet/survey.toml");
    let o = run(&[
        "survey".as_ref(),
        manifest.as_os_str(),
        "--jobs".as_ref(),
        "1".as_ref(),
        "--json".as_ref(),
        "--report".as_ref(),
        report.as_os_str(),
    ]);
    assert_eq!(
        o.status.code(),
        Some(1),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let json: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let html = Html::parse_document(&std::fs::read_to_string(&report).unwrap());
    let ids: Vec<&str> = html
        .select(&sel("body > section"))
        .filter_map(|s| s.value().attr("id"))
        .collect();
    assert_eq!(ids, coldtrace::report::html::SECTIONS);
    // One row per finding of every line, worst line first, as in the JSON.
    let expected: Vec<(String, String)> = json["lines"]
        .as_array()
        .unwrap()
        .iter()
        .flat_map(|l| {
            l["findings"].as_array().unwrap().iter().map(move |f| {
                (
                    l["line"].as_str().unwrap().to_string(),
                    f["element"].as_str().unwrap().to_string(),
                )
            })
        })
        .collect();
    let rows: Vec<(String, String)> = html
        .select(&sel("#findings table tr"))
        .skip(1)
        .map(|tr| {
            let cells: Vec<String> = tr
                .select(&sel("td"))
                .map(|td| td.text().collect())
                .collect();
            (cells[0].clone(), cells[3].clone())
        })
        .collect();
    assert_eq!(rows, expected);
    // The manifest and each line's three files are hashed.
    let hashed = html.select(&sel("#inputs table tr")).count() - 1;
    assert_eq!(hashed, 1 + 3 * json["lines"].as_array().unwrap().len());
    assert_eq!(html.select(&sel("script")).count(), 0);
}
