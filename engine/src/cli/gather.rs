//! `forkmap gather RUN... --out RUN_DIR [--config CONFIG] [--threads N] [--quiet]`
//!
//! Gather a complete set of shard directories (or a folder holding them) into one new run
//! directory, equal row for row to the run one machine would have made. Refused, with the
//! completeness report, when a shard is missing or unfinished or a spec is in two
//! directories; nothing is written then. When the config defers permutation importances
//! (`importance.within`), gathering runs that pass over the whole space; it needs the
//! config (`--config`, else the file named in the manifests) and the same data file.
//! The shards' shares of the permutation null (`[null]`) and the nested estimate
//! (`[nested]`) are gathered too: every shard's null identity and nested settings must
//! agree and every draw and outer fold must be present (else the refusal names the shard
//! and the field, or what is missing and the shard that owns it), and the gathered
//! `null/` and `nested/` hold the files a whole-space run writes. The refit (`[refit]`),
//! the curves and the report need the whole space's results: run `forkmap run CONFIG
//! --out RUN_DIR` on the gathered folder (nothing done is rerun), or `forkmap map RUN_DIR`
//! for the report alone.
//! Exit code 0 on success, 2 on an error.

use std::path::PathBuf;
use std::process::ExitCode;

/// Gather shard directories into one run directory.
#[derive(clap::Args)]
pub struct Args {
    /// Shard directories, or folders holding them.
    #[arg(required = true)]
    runs: Vec<PathBuf>,
    /// Run directory to create (must not exist, or be empty).
    #[arg(long)]
    out: PathBuf,
    /// The sweep config, for a deferred permutation-importance pass.
    #[arg(long)]
    config: Option<PathBuf>,
    /// Worker threads for that pass (default: all cores).
    #[arg(long)]
    threads: Option<usize>,
    /// No progress output.
    #[arg(long)]
    quiet: bool,
}

pub fn exec(a: Args) -> anyhow::Result<ExitCode> {
    let set = forkmap::results::RunSet::open(&a.runs)?;
    let s = forkmap::gather::gather(
        &set,
        &a.out,
        &forkmap::gather::GatherOptions {
            threads: super::threads(a.threads),
            quiet: a.quiet,
            config: a.config,
        },
    )?;
    println!("gathered   {} directories, {} parts", s.dirs, s.parts);
    println!("specs      {}", s.specs);
    if let Some(n) = s.permutation_specs {
        println!("importance permutation pass over {n} specs");
    }
    if let Some(n) = s.null_draws {
        println!("null       {n} draws gathered from the shards");
    }
    if let Some(n) = s.nested_folds {
        println!("nested     {n} outer folds gathered from the shards");
    }
    println!("results    {}", a.out.display());
    Ok(ExitCode::SUCCESS)
}
