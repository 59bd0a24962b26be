//! `coldtrace simulate LINE [--state warm|cold] --start 0.5GHz --stop 10GHz --points 1601 [--noise-db -90]
//! [--seed N] [--fault SPEC]... [--s21] -o out.s1p [--force]`: a realistic sweep of a line from its model.

use coldtrace::limits::{MAX_FREQUENCY_HZ, MAX_SWEEP_POINTS, MIN_TRACE_POINTS};
use coldtrace::line::{file, simulate, Fault, SimConfig, State};
use coldtrace::touchstone::{write_file, WriteOptions};
use coldtrace::units::{self, Family};
use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// The line file (TOML, see docs/line-file.md).
    #[arg(value_name = "LINE")]
    pub line: PathBuf,
    /// warm (everything at 295 K) or cold (every stage at its temperature). Default cold, as in trace and
    /// locate (which infers it where the data allow): cold is what is swept after a cooldown.
    #[arg(long, default_value = "cold")]
    pub state: String,
    /// First frequency, with its unit, e.g. 0.5GHz.
    #[arg(long, default_value = "0.5GHz")]
    pub start: String,
    /// Last frequency, with its unit, e.g. 10GHz.
    #[arg(long, default_value = "10GHz")]
    pub stop: String,
    /// Number of points, linearly spaced: at least 16, the fewest locate and compare read.
    #[arg(long, default_value_t = 1601)]
    pub points: usize,
    /// Complex Gaussian noise power per point relative to |S| = 1, dB (e.g. -90).
    /// The unit may be written: -90 or -90dB.
    #[arg(long, allow_hyphen_values = true, value_name = "DB")]
    pub noise_db: Option<String>,
    /// Seed for the noise.
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// A fault, e.g. "J2:gap=30fF", "room to 50K@0.12m:crush=40ohm,8mm", "J3:contact=2ohm" (repeatable).
    #[arg(long = "fault", value_name = "SPEC")]
    pub faults: Vec<String>,
    /// Write a 2-port (.s2p) with S21 through the chain; the device end becomes a matched port 2.
    #[arg(long)]
    pub s21: bool,
    /// Output Touchstone file (.s1p, or .s2p with --s21).
    #[arg(short = 'o', long = "output", value_name = "FILE")]
    pub output: PathBuf,
    /// Replace the output file if it exists.
    #[arg(long)]
    pub force: bool,
}

pub fn run(args: Args) -> coldtrace::Result<u8> {
    let state: State = args
        .state
        .parse()
        .map_err(|e: String| coldtrace::Error::Usage(format!("--state: {e}")))?;
    let start = units::parse_flag("--start", &args.start, Family::Frequency)?;
    let stop = units::parse_flag("--stop", &args.stop, Family::Frequency)?;
    let noise_db = args
        .noise_db
        .as_deref()
        .map(|t| units::parse_flag_db("--noise-db", t))
        .transpose()?;
    if !(MIN_TRACE_POINTS..=MAX_SWEEP_POINTS).contains(&args.points) {
        return Err(coldtrace::Error::Usage(format!(
            "--points {}: give {MIN_TRACE_POINTS} to {MAX_SWEEP_POINTS} points (locate and compare need at \
             least {MIN_TRACE_POINTS}, 201 or more is usual; docs/limits.md), e.g. --points 1601",
            args.points
        )));
    }
    if stop > MAX_FREQUENCY_HZ || start > MAX_FREQUENCY_HZ {
        return Err(coldtrace::Error::Usage(format!(
            "--start/--stop: {} Hz is above the simulator's limit of {MAX_FREQUENCY_HZ} Hz \
             (docs/limits.md); give e.g. --stop 10GHz",
            start.max(stop)
        )));
    }
    if stop <= start {
        return Err(coldtrace::Error::Usage(format!(
            "--stop ({stop} Hz) must be above --start ({start} Hz)"
        )));
    }
    let want_ext = if args.s21 { "s2p" } else { "s1p" };
    let ext = args
        .output
        .extension()
        .map(|e| e.to_string_lossy().to_ascii_lowercase());
    if ext.as_deref() != Some(want_ext) {
        return Err(coldtrace::Error::Usage(format!(
            "{}: the output needs the extension .{want_ext}{}",
            args.output.display(),
            if args.s21 {
                " (2-port with --s21)"
            } else {
                " (or pass --s21 for a .s2p)"
            }
        )));
    }
    coldtrace::output::check_outputs(&[&args.output], args.force, &[&args.line])?;
    let line = file::read_file(&args.line)?;
    for w in &line.warnings {
        super::say::warning(w);
    }
    let mut config = SimConfig::linear(state, start, stop, args.points);
    config.noise_db = noise_db;
    config.seed = args.seed;
    config.two_port = args.s21;
    for spec in &args.faults {
        config.faults.push(Fault::parse(spec)?);
    }
    let network = simulate(&line, &config)?;
    let mut options = WriteOptions::default();
    options.comments.push(format!(
        "simulated by coldtrace: line '{}' ({}), state {}",
        line.name,
        args.line.display(),
        args.state.to_ascii_lowercase()
    ));
    for spec in &args.faults {
        options.comments.push(format!("fault {spec}"));
    }
    if let Some(db) = noise_db {
        options
            .comments
            .push(format!("noise {db} dB per point, seed {}", args.seed));
    }
    write_file(
        &args.output,
        &network,
        &options,
        args.force,
        &[args.line.as_path()],
    )?;
    super::print(&format!(
        "wrote {} ({} points, {}-port, {})\n",
        args.output.display(),
        network.len(),
        network.ports,
        args.state.to_ascii_lowercase()
    ))?;
    Ok(coldtrace::exit::OK)
}
