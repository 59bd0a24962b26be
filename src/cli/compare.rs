//! `coldtrace compare BASELINE CURRENT [--line LINE | --vf VF] [--baseline-state S] [--current-state S]
//! [--json] [--plot F] [--plot-evidence F] [--span A..B] [--report F.html] [--fail-on SEVERITY] ...`: where the line changed between two sweeps, how badly, why.
//! Flags become a `coldtrace::compare::job::CompareJob`; the work is `run_compare`.

use super::locate::{
    analysis_config, check_at_in_band, check_plot, inputs, line_source, parse_fail_on, parse_state,
    plot_inputs, run_context, write_evidence, LineArgs,
};
use coldtrace::compare::job::{run_compare, CompareJob};
use coldtrace::compare::text::render_compare;
use coldtrace::output::write_output;
use coldtrace::report::evidence::compare_evidence;
use coldtrace::report::html::compare_html;
use coldtrace::report::views::compare_figure;
use coldtrace::report::write_plot;
use coldtrace::units;
use coldtrace::{exit, Error};
use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// The earlier sweep (e.g. warm, before the cooldown), Touchstone, or - for standard input.
    #[arg(value_name = "BASELINE")]
    pub baseline: PathBuf,
    /// The later sweep (e.g. cold), Touchstone, or - for standard input.
    #[arg(value_name = "CURRENT")]
    pub current: PathBuf,
    #[command(flatten)]
    pub line: LineArgs,
    /// State of the baseline sweep: warm or cold (inferred and reported when not given).
    #[arg(long, value_name = "STATE")]
    pub baseline_state: Option<String>,
    /// State of the current sweep: warm or cold (inferred and reported when not given).
    #[arg(long, value_name = "STATE")]
    pub current_state: Option<String>,
    /// Exit with 1 when a finding reaches this severity: info, minor, major or critical.
    #[arg(long, default_value = "minor", value_name = "SEVERITY")]
    pub fail_on: String,
    /// A measured drop of transmitted power to compare with what the findings explain: 1.5 or 1.5dB.
    #[arg(long, value_name = "DB")]
    pub power_drop: Option<String>,
    /// Show every finding in the table, the harmless changes at severity info as well; without it they are
    /// counted under the table.
    #[arg(long)]
    pub all: bool,
}

pub fn run(args: Args) -> coldtrace::Result<u8> {
    let fail_on = parse_fail_on(&args.fail_on)?;
    let mut analysis = analysis_config(&args.line)?;
    analysis.observed_drop_db = args
        .power_drop
        .as_deref()
        .map(|t| units::parse_flag_db("--power-drop", t))
        .transpose()?;
    let job = CompareJob {
        baseline: args.baseline.clone(),
        current: args.current.clone(),
        line: line_source(&args.line),
        baseline_state: args
            .baseline_state
            .as_deref()
            .map(|s| parse_state("--baseline-state", s))
            .transpose()?,
        current_state: args
            .current_state
            .as_deref()
            .map(|s| parse_state("--current-state", s))
            .transpose()?,
        analysis,
        source: args.line.source.source(&[&args.baseline, &args.current])?,
    };
    check_plot(&args.line, &[&args.baseline, &args.current])?;
    check_at_in_band(&args.line, &[&args.baseline, &args.current])?;
    let drawing = plot_inputs(&args.line)?;
    let report = run_compare(&job)?;
    super::notices(&report.warnings);
    if let Some(p) = &args.line.plot {
        write_plot(
            p,
            &compare_figure(&report, drawing.line.as_ref(), drawing.span),
            args.line.force,
            &inputs(&args.line, &[&args.baseline, &args.current]),
        )?;
    }
    write_evidence(
        &args.line,
        &compare_evidence(&report),
        &[&args.baseline, &args.current],
    )?;
    if let Some(path) = &args.line.report {
        let given = |s: &Option<String>| s.clone().unwrap_or_else(|| "inferred".into());
        let settings = vec![
            ("baseline state".to_string(), given(&args.baseline_state)),
            ("current state".to_string(), given(&args.current_state)),
            ("fail on".to_string(), args.fail_on.clone()),
        ];
        let ctx = run_context(
            &args.line,
            &[("baseline", &args.baseline), ("current", &args.current)],
            settings,
            drawing.span,
        )?;
        let html = compare_html(&report, drawing.line.as_ref(), &ctx)?;
        write_output(
            path,
            html.as_bytes(),
            args.line.force,
            &inputs(&args.line, &[&args.baseline, &args.current]),
        )?;
    }
    if args.line.json {
        let text =
            serde_json::to_string_pretty(&report).map_err(|e| Error::Usage(e.to_string()))?;
        super::print(&(text + "\n"))?;
    } else {
        super::say::report(&render_compare(&report, args.all))?;
    }
    Ok(if report.findings.iter().any(|f| f.severity >= fail_on) {
        exit::FINDINGS
    } else {
        exit::OK
    })
}
