//! `coldtrace locate SWEEP [--line LINE | --vf VF] [--state S] [--json] [--plot F] [--plot-evidence F] ...`: every
//! discontinuity one sweep shows, placed on the line and explained. Flags become a
//! `coldtrace::compare::job::LocateJob`; the work is `run_locate`.

use coldtrace::compare::job::{run_locate, LineSource, LocateJob};
use coldtrace::compare::text::render_locate;
use coldtrace::compare::{AnalysisConfig, Severity};
use coldtrace::limits::{short_number, MAX_FREQUENCY_HZ};
use coldtrace::line::{Line, State};
use coldtrace::output::write_output;
use coldtrace::report::evidence::{locate_evidence, EvidenceFigure};
use coldtrace::report::html::{hash_inputs, locate_html, RunContext};
use coldtrace::report::views::locate_figure;
use coldtrace::report::write_plot;
use coldtrace::transform::{Window, DEFAULT_VELOCITY_FACTOR};
use coldtrace::units::{self, Family};
use coldtrace::{exit, Error};
use std::path::{Path, PathBuf};

use super::DEFAULT_WINDOW;

/// Flags shared by `locate` and `compare`.
#[derive(Debug, clap::Args)]
pub struct LineArgs {
    /// The line file (TOML, docs/line-file.md): as-built positions, element names, loss compensation.
    #[arg(long, value_name = "LINE", conflicts_with = "vf")]
    pub line: Option<PathBuf>,
    /// Without a line file: the velocity factor of the line, read as one uniform segment (default 0.695,
    /// solid PTFE).
    #[arg(long, value_name = "VF")]
    pub vf: Option<f64>,
    /// Band-pass window: rect, hann, hamming, blackman-harris or kaiser:BETA. Default kaiser:9, as in
    /// every command (docs/method.md, Windows).
    #[arg(long, default_value = DEFAULT_WINDOW, value_name = "WINDOW")]
    pub window: String,
    /// Frequency at which power drops are quoted, with its unit, e.g. 6GHz; inside the sweep's band
    /// (default: the band centre).
    #[arg(long, value_name = "FREQ")]
    pub at: Option<String>,
    /// Print the result as JSON (docs/output.md) instead of the table.
    #[arg(long)]
    pub json: bool,
    /// Draw the traces to an .svg or .png file.
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,
    /// Draw the first-ranked finding's evidence (compare; locate: the first anomaly) to an .svg or .png
    /// file: its gated reflection against frequency with the fitted lumped model over it (docs/report.md).
    #[arg(long, value_name = "FILE")]
    pub plot_evidence: Option<PathBuf>,
    /// The distance span drawn by --plot and --report, e.g. 0m..3m; default: the line's length (without a
    /// line file, the farthest significant echo) plus a margin.
    #[arg(long, value_name = "A..B")]
    pub span: Option<String>,
    /// Write one self-contained HTML report (summary, findings, plots, inputs' SHA-256, settings,
    /// cautions) to FILE.html: no scripts, no network, prints on A4 or Letter (docs/report.md).
    #[arg(long, value_name = "FILE.html")]
    pub report: Option<PathBuf>,
    /// Replace output files that exist (inputs are never replaced).
    #[arg(long)]
    pub force: bool,
    #[command(flatten)]
    pub source: super::SourceArgs,
}

#[derive(Debug, clap::Args)]
pub struct Args {
    /// The sweep, Touchstone, or - for standard input (with --ports); of several ports, S11 unless
    /// --param says otherwise.
    #[arg(value_name = "SWEEP")]
    pub sweep: PathBuf,
    #[command(flatten)]
    pub line: LineArgs,
    /// State the sweep was taken in: warm or cold. Default: inferred where the data allow (with a line
    /// file, from the far end's loss against the warm and cold model; reported with its basis), else
    /// cold, as in trace and simulate.
    #[arg(long, value_name = "STATE")]
    pub state: Option<String>,
    /// Show every anomalous event in the table, the harmless ones at severity info as well; without it
    /// they are counted under it. The echoes the line file expects are listed apart either way.
    #[arg(long)]
    pub all: bool,
    /// Exit with 1 when an event reaches this severity: info, minor, major or critical (an echo the line
    /// file expects never does).
    #[arg(long, value_name = "SEVERITY")]
    pub fail_on: Option<String>,
}

/// Every file this run read: never to be written over.
pub fn inputs<'a>(a: &'a LineArgs, sweeps: &[&'a std::path::Path]) -> Vec<&'a std::path::Path> {
    let mut v = sweeps.to_vec();
    if let Some(l) = &a.line {
        v.push(l.as_path());
    }
    v
}

/// Refuse a `--plot` or `--report` path that cannot be written before any work is done.
pub fn check_plot(a: &LineArgs, sweeps: &[&std::path::Path]) -> coldtrace::Result<()> {
    for p in [&a.plot, &a.plot_evidence].into_iter().flatten() {
        coldtrace::report::PlotFormat::from_path(p)?;
    }
    if let Some(r) = &a.report {
        coldtrace::output::check_extension(r, "--report", "html", "an HTML report")?;
    }
    let outputs: Vec<&Path> = [&a.plot, &a.plot_evidence, &a.report]
        .into_iter()
        .flatten()
        .map(PathBuf::as_path)
        .collect();
    coldtrace::output::check_outputs(&outputs, a.force, &inputs(a, sweeps))
}

/// The report's account of the run: each input's SHA-256 and the settings as the user would write them.
pub fn run_context(
    a: &LineArgs,
    sweeps: &[(&str, &Path)],
    mut settings: Vec<(String, String)>,
    span: Option<(f64, f64)>,
) -> coldtrace::Result<RunContext> {
    let mut files = sweeps.to_vec();
    if let Some(l) = &a.line {
        files.push(("line file", l.as_path()));
    }
    let mut all = vec![
        (
            "line".to_string(),
            match (&a.line, a.vf) {
                (Some(l), _) => format!("--line {}", l.display()),
                (None, vf) => format!(
                    "no line file: one uniform line, velocity factor {}",
                    vf.unwrap_or(DEFAULT_VELOCITY_FACTOR)
                ),
            },
        ),
        ("window".to_string(), a.window.clone()),
        (
            "power drops quoted at".to_string(),
            a.at.clone().unwrap_or_else(|| "the band centre".into()),
        ),
    ];
    all.append(&mut settings);
    Ok(RunContext {
        inputs: hash_inputs(&files)?,
        settings: all,
        span,
    })
}

/// `--fail-on`'s value.
pub fn parse_fail_on(s: &str) -> coldtrace::Result<Severity> {
    Severity::parse(s).ok_or_else(|| {
        Error::Usage(format!(
            "--fail-on '{s}': use info, minor, major or critical"
        ))
    })
}

pub fn parse_state(flag: &str, s: &str) -> coldtrace::Result<State> {
    s.parse::<State>()
        .map_err(|e| Error::Usage(format!("{flag}: {e}")))
}

pub fn line_source(a: &LineArgs) -> LineSource {
    match &a.line {
        Some(p) => LineSource::File(p.clone()),
        None => LineSource::Uniform {
            velocity_factor: a.vf.unwrap_or(DEFAULT_VELOCITY_FACTOR),
        },
    }
}

pub fn analysis_config(a: &LineArgs) -> coldtrace::Result<AnalysisConfig> {
    let window = Window::parse(&a.window).map_err(|e| Error::Usage(format!("--window: {e}")))?;
    let reference_hz =
        a.at.as_deref()
            .map(|s| units::parse_flag("--at", s, Family::Frequency))
            .transpose()?;
    if let Some(f) = reference_hz.filter(|f| !(0.0..=MAX_FREQUENCY_HZ).contains(f)) {
        return Err(Error::Usage(format!(
            "--at {}: give a frequency from 0 to {} Hz (coldtrace's limit, docs/limits.md), e.g. --at 6GHz",
            short_number(f),
            short_number(MAX_FREQUENCY_HZ)
        )));
    }
    Ok(AnalysisConfig {
        window,
        reference_hz,
        observed_drop_db: None,
    })
}

/// Refuse `--at` outside the band of any of `sweeps` (read here only when `--at` is given), naming the band.
pub fn check_at_in_band(a: &LineArgs, sweeps: &[&Path]) -> coldtrace::Result<()> {
    let Some(at) = a.at.as_deref() else {
        return Ok(());
    };
    let f = units::parse_flag("--at", at, Family::Frequency)?;
    for sweep in sweeps {
        let ts = coldtrace::touchstone::read_source(sweep, a.source.ports)?;
        let freqs = &ts.network.freqs_hz;
        let (Some(&lo), Some(&hi)) = (freqs.first(), freqs.last()) else {
            continue;
        };
        if !(lo..=hi).contains(&f) {
            return Err(Error::Usage(format!(
                "--at {at}: outside the band of {} ({} to {}); give a frequency inside it, e.g. --at {}",
                sweep.display(),
                ghz(lo),
                ghz(hi),
                ghz(0.5 * (lo + hi))
            )));
        }
    }
    Ok(())
}

/// A frequency written in GHz, shortest form, with its unit.
fn ghz(hz: f64) -> String {
    format!("{}GHz", short_number(hz / 1e9))
}

/// `--plot-evidence`: the first of `figures` (the first-ranked finding's evidence), or a notice that there
/// is none to draw (nothing above info), and no file.
pub fn write_evidence(
    a: &LineArgs,
    figures: &[EvidenceFigure],
    sweeps: &[&Path],
) -> coldtrace::Result<()> {
    let Some(path) = &a.plot_evidence else {
        return Ok(());
    };
    match figures.first() {
        Some(e) => write_plot(path, &e.figure, a.force, &inputs(a, sweeps)),
        None => {
            super::say::notice(&format_args!(
                "{}: not written: no finding above info, so no evidence to draw (the table lists every \
                 change; --all shows the harmless ones)",
                path.display()
            ));
            Ok(())
        }
    }
}

/// What a plot draws besides the result: the span asked, and the line file for the chain strip.
pub struct Drawing {
    pub span: Option<(f64, f64)>,
    pub line: Option<Line>,
}

/// `--span`, parsed; and the line file once more for the plot's chain strip (only when something is drawn).
pub fn plot_inputs(a: &LineArgs) -> coldtrace::Result<Drawing> {
    let span = a
        .span
        .as_deref()
        .map(|s| units::parse_flag_range("--span", s, Family::Length))
        .transpose()?;
    let line = match &a.line {
        Some(l) if a.plot.is_some() || a.report.is_some() => {
            Some(coldtrace::line::file::read_file(l)?)
        }
        _ => None,
    };
    Ok(Drawing { span, line })
}

pub fn run(args: Args) -> coldtrace::Result<u8> {
    let fail_on = args.fail_on.as_deref().map(parse_fail_on).transpose()?;
    let job = LocateJob {
        sweep: args.sweep.clone(),
        line: line_source(&args.line),
        state: args
            .state
            .as_deref()
            .map(|s| parse_state("--state", s))
            .transpose()?,
        analysis: analysis_config(&args.line)?,
        source: args.line.source.source(&[&args.sweep])?,
    };
    check_plot(&args.line, &[&args.sweep])?;
    check_at_in_band(&args.line, &[&args.sweep])?;
    let drawing = plot_inputs(&args.line)?;
    let report = run_locate(&job)?;
    super::notices(&report.warnings);
    if let Some(p) = &args.line.plot {
        write_plot(
            p,
            &locate_figure(&report, drawing.line.as_ref(), drawing.span),
            args.line.force,
            &inputs(&args.line, &[&args.sweep]),
        )?;
    }
    write_evidence(&args.line, &locate_evidence(&report), &[&args.sweep])?;
    if let Some(path) = &args.line.report {
        let settings = vec![(
            "state".to_string(),
            args.state.clone().unwrap_or_else(|| "inferred".into()),
        )];
        let ctx = run_context(
            &args.line,
            &[("sweep", &args.sweep)],
            settings,
            drawing.span,
        )?;
        let html = locate_html(&report, drawing.line.as_ref(), &ctx)?;
        write_output(
            path,
            html.as_bytes(),
            args.line.force,
            &inputs(&args.line, &[&args.sweep]),
        )?;
    }
    if args.line.json {
        let text =
            serde_json::to_string_pretty(&report).map_err(|e| Error::Usage(e.to_string()))?;
        super::print(&(text + "\n"))?;
    } else {
        super::say::report(&render_locate(&report, args.all))?;
    }
    let fails = fail_on.is_some_and(|s| {
        report
            .events
            .iter()
            .any(|e| e.visible && !e.expected && e.severity >= s)
    });
    Ok(if fails { exit::FINDINGS } else { exit::OK })
}
