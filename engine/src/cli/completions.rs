//! `forkmap completions SHELL`
//!
//! Print a shell completion script (bash, zsh, fish, elvish, powershell) to stdout, e.g.
//! `forkmap completions bash > ~/.local/share/bash-completion/completions/forkmap`.

use clap::CommandFactory;
use std::process::ExitCode;

/// Print a shell completion script.
#[derive(clap::Args)]
pub struct Args {
    shell: clap_complete::Shell,
}

pub fn exec(a: Args) -> anyhow::Result<ExitCode> {
    let mut cmd = super::Cli::command();
    clap_complete::generate(a.shell, &mut cmd, "forkmap", &mut std::io::stdout());
    Ok(ExitCode::SUCCESS)
}
