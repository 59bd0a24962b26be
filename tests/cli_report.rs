//! The whole binary's plots and reports: `--span` on every command that plots, and `--report FILE.html`.

#[path = "common/first_hour.rs"]
mod first_hour;
use first_hour::{run_os as run, sample, stderr};

/// True when an SVG written by plotters has a text element reading exactly `text` (plotters puts each
/// text on a line of its own).
fn has_text(svg: &str, text: &str) -> bool {
    svg.lines().any(|l| l.trim() == text)
}

#[test]
fn span_sets_the_axis_on_trace_locate_and_compare() {
    let dir = tempfile::tempdir().unwrap();
    let (warm, cold, line) = (
        sample("in-07-warm.s1p"),
        sample("in-07-cold.s1p"),
        sample("in-07.toml"),
    );
    let cases: Vec<(&str, Vec<&std::ffi::OsStr>)> = vec![
        ("trace", vec!["trace".as_ref(), cold.as_os_str()]),
        ("locate", vec!["locate".as_ref(), cold.as_os_str()]),
        (
            "compare",
            vec!["compare".as_ref(), warm.as_os_str(), cold.as_os_str()],
        ),
    ];
    for (name, mut args) in cases {
        let plot = dir.path().join(format!("{name}.svg"));
        args.extend([
            "--line".as_ref(),
            line.as_os_str(),
            "--span".as_ref(),
            "1.6m..2.2m".as_ref(),
            "--plot".as_ref(),
            plot.as_os_str(),
        ]);
        let o = run(&args);
        assert!(
            matches!(o.status.code(), Some(0 | 1)),
            "{name}: {}",
            stderr(&o)
        );
        let svg = std::fs::read_to_string(&plot).unwrap();
        // Ticks inside the span are drawn; the axis does not reach 0.5 m or 2.5 m.
        assert!(has_text(&svg, "1.8"), "{name}");
        assert!(!has_text(&svg, "0.5") && !has_text(&svg, "2.5"), "{name}");
        assert!(svg.contains("J2"), "{name}: the connector inside the span");
    }
    // A span without a unit is refused, naming the flag and the fix.
    let plot = dir.path().join("bad.svg");
    let o = run(&[
        "locate".as_ref(),
        cold.as_os_str(),
        "--span".as_ref(),
        "1..2".as_ref(),
        "--plot".as_ref(),
        plot.as_os_str(),
    ]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("--span"), "{}", stderr(&o));
    assert!(!plot.exists());
}

#[test]
fn a_span_beyond_the_data_is_refused_with_the_datas_extent() {
    let dir = tempfile::tempdir().unwrap();
    let (cold, line) = (sample("in-07-cold.s1p"), sample("in-07.toml"));
    let plot = dir.path().join("far.svg");
    let o = run(&[
        "locate".as_ref(),
        cold.as_os_str(),
        "--line".as_ref(),
        line.as_os_str(),
        "--span".as_ref(),
        "500m..600m".as_ref(),
        "--plot".as_ref(),
        plot.as_os_str(),
    ]);
    assert_eq!(o.status.code(), Some(2));
    let err = stderr(&o);
    assert!(
        err.contains("500 m..600 m") && err.contains("give a --span inside it"),
        "{err}"
    );
    assert!(!plot.exists());
}

#[test]
fn plot_evidence_draws_the_first_findings_reflection_and_model() {
    let dir = tempfile::tempdir().unwrap();
    let (warm, cold, line) = (
        sample("in-07-warm.s1p"),
        sample("in-07-cold.s1p"),
        sample("in-07.toml"),
    );
    for (name, mut args) in [
        (
            "compare",
            vec!["compare".as_ref(), warm.as_os_str(), cold.as_os_str()],
        ),
        ("locate", vec!["locate".as_ref(), cold.as_os_str()]),
    ] {
        let plot = dir.path().join(format!("{name}-evidence.svg"));
        args.extend([
            "--line".as_ref(),
            line.as_os_str(),
            "--plot-evidence".as_ref(),
            plot.as_os_str(),
        ]);
        let o = run(&args);
        assert!(
            matches!(o.status.code(), Some(0 | 1)),
            "{name}: {}",
            stderr(&o)
        );
        let svg = std::fs::read_to_string(&plot).unwrap();
        assert!(svg.contains("#1 J2 pin-gap"), "{name}: no title");
        assert!(has_text(&svg, "frequency (GHz)"), "{name}: no x label");
        assert!(
            svg.contains("model: series-capacitance"),
            "{name}: no model"
        );
        assert!(
            has_text(&svg, coldtrace::report::evidence::MEASURED_NAME),
            "{name}: no measurement"
        );
    }
    // A file of another kind is refused before any work, naming the fix.
    let bad = dir.path().join("evidence.txt");
    let o = run(&[
        "locate".as_ref(),
        cold.as_os_str(),
        "--plot-evidence".as_ref(),
        bad.as_os_str(),
    ]);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains(".svg or .png"), "{}", stderr(&o));
    assert!(!bad.exists());
}
