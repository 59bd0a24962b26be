//! Tables for people, made from the same structs the JSON comes from.

use super::store::{LandmarkKind, RecordDetail, RecordSummary};
use super::trend::TrendReport;
use super::RecordOutcome;
use std::fmt::Write;

fn opt(x: Option<f64>, digits: usize) -> String {
    x.map_or("-".into(), |v| format!("{v:.digits$}"))
}

fn warnings(out: &mut String, w: &[crate::Warning]) {
    for w in w {
        let _ = writeln!(out, "warning: {w}");
    }
}

/// `history record`.
pub fn render_record(o: &RecordOutcome) -> String {
    let mut out = String::new();
    if o.created {
        let _ = writeln!(
            out,
            "recorded {} as record {} ({}, {}): {} landmark figure(s){}",
            o.line,
            o.id,
            o.state.name(),
            o.at,
            o.landmarks,
            match (o.compared_with, o.worst_severity) {
                (Some(b), Some(s)) => format!(
                    ", {} finding(s) against baseline record {b}, worst {s}",
                    o.findings
                ),
                _ => ", no baseline chosen yet (coldtrace history baseline LINE RECORD)".into(),
            }
        );
    } else {
        let _ = writeln!(out, "already recorded: record {} of {}", o.id, o.line);
    }
    warnings(&mut out, &o.warnings);
    out
}

/// `history list`.
pub fn render_list(records: &[RecordSummary]) -> String {
    let mut out = String::new();
    if records.is_empty() {
        out.push_str("no records\n");
        return out;
    }
    let _ = writeln!(
        out,
        "{:>5}  {:<24} {:<21} {:<5} {:<9} {:<12} sweep",
        "id", "line", "at", "state", "worst", "sha256"
    );
    for r in records {
        let _ = writeln!(
            out,
            "{:>5}{} {:<24} {:<21} {:<5} {:<9} {:<12} {}",
            r.id,
            if r.is_baseline { "*" } else { " " },
            r.line,
            r.at,
            r.state.name(),
            r.worst_severity.map_or("-", |s| s.name()),
            &r.sha256[..12.min(r.sha256.len())],
            r.sweep
        );
    }
    if records.iter().any(|r| r.is_baseline) {
        out.push_str("(* the line's baseline)\n");
    }
    out
}

/// `history show`.
pub fn render_show(line: &str, records: &[RecordDetail]) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "line {line}: {} record(s)", records.len());
    for r in records {
        let s = &r.summary;
        let _ = writeln!(
            out,
            "\nrecord {}{}: {} {}, {}{}",
            s.id,
            if s.is_baseline { " (baseline)" } else { "" },
            s.state.name(),
            s.at,
            s.sweep,
            s.note
                .as_deref()
                .map(|n| format!(" - {n}"))
                .unwrap_or_default()
        );
        let temps: Vec<String> = r
            .stage_temperatures
            .iter()
            .map(|t| format!("{} {} K", t.stage, t.kelvin))
            .collect();
        let _ = writeln!(out, "  stages: {}", temps.join(", "));
        for l in &r.landmarks {
            match l.kind {
                LandmarkKind::Connector => {
                    let _ = writeln!(
                        out,
                        "  {:<20} reflection {:>7} dB (floor {} dB)",
                        l.element,
                        opt(l.reflection_db, 1),
                        opt(l.floor_db, 1)
                    );
                }
                LandmarkKind::Segment => {
                    let _ = writeln!(
                        out,
                        "  {:<20} delay {} ns, loss change {} dB",
                        l.element,
                        opt(l.delay_s.map(|d| d * 1e9), 3),
                        opt(l.loss_change_db, 2)
                    );
                }
            }
        }
        match s.compared_with {
            Some(b) => {
                let shown: Vec<_> = r
                    .findings
                    .iter()
                    .filter(|f| f.severity > crate::compare::Severity::Info)
                    .collect();
                let _ = writeln!(
                    out,
                    "  against record {b}: {} finding(s) above info",
                    shown.len()
                );
                for f in shown {
                    let _ = writeln!(
                        out,
                        "    #{} {} {}: {}",
                        f.rank, f.severity, f.kind, f.explanation
                    );
                }
            }
            None => out.push_str("  not compared (no baseline chosen when recorded)\n"),
        }
    }
    out
}

/// `history trend`.
pub fn render_trend(t: &TrendReport) -> String {
    let mut out = String::new();
    let _ = writeln!(
        out,
        "line {}: {} records, trend of each connector's reflection (oldest first)",
        t.line, t.state
    );
    for l in &t.landmarks {
        let v = &l.verdict;
        let vals: Vec<String> = l.values_db.iter().map(|x| format!("{x:.1}")).collect();
        let _ = writeln!(
            out,
            "\n{}{}: {} dB",
            l.element,
            if v.warning { "  WARNING: climbing" } else { "" },
            vals.join(" ")
        );
        let _ = writeln!(
            out,
            "  slope {} dB per cooldown over the last {}, Mann-Kendall p {}",
            opt(v.slope_db_per_cycle, 2),
            v.window,
            opt(v.mann_kendall_p, 3)
        );
        if !v.projected_cycles_to.is_empty() {
            let p: Vec<String> = v
                .projected_cycles_to
                .iter()
                .map(|(k, c)| format!("{k} in {c:.1}"))
                .collect();
            let _ = writeln!(out, "  projected cooldowns to: {}", p.join(", "));
        }
    }
    warnings(&mut out, &t.warnings);
    out
}
