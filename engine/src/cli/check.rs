//! `forkmap check RUN... `
//!
//! Read one run directory, several, or a folder of shard directories as one run and report
//! how complete it is: specs present of the whole space, ok and failed (by cause), shards
//! with no directory, unfinished directories, specs present in more than one directory,
//! the permutation null's draws (complete or not) when the run has or asks for one, and
//! the refit's subsamples when the run has a refit. For each shard, its share of the null's
//! draws and of the nested estimate's outer folds, naming those missing.
//! Changes nothing. Exit code 0 when complete, 1 when not, 2 on an error (directories of
//! different configs, data or versions; unreadable parts).

use std::path::PathBuf;
use std::process::ExitCode;

/// Report whether a run, or a set of shards, is complete.
#[derive(clap::Args)]
pub struct Args {
    /// Run directories, or folders holding shard directories.
    #[arg(required = true)]
    runs: Vec<PathBuf>,
}

pub fn exec(a: Args) -> anyhow::Result<ExitCode> {
    let set = forkmap::results::RunSet::open(&a.runs)?;
    for d in &set.dirs {
        println!(
            "run        {} ({}{}, {} of {} specs)",
            d.path.display(),
            d.shard
                .map(|s| format!("shard {s}"))
                .unwrap_or_else(|| "whole space".into()),
            if d.complete() { "" } else { ", unfinished" },
            d.done.ids.len(),
            d.expected
        );
    }
    for d in &set.dirs {
        for line in forkmap::run::extend::describe(&d.manifest) {
            println!("{line}");
        }
    }
    let c = set.completeness();
    for line in c.describe() {
        println!("{line}");
    }
    if set.importance_pending() {
        println!("importance permutation pass pending: `forkmap gather` runs it");
    }
    let mut null_complete = true;
    for d in set.dirs.iter().filter(|d| d.shard.is_none()) {
        let (lines, ok) = forkmap::null::run::check_lines(&d.path, d.manifest.null.is_object())?;
        lines.iter().for_each(|l| println!("{l}"));
        null_complete &= ok;
        let (lines, ok) = forkmap::refit::exec::check_lines(&d.path)?;
        lines.iter().for_each(|l| println!("{l}"));
        null_complete &= ok;
    }
    // A shard's share of the null and of the nested estimate (dealt with its specs).
    for d in set.dirs.iter() {
        let Some(sh) = d.shard.map(|s| s.to_string()) else {
            continue;
        };
        if let Some(mine) = &d.manifest.shard_draws {
            let (lines, ok) = forkmap::null::run::shard_check_lines(&d.path, &sh, mine)?;
            lines.iter().for_each(|l| println!("{l}"));
            null_complete &= ok;
        }
        if let Some(mine) = &d.manifest.shard_folds {
            let (lines, ok) = forkmap::nested::exec::shard_check_lines(&d.path, &sh, mine)?;
            lines.iter().for_each(|l| println!("{l}"));
            null_complete &= ok;
        }
    }
    // Shards whose null or nested settings disagree, or with a draw or fold no shard
    // owns: `gather` would refuse them (its message says why).
    if set
        .dirs
        .iter()
        .any(|d| d.manifest.shard_draws.is_some() || d.manifest.shard_folds.is_some())
        && null_complete
    {
        if let Err(e) = forkmap::gather::derived::problems(&set) {
            println!("gather     would refuse: {e}");
            null_complete = false;
        }
    }
    if c.is_complete() && null_complete {
        println!("complete");
        Ok(ExitCode::SUCCESS)
    } else {
        println!("incomplete");
        Ok(ExitCode::from(1))
    }
}
