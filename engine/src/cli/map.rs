//! `forkmap map RUN... [--out DIR] [--config FILE] [--metric M] [--top-k K] [--good DEF]
//!  [--ratio-eps E] [--margin M] [--level L] [--resamples B] [--resample-seed S] [--allow-incomplete]
//!  [--quiet]`
//!
//! Map the spread of a finished run: read one run directory, several, or a folder of shard
//! directories as one run (the tables `specs`, `predictions`, `importance`, as any reader
//! of the run would) and write its report to RUN_DIR/report/ (or --out; required when more
//! than one directory is read): one Parquet table per section, `headline.txt`,
//! `report.json`, the plots and `index.html`. It never refits. The headline is printed.
//!
//! Settings come from the run's manifest (the config's `[map]` section when the run was
//! made), else from `--config FILE`'s `[map]` when given, and the flags override both.
//! An incomplete run set (missing shards, unfinished directories, duplicated specs) is
//! refused unless `--allow-incomplete`, which reports on the specs present and says so.
//! A previous report in the output folder is replaced only when the new one is complete;
//! a non-empty folder that holds no report is refused. Exit code 0 when the report is
//! written, 2 on an error.

use forkmap::report::settings::MapSection;
use std::path::PathBuf;
use std::process::ExitCode;

/// Write the report of a run: the spread of errors and conclusions across specs.
#[derive(clap::Args)]
pub struct Args {
    /// Run directories, or folders holding shard directories.
    #[arg(required = true)]
    runs: Vec<PathBuf>,
    /// Report folder (default: RUN_DIR/report for a single run directory).
    #[arg(long)]
    out: Option<PathBuf>,
    /// Take the `[map]` settings from this config instead of the run's manifest.
    #[arg(long)]
    config: Option<PathBuf>,
    #[command(flatten)]
    over: Overrides,
    /// Report on the specs present even when shards are missing or unfinished.
    #[arg(long)]
    allow_incomplete: bool,
    /// Print nothing but errors.
    #[arg(long)]
    quiet: bool,
}

/// Flags overriding `[map]` (shared with `forkmap run`).
#[derive(clap::Args, Debug, Default, Clone)]
pub struct Overrides {
    /// Error metric to rank specs by: mae, rmse or unit_mae.
    #[arg(long)]
    pub metric: Option<String>,
    /// "Top" means rank <= K.
    #[arg(long, value_name = "K")]
    pub top_k: Option<usize>,
    /// Good-set definition used by the sections that need one: ratio, margin or paired.
    #[arg(long, value_name = "DEF")]
    pub good: Option<String>,
    /// Ratio rule: error <= (1 + E) x best.
    #[arg(long, value_name = "E")]
    pub ratio_eps: Option<f64>,
    /// Margin rule: error <= best + M (default: one bootstrap standard error of the best).
    #[arg(long, value_name = "M")]
    pub margin: Option<f64>,
    /// Level of the bootstrap intervals and of the paired rule.
    #[arg(long, value_name = "L")]
    pub level: Option<f64>,
    /// Unit resamples of the bootstrap.
    #[arg(long, value_name = "B")]
    pub resamples: Option<usize>,
    /// Seed of the resamples (default: the run's seed).
    #[arg(long, value_name = "SEED")]
    pub resample_seed: Option<u64>,
}

impl Overrides {
    pub fn apply(&self, s: &mut MapSection) {
        if let Some(v) = &self.metric {
            s.metric = v.clone();
        }
        if let Some(v) = self.top_k {
            s.top_k = v;
        }
        if let Some(v) = &self.good {
            s.good = v.clone();
        }
        if let Some(v) = self.ratio_eps {
            s.ratio_eps = v;
        }
        if let Some(v) = self.margin {
            s.margin = Some(v);
        }
        if let Some(v) = self.level {
            s.level = v;
        }
        if let Some(v) = self.resamples {
            s.resamples = v;
        }
        if let Some(v) = self.resample_seed {
            s.seed = Some(v);
        }
    }
}

/// What a report run did.
pub struct Mapped {
    pub dir: PathBuf,
    pub headline: Vec<String>,
    pub notes: Vec<String>,
}

/// Open `runs`, build the report and write it (shared by `map` and `run`).
pub fn map_runs(
    runs: &[PathBuf],
    out: Option<PathBuf>,
    settings: Option<MapSection>,
    over: &Overrides,
    allow_incomplete: bool,
    quiet: bool,
) -> anyhow::Result<Mapped> {
    let set = forkmap::results::RunSet::open(runs)?;
    let c = set.completeness();
    if !c.is_complete() && !allow_incomplete {
        anyhow::bail!(
            "the run set is incomplete, so its report would describe only part of the space:\n  {}\n(finish or gather the run, or pass --allow-incomplete to report on the specs present)",
            c.describe().join("\n  ")
        );
    }
    let dir = match out {
        Some(d) => d,
        None if set.dirs.len() == 1
            && runs.len() == 1
            && runs[0].join(forkmap::schema::MANIFEST).is_file() =>
        {
            runs[0].join(forkmap::report::REPORT_DIR)
        }
        None => anyhow::bail!(
            "{} run directories are read as one run: say where the report goes with --out DIR",
            set.dirs.len()
        ),
    };
    let mut s = match settings {
        Some(s) => s,
        None => match Some(&set.manifest().map) {
            Some(v) if !v.is_null() => {
                serde_json::from_value::<MapSection>(v.clone()).map_err(|e| {
                    anyhow::anyhow!("the manifest's `map` settings are unreadable: {e}")
                })?
            }
            _ => MapSection::default(),
        },
    };
    over.apply(&mut s);
    s.check().map_err(|m| anyhow::anyhow!("{m}"))?;
    let seed = s.seed.unwrap_or(set.manifest().seed);
    if !quiet {
        eprintln!(
            "forkmap: mapping {} specs ({} resamples of units) -> {}",
            c.ok,
            s.resamples,
            dir.display()
        );
    }
    let built = forkmap::report::build(&set, &s, seed)?;
    forkmap::report::write(&built, &dir)?;
    Ok(Mapped {
        dir,
        headline: built.report.headline.clone(),
        notes: built.report.meta.notes.clone(),
    })
}

pub fn exec(a: Args) -> anyhow::Result<ExitCode> {
    let settings = match &a.config {
        Some(p) => Some(forkmap::config::Config::from_file(p)?.map),
        None => None,
    };
    let m = map_runs(
        &a.runs,
        a.out,
        settings,
        &a.over,
        a.allow_incomplete,
        a.quiet,
    )?;
    if !a.quiet {
        for n in &m.notes {
            eprintln!("forkmap: note: {n}");
        }
        for h in &m.headline {
            println!("{h}");
        }
        println!("report     {}", m.dir.display());
    }
    Ok(ExitCode::SUCCESS)
}
