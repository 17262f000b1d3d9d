//! Running the refit into `RUN_DIR/refit/` (called by `forkmap run` after the sweep and
//! the nested estimate, before the report; a shard leaves it to a whole-space run), and
//! `plan`'s cost lines.
//!
//! Identity: `refit/manifest.json` holds the refit's own identity (forkmap version, the
//! run's canonical config and data sha256, `specs`, `fraction`, the seed, the report's
//! metric, top k and good rule, and the ids of the top N specs). When it differs, the
//! refit alone restarts (the message names the key); the sweep is untouched. Changing only
//! `resamples` keeps the complete subsamples below the new count (subsample r depends only
//! on the identity and r) and removes those above it. Each subsample is written as soon as
//! it is done, so a kill loses at most the subsamples in flight.

use super::table::{self, FITS, REFIT_DIR, TOPS};
use super::{RefitInput, Rule};
use crate::config::map::MapSection;
use crate::config::Config;
use crate::error::{Error, Result};
use crate::panel::Panel;
use crate::sink::write_bytes_atomic;
use crate::space::ChoiceSpace;
use arrow_array::{Array, Float64Array, StringArray};
use parquet::arrow::arrow_reader::ParquetRecordBatchReaderBuilder;
use std::path::Path;

/// Version of the refit's table layout (a refit written under another restarts).
pub const LAYOUT: u32 = 1;

/// The scheme, as the manifest and the page state it.
pub const SCHEME: &str = "subsampling without replacement: each subsample keeps round(fraction x units) units drawn by a seeded shuffle, with every wave of a kept unit and none of a dropped one; folds are drawn anew on each subsample with the run's [folds] scheme";

/// What a refit did.
#[derive(Debug, Clone)]
pub struct RefitSummary {
    pub resamples: usize,
    /// Subsamples run by this invocation (the rest were complete).
    pub ran: usize,
    pub specs: usize,
    pub units_kept: usize,
    pub units: usize,
    pub seconds: f64,
    /// Why the refit restarted, when it did (names the key).
    pub restarted: Option<String>,
}

fn out_err(path: &Path, msg: String) -> Error {
    Error::Output {
        path: path.to_path_buf(),
        msg,
    }
}

/// The run's ok specs ranked by `metric` (lowest first, ties by spec id), the first `n`,
/// as (spec index, error), read from the run's `specs` table as the report reads it.
pub fn top_specs(
    out: &Path,
    space: &ChoiceSpace,
    metric: &str,
    n: usize,
) -> Result<Vec<(usize, f64)>> {
    let set = crate::results::RunSet::open(&[out.to_path_buf()])?;
    let index = space.index_by_id();
    let mut all: Vec<(f64, &str, usize)> = Vec::new();
    let mut ids: Vec<String> = Vec::new();
    let mut errs: Vec<f64> = Vec::new();
    for path in set.table_files(crate::schema::SPECS) {
        let f = std::fs::File::open(&path).map_err(|e| Error::io(&path, e))?;
        let reader = ParquetRecordBatchReaderBuilder::try_new(f)
            .and_then(|b| b.build())
            .map_err(|e| out_err(&path, format!("unreadable specs part: {e}")))?;
        for b in reader {
            let b = b.map_err(|e| out_err(&path, format!("unreadable specs part: {e}")))?;
            let get = |n: &str| {
                b.column_by_name(n)
                    .ok_or_else(|| out_err(&path, format!("specs part lacks column {n}")))
            };
            let id = get(crate::schema::specs::SPEC_ID)?;
            let status = get(crate::schema::specs::STATUS)?;
            let err = get(metric)?;
            let (Some(id), Some(status), Some(err)) = (
                id.as_any().downcast_ref::<StringArray>(),
                status.as_any().downcast_ref::<StringArray>(),
                err.as_any().downcast_ref::<Float64Array>(),
            ) else {
                return Err(out_err(&path, "specs part of another layout".into()));
            };
            for i in 0..b.num_rows() {
                if status.value(i) == "ok" && !err.is_null(i) && err.value(i).is_finite() {
                    ids.push(id.value(i).to_string());
                    errs.push(err.value(i));
                }
            }
        }
    }
    for (id, &e) in ids.iter().zip(&errs) {
        if let Some(&si) = index.get(id.as_str()) {
            all.push((e, id.as_str(), si));
        }
    }
    all.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(b.1)));
    all.dedup_by(|a, b| a.1 == b.1);
    Ok(all.into_iter().take(n).map(|(e, _, si)| (si, e)).collect())
}

/// The refit's identity (every setting but `resamples`, and the run's identity).
fn identity(cfg: &Config, inp: &RefitInput, data_sha256: &str) -> serde_json::Value {
    serde_json::json!({
        "version": env!("CARGO_PKG_VERSION"),
        "data_sha256": data_sha256,
        "config": cfg.canonical_json(),
        "specs": inp.top.len(),
        "fraction": inp.fraction,
        "seed": inp.seed,
        "metric": inp.metric,
        "top_k": inp.top_k,
        "rule": inp.rule.text(&inp.metric),
        "top": inp.top.iter().map(|t| inp.space.specs[t.0].id.as_str()).collect::<Vec<_>>(),
        "layout": LAYOUT,
    })
}

/// The first identity field that differs, in the user's words.
fn differs(old: &serde_json::Value, new: &serde_json::Value) -> Option<String> {
    for (key, what) in [
        ("specs", "refit.specs"),
        ("fraction", "refit.fraction"),
        ("seed", "refit.seed (or the run's seed)"),
        ("metric", "map.metric"),
        ("top_k", "map.top_k"),
        (
            "rule",
            "the good rule (map.good, map.ratio_eps, map.margin)",
        ),
        ("top", "the run's top specs"),
        ("layout", "refit table layout"),
        ("version", "forkmap version"),
        ("data_sha256", "data file (sha256)"),
        ("config", "run config"),
    ] {
        if old[key] != new[key] {
            return Some(format!("{what} changed"));
        }
    }
    None
}

/// Prepare `dir` for (re)starting: the complete subsamples below `asked` and why it
/// restarted. Removes temporaries, subsamples at or above `asked`, and `tops` files without
/// their `fits` file.
fn open(dir: &Path, ident: &serde_json::Value, asked: u64) -> Result<(Vec<u64>, Option<String>)> {
    crate::store::parts::open_pass(
        dir,
        ident,
        asked,
        &[TOPS, FITS],
        table::resample_of,
        differs,
    )
}

#[allow(clippy::too_many_arguments)]
fn write_manifest(
    dir: &Path,
    ident: &serde_json::Value,
    inp: &RefitInput,
    asked: usize,
    status: &str,
    done: usize,
    seconds: f64,
    rule_note: Option<&str>,
) -> Result<()> {
    let m = serde_json::json!({
        "status": status,
        "identity": ident,
        "resamples": asked,
        "resamples_done": done,
        "scheme": SCHEME,
        "units": inp.panel.n_units(),
        "units_kept": super::kept(inp.panel.n_units(), inp.fraction),
        "run_errors": inp.top.iter().map(|t| t.1).collect::<Vec<_>>(),
        "good_rule": inp.rule.text(&inp.metric),
        "good_rule_note": rule_note,
        "top": format!("a name is top in a spec when its rank is <= {} and its importance > 0 in the spec's pool", inp.top_k),
        "scope": "only the run's top N specs are refitted: the best and the good set of a subsample are among them, not over the whole space",
        "seconds_this_invocation": seconds,
        "tables": [format!("{REFIT_DIR}/{FITS}"), format!("{REFIT_DIR}/{TOPS}")],
    });
    write_bytes_atomic(
        &dir.join(crate::schema::MANIFEST),
        serde_json::to_string_pretty(&m)
            .unwrap_or_default()
            .as_bytes(),
    )
}

/// Run `[refit]` of `cfg` (when present) into `out/refit` under the report settings `map`
/// (metric, top k, good rule), on a pool of `threads`.
pub fn run_in_dir(
    cfg: &Config,
    panel: &Panel,
    space: &ChoiceSpace,
    out: &Path,
    map: &MapSection,
    threads: usize,
    quiet: bool,
) -> Result<Option<RefitSummary>> {
    let Some(section) = cfg.refit.as_ref() else {
        return Ok(None);
    };
    section.check().map_err(Error::Space)?;
    let t0 = std::time::Instant::now();
    super::check(panel, &cfg.folds, section.fraction)?;
    let top = top_specs(out, space, &map.metric, section.specs)?;
    let (rule, rule_note) = Rule::from_map(&map.good, map.ratio_eps, map.margin);
    let inp = RefitInput {
        panel,
        space,
        folds: &cfg.folds,
        importance: &cfg.importance,
        run_seed: cfg.seed,
        seed: section.seed.unwrap_or(cfg.seed),
        fraction: section.fraction,
        top,
        metric: map.metric.clone(),
        top_k: map.top_k,
        rule,
    };
    let sha = crate::manifest::Manifest::read(out)
        .map(|m| m.data_sha256)
        .unwrap_or_default();
    let ident = identity(cfg, &inp, &sha);
    let dir = out.join(REFIT_DIR);
    let asked = section.resamples as u64;
    let (complete, restarted) = open(&dir, &ident, asked)?;
    if let (Some(why), false) = (&restarted, quiet) {
        eprintln!("forkmap: refit: {why}: its earlier subsamples are discarded and the refit restarts (the sweep's results are kept)");
    }
    let note = rule_note.as_deref();
    write_manifest(
        &dir,
        &ident,
        &inp,
        section.resamples,
        "running",
        complete.len(),
        0.0,
        note,
    )?;
    let todo: Vec<u64> = (0..asked)
        .filter(|r| complete.binary_search(r).is_err())
        .collect();
    if !quiet {
        eprintln!(
            "forkmap: refit: {} subsamples ({} of {} units each) x top {} specs{}",
            todo.len(),
            super::kept(panel.n_units(), inp.fraction),
            panel.n_units(),
            inp.top.len(),
            if complete.is_empty() {
                String::new()
            } else {
                format!(" ({} of {asked} already complete)", complete.len())
            }
        );
    }
    if !inp.top.is_empty() {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads.max(1))
            .build()
            .map_err(|e| out_err(out, format!("cannot start {threads} threads: {e}")))?;
        use rayon::prelude::*;
        // Subsamples run side by side (each sweep is parallel too) and are written as soon
        // as each is done; each depends only on the identity and r.
        pool.install(|| {
            todo.par_iter().try_for_each(|&r| {
                let (fits, tops) = super::resample(&inp, r, None)?;
                table::write_resample(&dir, r, &fits, &tops)
            })
        })?;
    }
    let seconds = t0.elapsed().as_secs_f64();
    write_manifest(
        &dir,
        &ident,
        &inp,
        section.resamples,
        "complete",
        section.resamples,
        seconds,
        note,
    )?;
    Ok(Some(RefitSummary {
        resamples: section.resamples,
        ran: todo.len(),
        specs: inp.top.len(),
        units_kept: super::kept(panel.n_units(), inp.fraction),
        units: panel.n_units(),
        seconds,
        restarted,
    }))
}

/// `plan`'s lines on the refit (when `[refit]` is present): N specs x B subsamples x fits,
/// the cost share of N specs by `Regressor::cost` (as the shard split weighs specs; the top
/// N are known only after the sweep, so the N cheapest and the N costliest bound it), and
/// a time range scaled from the sweep's estimate (`sweep_seconds`; NaN: none).
pub fn plan_text(
    cfg: &Config,
    panel: &Panel,
    space: &ChoiceSpace,
    fits_per_spec: usize,
    sweep_seconds: f64,
) -> Option<String> {
    let section = cfg.refit.as_ref()?;
    if let Err(e) = super::check(panel, &cfg.folds, section.fraction) {
        return Some(format!("\nrefit   cannot run: {e}\n"));
    }
    let n = section.specs.min(space.specs.len());
    let b = section.resamples;
    let kept = super::kept(panel.n_units(), section.fraction);
    let fits = match cfg.folds.scheme {
        crate::config::FoldScheme::GroupedKfold => fits_per_spec,
        crate::config::FoldScheme::LeaveOneUnitOut => kept * cfg.folds.repeats.max(1),
    };
    let mut costs: Vec<f64> = space
        .specs
        .iter()
        .map(|s| crate::shard::spec_cost(s, panel))
        .collect();
    costs.sort_by(f64::total_cmp);
    let total: f64 = costs.iter().sum();
    let low: f64 = costs.iter().take(n).sum::<f64>() / total.max(f64::MIN_POSITIVE);
    let high: f64 = costs.iter().rev().take(n).sum::<f64>() / total.max(f64::MIN_POSITIVE);
    let mut s = format!(
        "\nrefit   top {n} specs x {b} subsamples ({kept} of {} units each, without replacement) x {fits} fits = {} model fits, with the run's importance kinds for all {n}\n        their cost is {:.1}% to {:.1}% of the sweep's (the {n} cheapest to the {n} costliest specs by the model cost the shard split uses; which {n} come out on top is known only after the sweep)\n",
        panel.n_units(),
        n * b * fits,
        100.0 * low,
        100.0 * high,
    );
    if sweep_seconds.is_finite() {
        let imp = &cfg.importance;
        s.push_str(&format!(
            "        estimated refit time: {} to {} (the sweep's estimate x {b} subsamples x that share; it errs high: a subsample holds {:.0}% of the units{})\n",
            crate::progress::human(sweep_seconds * b as f64 * low),
            crate::progress::human(sweep_seconds * b as f64 * high),
            100.0 * kept as f64 / panel.n_units().max(1) as f64,
            if imp.deferred() {
                "; and low for the permutation kinds, which the sweep defers (importance.within) but the refit computes for every refitted spec"
            } else {
                ""
            }
        ));
    }
    s.push_str("        runs after the sweep in a whole-space run, before the report (a shard leaves it to the gathered run: it needs the whole space's top specs)\n");
    Some(s)
}

/// `forkmap check`'s lines on the refit of a whole-space run directory (none when it has
/// no refit) and whether it is complete.
pub fn check_lines(out: &Path) -> Result<(Vec<String>, bool)> {
    let dir = out.join(REFIT_DIR);
    let manifest = dir.join(crate::schema::MANIFEST);
    if !manifest.exists() {
        return Ok((Vec::new(), true));
    }
    let m: serde_json::Value = std::fs::read_to_string(&manifest)
        .ok()
        .and_then(|t| serde_json::from_str(&t).ok())
        .ok_or_else(|| out_err(&manifest, "unreadable refit manifest".into()))?;
    let asked = m["resamples"].as_u64().unwrap_or(0);
    let done = table::complete_files(&dir.join(FITS))?
        .iter()
        .filter(|(r, _)| *r < asked)
        .count() as u64;
    Ok(if done >= asked {
        (
            vec![format!("refit      {done} of {asked} subsamples")],
            true,
        )
    } else {
        (
            vec![format!("refit      {done} of {asked} subsamples (incomplete: rerun the same `forkmap run` to finish it; complete subsamples are kept)")],
            false,
        )
    })
}
