//! `coldtrace simulate` (placeholder until its issue lands).

#[derive(Debug, clap::Args)]
pub struct Args {}

pub fn run(_args: Args) -> coldtrace::Result<u8> {
    Err(coldtrace::Error::Usage(
        "'simulate' is not available in this build yet".into(),
    ))
}
