//! Running the nested estimate into RUN_DIR/nested/ (called by `forkmap run` after the
//! main sweep, before the report): settings first, then one table per outer fold as it
//! finishes; a rerun skips the folds already written (under the same settings).

use super::table::{self, NESTED_DIR, SETTINGS_FILE};
use super::Plan;
use crate::config::nested::NestedSection;
use crate::config::Config;
use crate::error::{Error, Result};
use crate::panel::Panel;
use crate::sink::write_bytes_atomic;
use crate::space::ChoiceSpace;
use std::path::Path;

/// What the nested estimate gave.
#[derive(Debug, Clone)]
pub struct NestedSummary {
    /// Outer folds in the directory (a shard: those of its share done).
    pub folds: usize,
    /// Outer folds of the whole estimate.
    pub total: usize,
    /// Folds found finished and skipped.
    pub resumed: usize,
    pub metric: String,
    /// Pooled outer error of the chosen specs, and of the training-median baseline.
    pub nested: f64,
    pub baseline: f64,
    pub seconds: f64,
}

/// Run `[nested]` of `cfg` (when present) into `out/nested`, choosing by `metric`, on a
/// pool of `threads`: every outer fold, or a shard's (`only`, dealt by `run::share`).
/// Tables of other settings found there are discarded.
#[allow(clippy::too_many_arguments)]
pub fn run_in_dir(
    cfg: &Config,
    panel: &Panel,
    space: &ChoiceSpace,
    out: &Path,
    metric: &str,
    threads: usize,
    quiet: bool,
    only: Option<&[usize]>,
) -> Result<Option<NestedSummary>> {
    let Some(section) = cfg.nested.as_ref() else {
        return Ok(None);
    };
    let t0 = std::time::Instant::now();
    let plan = Plan::new(panel, space, section, &cfg.folds, cfg.seed, metric)?;
    let dir = out.join(NESTED_DIR);
    prepare_dir(&dir, &plan, space, section, quiet)?;
    let done = table::done_folds(&dir)?;
    let n = plan.outer.folds.len();
    // Folds not run now: those done, and, for a shard, those of other shards.
    let skip: Vec<usize> = (0..n)
        .filter(|o| done.contains(o) || only.is_some_and(|m| !m.contains(o)))
        .collect();
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads.max(1))
        .build()
        .map_err(|e| Error::Output {
            path: out.into(),
            msg: format!("cannot start {threads} threads: {e}"),
        })?;
    if !quiet {
        eprintln!(
            "nested: {} outer folds x {} specs ({} inner fits + 1 refit each){}",
            n - skip.len(),
            plan.subset.len(),
            plan.n_fits(panel.n_units()) / n.max(1) - 1,
            match (only, done.len()) {
                (Some(m), _) => format!(" (this shard's {} of {n})", m.len()),
                (None, 0) => String::new(),
                (None, k) => format!(", {k} already done"),
            }
        );
    }
    pool.install(|| {
        super::run(&plan, panel, space, &skip, &mut |r| {
            table::write_fold(&dir, space, &plan.metric, &r)?;
            if !quiet {
                let chosen = r
                    .chosen
                    .map_or("none".to_string(), |i| space.specs[i].id.clone());
                eprintln!(
                    "nested: outer fold {}/{n}: chose {chosen} (inner {m} {:.4}), outer {m} {:.4}, baseline {:.4} [{:.1} s]",
                    r.fold + 1,
                    r.inner_error,
                    r.outer_error,
                    r.baseline_error,
                    t0.elapsed().as_secs_f64(),
                    m = plan.metric,
                );
            }
            Ok(())
        })
    })?;
    let mut rows = table::read_folds(&dir)?;
    if let Some(m) = only {
        rows.retain(|r| m.contains(&r.fold));
    }
    let results: Vec<_> = rows.iter().map(|r| r.as_result()).collect();
    let (nested, baseline) = super::pooled(&results, &plan.metric);
    Ok(Some(NestedSummary {
        folds: rows.len(),
        total: n,
        resumed: done
            .iter()
            .filter(|o| only.is_none_or(|m| m.contains(o)))
            .count(),
        metric: plan.metric.clone(),
        nested,
        baseline,
        seconds: t0.elapsed().as_secs_f64(),
    }))
}

/// Create `dir` with its settings, or check the settings of the tables found there.
fn prepare_dir(
    dir: &Path,
    plan: &Plan,
    space: &crate::space::ChoiceSpace,
    section: &NestedSection,
    quiet: bool,
) -> Result<()> {
    let want = table::settings_json(plan, space, section);
    let path = dir.join(SETTINGS_FILE);
    if path.is_file() {
        let text = std::fs::read_to_string(&path).map_err(|e| Error::io(&path, e))?;
        let have: serde_json::Value = serde_json::from_str(&text).unwrap_or_default();
        if have == want {
            return Ok(());
        }
        // `[nested]` is not part of the run's identity: tables of other settings are
        // discarded (the main sweep's results stay).
        if !quiet {
            eprintln!(
                "nested: {} holds tables of other settings; recomputing them",
                dir.display()
            );
        }
        std::fs::remove_dir_all(dir).map_err(|e| Error::io(dir, e))?;
    }
    std::fs::create_dir_all(dir).map_err(|e| Error::io(dir, e))?;
    write_bytes_atomic(
        &path,
        serde_json::to_string_pretty(&want)
            .unwrap_or_default()
            .as_bytes(),
    )
}

/// `plan`'s lines on the nested estimate (when `[nested]` is present): its model fits,
/// outer folds x (specs x inner folds + 1 refit), and its time scaled from the main
/// sweep's estimate by model fits (`main_fits` in `main_seconds`; NaN: no estimate).
pub fn plan_text(
    cfg: &Config,
    panel: &Panel,
    space: &ChoiceSpace,
    main_fits: usize,
    main_seconds: f64,
) -> Option<String> {
    let section = cfg.nested.as_ref()?;
    let plan = match Plan::new(panel, space, section, &cfg.folds, cfg.seed, &cfg.map.metric) {
        Ok(p) => p,
        Err(e) => return Some(format!("\nnested estimate: cannot run: {e}\n")),
    };
    let n = plan.n_fits(panel.n_units());
    let per = n / plan.outer.folds.len().max(1);
    let mut s = format!(
        "\nnested estimate ([nested]; after the sweep, before the report; with --shard I/N each shard runs the outer folds dealt to it)\n  {} outer folds x ({} specs{} x {} inner fits + 1 refit) = {n} model fits ({per} per outer fold), chosen by {}\n",
        plan.outer.folds.len(),
        plan.subset.len(),
        if plan.subset.len() < space.specs.len() {
            format!(" sampled of {}", space.specs.len())
        } else {
            String::new()
        },
        per.saturating_sub(1) / plan.subset.len().max(1),
        plan.metric,
    );
    if main_seconds.is_finite() && main_fits > 0 {
        s.push_str(&format!(
            "  estimated time: about {} (the sweep's estimate scaled by model fits; it errs high: the nested sweeps compute no importances and hold ~{}% of the units)\n",
            human(main_seconds * n as f64 / main_fits as f64),
            100 - 100 / plan.outer.k.max(1)
        ));
    }
    Some(s)
}

fn human(s: f64) -> String {
    if s < 90.0 {
        format!("{s:.0} s")
    } else if s < 5400.0 {
        format!("{:.0} min", s / 60.0)
    } else {
        format!("{:.1} h", s / 3600.0)
    }
}

/// The outer folds of `mine` missing from `out/nested`, ascending.
pub fn missing_folds(out: &Path, mine: &[usize]) -> Result<Vec<usize>> {
    let have = table::done_folds(&out.join(NESTED_DIR))?;
    Ok(mine.iter().copied().filter(|o| !have.contains(o)).collect())
}

/// `forkmap check`'s line on a shard's share of the nested estimate (`mine`: its outer
/// folds, from its run manifest) and whether that share is complete.
pub fn shard_check_lines(out: &Path, shard: &str, mine: &[usize]) -> Result<(Vec<String>, bool)> {
    let missing = missing_folds(out, mine)?;
    Ok(crate::null::run::share_lines(
        "nested    ",
        shard,
        "outer folds",
        mine.len(),
        &missing,
        out,
        "",
    ))
}
