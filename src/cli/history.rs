//! `coldtrace history record|list|show|trend|baseline|export`: each line's record of health, cooldown
//! after cooldown. Flags become `coldtrace::history` calls on a `SqliteStore` opened at `--db`, else
//! `COLDTRACE_DB`, else the default path (docs/history.md).

use super::locate::parse_state;
use coldtrace::history::text::{render_list, render_record, render_show, render_trend};
use coldtrace::history::trend::line_trend;
use coldtrace::history::{
    export, open_store, record_sweep, resolve_db, Database, HistoryStore, RecordJob, TrendRule,
};
use coldtrace::line::State;
use coldtrace::output::write_output;
use coldtrace::report::history::{database_input, history_html};
use coldtrace::report::html::RunContext;
use coldtrace::report::{write_plot, Figure, Series};
use coldtrace::{exit, Error, Warning};
use serde::Serialize;
use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct Args {
    #[command(subcommand)]
    pub command: Sub,
}

/// Flags every history command takes.
#[derive(Debug, clap::Args)]
pub struct Common {
    /// The history: an SQLite file, or a PostgreSQL server's postgres:// URL (default: $COLDTRACE_DB,
    /// else ~/.local/share/coldtrace/history.sqlite).
    #[arg(long, value_name = "PATH|URL")]
    pub db: Option<PathBuf>,
    /// Print the result as JSON (docs/output.md) instead of a table.
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, clap::Subcommand)]
pub enum Sub {
    /// Store one sweep of a line: its landmarks' figures and the findings against the line's baseline.
    Record(RecordArgs),
    /// List the records, oldest first per line.
    List(ListArgs),
    /// Everything stored for a line's records.
    Show(ShowArgs),
    /// Each connector's reflection over the cooldowns, and whether it is climbing.
    Trend(TrendArgs),
    /// Choose the record later sweeps of a line are compared against.
    Baseline(BaselineArgs),
    /// Write a line's history as CSV or JSON.
    Export(ExportArgs),
    /// Copy a history into another (a lab's SQLite file into a shared PostgreSQL server): resumable, and
    /// a second run adds nothing.
    Migrate(MigrateArgs),
}

#[derive(Debug, clap::Args)]
pub struct MigrateArgs {
    /// The history to copy from: an SQLite file (or a postgres:// URL). It is only read.
    #[arg(long, value_name = "PATH|URL")]
    pub from: PathBuf,
    /// The history to copy into: a postgres:// URL (or an SQLite file), made when it holds none yet.
    #[arg(long, value_name = "PATH|URL")]
    pub to: PathBuf,
    /// Print the result as JSON (docs/output.md) instead of a sentence.
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, clap::Args)]
pub struct RecordArgs {
    /// The sweep, Touchstone (S11 is used).
    #[arg(value_name = "SWEEP")]
    pub sweep: PathBuf,
    /// The line file (its `name` is the line's name in the history).
    #[arg(long, value_name = "LINE")]
    pub line: PathBuf,
    /// State the sweep was taken in: warm or cold (inferred and stored when not given).
    #[arg(long, value_name = "STATE")]
    pub state: Option<String>,
    /// When the sweep was taken, RFC 3339, e.g. 2026-11-30T14:05:00Z (default: now).
    #[arg(long, value_name = "TIME")]
    pub at: Option<String>,
    /// A note stored with the record.
    #[arg(long, value_name = "TEXT")]
    pub note: Option<String>,
    #[command(flatten)]
    pub common: Common,
}

#[derive(Debug, clap::Args)]
pub struct ListArgs {
    /// Only this line's records.
    #[arg(value_name = "LINE")]
    pub line: Option<String>,
    #[command(flatten)]
    pub common: Common,
}

#[derive(Debug, clap::Args)]
pub struct ShowArgs {
    /// The line's name (as in its line file).
    #[arg(value_name = "LINE")]
    pub line: String,
    /// Write the line's history as one self-contained HTML report (records, each connector across
    /// cooldowns with its trend and the severity levels, the database's SHA-256, cautions) to FILE.html
    /// (docs/report.md).
    #[arg(long, value_name = "FILE.html")]
    pub report: Option<PathBuf>,
    /// Replace the report file if it exists (the database is never replaced).
    #[arg(long)]
    pub force: bool,
    #[command(flatten)]
    pub common: Common,
}

#[derive(Debug, clap::Args)]
pub struct TrendArgs {
    /// The line's name (as in its line file).
    #[arg(value_name = "LINE")]
    pub line: String,
    /// Only this connector.
    #[arg(long, value_name = "ELEMENT")]
    pub element: Option<String>,
    /// Draw the values to an .svg or .png file.
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,
    /// Which records make the cooldowns: cold (default) or warm.
    #[arg(long, value_name = "STATE", default_value = "cold")]
    pub state: String,
    /// Replace a plot file that exists.
    #[arg(long)]
    pub force: bool,
    #[command(flatten)]
    pub common: Common,
}

#[derive(Debug, clap::Args)]
pub struct BaselineArgs {
    /// The line's name (as in its line file).
    #[arg(value_name = "LINE")]
    pub line: String,
    /// The record's id (`coldtrace history list`).
    #[arg(value_name = "RECORD")]
    pub record: i64,
    #[command(flatten)]
    pub common: Common,
}

#[derive(Debug, clap::Args)]
pub struct ExportArgs {
    /// The line's name (as in its line file).
    #[arg(value_name = "LINE")]
    pub line: String,
    /// csv or json.
    #[arg(long, value_name = "FORMAT")]
    pub format: String,
    /// Write to this file instead of standard output.
    #[arg(short, long, value_name = "FILE")]
    pub output: Option<PathBuf>,
    /// Replace an output file that exists.
    #[arg(long)]
    pub force: bool,
    #[command(flatten)]
    pub common: Common,
}

fn open(c: &Common, create: bool) -> coldtrace::Result<Box<dyn HistoryStore>> {
    let db = resolve_db(c.db.as_deref().map(|p| p.as_os_str()))?;
    Ok(open_store(&db, create)?)
}

/// Files no output may be written over: the database's, for a history kept in a file.
fn protected(store: &dyn HistoryStore) -> Vec<&std::path::Path> {
    store.file().into_iter().collect()
}

fn json<T: Serialize>(value: &T) -> coldtrace::Result<()> {
    let text = serde_json::to_string_pretty(value).map_err(|e| Error::Usage(e.to_string()))?;
    super::print(&(text + "\n"))
}

/// `{ ..., "warnings": [...] }` around a result that has none of its own.
#[derive(Serialize)]
struct WithWarnings<T: Serialize> {
    #[serde(flatten)]
    inner: T,
    warnings: Vec<Warning>,
}

pub fn run(args: Args) -> coldtrace::Result<u8> {
    match args.command {
        Sub::Record(a) => record(a),
        Sub::List(a) => list(a),
        Sub::Show(a) => show(a),
        Sub::Trend(a) => trend(a),
        Sub::Baseline(a) => baseline(a),
        Sub::Export(a) => export_line(a),
        Sub::Migrate(a) => migrate(a),
    }
}

fn record(a: RecordArgs) -> coldtrace::Result<u8> {
    let job = RecordJob {
        sweep: a.sweep,
        line: a.line,
        state: a
            .state
            .as_deref()
            .map(|s| parse_state("--state", s))
            .transpose()?,
        at: a.at,
        note: a.note,
        analysis: Default::default(),
    };
    // Check the time before opening (or creating) anything.
    if let Some(t) = &job.at {
        coldtrace::history::parse_time(t)?;
    }
    let mut store = open(&a.common, true)?;
    let outcome = record_sweep(&mut *store, &job)?;
    if a.common.json {
        json(&outcome)?;
    } else {
        super::print(&render_record(&outcome))?;
    }
    Ok(exit::OK)
}

fn list(a: ListArgs) -> coldtrace::Result<u8> {
    let store = open(&a.common, false)?;
    if let Some(l) = &a.line {
        store.line_details(l)?;
    }
    let records = store.list(a.line.as_deref())?;
    if a.common.json {
        #[derive(Serialize)]
        struct Out<'a> {
            records: &'a [coldtrace::history::RecordSummary],
        }
        json(&WithWarnings {
            inner: Out { records: &records },
            warnings: Vec::new(),
        })?;
    } else {
        super::print(&render_list(&records))?;
    }
    Ok(exit::OK)
}

fn show(a: ShowArgs) -> coldtrace::Result<u8> {
    if let Some(r) = &a.report {
        coldtrace::output::check_extension(r, "--report", "html", "an HTML report")?;
    }
    let store = open(&a.common, false)?;
    let records = store.line_details(&a.line)?;
    if let Some(path) = &a.report {
        write_history_report(&*store, &a.line, &records, path, a.force)?;
    }
    if a.common.json {
        #[derive(Serialize)]
        struct Out<'a> {
            line: &'a str,
            baseline: Option<i64>,
            records: &'a [coldtrace::history::RecordDetail],
        }
        json(&WithWarnings {
            inner: Out {
                line: &a.line,
                baseline: store.baseline(&a.line)?,
                records: &records,
            },
            warnings: Vec::new(),
        })?;
    } else {
        super::print(&render_show(&a.line, &records))?;
    }
    Ok(exit::OK)
}

/// `history show --report`: the records and the trend of each state that has records, as one HTML page,
/// written through the safe writer (never over the database; an existing file only with `--force`).
fn write_history_report(
    store: &dyn HistoryStore,
    line: &str,
    records: &[coldtrace::history::RecordDetail],
    path: &std::path::Path,
    force: bool,
) -> coldtrace::Result<()> {
    coldtrace::output::check_outputs(&[path], force, &protected(store))?;
    let rule = TrendRule::default();
    let mut trends = Vec::new();
    for state in [State::Cold, State::Warm] {
        if records.iter().any(|r| r.summary.state == state) {
            trends.push(line_trend(store, line, state, None, &rule)?);
        }
    }
    let settings = vec![
        (
            "trend rule".to_string(),
            format!(
                "the latest {} to {} cooldowns of each state; Mann-Kendall p <= {}; slope >= {} dB per \
                 cooldown; rise >= {} dB over the median of at least {} earlier values and {} dB over \
                 every earlier one (docs/history.md)",
                rule.min_points,
                rule.window,
                rule.alpha,
                rule.min_slope_db,
                rule.min_rise_db,
                rule.min_reference,
                rule.min_excess_db
            ),
        ),
        (
            "baseline".to_string(),
            store
                .baseline(line)?
                .map_or("none chosen".to_string(), |b| format!("record {b}")),
        ),
    ];
    let ctx = RunContext {
        inputs: vec![database_input(store, records)?],
        settings,
        span: None,
    };
    let html = history_html(line, records, store.baseline(line)?, &trends, &ctx)?;
    write_output(path, html.as_bytes(), force, &protected(store))
}

fn trend(a: TrendArgs) -> coldtrace::Result<u8> {
    let state: State = parse_state("--state", &a.state)?;
    let store = open(&a.common, false)?;
    let report = line_trend(
        &*store,
        &a.line,
        state,
        a.element.as_deref(),
        &TrendRule::default(),
    )?;
    if let Some(p) = &a.plot {
        // One connector (`--element`): its own figure, with the trend line the rule judged and the severity
        // levels; several: each connector's reflection on one figure.
        let fig = match report.landmarks.as_slice() {
            [l] => coldtrace::report::history::landmark_figure(&report.line, report.state, l),
            all => {
                let mut fig = Figure::new(
                    format!(
                        "{}: connector reflections, {} records",
                        report.line, report.state
                    ),
                    "cooldown (record, oldest first)",
                    "reflection (dB, compensated)",
                );
                for l in all {
                    fig.series.push(Series {
                        name: if l.verdict.warning {
                            format!("{} (climbing)", l.element)
                        } else {
                            l.element.clone()
                        },
                        x: (0..l.values_db.len()).map(|i| i as f64).collect(),
                        y: l.values_db.clone(),
                    });
                }
                fig
            }
        };
        write_plot(p, &fig, a.force, &protected(&*store))?;
    }
    if a.common.json {
        json(&report)?;
    } else {
        super::print(&render_trend(&report))?;
    }
    Ok(if report.landmarks.iter().any(|l| l.verdict.warning) {
        exit::FINDINGS
    } else {
        exit::OK
    })
}

fn baseline(a: BaselineArgs) -> coldtrace::Result<u8> {
    let mut store = open(&a.common, false)?;
    store.set_baseline(&a.line, a.record)?;
    let rec = store
        .detail(a.record)?
        .map(|d| d.summary)
        .ok_or_else(|| Error::Usage(format!("record {} vanished", a.record)))?;
    if a.common.json {
        #[derive(Serialize)]
        struct Out<'a> {
            line: &'a str,
            baseline: &'a coldtrace::history::RecordSummary,
        }
        json(&WithWarnings {
            inner: Out {
                line: &a.line,
                baseline: &rec,
            },
            warnings: Vec::new(),
        })?;
    } else {
        super::print(&format!(
            "line {}: later sweeps are compared against record {} ({} {}, {})\n",
            a.line,
            rec.id,
            rec.state.name(),
            rec.at,
            rec.sweep
        ))?;
    }
    Ok(exit::OK)
}

fn export_line(a: ExportArgs) -> coldtrace::Result<u8> {
    let format = a.format.to_ascii_lowercase();
    if format != "csv" && format != "json" {
        return Err(Error::Usage(format!(
            "--format '{}': use csv or json",
            a.format
        )));
    }
    let store = open(&a.common, false)?;
    let records = store.line_details(&a.line)?;
    let text = if format == "csv" {
        export::to_csv(&records)
    } else {
        serde_json::to_string_pretty(&export::Export {
            line: &a.line,
            records: &records,
        })
        .map_err(|e| Error::Usage(e.to_string()))?
            + "\n"
    };
    match &a.output {
        Some(p) => {
            coldtrace::output::write_output(p, text.as_bytes(), a.force, &protected(&*store))?
        }
        None => super::print(&text)?,
    }
    Ok(exit::OK)
}

fn migrate(a: MigrateArgs) -> coldtrace::Result<u8> {
    let from = Database::from_arg(a.from.as_os_str());
    let to = Database::from_arg(a.to.as_os_str());
    let same = match (&from, &to) {
        (Database::File(x), Database::File(y)) => {
            x == y
                || std::fs::canonicalize(x)
                    .ok()
                    .is_some_and(|c| std::fs::canonicalize(y).ok() == Some(c))
        }
        (Database::Server(x), Database::Server(y)) => x == y,
        _ => false,
    };
    if same {
        return Err(Error::Usage(format!(
            "--from and --to are the same history ({}): give the database to copy into as --to",
            from.shown()
        )));
    }
    let source = open_store(&from, false)?;
    let mut target = open_store(&to, true)?;
    let outcome = coldtrace::history::migrate::copy_history(&*source, &mut *target, |done, of| {
        if !a.json && done % 100 == 0 {
            super::say::notice(&format!("{done} of {of} records copied or found"));
        }
    })?;
    if a.json {
        json(&WithWarnings {
            inner: &outcome,
            warnings: Vec::new(),
        })?;
    } else {
        let mut text = format!(
            "{} -> {}: {} records, {} copied, {} there already; {} line baseline(s) chosen\n",
            outcome.from,
            outcome.to,
            outcome.records,
            outcome.copied,
            outcome.already,
            outcome.baselines_set
        );
        for l in &outcome.baselines_kept {
            text.push_str(&format!(
                "line {l}: the target's own baseline was kept (it differs from the source's)\n"
            ));
        }
        super::print(&text)?;
    }
    Ok(exit::OK)
}
