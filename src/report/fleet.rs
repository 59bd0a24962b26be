//! The HTML report of a survey (`survey --report F.html`): the same six sections as a comparison's
//! (`html::SECTIONS`), for a fleet. A survey keeps of each line only its findings, not its traces, so its
//! `plots` section is the lines' overview and says how to draw one line (`compare --report`); its inputs
//! are the manifest and every line's files, each with its SHA-256 (or why it could not be read).
//!
//! Conventions as in `html.rs`: distances as-built metres, levels dB.

use super::html::{escape, finish_page, opening, section, sha256_of, InputFile, RunContext};
use crate::compare::Severity;
use crate::survey::{SurveyItem, SurveyReport};
use std::fmt::Write;
use std::path::Path;

/// Each input of a survey: the manifest, then each line's line file, baseline and current. A file that
/// cannot be read is listed with the reason in place of its hash (the survey reports that line as broken).
pub fn survey_inputs(manifest: &Path, items: &[SurveyItem]) -> Vec<InputFile> {
    let mut files: Vec<(String, &Path)> = vec![("manifest".into(), manifest)];
    for it in items {
        let at = format!("manifest line {}", it.manifest_line);
        files.push((format!("{at}: line file"), &it.line));
        files.push((format!("{at}: baseline"), &it.baseline));
        files.push((format!("{at}: current"), &it.current));
    }
    files
        .into_iter()
        .map(|(role, path)| InputFile {
            sha256: sha256_of(path, &role).unwrap_or_else(|e| format!("not read: {e}")),
            role,
            path: path.display().to_string(),
        })
        .collect()
}

/// The summary sentence of a survey.
pub fn survey_summary(r: &SurveyReport) -> String {
    let broken = r.lines.iter().filter(|l| l.error.is_some()).count();
    let flagged: Vec<_> = r
        .lines
        .iter()
        .filter(|l| l.worst_severity.is_some_and(|s| s > Severity::Info))
        .collect();
    let mut s = format!(
        "{} line(s) surveyed: {} with a finding above info, {} that could not be analysed",
        r.lines.len(),
        flagged.len(),
        broken
    );
    match flagged.first().and_then(|l| l.top().map(|f| (l, f))) {
        Some((l, f)) => {
            let _ = write!(
                s,
                "; the worst is {}: a {} at {} ({:.3} m), {}.",
                l.line,
                f.kind.name(),
                f.place.element,
                f.place.distance_m,
                f.severity.name()
            );
        }
        None => s.push('.'),
    }
    s
}

/// The whole report of a survey.
pub fn survey_html(r: &SurveyReport, ctx: &RunContext) -> String {
    let title = "coldtrace survey report";
    let mut body = opening(
        title,
        &format!("<p class=\"summary\">{}</p>\n", escape(&survey_summary(r))),
    );
    let mut table = String::from(
        "<table class=\"findings\">\n<tr><th>line</th><th>rank</th><th>at (m)</th><th>element</th><th>kind</th>\
         <th>severity</th><th>change (dB)</th><th>power drop (dB)</th><th>what it is</th></tr>\n",
    );
    for l in &r.lines {
        for f in &l.findings {
            let _ = writeln!(
                table,
                "<tr class=\"{}\"><td>{}</td><td class=\"num\">{}</td><td class=\"num\">{:.3}</td><td>{}</td>\
                 <td>{}</td><td>{}</td><td class=\"num\">{:+.2}</td><td class=\"num\">{:.2}</td><td>{}</td></tr>",
                f.severity.name(),
                escape(&l.line),
                f.rank,
                f.place.distance_m,
                escape(&f.place.element),
                f.kind.name(),
                f.severity.name(),
                f.change_db,
                f.power_drop_db,
                escape(&f.explanation)
            );
        }
    }
    table.push_str("</table>\n");
    section(&mut body, "findings", "Findings, worst line first", &table);
    let mut lines = String::from(
        "<p>A survey keeps each line's findings, not its traces: for a line's plots and its line diagram run \
         <code>coldtrace compare BASELINE CURRENT --line LINE --report LINE.html</code> on it.</p>\n\
         <table class=\"lines\">\n<tr><th>line</th><th>worst</th><th>findings above info</th><th>baseline</th>\
         <th>current</th></tr>\n",
    );
    for l in &r.lines {
        let above = l
            .findings
            .iter()
            .filter(|f| f.severity > Severity::Info)
            .count();
        let _ = writeln!(
            lines,
            "<tr><td>{}</td><td>{}</td><td class=\"num\">{}</td><td>{}</td><td>{}</td></tr>",
            escape(&l.line),
            l.worst_severity
                .map(|s| s.name())
                .unwrap_or(if l.error.is_some() { "broken" } else { "none" }),
            above,
            escape(&l.baseline),
            escape(&l.current)
        );
    }
    lines.push_str("</table>\n");
    section(&mut body, "plots", "The lines", &lines);
    let mut nv = String::new();
    let broken: Vec<_> = r
        .lines
        .iter()
        .filter_map(|l| l.error.as_ref().map(|e| (l, e)))
        .collect();
    if broken.is_empty() && r.warnings.is_empty() {
        nv.push_str("<p>Every line could be analysed.</p>\n");
    }
    if !broken.is_empty() {
        nv.push_str("<ul class=\"not-visible\">\n");
        for (l, e) in broken {
            let _ = writeln!(
                nv,
                "<li><b>{}</b> (manifest line {}): {}</li>",
                escape(&l.line),
                l.manifest_line,
                escape(e)
            );
        }
        nv.push_str("</ul>\n");
    }
    for w in &r.warnings {
        let _ = writeln!(
            nv,
            "<p>{}; what to do: {}</p>",
            escape(&w.message),
            escape(&w.fix)
        );
    }
    nv.push_str(
        "<p>Each line's own elements that reflection cannot see are listed by \
         <code>coldtrace compare --report</code> on that line.</p>\n",
    );
    finish_page(title, body, &nv, ctx)
}
