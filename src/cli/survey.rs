//! `coldtrace survey MANIFEST [--jobs N] [--record] [--db PATH] [--json] [--fail-on SEVERITY] [--report F.html]`: every line of
//! a fleet compared in parallel, worst first. Flags become a `coldtrace::survey::SurveyConfig`; the work is
//! `run_survey`. On a terminal (and without `--json`) a progress bar on standard error shows the lines done,
//! the findings so far and the time left.

use super::locate::parse_fail_on;
use coldtrace::compare::Severity;
use coldtrace::history::resolve_db;
use coldtrace::output::{check_extension, check_outputs, write_output};
use coldtrace::report::fleet::{survey_html, survey_inputs};
use coldtrace::report::html::RunContext;
use coldtrace::survey::{read_manifest, render_survey, run_survey, SurveyConfig, SurveyLine};
use coldtrace::{exit, Error};
use std::io::IsTerminal;
use std::path::PathBuf;
use std::sync::atomic::{AtomicUsize, Ordering};

#[derive(Debug, clap::Args)]
pub struct Args {
    /// The survey manifest (TOML: [[line]] tables of line, baseline, current; docs/history.md).
    #[arg(value_name = "MANIFEST")]
    pub manifest: PathBuf,
    /// Worker threads (default: one per core).
    #[arg(long, value_name = "N")]
    pub jobs: Option<usize>,
    /// Store every line's current sweep in the history (idempotent, as `history record`).
    #[arg(long)]
    pub record: bool,
    /// The history for --record: an SQLite file, or a PostgreSQL server's postgres:// URL (default:
    /// $COLDTRACE_DB, else the default file).
    #[arg(long, value_name = "PATH|URL")]
    pub db: Option<PathBuf>,
    /// Print the result as JSON (docs/output.md) instead of the table.
    #[arg(long)]
    pub json: bool,
    /// Exit with 1 when a line's finding reaches this severity (or a line is broken): info, minor, major or
    /// critical.
    #[arg(long, default_value = "minor", value_name = "SEVERITY")]
    pub fail_on: String,
    /// Write one self-contained HTML report of the fleet (summary, findings, lines, inputs' SHA-256,
    /// cautions) to FILE.html (docs/report.md).
    #[arg(long, value_name = "FILE.html")]
    pub report: Option<PathBuf>,
    /// With --report: replace a report file that exists (inputs are never replaced).
    #[arg(long, requires = "report")]
    pub force: bool,
}

pub fn run(args: Args) -> coldtrace::Result<u8> {
    let fail_on = parse_fail_on(&args.fail_on)?;
    if args.db.is_some() && !args.record {
        return Err(Error::Usage(
            "--db is for --record: pass --record to store the results, or leave --db out".into(),
        ));
    }
    if let Some(r) = &args.report {
        check_extension(r, "--report", "html", "an HTML report")?;
        check_outputs(&[r.as_path()], args.force, &[args.manifest.as_path()])?;
    }
    let items = read_manifest(&args.manifest)?;
    let record_db = if args.record {
        Some(resolve_db(args.db.as_deref().map(|p| p.as_os_str()))?)
    } else {
        None
    };
    let cfg = SurveyConfig {
        jobs: args.jobs,
        record_db,
        analysis: Default::default(),
    };
    let bar = (!args.json && !super::say::quiet() && std::io::stderr().is_terminal()).then(|| {
        let b = indicatif::ProgressBar::new(items.len() as u64);
        b.set_style(
            indicatif::ProgressStyle::with_template(
                "{bar:30} {pos}/{len} lines, {msg}, {eta} left",
            )
            .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
        );
        b.set_message("0 findings");
        b
    });
    let found = AtomicUsize::new(0);
    let progress = |row: &SurveyLine| {
        if let Some(b) = &bar {
            let n = row
                .findings
                .iter()
                .filter(|f| f.severity > Severity::Info)
                .count();
            let total = found.fetch_add(n, Ordering::Relaxed) + n;
            b.set_message(format!("{total} findings"));
            b.inc(1);
        }
    };
    let report = run_survey(&items, &cfg, &progress)?;
    if let Some(b) = &bar {
        b.finish_and_clear();
    }
    if let Some(path) = &args.report {
        let ctx = RunContext {
            inputs: survey_inputs(&args.manifest, &items),
            settings: vec![
                ("window".into(), super::DEFAULT_WINDOW.into()),
                ("fail on".into(), args.fail_on.clone()),
            ],
            span: None,
        };
        let mut never: Vec<&std::path::Path> = vec![args.manifest.as_path()];
        for it in &items {
            never.extend([
                it.line.as_path(),
                it.baseline.as_path(),
                it.current.as_path(),
            ]);
        }
        write_output(
            path,
            survey_html(&report, &ctx).as_bytes(),
            args.force,
            &never,
        )?;
    }
    if args.json {
        let text =
            serde_json::to_string_pretty(&report).map_err(|e| Error::Usage(e.to_string()))?;
        super::print(&(text + "\n"))?;
    } else {
        super::print(&render_survey(&report))?;
    }
    let fails = report.lines.iter().any(|l| {
        l.error.is_some()
            || l.record_error.is_some()
            || l.worst_severity.is_some_and(|s| s >= fail_on)
    });
    Ok(if fails { exit::FINDINGS } else { exit::OK })
}
