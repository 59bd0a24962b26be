//! The HTML report: one self-contained file to mail to a colleague or attach to a log book.
//!
//! It holds, in this order, each as a `<section>` with the id named here: `summary` (one sentence first),
//! `findings` (a table, one row per finding of the JSON, info included; for `locate`, one per event),
//! `plots` (the figures inline as SVG, and `line-diagram`, the line as built), `not-visible` (what
//! reflection could not see and why, and the run's warnings), `inputs` (each input's name and SHA-256,
//! the tool's version, the settings), `cautions` (the README's safety cautions). No script, no external
//! file, no network reference: the page reads the same offline, and prints on A4 or Letter (the page box
//! is left to the printer's paper; figures scale to its width and are not split across pages).
//!
//! Conventions: distances as-built metres, reflections and changes dB, as in the JSON (docs/output.md).

use super::evidence::{compare_evidence, locate_evidence, EvidenceFigure};
use super::plot::render_svg;
use super::views::{compare_figure, file_name, locate_figure};
use super::ReportError;
use crate::compare::report::{CompareReport, Finding, LocateReport, NotVisible};
use crate::compare::Severity;
use crate::line::{ElementKind, Line, State};
use crate::Warning;
use sha2::{Digest, Sha256};
use std::fmt::Write;
use std::path::Path;

/// The safety cautions, word for word as in the README's "Cautions" section (a test keeps them equal).
pub const CAUTIONS: &str = "Cryostats, magnets and RF test set-ups can hurt people and damage equipment. \
Cryogens displace oxygen and cause cold burns, closed volumes build pressure as they warm, and a quench \
releases gas fast; high-field magnets pull tools and affect implants; too much probe power from an analyzer \
can damage cold amplifiers and heat a mixing chamber. Keep the analyzer's source power low and check every \
amplifier's input limit before you sweep into it. Follow your laboratory's procedures and its qualified \
staff; coldtrace's findings are indications to confirm, not instructions to open a cryostat.";

/// The section ids, in the order the report has them.
pub const SECTIONS: [&str; 6] = [
    "summary",
    "findings",
    "plots",
    "not-visible",
    "inputs",
    "cautions",
];

/// One input file of the run: what it was, its name as given, and the SHA-256 of its bytes (hex).
#[derive(Debug, Clone, PartialEq)]
pub struct InputFile {
    pub role: String,
    pub path: String,
    pub sha256: String,
}

/// What the report says about the run besides the result: its inputs, settings and the span drawn.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct RunContext {
    pub inputs: Vec<InputFile>,
    /// (setting, value) as the user would write it, e.g. ("window", "kaiser:9").
    pub settings: Vec<(String, String)>,
    pub span: Option<(f64, f64)>,
}

/// SHA-256 of each (role, path), read within the sweep-file size limit.
pub fn hash_inputs(files: &[(&str, &Path)]) -> crate::Result<Vec<InputFile>> {
    files
        .iter()
        .map(|(role, path)| {
            Ok(InputFile {
                role: role.to_string(),
                path: path.display().to_string(),
                sha256: sha256_of(path, role).map_err(|e| crate::Error::io(path, e))?,
            })
        })
        .collect()
}

/// The SHA-256 of a file's bytes, hex, read within the sweep-file size limit.
pub fn sha256_of(path: &Path, what: &str) -> std::io::Result<String> {
    let bytes = crate::limits::read_capped(path, crate::limits::MAX_SWEEP_FILE_BYTES, what)?;
    Ok(Sha256::digest(&bytes)
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect())
}

/// Text made safe for HTML content and attribute values.
pub fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            _ => out.push(c),
        }
    }
    out
}

/// The page's style: plain, printable; `@page` sets margins only, so A4 and Letter both fit.
const STYLE: &str = "\
body { font-family: sans-serif; font-size: 10.5pt; color: #000; max-width: 1000px; margin: 1em auto; \
padding: 0 1em; line-height: 1.35; }
h1 { font-size: 16pt; margin: 0.2em 0; } h2 { font-size: 12.5pt; margin: 1.2em 0 0.4em; \
border-bottom: 1px solid #999; }
p.summary { font-size: 12pt; }
table { border-collapse: collapse; width: 100%; font-size: 9.5pt; }
th, td { border: 1px solid #bbb; padding: 2px 5px; text-align: left; vertical-align: top; }
th { background: #eee; } td.num { text-align: right; white-space: nowrap; }
tr.major td, tr.critical td { font-weight: bold; }
figure { margin: 0.6em 0; break-inside: avoid; page-break-inside: avoid; }
figure svg { width: 100%; height: auto; }
figure.evidence, figure.trend { display: inline-block; width: 48%; vertical-align: top; }
figcaption { font-size: 9.5pt; color: #333; }
code { font-size: 9pt; word-break: break-all; }
@page { margin: 15mm; }
@media print { body { max-width: none; margin: 0; padding: 0; } tr { break-inside: avoid; } \
section { break-inside: auto; } h2 { break-after: avoid; } }
";

/// The page around its sections.
pub(crate) fn page(title: &str, sections: &str) -> String {
    format!(
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<title>{}</title>\n\
         <style>\n{STYLE}</style>\n</head>\n<body>\n{sections}</body>\n</html>\n",
        escape(title)
    )
}

/// The last three sections every report ends with (what was not visible, the inputs and settings, the
/// cautions), and the page around all of them.
pub(crate) fn finish_page(
    title: &str,
    mut body: String,
    not_visible: &str,
    ctx: &RunContext,
) -> String {
    section(
        &mut body,
        "not-visible",
        "What was not visible, and why",
        not_visible,
    );
    section(
        &mut body,
        "inputs",
        "Inputs, version and settings",
        &inputs_html(ctx),
    );
    section(&mut body, "cautions", "Cautions", &cautions_html());
    page(title, &body)
}

/// The opening of a report page: its heading `title` and the summary section holding `summary` (HTML).
pub(crate) fn opening(title: &str, summary: &str) -> String {
    let mut body = String::new();
    let _ = writeln!(body, "<h1>{}</h1>", escape(title));
    section(&mut body, "summary", "Summary", summary);
    body
}

pub(crate) fn section(out: &mut String, id: &str, heading: &str, body: &str) {
    let _ = write!(
        out,
        "<section id=\"{id}\">\n<h2>{}</h2>\n{body}</section>\n",
        escape(heading)
    );
}

/// A figure, drawn as SVG, with its caption.
pub(crate) fn figure_html(svg: &str, caption: &str) -> String {
    format!(
        "<figure>\n{svg}\n<figcaption>{}</figcaption>\n</figure>\n",
        escape(caption)
    )
}

/// The evidence figures, each a `<figure class="evidence">`: the local reflection at the finding against
/// frequency and its fitted model.
fn evidence_html(figs: &[EvidenceFigure]) -> Result<String, ReportError> {
    let mut s = String::new();
    for e in figs {
        let _ = writeln!(
            s,
            "<figure class=\"evidence\">\n{}\n<figcaption>{}: its reflection gated at its place and moved \
             there, against frequency, with the lumped model fitted to it.</figcaption>\n</figure>",
            render_svg(&e.figure)?,
            escape(&e.label)
        );
    }
    Ok(s)
}

/// The line as built: one row per element reflection can see, with its place and cold temperatures.
fn line_diagram(line: Option<&Line>) -> String {
    let Some(line) = line else {
        return "<p id=\"line-diagram\">No line file was given: positions are metres of one uniform line \
                (its velocity factor in the settings below), and no element is named.</p>\n"
            .to_string();
    };
    let mut t = String::from(
        "<table id=\"line-diagram\">\n<caption>The line as built (the line file), from the reference plane\
         </caption>\n<tr><th>element</th><th>kind</th><th>from (m)</th><th>to (m)</th><th>stages</th>\
         <th>cold temperature</th></tr>\n",
    );
    for e in line.visible() {
        let (t0, t1) = e.end_temperatures(State::Cold);
        let kind = match &e.kind {
            ElementKind::Attenuator { loss_db, .. } => format!("attenuator {loss_db} dB"),
            _ => e.kind_name().to_string(),
        };
        let stages = if e.from_stage == e.to_stage {
            e.from_stage.clone()
        } else {
            format!("{} to {}", e.from_stage, e.to_stage)
        };
        let temps = if (t0 - t1).abs() < 1e-9 {
            super::views::kelvin_text(t0)
        } else {
            format!(
                "{} to {}",
                super::views::kelvin_text(t0),
                super::views::kelvin_text(t1)
            )
        };
        let _ = writeln!(
            t,
            "<tr><td>{}</td><td>{}</td><td class=\"num\">{:.3}</td><td class=\"num\">{:.3}</td><td>{}</td>\
             <td>{}</td></tr>",
            escape(&e.name),
            escape(&kind),
            e.start_m,
            e.end_m(),
            escape(&stages),
            escape(&temps)
        );
    }
    t.push_str("</table>\n");
    t
}

/// What reflection could not see, and the run's warnings.
fn not_visible_html(items: &[NotVisible], warnings: &[Warning]) -> String {
    let mut s = String::new();
    if items.is_empty() {
        s.push_str("<p>Every element of the line lies where reflection can see it.</p>\n");
    } else {
        s.push_str("<ul class=\"not-visible\">\n");
        for n in items {
            let _ = writeln!(
                s,
                "<li><b>{}</b>: {}</li>",
                escape(&n.element),
                escape(&n.reason)
            );
        }
        s.push_str("</ul>\n");
    }
    warnings_html(&mut s, "Warnings of this run", warnings);
    s
}

/// A list of warnings under `intro`, each with its place (when it is about a file) and what to do; nothing
/// when there are none.
pub(super) fn warnings_html<'a>(
    s: &mut String,
    intro: &str,
    warnings: impl IntoIterator<Item = &'a Warning>,
) {
    let mut warnings = warnings.into_iter().peekable();
    if warnings.peek().is_none() {
        return;
    }
    let _ = writeln!(s, "<p>{}:</p>\n<ul class=\"warnings\">", escape(intro));
    for w in warnings {
        let at = w
            .location
            .as_deref()
            .map(|l| format!(" ({})", escape(l)))
            .unwrap_or_default();
        let _ = writeln!(
            s,
            "<li>{}{at}; what to do: {}</li>",
            escape(&w.message),
            escape(&w.fix)
        );
    }
    s.push_str("</ul>\n");
}

/// Inputs with their hashes, the version and the settings.
pub(crate) fn inputs_html(ctx: &RunContext) -> String {
    let mut s = String::from(
        "<table class=\"inputs\">\n<tr><th>input</th><th>file</th><th>SHA-256</th></tr>\n",
    );
    for i in &ctx.inputs {
        let _ = writeln!(
            s,
            "<tr><td>{}</td><td>{}</td><td><code>{}</code></td></tr>",
            escape(&i.role),
            escape(&i.path),
            escape(&i.sha256)
        );
    }
    s.push_str("</table>\n");
    let _ = writeln!(
        s,
        "<p>Made by coldtrace {}. Settings:</p>\n<ul class=\"settings\">",
        env!("CARGO_PKG_VERSION")
    );
    for (k, v) in &ctx.settings {
        let _ = writeln!(s, "<li>{}: {}</li>", escape(k), escape(v));
    }
    if let Some((a, b)) = ctx.span {
        let _ = writeln!(s, "<li>span drawn: {a} m to {b} m</li>");
    }
    s.push_str("</ul>\n");
    s
}

pub(crate) fn cautions_html() -> String {
    format!(
        "<p>{}</p>\n<p>More in docs/cautions.md of coldtrace.</p>\n",
        escape(CAUTIONS)
    )
}

fn severity_class(s: Severity) -> &'static str {
    s.name()
}

/// One finding as a table row.
fn finding_row(f: &Finding) -> String {
    format!(
        "<tr class=\"{}\"><td class=\"num\">{}</td><td class=\"num\">{:.3}</td><td>{}</td><td>{}</td><td>{}</td>\
         <td class=\"num\">{:+.2}</td><td class=\"num\">{:.2}</td><td class=\"num\">{:.1}</td><td class=\"num\">{:.0} %</td>\
         <td>{}</td></tr>\n",
        severity_class(f.severity),
        f.rank,
        f.place.distance_m,
        escape(&f.place.element),
        f.kind.name(),
        f.severity.name(),
        f.change_db,
        f.power_drop_db,
        f.uncertainty_m * 1e3,
        f.confidence * 100.0,
        escape(&f.explanation)
    )
}

/// The summary sentence of a comparison.
pub fn compare_summary(r: &CompareReport) -> String {
    let (b, c) = (file_name(&r.baseline), file_name(&r.current));
    let above: Vec<&Finding> = r
        .findings
        .iter()
        .filter(|f| f.severity > Severity::Info)
        .collect();
    let head = format!(
        "Line {} between {b} ({}) and {c} ({})",
        r.line, r.states.baseline, r.states.current
    );
    match above.first() {
        None => format!(
            "{head}: no change above info ({} harmless change(s) listed below).",
            r.findings.len()
        ),
        Some(w) => format!(
            "{head}: {} finding(s) above info; the worst is a {} at {} ({:.3} m), {}, costing up to {:.2} dB \
             of transmitted power at {:.2} GHz.",
            above.len(),
            w.kind.name(),
            w.place.element,
            w.place.distance_m,
            w.severity.name(),
            w.power_drop_db,
            r.reference_hz / 1e9
        ),
    }
}

/// The whole report of a comparison.
pub fn compare_html(
    r: &CompareReport,
    line: Option<&Line>,
    ctx: &RunContext,
) -> Result<String, ReportError> {
    let fig = compare_figure(r, line, ctx.span);
    let svg = render_svg(&fig)?;
    let title = format!("coldtrace report: {}", r.line);
    let mut body = opening(
        &title,
        &format!(
            "<p class=\"summary\">{}</p>\n<p>States: {} ({}).</p>\n",
            escape(&compare_summary(r)),
            escape(&format!("{} then {}", r.states.baseline, r.states.current)),
            escape(&r.states.basis)
        ),
    );
    let mut table = String::from(
        "<table class=\"findings\">\n<tr><th>rank</th><th>at (m)</th><th>element</th><th>kind</th><th>severity</th>\
         <th>change (dB)</th><th>power drop (dB)</th><th>&plusmn; (mm)</th><th>how sure</th><th>what it is</th></tr>\n",
    );
    for f in &r.findings {
        table.push_str(&finding_row(f));
    }
    table.push_str("</table>\n");
    if r.findings.is_empty() {
        table.push_str("<p>No change between the two sweeps.</p>\n");
    }
    section(&mut body, "findings", "Findings", &table);
    let plots = figure_html(
        &svg,
        "Baseline and current after alignment (top), current less baseline (middle), the line as built \
         (bottom); findings above info marked by rank, element and kind.",
    ) + &evidence_html(&compare_evidence(r))?
        + &line_diagram(line);
    section(&mut body, "plots", "Plots and the line", &plots);
    Ok(finish_page(
        &title,
        body,
        &not_visible_html(&r.not_visible, &r.warnings),
        ctx,
    ))
}

/// The summary sentence of a single sweep's reading.
pub fn locate_summary(r: &LocateReport) -> String {
    let seen: Vec<_> = r
        .events
        .iter()
        .filter(|e| e.visible && e.severity > Severity::Info)
        .collect();
    let head = format!(
        "Line {}, sweep {} ({})",
        r.line,
        file_name(&r.sweep),
        r.state
    );
    match seen.first() {
        None => format!(
            "{head}: no event above info among {} event(s).",
            r.events.len()
        ),
        Some(w) => format!(
            "{head}: {} event(s) above info; the worst is a {} at {} ({:.3} m), {}, reflecting {:.1} dB.",
            seen.len(),
            w.kind.name(),
            w.place.element,
            w.place.distance_m,
            w.severity.name(),
            w.reflection_db
        ),
    }
}

/// The whole report of one sweep (`locate`): its events in the table.
pub fn locate_html(
    r: &LocateReport,
    line: Option<&Line>,
    ctx: &RunContext,
) -> Result<String, ReportError> {
    let svg = render_svg(&locate_figure(r, line, ctx.span))?;
    let title = format!("coldtrace report: {}", r.line);
    let mut body = opening(
        &title,
        &format!(
            "<p class=\"summary\">{}</p>\n<p>State: {} ({}).</p>\n",
            escape(&locate_summary(r)),
            r.state,
            escape(&r.state_basis)
        ),
    );
    let mut table = String::from(
        "<table class=\"findings\">\n<tr><th>#</th><th>at (m)</th><th>element</th><th>kind</th><th>severity</th>\
         <th>reflection (dB)</th><th>power drop (dB)</th><th>&plusmn; (mm)</th><th>how sure</th><th>what it is</th></tr>\n",
    );
    for (i, e) in r.events.iter().enumerate() {
        let _ = writeln!(
            table,
            "<tr class=\"{}\"><td class=\"num\">{}</td><td class=\"num\">{:.3}</td><td>{}</td><td>{}</td><td>{}{}</td>\
             <td class=\"num\">{:.1}</td><td class=\"num\">{:.2}</td><td class=\"num\">{:.1}</td>\
             <td class=\"num\">{:.0} %</td><td>{}</td></tr>",
            severity_class(e.severity),
            i + 1,
            e.place.distance_m,
            escape(&e.place.element),
            e.kind.name(),
            e.severity.name(),
            if e.visible { "" } else { " (not visible)" },
            e.reflection_db,
            e.power_drop_db,
            e.uncertainty_m * 1e3,
            e.confidence * 100.0,
            escape(&e.explanation)
        );
    }
    table.push_str("</table>\n");
    section(&mut body, "findings", "Events", &table);
    let plots = figure_html(
        &svg,
        "The sweep along the line, its events marked by element and kind, the line as built under the axis.",
    ) + &evidence_html(&locate_evidence(r))?
        + &line_diagram(line);
    section(&mut body, "plots", "Plots and the line", &plots);
    Ok(finish_page(
        &title,
        body,
        &not_visible_html(&r.not_visible, &r.warnings),
        ctx,
    ))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn text_is_escaped() {
        assert_eq!(
            escape("<a href=\"x\">J2 & 'J3'</a>"),
            "&lt;a href=&quot;x&quot;&gt;J2 &amp; &#39;J3&#39;&lt;/a&gt;"
        );
    }

    #[test]
    fn the_cautions_are_the_readmes() {
        let readme = include_str!("../../README.md");
        let flat: String = readme.split_whitespace().collect::<Vec<_>>().join(" ");
        assert!(
            flat.contains(CAUTIONS),
            "README's cautions and the report's differ"
        );
    }
}
