//! `forkmap run CONFIG --out RUN_DIR [--threads N] [--quiet] [--restart] [--shard I/N]
//!  [--extend] [--no-map] [--no-curves] [map flags]`
//!
//! Run every spec of the config on all cores and write RUN_DIR: `manifest.json`,
//! `specs/part-*.parquet` (one row per spec) and `predictions/part-*.parquet` (one row per
//! spec and data row and repeat), `loadings/`, `importance/`. Everything is checked before
//! RUN_DIR is created. Running the same command again on an interrupted run resumes it:
//! specs in complete parts are skipped, the rest run. A RUN_DIR holding a run of another
//! config, data file or forkmap version is refused unless `--restart` (which discards it);
//! a non-empty folder that holds no forkmap run is always refused. With `--shard I/N` only
//! shard I of a deterministic, cost-balanced split into N runs (`forkmap gather` joins the
//! shards; `forkmap check` reports what is missing). A run of the whole space ends by
//! writing its report to RUN_DIR/report/ (as `forkmap map RUN_DIR` would; `--no-map`
//! skips it, a shard leaves it to the merged run) and prints its headline. Before the
//! report it draws the curves (`forkmap curves RUN_DIR` with the config's `[curves]`
//! settings) into RUN_DIR/curves/ unless `--no-curves` or `[curves] draw = false`; failed
//! curves are a warning, like a failed report. With a `[null]` section, the run runs the
//! permutation null after the sweep and before the report, into RUN_DIR/null/ (resumable
//! draw by draw); a shard runs the draws dealt to it after its specs (`forkmap gather`
//! joins them). Exit code 0 when
//! the sweep completed (failed specs are recorded and counted), 2 on an error. A report
//! that fails does not fail the run: its results are complete and kept, the failure is
//! printed as a warning, and `forkmap map RUN_DIR` writes the report later.
//!
//! With `--extend`, RUN_DIR holds a finished run of a smaller config: CONFIG must keep
//! every spec of it and change nothing its results depend on (data file, seed, folds,
//! importance settings, version; see `forkmap::extend`); only the new specs run, the old
//! parts stay as they are, the manifest's `lineage` records the extension, and the report
//! is rewritten. Anything else is refused naming what differs, with nothing written.
//!
//! With a `[nested]` section the nested estimate of choosing the best runs after the sweep,
//! before the report, into RUN_DIR/nested/ (one table per outer fold; a rerun skips the
//! folds done; a shard runs the outer folds dealt to it, which `forkmap gather` joins).
//! With a `[refit]` section the run's top N specs (by the report's metric) are refitted on
//! unit subsamples after that, into RUN_DIR/refit/ (resumable subsample by subsample). A
//! shard skips the refit, the curves and the report, which need the whole space's results:
//! after `forkmap gather`, `forkmap run CONFIG --out GATHERED` runs them (nothing done is
//! rerun).

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
    /// Discard a run of another config, data or version found in RUN_DIR and start afresh.
    #[arg(long)]
    restart: bool,
    /// Run only shard I of N (1-based), a deterministic cost-balanced share of the specs
    /// (and of the null's draws and nested outer folds); `forkmap gather` joins the shards.
    #[arg(long, value_name = "I/N")]
    shard: Option<forkmap::shard::Shard>,
    /// Add the specs of CONFIG that the finished run in RUN_DIR lacks (CONFIG keeps every
    /// spec of that run, with the same data, seed, folds and importance settings).
    #[arg(long, conflicts_with_all = ["restart", "shard"])]
    extend: bool,
    /// Do not write the report at the end.
    #[arg(long)]
    no_map: bool,
    /// Do not draw the curves at the end (`[curves] draw = false` does the same).
    #[arg(long)]
    no_curves: bool,
    #[command(flatten)]
    over: super::map::Overrides,
}

pub fn exec(a: Args) -> anyhow::Result<ExitCode> {
    let p = forkmap::run::prepare(&a.config)?;
    if !a.no_map {
        // Bad report settings are refused before the sweep, not after it.
        let mut s = p.cfg.map.clone();
        a.over.apply(&mut s);
        s.check().map_err(|m| anyhow::anyhow!("{m}"))?;
    }
    for w in forkmap::plan::warnings(&p) {
        tracing::warn!("{w}");
    }
    let threads = super::threads(a.threads);
    let curves = p.cfg.curves.checked().map_err(|m| anyhow::anyhow!("{m}"))?;
    let draw_curves = curves.draw && !a.no_curves && a.shard.is_none();
    // A shard's specs, null draws and nested outer folds (`forkmap::run::share`).
    let share = a.shard.map(|sh| forkmap::run::share::share(&p, sh));
    if !a.quiet {
        let of = match (a.shard, &share) {
            (Some(sh), Some(s)) => {
                format!("shard {sh}: {} of {}", s.specs.len(), p.space.specs.len())
            }
            _ => p.space.specs.len().to_string(),
        };
        eprintln!(
            "forkmap: {of} specs x {} fits on {threads} thread(s) -> {}",
            p.folds.n_fits_per_spec(),
            a.out.display()
        );
        if let (Some(sh), Some(s)) = (a.shard, &share) {
            if let (Some(d), Some(n)) = (&s.draws, &p.cfg.null) {
                eprintln!(
                    "forkmap: shard {sh}: then {} of the null's {} draws",
                    d.len(),
                    n.draws
                );
            }
            if let (Some(f), Some(n)) = (&s.folds, &p.cfg.nested) {
                eprintln!(
                    "forkmap: shard {sh}: then {} of the nested estimate's {} outer folds",
                    f.len(),
                    n.outer_folds
                );
            }
        }
        if draw_curves {
            eprintln!("forkmap: then {}", super::curves::cost_line(&p, &curves));
        }
    }
    // A refit that cannot run is refused before the sweep, not after it.
    if let (Some(r), None) = (&p.cfg.refit, a.shard) {
        forkmap::refit::check(&p.panel, &p.cfg.folds, r.fraction)?;
    }
    let opts = forkmap::run::RunOptions {
        threads,
        quiet: a.quiet,
        restart: a.restart,
        shard: a.shard,
    };
    let s = if a.extend {
        forkmap::run::extend_dir(&p, &a.out, &opts)?
    } else {
        forkmap::run::run_to_dir(&p, &a.out, &opts)?
    };
    // The nested estimate (`[nested]`): after the sweep, before the report; a shard runs
    // the outer folds dealt to it, which `gather` joins.
    let nested = {
        let mut m = p.cfg.map.clone();
        a.over.apply(&mut m);
        let only = share.as_ref().map(|s| s.folds.clone().unwrap_or_default());
        forkmap::nested::exec::run_in_dir(
            &p.cfg,
            &p.panel,
            &p.space,
            &a.out,
            &m.metric,
            threads,
            a.quiet,
            only.as_deref(),
        )?
    };
    // The refit of the top N specs on unit subsamples (`[refit]`): after the sweep, before
    // the report, under the report's settings; a shard leaves it to a whole-space run.
    let refit = match a.shard {
        None => {
            let mut m = p.cfg.map.clone();
            a.over.apply(&mut m);
            forkmap::refit::exec::run_in_dir(
                &p.cfg, &p.panel, &p.space, &a.out, &m, threads, a.quiet,
            )?
        }
        Some(_) => None,
    };
    let failed: usize = s.failures.values().sum();
    println!("specs      {} ({} ok, {failed} failed)", s.specs, s.ok);
    for (cause, n) in &s.failures {
        println!("  failed: {cause}: {n}");
    }
    if s.noted > 0 {
        println!(
            "notes      {} spec(s) have notes (specs.notes: a dropped indicator, an iteration limit, ...)",
            s.noted
        );
    }
    if s.importance_failed > 0 {
        println!(
            "importance {} spec(s) without importances (see specs.notes)",
            s.importance_failed
        );
    }
    if let (Some(n), Some(sh)) = (&s.null, a.shard) {
        println!(
            "null       shard {sh}: {} of the {} draws x {} specs ({} run now) in {:.1}s -> {} (`forkmap gather` joins the shards' draws)",
            n.draws,
            n.draws_total,
            n.specs_per_draw,
            n.ran,
            n.seconds,
            a.out.join(forkmap::null::table::NULL_DIR).display()
        );
    } else if let Some(n) = &s.null {
        println!(
            "null       {} draws x {} specs ({} run now) in {:.1}s -> {}",
            n.draws,
            n.specs_per_draw,
            n.ran,
            n.seconds,
            a.out.join(forkmap::null::table::NULL_DIR).display()
        );
        println!(
            "           units never permuted (no other unit with their set of waves): {} of {}",
            n.units_fixed, n.units
        );
        if n.units_fixed as f64 > forkmap::null::FIXED_WARN_SHARE * n.units as f64 {
            println!(
                "warning    null: {}",
                forkmap::null::fixed_warning(n.units_fixed, n.units)
            );
        }
    }
    println!("seconds    {:.1}", s.seconds);
    if let (Some(n), Some(sh)) = (&nested, a.shard) {
        println!(
            "nested     shard {sh}: {} of the {} outer folds ({:.1} s) -> {} (`forkmap gather` joins the shards' folds)",
            n.folds,
            n.total,
            n.seconds,
            a.out.join(forkmap::nested::table::NESTED_DIR).display()
        );
    } else if let Some(n) = &nested {
        println!(
            "nested     {} {:.4} over {} outer folds (baseline {:.4}; {:.1} s) -> {}",
            n.metric,
            n.nested,
            n.folds,
            n.baseline,
            n.seconds,
            a.out.join(forkmap::nested::table::NESTED_DIR).display()
        );
    }
    if let Some(r) = &refit {
        println!(
            "refit      top {} specs x {} subsamples ({} of {} units each; {} run now) in {:.1}s -> {}",
            r.specs,
            r.resamples,
            r.units_kept,
            r.units,
            r.ran,
            r.seconds,
            a.out.join(forkmap::refit::table::REFIT_DIR).display()
        );
    } else if p.cfg.refit.is_some() && a.shard.is_some() {
        println!("refit      left to the gathered run (it needs the top specs of the whole space): after `forkmap gather`, run `forkmap run CONFIG --out GATHERED` (nothing done is rerun; the refit runs)");
    }
    println!("results    {}", a.out.display());
    if draw_curves {
        super::curves::after_run(&p, &a.out, &curves, &a.over, threads, a.quiet);
    }
    let best = || {
        if let Some((id, skill)) = &s.best {
            println!("best skill {skill:.4} (spec {id})");
        }
    };
    if a.no_map {
        best();
    } else if a.shard.is_some() {
        best();
        println!("report     left to the gathered run (`forkmap gather`, then `forkmap run CONFIG --out GATHERED` for the refit, curves and report, or `forkmap map GATHERED` for the report alone)");
    } else {
        match super::map::map_runs(
            std::slice::from_ref(&a.out),
            None,
            Some(p.cfg.map.clone()),
            &a.over,
            false,
            a.quiet,
        ) {
            Ok(m) => {
                println!();
                for h in &m.headline {
                    println!("{h}");
                }
                println!("report     {}", m.dir.display());
            }
            Err(e) => {
                best();
                eprintln!(
                    "forkmap: warning: the run is complete and kept, but its report failed: {e:#}\n  (write it later with `forkmap map {}`)",
                    a.out.display()
                );
            }
        }
    }
    Ok(ExitCode::SUCCESS)
}
