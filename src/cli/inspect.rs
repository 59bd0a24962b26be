//! `coldtrace inspect FILE... [--json]`: describe Touchstone files. Keeps going past a bad file (its error
//! goes to stderr) and exits 2 at the end if any failed.

use coldtrace::touchstone::{check_ports, read_source, summarize};
use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// Touchstone files to describe (.sNp, any version); - reads one from standard input (with --ports).
    #[arg(required = true, value_name = "FILE")]
    pub files: Vec<PathBuf>,
    /// With - (a sweep on standard input): its port count, which a .sNp file name would give; a version 2
    /// file states it and needs none.
    #[arg(long, value_name = "N")]
    pub ports: Option<usize>,
    /// Print JSON: one object per file (an array when several files are given).
    #[arg(long)]
    pub json: bool,
}

pub fn run(args: Args) -> coldtrace::Result<u8> {
    let files: Vec<&std::path::Path> = args.files.iter().map(PathBuf::as_path).collect();
    check_ports(args.ports, &files)?;
    let mut summaries = Vec::new();
    let mut failed = false;
    for path in &args.files {
        match read_source(path, args.ports) {
            Ok(ts) => summaries.push(summarize(&ts, path)),
            Err(e) => {
                super::say::error(&e);
                failed = true;
            }
        }
    }
    let text = if args.json {
        let json = if args.files.len() == 1 {
            match summaries.first() {
                Some(s) => serde_json::to_string_pretty(s),
                None => Ok(String::new()),
            }
        } else {
            serde_json::to_string_pretty(&summaries)
        }
        .map_err(|e| coldtrace::Error::Usage(format!("cannot encode JSON: {e}")))?;
        if json.is_empty() {
            json
        } else {
            json + "\n"
        }
    } else {
        summaries
            .iter()
            .map(|s| s.to_string())
            .collect::<Vec<_>>()
            .join("\n")
    };
    super::print(&text)?;
    Ok(if failed {
        coldtrace::exit::BAD_INPUT
    } else {
        coldtrace::exit::OK
    })
}
