//! `coldtrace completions SHELL`: the shell's completion script for every command and flag, generated
//! from the clap definitions (clap_complete), on standard output. How to install it: README.

use clap::CommandFactory;
use clap_complete::Shell;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// The shell: bash, zsh, fish, elvish or powershell.
    #[arg(value_enum, value_name = "SHELL")]
    pub shell: Shell,
}

pub fn run(args: Args) -> coldtrace::Result<u8> {
    let mut script = Vec::new();
    clap_complete::generate(
        args.shell,
        &mut super::Cli::command(),
        "coldtrace",
        &mut script,
    );
    super::print(&String::from_utf8_lossy(&script))?;
    Ok(coldtrace::exit::OK)
}
