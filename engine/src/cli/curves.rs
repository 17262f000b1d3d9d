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
//! `--specs best` (default `good`: the best spec and the report's good set, under the
//! run's `[map]` good definition, metric, resamples and seed, as `forkmap map` computes
//! it; `--ratio-eps E` uses the ratio rule with E instead). `--top K` (default 5) takes the K indicators of largest mean importance
//! (first indicator-level kind in the run); `--indicators` lists them by name. ICE rows
//! and subgroups are kept for the best spec (or for every listed id). Exit 0 when the
//! tables are written, 2 on an error.

use forkmap::curves::compute::Settings;
use forkmap::curves::pass;
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
    /// Good set for `--specs good` by the ratio rule: error <= (1 + E) x best (default:
    /// the run's `[map]` good definition).
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
    let manifest = set.manifest().clone();
    let cfg_path = match &a.config {
        Some(p) => p.clone(),
        None => PathBuf::from(&manifest.config_file),
    };
    let p = forkmap::run::prepare(&cfg_path)?;
    pass::check_run(&set, &p)?;
    let ms: MapSection = match Some(&manifest.map) {
        Some(v) if !v.is_null() => serde_json::from_value(v.clone())
            .map_err(|e| anyhow::anyhow!("the manifest's `map` settings are unreadable: {e}"))?,
        _ => MapSection::default(),
    };
    let run_seed = manifest.seed;
    let specs = match a.specs.as_str() {
        "best" => pass::Specs::Best,
        "good" => pass::Specs::Good,
        list => pass::Specs::Ids(list.split(',').map(|s| s.trim().to_string()).collect()),
    };
    let req = pass::Request {
        specs,
        indicators: a
            .indicators
            .as_ref()
            .map(|s| s.split(',').map(|x| x.trim().to_string()).collect()),
        top_k: a.top,
        ratio_eps: a.ratio_eps,
        settings: Settings {
            grid: a.grid,
            resamples: a.resamples,
            level: a.level,
            flat_share: a.flat,
            seed: a.seed.unwrap_or(run_seed),
        },
        map_seed: ms.seed.unwrap_or(run_seed),
        map: ms,
    };
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(super::threads(a.threads))
        .build()?;
    let d = pool.install(|| pass::draw(&p, &a.run, &req))?;
    if !a.quiet {
        print_summary(&d);
    }
    Ok(ExitCode::SUCCESS)
}

/// The terminal summary of a pass (shared with `forkmap run`).
pub fn print_summary(d: &pass::Drawn) {
    println!(
        "curves     {} specs ({}) x {} indicators",
        d.members,
        d.rule,
        d.indicators.len()
    );
    for (name, ib) in d.indicators.iter().zip(&d.output.bands) {
        let b = &ib.band;
        println!(
            "  {:<22} rises {:>5.1}%  falls {:>5.1}%  flat {:>5.1}%  turns {:>5.1}%  of {} distinct curves ({} of {} members hold it)",
            name,
            100.0 * b.rises,
            100.0 * b.falls,
            100.0 * b.flat,
            100.0 * b.turns,
            ib.distinct,
            ib.holding,
            ib.members
        );
    }
    println!("curves     {} ({:.1} s)", d.dir.display(), d.seconds);
}

/// The cost line printed before a run (and by `plan`).
pub fn cost_line(p: &forkmap::run::Prepared, c: &forkmap::curves::CurvesChecked) -> String {
    pass::cost(p, c.members, c.top_k, c.grid, c.resamples)
}

/// Draw the curves at the end of `forkmap run` with the config's `[curves]` and the
/// report's settings (map flags applied); a failure is printed as a warning.
pub fn after_run(
    p: &forkmap::run::Prepared,
    run: &std::path::Path,
    c: &forkmap::curves::CurvesChecked,
    over: &super::map::Overrides,
    threads: usize,
    quiet: bool,
) {
    let mut ms = p.cfg.map.clone();
    over.apply(&mut ms);
    let req = pass::Request {
        specs: match c.members {
            forkmap::curves::Members::Good => pass::Specs::Good,
            forkmap::curves::Members::Best => pass::Specs::Best,
        },
        indicators: None,
        top_k: c.top_k,
        ratio_eps: None,
        settings: Settings {
            grid: c.grid,
            resamples: c.resamples,
            level: c.level,
            flat_share: c.flat_share,
            seed: p.cfg.seed,
        },
        map_seed: ms.seed.unwrap_or(p.cfg.seed),
        map: ms,
    };
    let drawn = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .map_err(anyhow::Error::from)
        .and_then(|pool| {
            pool.install(|| pass::draw(p, run, &req))
                .map_err(Into::into)
        });
    match drawn {
        Ok(d) => {
            if !quiet {
                print_summary(&d);
            }
        }
        Err(e) => eprintln!(
            "forkmap: warning: the run is complete and kept, but its curves failed: {e:#}\n  (draw them later with `forkmap curves {}`)",
            run.display()
        ),
    }
}
