//! `forkmap plan CONFIG [--threads N] [--no-probe]`
//!
//! Print each choice dimension with its options, the exclusions, the number of specs,
//! folds and model fits, a run-time estimate from a short timing probe, and warnings.
//! Reads the data and checks the whole config; writes nothing.

use std::path::PathBuf;
use std::process::ExitCode;

/// Show what a sweep would run, with a timed estimate; writes nothing.
#[derive(clap::Args)]
pub struct Args {
    /// The sweep config (TOML).
    config: PathBuf,
    /// Threads the estimate assumes (default: all cores).
    #[arg(long)]
    threads: Option<usize>,
    /// Skip the timing probe.
    #[arg(long)]
    no_probe: bool,
}

pub fn exec(a: Args) -> anyhow::Result<ExitCode> {
    let p = forkmap::run::prepare(&a.config)?;
    let report = forkmap::plan::plan(&p, super::threads(a.threads), !a.no_probe);
    print!("{}", report.text);
    Ok(ExitCode::SUCCESS)
}
