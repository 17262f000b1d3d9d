//! `forkmap sketch DATA [--outcome COL] [--unit COL] [--wave COL | --no-wave] [--out FILE]
//! [--threads N] [--no-probe]`
//!
//! Read a CSV or Parquet data file and write a commented starter config beside it
//! (`NAME.forkmap.toml`, or `--out FILE`). It guesses the unit and wave columns and says
//! how (flags win over guesses), puts text columns under `data.ignore`, names constant,
//! empty, nearly empty, duplicated and stray-text columns with a warning, sets
//! `data.outcome_kind` when the outcome is plainly a proportion or a percentage, counts
//! units and rows per unit, and proposes a modest choice space with folds sized to the
//! panel, with `plan`'s spec count and time estimate in a comment. Without `--outcome` it
//! lists the outcome candidates and writes nothing. It never overwrites a file. The
//! written config is checked to pass `forkmap plan` on the same data before it is
//! written. Exit code 0 when written, 2 on an error.

use std::path::PathBuf;
use std::process::ExitCode;

/// Write a commented starter config for a data file.
#[derive(clap::Args)]
pub struct Args {
    /// The data file (.csv, .parquet or .pq).
    data: PathBuf,
    /// The outcome column (without it, the candidates are listed and nothing is written).
    #[arg(long)]
    outcome: Option<String>,
    /// The unit column (default: guessed).
    #[arg(long)]
    unit: Option<String>,
    /// The wave column (default: guessed).
    #[arg(long, conflicts_with = "no_wave")]
    wave: Option<String>,
    /// The panel has no wave column.
    #[arg(long)]
    no_wave: bool,
    /// Where to write the config (default: NAME.forkmap.toml beside the data).
    #[arg(long)]
    out: Option<PathBuf>,
    /// Threads the time estimate assumes (default: all cores).
    #[arg(long)]
    threads: Option<usize>,
    /// Skip the timing probe (no time estimate in the config).
    #[arg(long)]
    no_probe: bool,
}

pub fn exec(a: Args) -> anyhow::Result<ExitCode> {
    let out = a
        .out
        .clone()
        .unwrap_or_else(|| forkmap::starter::default_path(&a.data));
    if out.exists() {
        return Err(forkmap::error::Error::Output {
            path: out,
            msg: "already exists; forkmap sketch never overwrites a file (give another path with --out)".into(),
        }
        .into());
    }
    let opts = forkmap::starter::StarterOptions {
        unit: a.unit,
        wave: a.wave,
        no_wave: a.no_wave,
        outcome: a.outcome,
    };
    let probe = (!a.no_probe).then(|| super::threads(a.threads));
    let s = forkmap::starter::sketch(&a.data, &out, &opts, probe)?;
    forkmap::starter::write_new(&out, &s.text)?;
    for g in &s.guesses {
        eprintln!("{g}");
    }
    for w in &s.warnings {
        eprintln!("warning: {w}");
    }
    eprintln!(
        "{} indicators, {} ignored; {} specs{}",
        s.indicators.len(),
        if s.ignored.len() == 1 {
            "1 column".to_string()
        } else {
            format!("{} columns", s.ignored.len())
        },
        s.specs,
        s.estimate_seconds
            .map(|t| format!(", about {} (plan's estimate)", forkmap::plan::human(t)))
            .unwrap_or_default()
    );
    println!("{}", out.display());
    Ok(ExitCode::SUCCESS)
}
