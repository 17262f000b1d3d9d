//! `forkmap plan CONFIG [--threads N] [--no-probe] [--shards N]`
//!
//! Print each choice dimension with its options, the exclusions, the number of specs,
//! folds and model fits, a run-time estimate from a short timing probe, and warnings.
//! With `--shards N`, a table of the split into N shards (`run --shard I/N`): each shard's
//! specs, null draws, nested outer folds and share of the expected cost.
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
    /// Show the split into N shards (specs, null draws, nested outer folds per shard).
    #[arg(long, value_name = "N")]
    shards: Option<usize>,
}

pub fn exec(a: Args) -> anyhow::Result<ExitCode> {
    let p = forkmap::run::prepare(&a.config)?;
    let report = forkmap::plan::plan(&p, super::threads(a.threads), !a.no_probe);
    print!("{}", report.text);
    if let Some(n) = a.shards {
        if n == 0 {
            anyhow::bail!("--shards 0: at least 1");
        }
        print!("{}", forkmap::run::share::plan_table(&p, n)?);
    }
    Ok(ExitCode::SUCCESS)
}
