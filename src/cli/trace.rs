//! `coldtrace trace FILE [--mode M] [--window W] [--span A..B] [--step S] [--vf V] [--gate A..B -o F]
//! [--gate-window W] [--csv F] [--json] [--plot F.svg|F.png] [--resample] [--padding N] [--force]
//! [--line LINE [--state warm|cold]]`: time-domain trace of S11.
//! Flags become a `coldtrace::transform::TraceConfig`; the work is `coldtrace::transform::run_trace`.
//! With `--line` the distance axis is the line's as-built metres (`coldtrace::line::LineMap`), with its
//! connectors, attenuators and device marked.

use coldtrace::line::{file::read_file as line_file, LineMap, State};
use coldtrace::network::first_port_warning;
use coldtrace::output::{check_extension, check_outputs, write_output};
use coldtrace::report::views::trace_figure;
use coldtrace::report::{plot_bytes, PlotFormat};
use coldtrace::touchstone::{read_source, write, WriteOptions};
use coldtrace::transform::{
    run_trace, DistanceMap, Mode, TraceConfig, TraceEngine, TracePlan, UniformLine, Window,
    DEFAULT_VELOCITY_FACTOR,
};
use coldtrace::units::{self, Family};
use coldtrace::{Error, Network};
use std::path::{Path, PathBuf};

use super::DEFAULT_WINDOW;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// The Touchstone sweep, or - for standard input (with --ports); of several ports, S11 unless --param
    /// says otherwise.
    #[arg(value_name = "FILE")]
    pub input: PathBuf,
    #[command(flatten)]
    pub source: super::SourceArgs,
    /// band-pass (any uniform grid, |h| in dB), low-pass-impulse or low-pass-step (rho with sign; harmonic
    /// grid f = k*df), or impedance (ohm, from the step).
    #[arg(long, default_value = "band-pass", value_name = "MODE")]
    pub mode: String,
    /// Window: rect, hann, hamming, blackman-harris or kaiser:BETA. Default kaiser:9, as in every command:
    /// sidelobes near -66 dB, under the dynamic range of a cryostat line (docs/method.md, Windows).
    #[arg(long, default_value = DEFAULT_WINDOW, value_name = "WINDOW")]
    pub window: String,
    /// Distance span, e.g. 0m..3m (chirp-z zoom); default: the whole alias-free range by FFT, of which the
    /// plot shows the line's length (without --line, the farthest significant echo) plus a margin.
    #[arg(long, value_name = "A..B")]
    pub span: Option<String>,
    /// Output step with --span, e.g. 1mm; default: a tenth of the resolution.
    #[arg(long, value_name = "LENGTH")]
    pub step: Option<String>,
    /// Velocity factor of the line; 0.695 is solid PTFE, er about 2.07 (common practice).
    #[arg(long, default_value_t = DEFAULT_VELOCITY_FACTOR, value_name = "VF", conflicts_with = "line")]
    pub vf: f64,
    /// A line file (TOML, docs/line-file.md): the axis becomes its as-built metres, connectors,
    /// attenuators and the device are marked on the plot and listed in the JSON `landmarks`.
    #[arg(long, value_name = "LINE")]
    pub line: Option<PathBuf>,
    /// With --line: the state the sweep was taken in, warm (all at 295 K) or cold (every stage at its
    /// temperature). Default cold, as in simulate and locate (which infers it where the data allow): cold
    /// is what is swept after a cooldown.
    #[arg(long, default_value = "cold", value_name = "STATE", requires = "line")]
    pub state: String,
    /// Time gate in distance, e.g. 0.9m..1.1m; the gated sweep is written to -o/--output.
    #[arg(long, value_name = "A..B", requires = "output")]
    pub gate: Option<String>,
    /// Gate shape, from the same window family (rect, hann, hamming, blackman-harris, kaiser:BETA).
    #[arg(
        long,
        default_value = "kaiser:6",
        value_name = "WINDOW",
        requires = "gate"
    )]
    pub gate_window: String,
    /// Where to write the gated sweep (Touchstone v1 .s1p). `--out` is still read, for older scripts.
    #[arg(
        short = 'o',
        long = "output",
        alias = "out",
        value_name = "FILE",
        requires = "gate"
    )]
    pub output: Option<PathBuf>,
    /// Write the trace as CSV (distance_m,value).
    #[arg(long, value_name = "FILE")]
    pub csv: Option<PathBuf>,
    /// Print the trace as JSON instead of the text summary.
    #[arg(long)]
    pub json: bool,
    /// Draw the trace to an .svg or .png file.
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,
    /// Low-pass modes: interpolate a non-harmonic grid onto a harmonic one (with a warning).
    #[arg(long)]
    pub resample: bool,
    /// Zero-padding factor for the whole-range FFT (1 to 64).
    #[arg(long, default_value_t = 8, value_name = "N")]
    pub padding: usize,
    /// Replace output files that exist (inputs are never replaced).
    #[arg(long)]
    pub force: bool,
}

pub fn run(args: Args) -> coldtrace::Result<u8> {
    let in_file = |e: coldtrace::transform::TransformError| {
        Error::Usage(format!("{}: {e}", args.input.display()))
    };
    let mode = Mode::parse(&args.mode).map_err(|e| Error::Usage(format!("--mode: {e}")))?;
    let window = Window::parse(&args.window).map_err(|e| Error::Usage(format!("--window: {e}")))?;
    let span_m = args
        .span
        .as_deref()
        .map(|s| units::parse_flag_range("--span", s, Family::Length))
        .transpose()?;
    let step_m = args
        .step
        .as_deref()
        .map(|s| units::parse_flag("--step", s, Family::Length))
        .transpose()?;
    if step_m.is_some() && span_m.is_none() {
        return Err(Error::Usage(
            "--step needs --span (the whole-range FFT sets its own step); add e.g. --span 0m..3m"
                .into(),
        ));
    }
    let gate_m = args
        .gate
        .as_deref()
        .map(|s| units::parse_flag_range("--gate", s, Family::Length))
        .transpose()?;
    let gate_shape = Window::parse(&args.gate_window)
        .map_err(|e| Error::Usage(format!("--gate-window: {e}")))?;
    let uniform = UniformLine::new(args.vf).map_err(|e| Error::Usage(format!("--vf: {e}")))?;
    let state: State = args
        .state
        .parse()
        .map_err(|e: String| Error::Usage(format!("--state: {e}")))?;
    let line = args.line.as_deref().map(line_file).transpose()?;
    let line_map = line.as_ref().map(|l| LineMap::new(l, state));
    let map: &dyn DistanceMap = match &line_map {
        Some(m) => m,
        None => &uniform,
    };

    let mut inputs = vec![args.input.as_path()];
    inputs.extend(args.line.as_deref());
    let outputs: Vec<&Path> = [&args.output, &args.csv, &args.plot]
        .into_iter()
        .flatten()
        .map(PathBuf::as_path)
        .collect();
    check_outputs(&outputs, args.force, &inputs)?;
    if let Some(out) = &args.output {
        check_extension(out, "--output", "s1p", "a 1-port Touchstone sweep")?;
    }
    if let Some(csv) = &args.csv {
        check_extension(csv, "--csv", "csv", "CSV")?;
    }
    if let Some(plot) = &args.plot {
        PlotFormat::from_path(plot)?;
    }

    let source = args.source.source(&[&args.input])?;
    let ts = read_source(&args.input, source.stdin_ports)?;
    let mut extra = Vec::new();
    if source.port.is_none() && ts.network.ports > 1 {
        extra.push(first_port_warning(ts.network.ports).at(args.input.display().to_string()));
    }
    let param = source.port.unwrap_or(0) + 1;
    let net = &ts
        .network
        .reflection_at(param - 1)
        .map_err(|e| Error::Usage(format!("{}: --param {e}", args.input.display())))?;
    let values = net.s11();
    let reference_ohm = net.reference_ohm.first().copied().unwrap_or(50.0);
    let config = TraceConfig {
        plan: TracePlan {
            mode,
            window,
            span_m,
            step_m,
            padding: args.padding,
            resample: args.resample,
            reference_ohm,
            ..TracePlan::default()
        },
        gate_m,
        gate_shape,
        ..TraceConfig::default()
    };
    let mut engine = TraceEngine::new();
    let mut outcome =
        run_trace(&mut engine, &net.freqs_hz, &values, &config, map).map_err(in_file)?;
    let mut warnings = ts.warnings.clone();
    warnings.extend(extra);
    if let Some(l) = &line {
        warnings.extend(l.warnings.iter().cloned());
    }
    warnings.append(&mut outcome.trace.warnings);
    super::notices(&warnings);
    outcome.trace.warnings = warnings;

    // Every output is made before any is written, so a failure leaves nothing half done.
    let mut files: Vec<(&Path, Vec<u8>)> = Vec::new();
    if let (Some(out), Some(g)) = (&args.output, &outcome.gated) {
        let gated = Network::one_port(net.freqs_hz.clone(), g.values.clone(), reference_ohm);
        let mut opts = WriteOptions::default();
        opts.comments.push(format!(
            "S{param}{param} of {} gated to {} (window {})",
            args.input.display(),
            args.gate.as_deref().unwrap_or(""),
            config.gate_shape.label()
        ));
        files.push((out, write(&gated, &opts)?.into_bytes()));
    }
    if let Some(csv) = &args.csv {
        files.push((csv, outcome.trace.csv().into_bytes()));
    }
    if let Some(plot) = &args.plot {
        let title = format!(
            "{} - {}",
            args.input
                .file_name()
                .map(|s| s.to_string_lossy())
                .unwrap_or_default(),
            mode.name()
        );
        let fig = trace_figure(&outcome.trace, &title, line.as_ref(), span_m.is_some());
        files.push((plot, plot_bytes(plot, &fig)?));
    }
    for (path, bytes) in &files {
        write_output(path, bytes, args.force, &inputs)?;
    }
    let text = if args.json {
        serde_json::to_string_pretty(&outcome.trace)
            .map_err(|e| Error::Usage(format!("cannot encode JSON: {e}")))?
            + "\n"
    } else {
        format!("{}\n{}", args.input.display(), outcome.trace.summary())
    };
    super::print(&text)?;
    Ok(coldtrace::exit::OK)
}
