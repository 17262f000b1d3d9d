//! `forkmap run CONFIG --out RUN_DIR [--threads N] [--quiet]`
//!
//! Run every spec of the config on all cores and write RUN_DIR: `manifest.json`,
//! `specs/part-*.parquet` (one row per spec) and `predictions/part-*.parquet` (one row per
//! spec and data row and repeat). Everything is checked before RUN_DIR is created; RUN_DIR
//! must not exist or be empty. Exit code 0 when the sweep completed (failed specs are
//! recorded and counted), 2 on an error.

use std::path::PathBuf;
use std::process::ExitCode;

/// Run the sweep and write its results as Parquet.
#[derive(clap::Args)]
pub struct Args {
    /// The sweep config (TOML).
    config: PathBuf,
    /// Run directory to create.
    #[arg(long)]
    out: PathBuf,
    /// Worker threads (default: all cores).
    #[arg(long)]
    threads: Option<usize>,
    /// No progress output.
    #[arg(long)]
    quiet: bool,
}

pub fn exec(a: Args) -> anyhow::Result<ExitCode> {
    let p = forkmap::run::prepare(&a.config)?;
    for w in forkmap::plan::warnings(&p) {
        tracing::warn!("{w}");
    }
    let threads = super::threads(a.threads);
    if !a.quiet {
        eprintln!(
            "forkmap: {} specs x {} fits on {threads} thread(s) -> {}",
            p.space.specs.len(),
            p.folds.n_fits_per_spec(),
            a.out.display()
        );
    }
    let s = forkmap::run::run_to_dir(
        &p,
        &a.out,
        &forkmap::run::RunOptions {
            threads,
            quiet: a.quiet,
        },
    )?;
    let failed: usize = s.failures.values().sum();
    println!("specs      {} ({} ok, {failed} failed)", s.specs, s.ok);
    for (cause, n) in &s.failures {
        println!("  failed: {cause}: {n}");
    }
    if let Some((id, skill)) = &s.best {
        println!("best skill {skill:.4} (spec {id})");
    }
    println!("seconds    {:.1}", s.seconds);
    println!("results    {}", a.out.display());
    Ok(ExitCode::SUCCESS)
}
