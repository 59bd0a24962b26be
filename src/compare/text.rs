//! Plain-text reports for people, made from the same result structs as the JSON.

use super::place::metres;
use super::report::{CompareReport, Event, Finding, LocateReport, NotVisible};
use super::severity::Severity;
use super::sweep::NO_LINE_FILE;
use crate::Warning;
use std::fmt::Write;

/// Within this distance of a connector's middle a place inside a cable is said to be near it, m: a few
/// resolution cells of a typical 10 GHz sweep (common practice, no source). Farther, the place is given by
/// its offset into its element.
pub const NEAR_CONNECTOR_M: f64 = 0.05;

fn where_col(p: &super::report::Place) -> String {
    let at = metres(p.distance_m);
    let element = &p.element;
    match (&p.nearest_connector, p.nearest_connector_distance_m) {
        (Some(c), Some(d)) if c != element && d <= NEAR_CONNECTOR_M => {
            format!("{at} {element} (near {c})")
        }
        (Some(c), _) if c != element => format!("{at} {element} +{}", metres(p.offset_m)),
        _ => format!("{at} {element}"),
    }
}

/// The name the header gives the line: the line file's, or "(no line file)" for a uniform line, whose
/// name is only the sweep's.
fn line_name<'a>(line: &'a str, warnings: &[Warning]) -> &'a str {
    if without_line_file(warnings) {
        "(no line file)"
    } else {
        line
    }
}

fn without_line_file(warnings: &[Warning]) -> bool {
    warnings.iter().any(|w| w.kind == NO_LINE_FILE)
}

/// The no-line-file warning, set apart under the header: it changes how every number below reads.
fn loud_warnings(out: &mut String, warnings: &[Warning]) {
    for w in warnings.iter().filter(|w| w.kind == NO_LINE_FILE) {
        let _ = writeln!(
            out,
            "
!! WARNING: {}
!! {}",
            w.message, w.fix
        );
    }
}

/// How a sweep's state is shown: as used, or "not known" when neither given nor told by the data.
fn state_label(state: &str, known: bool) -> String {
    if known {
        state.to_string()
    } else {
        format!("state not known; analysed as {state}")
    }
}

fn tail(out: &mut String, not_visible: &[NotVisible], warnings: &[Warning]) {
    if !not_visible.is_empty() {
        let _ = writeln!(out, "\nnot visible from this end:");
        for n in not_visible {
            let _ = writeln!(out, "  {}: {}", n.element, n.reason);
        }
    }
    let warnings: Vec<&Warning> = warnings.iter().filter(|w| w.kind != NO_LINE_FILE).collect();
    if !warnings.is_empty() {
        let _ = writeln!(out, "\nwarnings:");
        for w in warnings {
            let _ = writeln!(out, "  {w}");
        }
    }
}

/// Which connector-length convention the line file used (docs/line-file.md).
fn connector_line(out: &mut String, c: &Option<String>) {
    if let Some(c) = c {
        let what = if c == "added" {
            "each connector adds its own length"
        } else {
            "mated pairs add no length: cable lengths are measured end to end"
        };
        let _ = writeln!(out, "  connector lengths: {c} ({what})");
    }
}

fn row(rank: &str, place: &str, what: &str, bad: &str, sure: &str) -> String {
    format!("{rank:<5} {place:<38} {what:<15} {bad:<22} {sure}\n")
}

/// The table `compare` and `locate` share: the rows shown (rank, row, sentence) under the header, then one
/// sentence each; `none` when nothing is shown; and how many harmless `things` at severity info are not.
fn ranked_table(
    out: &mut String,
    shown: &[(usize, String, &str)],
    hidden: usize,
    none: &str,
    things: &str,
) {
    if shown.is_empty() {
        let _ = writeln!(out, "\n{none}");
    } else {
        out.push('\n');
        out.push_str(&row("rank", "where", "what", "how bad", "how sure"));
        for (_, r, _) in shown {
            out.push_str(r);
        }
        out.push('\n');
        for (rank, _, sentence) in shown {
            let _ = writeln!(out, "{rank}. {sentence}");
        }
    }
    if hidden > 0 {
        let _ = writeln!(
            out,
            "\n{hidden} harmless {things} at severity info not shown (--all shows them)."
        );
    }
}

fn finding_row(f: &Finding) -> String {
    row(
        &f.rank.to_string(),
        &where_col(&f.place),
        f.kind.name(),
        &format!("{:<8} {:.2} dB", f.severity.name(), f.power_drop_db),
        &format!(
            "{:.0} % +/-{:.1} mm",
            100.0 * f.confidence,
            1e3 * f.uncertainty_m
        ),
    )
}

/// The comparison as a table: rank, where, what, how bad, how sure; then one sentence per finding.
pub fn render_compare(r: &CompareReport, show_info: bool) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "line {}", line_name(&r.line, &r.warnings));
    // Without a line file the data tell a change of state, never which one two sweeps in one state share.
    let same_unknown = without_line_file(&r.warnings)
        && r.states.inferred
        && r.states.baseline == r.states.current;
    let given = |which: &str| !r.states.inferred || r.states.basis.starts_with(which);
    let _ = writeln!(
        out,
        "  baseline {} ({})",
        r.baseline,
        state_label(r.states.baseline, !same_unknown || given("baseline given"))
    );
    let _ = writeln!(
        out,
        "  current  {} ({})",
        r.current,
        state_label(r.states.current, !same_unknown || given("current given"))
    );
    if r.states.inferred {
        let _ = writeln!(out, "  states {}", r.states.basis);
    }
    let alignment = if r.alignment.landmarks_m.is_empty() {
        "no landmark seen in both sweeps (the model's change used)".to_string()
    } else {
        format!(
            "alignment residual {:.3} mm over {} landmark(s); electrical length to the farthest landmark \
             {:+.3} %",
            r.alignment.residual_m * 1e3,
            r.alignment.landmarks_m.len(),
            r.alignment.electrical_length_change * 100.0,
        )
    };
    let _ = writeln!(
        out,
        "  resolution {:.1} mm; {alignment}; power drops quoted at {:.2} GHz",
        r.resolution_m * 1e3,
        r.reference_hz / 1e9
    );
    if let Some(worst) = r
        .alignment
        .anchors
        .iter()
        .max_by(|a, b| a.shift_m.abs().total_cmp(&b.shift_m.abs()))
    {
        let _ = writeln!(
            out,
            "  positions anchored on {} joint(s) the baseline shows; the line file's model put them up to {:.1} mm \
             off ({} {:+.1} mm)",
            r.alignment.anchors.len(),
            worst.shift_m.abs() * 1e3,
            worst.element,
            worst.shift_m * 1e3
        );
    }
    connector_line(&mut out, &r.connector_lengths);
    loud_warnings(&mut out, &r.warnings);
    let shown: Vec<(usize, String, &str)> = r
        .findings
        .iter()
        .filter(|f| show_info || f.severity > Severity::Info)
        .map(|f| (f.rank, finding_row(f), f.explanation.as_str()))
        .collect();
    let hidden = r.findings.len() - shown.len();
    ranked_table(
        &mut out,
        &shown,
        hidden,
        "no change that costs the line power was found.",
        "change(s)",
    );
    if let Some(p) = &r.power {
        let _ = writeln!(
            out,
            "\npower: observed drop {:.2} dB ({}), findings explain {:.2} dB, unexplained {:.2} dB",
            p.observed_drop_db, p.source, p.explained_drop_db, p.unexplained_db
        );
    }
    tail(&mut out, &r.not_visible, &r.warnings);
    out
}

fn event_row(e: &Event) -> String {
    row(
        &e.rank.map_or("-".to_string(), |k| k.to_string()),
        &where_col(&e.place),
        e.kind.name(),
        &if e.expected {
            format!("{:<8} as built", e.severity.name())
        } else {
            format!("{:<8} {:.2} dB", e.severity.name(), e.power_drop_db)
        },
        &format!(
            "{:.0} % +/-{:.1} mm{}",
            100.0 * e.confidence,
            1e3 * e.uncertainty_m,
            if e.visible { "" } else { " (hidden)" }
        ),
    )
}

/// One sweep's events as `compare`'s table: the anomalies by rank (rank, where, what, how bad = severity
/// and predicted drop, how sure), one sentence each, then the echoes the line file expects, set apart.
pub fn render_locate(r: &LocateReport, show_info: bool) -> String {
    let mut out = String::new();
    let known = r.state_basis == "given" || !without_line_file(&r.warnings);
    let _ = writeln!(
        out,
        "line {}: sweep {} ({})",
        line_name(&r.line, &r.warnings),
        r.sweep,
        state_label(r.state, known)
    );
    if r.state_basis != "given" {
        let _ = writeln!(out, "  state {}", r.state_basis);
    }
    let _ = writeln!(
        out,
        "  resolution {:.1} mm; power drops quoted at {:.2} GHz",
        r.resolution_m * 1e3,
        r.reference_hz / 1e9
    );
    connector_line(&mut out, &r.connector_lengths);
    loud_warnings(&mut out, &r.warnings);
    let mut anomalies: Vec<&Event> = r.events.iter().filter(|e| e.rank.is_some()).collect();
    anomalies.sort_by_key(|e| e.rank);
    let shown: Vec<(usize, String, &str)> = anomalies
        .iter()
        .filter(|e| show_info || e.severity > Severity::Info)
        .map(|e| (e.rank.unwrap_or(0), event_row(e), e.explanation.as_str()))
        .collect();
    ranked_table(
        &mut out,
        &shown,
        anomalies.len() - shown.len(),
        "no anomaly that costs the line power was found.",
        "event(s)",
    );
    let expected: Vec<&Event> = r.events.iter().filter(|e| e.expected).collect();
    if !expected.is_empty() {
        let _ = writeln!(
            out,
            "\nechoes the line file expects (its connectors, its designed termination), along the line:"
        );
        for e in expected {
            out.push_str(&event_row(e));
        }
    }
    tail(&mut out, &r.not_visible, &r.warnings);
    out
}
