//! `coldtrace convert FILE -o OUT [--touchstone-version 1|2] [--format RI|MA|DB] [--unit GHZ] [--force]`: rewrite a
//! Touchstone file as S-parameters (Y, Z, H, G are converted) at the file's reference impedances.
//! Unset choices keep the input's: its major version, format and frequency unit.

use coldtrace::touchstone::{write_file, Format, FreqUnit, WriteOptions, WriteVersion};
use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// The Touchstone file to read, or - for standard input (with --ports).
    #[arg(value_name = "FILE")]
    pub input: PathBuf,
    /// With - (a sweep on standard input): its port count, which a .sNp file name would give; a version 2
    /// file states it and needs none.
    #[arg(long, value_name = "N")]
    pub ports: Option<usize>,
    /// Where to write the S-parameter file.
    #[arg(short = 'o', long = "output", value_name = "OUT")]
    pub output: PathBuf,
    /// Touchstone major version to write: 1 or 2 (2 writes [Version] 2.0). Default: the input's.
    #[arg(long, value_name = "1|2")]
    pub touchstone_version: Option<String>,
    /// Number format: RI, MA or DB. Default: the input's.
    #[arg(long, value_name = "RI|MA|DB")]
    pub format: Option<String>,
    /// Frequency unit: Hz, kHz, MHz or GHz (any case). Default: the input's.
    #[arg(long, value_name = "UNIT")]
    pub unit: Option<String>,
    /// Replace OUT if it exists (the input is never replaced).
    #[arg(long)]
    pub force: bool,
}

pub fn run(args: Args) -> coldtrace::Result<u8> {
    let usage = coldtrace::Error::Usage;
    let version = match args.touchstone_version.as_deref() {
        None => None,
        Some("1") => Some(WriteVersion::V1),
        Some("2") => Some(WriteVersion::V2),
        Some(v) => {
            return Err(usage(format!(
                "--touchstone-version {v}: expected 1 or 2; write --touchstone-version 1 or --touchstone-version 2"
            )))
        }
    };
    let format = match args.format.as_deref() {
        None => None,
        Some(f) => Some(Format::from_name(f).ok_or_else(|| {
            usage(format!(
                "--format {f}: expected RI, MA or DB; write e.g. --format RI"
            ))
        })?),
    };
    let unit = match args.unit.as_deref() {
        None => None,
        Some(u) => Some(FreqUnit::from_name(u).ok_or_else(|| {
            usage(format!(
                "--unit {u}: expected Hz, kHz, MHz or GHz; write e.g. --unit GHz"
            ))
        })?),
    };
    coldtrace::output::check_outputs(&[&args.output], args.force, &[&args.input])?;
    coldtrace::touchstone::check_ports(args.ports, &[&args.input])?;
    let ts = coldtrace::touchstone::read_source(&args.input, args.ports)?;
    let version = version.unwrap_or(if ts.info.version.is_v2() {
        WriteVersion::V2
    } else {
        WriteVersion::V1
    });
    check_output_extension(&args.output, ts.network.ports, version)?;
    for w in &ts.warnings {
        super::say::warning(w);
    }
    let options = WriteOptions {
        version,
        format: format.unwrap_or(ts.info.format),
        unit: unit.unwrap_or(ts.info.unit),
        // The input's own comments first: they carry the sweep's provenance.
        comments: ts
            .info
            .header_comments
            .iter()
            .cloned()
            .chain([format!(
                "converted by coldtrace from {} (Touchstone {}, {} parameters)",
                args.input
                    .file_name()
                    .map(|n| n.to_string_lossy().into_owned())
                    .unwrap_or_default(),
                ts.info.version.as_str(),
                ts.info.parameter.as_str()
            )])
            .collect(),
    };
    write_file(
        &args.output,
        &ts.network,
        &options,
        args.force,
        &[args.input.as_path()],
    )?;
    Ok(coldtrace::exit::OK)
}

/// Refuse an output whose extension does not fit what is written: `.sNp` with N the port count, or, for
/// version 2, also `.ts` (Touchstone 2.0 allows it, the port count being in `[Number of Ports]`).
fn check_output_extension(
    out: &std::path::Path,
    ports: usize,
    version: WriteVersion,
) -> coldtrace::Result<()> {
    let ext = out
        .extension()
        .map(|e| e.to_string_lossy().to_ascii_lowercase())
        .unwrap_or_default();
    let want = format!("s{ports}p");
    if ext == want || (version == WriteVersion::V2 && ext == "ts") {
        return Ok(());
    }
    Err(coldtrace::Error::Usage(format!(
        "{}: the data has {ports} port(s), so the output needs the extension .{want}{}; write e.g. -o {}",
        out.display(),
        if version == WriteVersion::V2 {
            " (or .ts for version 2)"
        } else {
            ""
        },
        out.with_extension(&want).display()
    )))
}
