//! Command-line definitions (clap derive). Each subcommand lives in its own file, turns its flags into the
//! library's config structs, runs, prints, and returns the exit code.

use clap::{Parser, Subcommand};
use coldtrace::compare::job::SweepSource;

pub mod compare;
pub mod completions;
pub mod convert;
pub mod heap;
pub mod history;
pub mod inspect;
pub mod locate;
pub mod manpage;
pub mod say;
pub mod simulate;
pub mod survey;
pub mod trace;

/// The window every command uses unless `--window` is given: Kaiser, beta 9 (highest sidelobe about
/// -66 dB, measured by `transform::Window::figures`; reasoning in docs/method.md, Windows). The comparator's
/// own default (`compare::AnalysisConfig::default`) is the same window.
pub const DEFAULT_WINDOW: &str = "kaiser:9";

/// Locate, rank and explain faults in cryogenic RF coax lines from network-analyzer sweeps.
#[derive(Debug, Parser)]
#[command(name = "coldtrace", version, propagate_version = true, about, long_about = None)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
    /// Say no warnings or notices on standard error (errors and the output asked for still come).
    #[arg(long, short = 'q', global = true)]
    pub quiet: bool,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Describe Touchstone files: version, ports, points, grid, parameter, format, reference, warnings.
    Inspect(inspect::Args),
    /// Rewrite a Touchstone file as S-parameters in another version, format or unit.
    Convert(convert::Args),
    /// Time-domain trace of a reflection sweep: band-pass, low-pass impulse or step, impedance profile.
    Trace(trace::Args),
    /// List the discontinuities one sweep shows, mapped onto the line as built.
    Locate(locate::Args),
    /// Make a realistic sweep of a line, warm or cold, with or without faults.
    Simulate(simulate::Args),
    /// Compare a baseline and a current sweep of one line: where it changed, how badly, and why.
    Compare(compare::Args),
    /// Each line's health over its cooldowns: record sweeps, list them, follow trends, export.
    History(history::Args),
    /// Compare every line of a fleet (a manifest of line files and sweep pairs), worst lines first.
    Survey(survey::Args),
    /// Print the completion script of a shell (bash, zsh, fish, elvish, powershell); install: README.
    Completions(completions::Args),
    /// Print the manual page, or write every command's page into a folder with --dir; install: README.
    Manpage(manpage::Args),
}

/// Run one parsed command line; returns the process exit code.
pub fn run(cli: Cli) -> coldtrace::Result<u8> {
    say::set_quiet(cli.quiet);
    match cli.command {
        Command::Inspect(a) => inspect::run(a),
        Command::Convert(a) => convert::run(a),
        Command::Trace(a) => trace::run(a),
        Command::Locate(a) => locate::run(a),
        Command::Simulate(a) => simulate::run(a),
        Command::Compare(a) => compare::run(a),
        Command::History(a) => history::run(a),
        Command::Survey(a) => survey::run(a),
        Command::Completions(a) => completions::run(a),
        Command::Manpage(a) => manpage::run(a),
    }
}

/// Which reflection of a sweep is analysed and, for `-` (standard input), its port count: the flags of
/// every command that analyses a sweep.
#[derive(Debug, Clone, clap::Args)]
pub struct SourceArgs {
    /// In a sweep of several ports, the reflection analysed: S11 (the line seen from port 1; the default,
    /// with a notice) or S22 (the line seen from port 2).
    #[arg(long, value_name = "SNN")]
    pub param: Option<String>,
    /// With - for the sweep (read from standard input): its port count, which a .sNp file name would give
    /// (1 for S11 alone, 2 for a 2-port sweep); a version 2 file states it and needs none.
    #[arg(long, value_name = "N")]
    pub ports: Option<usize>,
}

impl SourceArgs {
    /// The library's [`SweepSource`](coldtrace::compare::job::SweepSource) for a run reading `inputs`.
    pub fn source(&self, inputs: &[&std::path::Path]) -> coldtrace::Result<SweepSource> {
        coldtrace::touchstone::check_ports(self.ports, inputs)?;
        let port = self
            .param
            .as_deref()
            .map(coldtrace::network::reflection_port)
            .transpose()
            .map_err(|e| coldtrace::Error::Usage(format!("--param: {e}")))?;
        Ok(SweepSource {
            port,
            stdin_ports: self.ports,
        })
    }
}

/// Say on standard error, as notices, the warnings of `warnings` that tell of a choice made by default
/// (`port-s11`: a sweep of several ports analysed by its S11).
pub fn notices(warnings: &[coldtrace::Warning]) {
    for w in warnings.iter().filter(|w| w.kind == "port-s11") {
        say::notice(&format_args!(
            "{}: {} ({})",
            w.location.as_deref().unwrap_or("sweep"),
            w.message,
            w.fix
        ));
    }
}

/// Write `text` to standard output, treating a closed pipe as the end of output.
pub fn print(text: &str) -> coldtrace::Result<()> {
    use std::io::Write;
    let mut out = std::io::stdout().lock();
    out.write_all(text.as_bytes())
        .and_then(|_| out.flush())
        .map_err(|e| coldtrace::Error::io("<stdout>", e))
}
