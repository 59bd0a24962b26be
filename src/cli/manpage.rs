//! `coldtrace manpage [--dir DIR] [--force]`: manual pages generated from the clap definitions
//! (clap_mangen). Without `--dir`, the main page `coldtrace.1` on standard output; with it, that page and
//! one per command (`coldtrace-locate.1`, `coldtrace-history-record.1`, ...) written into DIR under the
//! usual output rules (no file replaced without `--force`). How to install them: README.

use clap::CommandFactory;
use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// Write every page, the main one and one per command, into this folder (e.g.
    /// ~/.local/share/man/man1) instead of the main page to standard output.
    #[arg(long, value_name = "DIR")]
    pub dir: Option<PathBuf>,
    /// Replace pages that exist in DIR.
    #[arg(long, requires = "dir")]
    pub force: bool,
}

/// Each page's file name and roff text: the command's, then its subcommands', depth first.
fn pages(cmd: clap::Command) -> coldtrace::Result<Vec<(String, Vec<u8>)>> {
    let mut out = Vec::new();
    for sub in cmd.get_subcommands().filter(|s| !s.is_hide_set()) {
        out.extend(pages(sub.clone())?);
    }
    let man = clap_mangen::Man::new(cmd);
    let mut roff = Vec::new();
    man.render(&mut roff)
        .map_err(|e| coldtrace::Error::io("<manual page>", e))?;
    out.insert(0, (man.get_filename(), roff));
    Ok(out)
}

pub fn run(args: Args) -> coldtrace::Result<u8> {
    let mut cmd = super::Cli::command().disable_help_subcommand(true);
    cmd.build();
    let Some(dir) = &args.dir else {
        let man = clap_mangen::Man::new(cmd);
        let mut roff = Vec::new();
        man.render(&mut roff)
            .map_err(|e| coldtrace::Error::io("<stdout>", e))?;
        super::print(&String::from_utf8_lossy(&roff))?;
        return Ok(coldtrace::exit::OK);
    };
    let pages = pages(cmd)?;
    let paths: Vec<PathBuf> = pages.iter().map(|(name, _)| dir.join(name)).collect();
    let refs: Vec<&std::path::Path> = paths.iter().map(PathBuf::as_path).collect();
    coldtrace::output::check_outputs(&refs, args.force, &[])?;
    for (path, (_, roff)) in paths.iter().zip(&pages) {
        coldtrace::output::write_output(path, roff, args.force, &[])?;
    }
    super::say::notice(&format_args!(
        "wrote {} manual pages into {}",
        pages.len(),
        dir.display()
    ));
    Ok(coldtrace::exit::OK)
}
