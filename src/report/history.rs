//! The HTML report of a line's history (`history show LINE --report F.html`): the same six sections as a
//! comparison's (`html::SECTIONS`), for the records of one line. `findings` holds the records table (one
//! row per record of `history show --json`, oldest first); `plots` one figure per connector and state:
//! its reflection across cooldowns, the trend rule's Theil-Sen line over the window it judged, the
//! reflections at which each severity begins (`history::trend::level_db`) and the detection floor;
//! `not-visible` the connectors some records could not see and the trend's warnings; `inputs` the
//! history database with its SHA-256 and the trend rule's settings.
//!
//! Conventions: reflections 20 log10 |rho|, dB, compensated as stored; cooldowns counted 1, 2, ... oldest
//! first among the records of one state; times RFC 3339 UTC as stored.

use super::html::{escape, figure_html, finish_page, opening, section, InputFile, RunContext};
use super::plot::{render_svg, Figure, Series};
use super::ReportError;
use crate::compare::Severity;
use crate::history::trend::{level_db, theil_sen, PROJECTED};
use crate::history::{LandmarkTrend, RecordDetail, TrendReport};
use std::fmt::Write;

/// Size of a connector's history figure, px.
pub const HISTORY_FIGURE_SIZE: (u32, u32) = (640, 400);

/// The series names of a history figure besides the connector's own.
pub const TREND_NAME: &str = "trend (Theil-Sen)";
pub const FLOOR_NAME: &str = "detection floor";

/// The history as an input of a report. A file: its path and the SHA-256 of its bytes. A server: its URL
/// (without its password) and the SHA-256 of the records shown, each record's sweep SHA-256 in order, one
/// per line (a server's database has no file to hash, and the records are what the report draws from).
pub fn database_input(
    store: &dyn crate::history::HistoryStore,
    records: &[crate::history::RecordDetail],
) -> crate::Result<InputFile> {
    use sha2::{Digest, Sha256};
    let mut hasher = Sha256::new();
    let role = if let Some(path) = store.file() {
        let mut file = std::fs::File::open(path).map_err(|e| crate::Error::io(path, e))?;
        std::io::copy(&mut file, &mut hasher).map_err(|e| crate::Error::io(path, e))?;
        "history database"
    } else {
        for r in records {
            hasher.update(r.summary.sha256.as_bytes());
            hasher.update(b"\n");
        }
        "history database (server; SHA-256 of the records shown)"
    };
    Ok(InputFile {
        role: role.to_string(),
        path: store.location(),
        sha256: hasher
            .finalize()
            .iter()
            .map(|b| format!("{b:02x}"))
            .collect(),
    })
}

/// One connector's reflection across the cooldowns of one state, with the trend line over the window the
/// rule judged, the severity levels and the detection floor.
pub fn landmark_figure(line: &str, state: &str, t: &LandmarkTrend) -> Figure {
    let n = t.values_db.len();
    let x: Vec<f64> = (1..=n).map(|i| i as f64).collect();
    let verdict = if t.verdict.warning {
        "climbing: the trend rule warns"
    } else {
        "no climb the rule warns of"
    };
    let mut fig = Figure::new(
        format!("{line}: {} ({state}), {verdict}", t.element),
        format!("cooldown ({state} records, oldest first)"),
        "reflection (dB, compensated)",
    );
    fig.size = HISTORY_FIGURE_SIZE;
    fig.series.push(Series {
        name: t.element.clone(),
        x: x.clone(),
        y: t.values_db.clone(),
    });
    let k = t.verdict.window.min(n);
    if let Some((slope, intercept)) = theil_sen(&t.values_db[n - k..]) {
        let xs: Vec<f64> = x[n - k..].to_vec();
        fig.series.push(Series {
            name: format!("{TREND_NAME}, last {k}: {slope:+.2} dB per cooldown"),
            y: (0..k).map(|i| intercept + slope * i as f64).collect(),
            x: xs,
        });
    }
    let (x0, x1) = (0.5, n as f64 + 0.5);
    for (name, drop) in PROJECTED {
        let level = level_db(drop);
        fig.series.push(Series {
            name: format!("{name} from {level:.1} dB"),
            x: vec![x0, x1],
            y: vec![level, level],
        });
    }
    if let Some(f) = t.floor_db.filter(|f| f.is_finite()) {
        fig.series.push(Series {
            name: FLOOR_NAME.to_string(),
            x: vec![x0, x1],
            y: vec![f, f],
        });
    }
    fig.x_range = Some((x0, x1));
    fig.notes.push(format!(
        "cooldowns 1 to {n} are records {}",
        t.record_ids
            .iter()
            .map(|i| i.to_string())
            .collect::<Vec<_>>()
            .join(", ")
    ));
    fig
}

/// The summary sentence of a line's history.
pub fn history_summary(line: &str, records: &[RecordDetail], trends: &[TrendReport]) -> String {
    let (Some(first), Some(last)) = (records.first(), records.last()) else {
        return format!("Line {line} has no records.");
    };
    let mut s = format!(
        "Line {line}: {} record(s) from {} to {}",
        records.len(),
        first.summary.at,
        last.summary.at
    );
    match (last.summary.worst_severity, last.summary.compared_with) {
        (Some(w), Some(b)) => {
            let _ = write!(
                s,
                "; the latest (record {}, {}) is {} against record {b}",
                last.summary.id,
                last.summary.state.name(),
                w.name()
            );
        }
        _ => {
            let _ = write!(
                s,
                "; the latest (record {}, {}) was compared with no baseline",
                last.summary.id,
                last.summary.state.name()
            );
        }
    }
    let climbing: Vec<String> = trends
        .iter()
        .flat_map(|t| {
            t.landmarks
                .iter()
                .filter(|l| l.verdict.warning)
                .map(move |l| {
                    // The first severity, mildest first, that the trend has not reached yet.
                    let when = PROJECTED
                        .iter()
                        .filter_map(|(sev, _)| {
                            l.verdict.projected_cycles_to.get(sev).map(|c| (sev, c))
                        })
                        .find(|(_, c)| **c > 0.0)
                        .map(|(sev, c)| format!(", {sev} in about {c:.0} cooldown(s)"))
                        .unwrap_or_default();
                    format!(
                        "{} ({}) at {:+.1} dB per cooldown{when}",
                        l.element,
                        t.state,
                        l.verdict.slope_db_per_cycle.unwrap_or(f64::NAN)
                    )
                })
        })
        .collect();
    if climbing.is_empty() {
        s.push_str("; no connector climbs as the trend rule warns of.");
    } else {
        let _ = write!(
            s,
            "; {} connector(s) climbing: {}.",
            climbing.len(),
            climbing.join("; ")
        );
    }
    s
}

/// The records table: one row per record, oldest first, as `history show --json` lists them.
fn records_table(records: &[RecordDetail], baseline: Option<i64>) -> String {
    let mut t = String::from(
        "<table class=\"records\">\n<tr><th>record</th><th>taken (UTC)</th><th>state</th><th>sweep</th>\
         <th>worst</th><th>against</th><th>findings above info</th><th>note</th></tr>\n",
    );
    for r in records {
        let s = &r.summary;
        let above: Vec<String> = r
            .findings
            .iter()
            .filter(|f| f.severity > Severity::Info)
            .map(|f| format!("{} {} ({})", f.element, f.kind, f.severity.name()))
            .collect();
        let _ = writeln!(
            t,
            "<tr class=\"{}\"><td class=\"num\">{}{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td>\
             <td class=\"num\">{}</td><td>{}</td><td>{}</td></tr>",
            s.worst_severity.map_or("none", |w| w.name()),
            s.id,
            if baseline == Some(s.id) {
                " (baseline)"
            } else {
                ""
            },
            escape(&s.at),
            s.state.name(),
            escape(&s.sweep),
            s.worst_severity.map_or("-", |w| w.name()),
            s.compared_with.map_or("-".to_string(), |b| b.to_string()),
            escape(&above.join(", ")),
            escape(s.note.as_deref().unwrap_or(""))
        );
    }
    t.push_str("</table>\n");
    t
}

/// The connectors some records could not see, and the trends' warnings.
fn not_seen_html(records: &[RecordDetail], trends: &[TrendReport]) -> String {
    let mut missing: Vec<(String, Vec<i64>)> = Vec::new();
    for r in records {
        for l in r.landmarks.iter().filter(|l| {
            l.kind == crate::history::LandmarkKind::Connector && l.reflection_db.is_none()
        }) {
            match missing.iter_mut().find(|(e, _)| *e == l.element) {
                Some((_, ids)) => ids.push(r.summary.id),
                None => missing.push((l.element.clone(), vec![r.summary.id])),
            }
        }
    }
    let mut s = String::new();
    if missing.is_empty() {
        s.push_str("<p>Every record saw every connector of the line.</p>\n");
    } else {
        s.push_str("<ul class=\"not-visible\">\n");
        for (e, ids) in &missing {
            let _ = writeln!(
                s,
                "<li><b>{}</b>: not seen in record(s) {} (under the sweep's detection floor there, or behind \
                 a part reflection cannot see through); those records leave it out of its trend</li>",
                escape(e),
                ids.iter()
                    .map(|i| i.to_string())
                    .collect::<Vec<_>>()
                    .join(", ")
            );
        }
        s.push_str("</ul>\n");
    }
    super::html::warnings_html(
        &mut s,
        "Warnings of the trend",
        trends.iter().flat_map(|t| &t.warnings),
    );
    s
}

/// The whole report of a line's history: `records` oldest first (`HistoryStore::line_details`), the
/// line's `baseline`, and the trend of each state that has records.
pub fn history_html(
    line: &str,
    records: &[RecordDetail],
    baseline: Option<i64>,
    trends: &[TrendReport],
    ctx: &RunContext,
) -> Result<String, ReportError> {
    let title = format!("coldtrace history: {line}");
    let mut body = opening(
        &title,
        &format!(
            "<p class=\"summary\">{}</p>\n",
            escape(&history_summary(line, records, trends))
        ),
    );
    section(
        &mut body,
        "findings",
        "Records, oldest first",
        &records_table(records, baseline),
    );
    let mut plots = String::new();
    for t in trends {
        // Climbing connectors first, then in line order.
        let mut order: Vec<&LandmarkTrend> = t.landmarks.iter().collect();
        order.sort_by_key(|l| !l.verdict.warning);
        for l in order {
            let fig = landmark_figure(line, t.state, l);
            let caption = format!(
                "{} ({}): its reflection in each record, the trend rule's Theil-Sen line over the last {} \
                 cooldown(s) it judged, the reflections at which a series resistance would cost each \
                 severity's power drop, and the detection floor in the latest record.",
                l.element,
                t.state,
                l.verdict.window.min(l.values_db.len())
            );
            plots.push_str(&figure_html(&render_svg(&fig)?, &caption).replacen(
                "<figure>",
                "<figure class=\"trend\">",
                1,
            ));
        }
    }
    if plots.is_empty() {
        plots.push_str("<p>No connector was seen in any record: nothing to draw.</p>\n");
    }
    section(
        &mut body,
        "plots",
        "Each connector across cooldowns",
        &plots,
    );
    Ok(finish_page(
        &title,
        body,
        &not_seen_html(records, trends),
        ctx,
    ))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::history::trend::TrendRule;

    #[test]
    fn a_connectors_figure_has_its_values_trend_and_levels() {
        let values = vec![-40.0, -40.5, -39.5, -36.0, -32.0, -28.0];
        let rule = TrendRule::default();
        let t = LandmarkTrend {
            element: "J3".into(),
            record_ids: (1..=6).collect(),
            at: vec![String::new(); 6],
            values_db: values.clone(),
            floor_db: Some(-85.0),
            verdict: rule.evaluate(&values, Some(-85.0)),
        };
        let fig = landmark_figure("north-fridge/out-03", "cold", &t);
        assert_eq!(fig.series[0].y, values);
        assert_eq!(fig.series[0].x, vec![1.0, 2.0, 3.0, 4.0, 5.0, 6.0]);
        // The trend line over the judged window is the Theil-Sen line of its values.
        let k = t.verdict.window;
        let (slope, intercept) = theil_sen(&values[6 - k..]).unwrap();
        let trend = &fig.series[1];
        assert!(trend.name.starts_with(TREND_NAME));
        assert_eq!(trend.x.len(), k);
        assert!((trend.y[k - 1] - (intercept + slope * (k - 1) as f64)).abs() < 1e-12);
        // The levels at which a series R costs 0.1, 1 and 3 dB: |rho| = 1 - 10^(-D/20) (rho = R/(2 Z0 + R),
        // |S21| = 1 - rho between matched lines; circuit theory, from memory): -38.826, -19.271 and
        // -10.691 dB (hand-worked).
        for (s, want) in fig.series[2..5].iter().zip([-38.826, -19.271, -10.691]) {
            assert!((s.y[0] - want).abs() < 1e-3, "{}: {}", s.name, s.y[0]);
        }
        assert_eq!(fig.series[5].name, FLOOR_NAME);
        assert!(fig.title.contains("J3 (cold)"));
    }
}
