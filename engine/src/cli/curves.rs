//! `forkmap curves RUN_DIR [--specs best|good|ID,...] [--indicators A,B | --top K]
//!  [--ratio-eps E] [--grid N] [--resamples B] [--level L] [--flat F] [--seed S] [--config FILE]
//!  [--threads N] [--quiet]`
//!
//! Shapes of associations: fit the chosen specs on all rows (from the run's config and
//! data, as the manifest records them; the data's sha256 must match) and write ICE curves
//! over a grid of each chosen indicator's observed quantiles, partial dependence, the band
//! of PD over the chosen specs, a hinge breakpoint per PD curve with a unit-bootstrap
//! interval, and subgroups of units for the best spec (or each listed id), as Parquet
//! tables under RUN_DIR/curves/ (written whole or not at all).
//!
//! `--specs best` (default `good`: the best spec and every spec whose error is within
//! (1 + ratio_eps) x best, the report's ratio rule with the run's `[map]` metric and
//! ratio_eps). `--top K` (default 5) takes the K indicators of largest mean importance
//! (first indicator-level kind in the run); `--indicators` lists them by name. ICE rows
//! and subgroups are kept for the best spec (or for every listed id). Exit 0 when the
//! tables are written, 2 on an error.

use forkmap::curves::compute::{compute, Settings};
use forkmap::curves::{select, table};
use forkmap::report::settings::MapSection;
use std::path::PathBuf;
use std::process::ExitCode;

/// Write ICE/PD curves, breakpoints and subgroups of a finished run.
#[derive(clap::Args)]
pub struct Args {
    /// Run directory.
    run: PathBuf,
    /// `best`, `good`, or spec ids separated by commas.
    #[arg(long, default_value = "good")]
    specs: String,
    /// Indicator names separated by commas (default: the top K by importance).
    #[arg(long, conflicts_with = "top")]
    indicators: Option<String>,
    /// Good set for `--specs good`: error <= (1 + E) x best (default: the run's `[map]`
    /// ratio_eps).
    #[arg(long, value_name = "E")]
    ratio_eps: Option<f64>,
    /// Number of indicators taken by importance.
    #[arg(long, default_value_t = 5)]
    top: usize,
    /// Grid points (observed quantiles) per indicator.
    #[arg(long, default_value_t = 20)]
    grid: usize,
    /// Unit-bootstrap resamples for the breakpoint interval.
    #[arg(long, default_value_t = 200)]
    resamples: usize,
    /// Level of the breakpoint interval and the band.
    #[arg(long, default_value_t = 0.9)]
    level: f64,
    /// Flatness tolerance as a share of the outcome's standard deviation.
    #[arg(long, default_value_t = 0.05)]
    flat: f64,
    /// Seed of the bootstrap and the k-means starts (default: the run's seed).
    #[arg(long)]
    seed: Option<u64>,
    /// Config to refit from (default: the one the manifest names).
    #[arg(long)]
    config: Option<PathBuf>,
    /// Worker threads (default: all cores).
    #[arg(long)]
    threads: Option<usize>,
    /// Print nothing but errors.
    #[arg(long)]
    quiet: bool,
}

pub fn exec(a: Args) -> anyhow::Result<ExitCode> {
    if a.grid < 4 {
        anyhow::bail!(
            "--grid must be at least 4 (the hinge needs four points), got {}",
            a.grid
        );
    }
    if !(a.level > 0.0 && a.level < 1.0) {
        anyhow::bail!("--level must be in (0, 1), got {}", a.level);
    }
    if !(a.flat >= 0.0 && a.flat.is_finite()) {
        anyhow::bail!("--flat must be a finite share >= 0, got {}", a.flat);
    }
    let set = forkmap::results::RunSet::open(std::slice::from_ref(&a.run))?;
    let c = set.completeness();
    if !c.is_complete() {
        anyhow::bail!(
            "the run is incomplete:\n  {}\n(finish the run first)",
            c.describe().join("\n  ")
        );
    }
    let manifest = set.manifest().clone();
    let cfg_path = match &a.config {
        Some(p) => p.clone(),
        None => match manifest["config_file"].as_str() {
            Some(s) => PathBuf::from(s),
            None => anyhow::bail!("the manifest names no config_file: pass --config FILE"),
        },
    };
    let p = forkmap::run::prepare(&cfg_path)?;
    let sha = forkmap::run::sha256_file(&p.data_path)?;
    if let Some(want) = manifest["data_sha256"].as_str() {
        if want != sha {
            anyhow::bail!(
                "{} has changed since the run (sha256 {} in the manifest, {} now): curves would not describe the run's fits",
                p.data_path.display(),
                want,
                sha
            );
        }
    }
    let t = forkmap::report::data::read(&set)?;
    let ms: MapSection = match manifest.get("map") {
        Some(v) if !v.is_null() => serde_json::from_value(v.clone())
            .map_err(|e| anyhow::anyhow!("the manifest's `map` settings are unreadable: {e}"))?,
        _ => MapSection::default(),
    };
    let eps = a.ratio_eps.unwrap_or(ms.ratio_eps);
    if !(eps >= 0.0 && eps.is_finite()) {
        anyhow::bail!("--ratio-eps must be a finite number >= 0, got {eps}");
    }
    let (best, good) = select::best_and_good(&t, &ms.metric, eps)
        .ok_or_else(|| anyhow::anyhow!("the run has no ok spec to draw curves for"))?;
    let (ids, detail): (Vec<String>, Vec<String>) = match a.specs.as_str() {
        "best" => (vec![best.clone()], vec![best]),
        "good" => (good, vec![best]),
        list => {
            let v: Vec<String> = list.split(',').map(|s| s.trim().to_string()).collect();
            (v.clone(), v)
        }
    };
    let index = |id: &String| {
        p.space
            .specs
            .iter()
            .position(|s| &s.id == id)
            .ok_or_else(|| anyhow::anyhow!("--specs: no spec `{id}` in the run's choice space"))
    };
    let specs: Vec<usize> = ids.iter().map(index).collect::<anyhow::Result<_>>()?;
    let detail: Vec<usize> = detail.iter().map(index).collect::<anyhow::Result<_>>()?;
    let names: Vec<String> = match &a.indicators {
        Some(s) => s.split(',').map(|x| x.trim().to_string()).collect(),
        None => match select::top_indicators(&t, a.top) {
            Some((_, v)) => v,
            None => anyhow::bail!(
                "the run holds no indicator-level importance to pick the top {} from: pass --indicators A,B",
                a.top
            ),
        },
    };
    let cols: Vec<usize> = names
        .iter()
        .map(|n| {
            p.panel
                .indicators
                .iter()
                .position(|x| x == n)
                .ok_or_else(|| {
                    anyhow::anyhow!("--indicators: `{n}` is not an indicator of the panel")
                })
        })
        .collect::<anyhow::Result<_>>()?;
    let s = Settings {
        grid: a.grid,
        resamples: a.resamples,
        level: a.level,
        flat_share: a.flat,
        seed: a.seed.or_else(|| manifest["seed"].as_u64()).unwrap_or(1),
    };
    if !a.quiet {
        eprintln!(
            "forkmap: curves for {} specs x {} indicators ({} rows x {} grid points each, {} resamples)",
            specs.len(),
            cols.len(),
            p.panel.n_rows(),
            a.grid,
            a.resamples
        );
    }
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(super::threads(a.threads))
        .build()?;
    let t0 = std::time::Instant::now();
    let out = pool.install(|| compute(&p, &specs, &detail, &cols, &s))?;
    let ids_all: Vec<String> = p.space.specs.iter().map(|s| s.id.clone()).collect();
    let dir = table::write(&out, &p.panel, &ids_all, a.level, &a.run)?;
    if !a.quiet {
        for (c, _, b) in &out.bands {
            println!(
                "{:<24} rises {:>5.1}%  falls {:>5.1}%  flat {:>5.1}%  turns {:>5.1}%",
                p.panel.indicators[*c],
                100.0 * b.rises,
                100.0 * b.falls,
                100.0 * b.flat,
                100.0 * b.turns
            );
        }
        println!(
            "curves     {} ({:.1} s)",
            dir.display(),
            t0.elapsed().as_secs_f64()
        );
    }
    Ok(ExitCode::SUCCESS)
}
