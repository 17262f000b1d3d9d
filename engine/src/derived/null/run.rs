//! Running the permutation null into `RUN_DIR/null/` after the sweep: draw by draw, each
//! draw's tables written atomically as soon as it is done, so a kill loses at most the
//! draw in flight and a rerun skips the complete draws.
//!
//! Identity: `null/manifest.json` holds the null's own identity (the checked `[null]`
//! settings but `draws`, plus the run's canonical config, data sha256 and forkmap
//! version). When it differs, the null alone restarts (the message names the key); the
//! sweep's results are untouched. Changing only `draws` keeps the complete draws below
//! the new count (draw d depends only on the seed and d) and removes those above it.

use super::table::{self, DrawRow, RankRow, TopRow, DRAWS, GOODRANKS, TOPS};
use super::{draw_seed, permute_units, sample_specs, Exchange};
use crate::config::importance::ImportanceSection;
use crate::config::null::NullSettings;
use crate::error::{Error, Result};
use crate::folds::FoldPlan;
use crate::panel::Panel;
use crate::progress::Progress;
use crate::sink::write_bytes_atomic;
use crate::space::ChoiceSpace;
use crate::sweep::Sweep;
use std::path::Path;
use std::sync::Mutex;

/// What the null needs from the run.
pub struct NullInput<'a> {
    pub panel: &'a Panel,
    pub space: &'a ChoiceSpace,
    pub folds: &'a FoldPlan,
    pub seed: u64,
    pub settings: NullSettings,
    /// The run's identity: canonical config, data sha256 (the version is added here).
    pub run_config: serde_json::Value,
    pub data_sha256: String,
    /// Fit the stages that do not read the outcome once per fold and share them across
    /// draws (the tables are bit-identical either way; `run` sets it, tests compare).
    pub share_stages: bool,
    /// The run's `[importance] repeats`: the permutation kinds' draws per indicator and
    /// fold, when `[null] importance` asks for them.
    pub repeats: usize,
    /// A shard's run: the shard and the draws dealt to it (`run::share`); `None` runs
    /// every draw.
    pub shard: Option<(crate::shard::Shard, Vec<u64>)>,
}

/// What a null run did.
#[derive(Debug, Clone)]
pub struct NullSummary {
    /// Draws of this directory (a shard's share, else every draw).
    pub draws: usize,
    /// Draws of the whole null (`[null] draws`).
    pub draws_total: usize,
    /// Draws run by this invocation (the rest were complete).
    pub ran: usize,
    pub specs_per_draw: usize,
    pub seconds: f64,
    /// Why the null restarted, when it did (names the key).
    pub restarted: Option<String>,
    /// Units, and of them those alone in their exchangeable group (never permuted).
    pub units: usize,
    pub units_fixed: usize,
}

/// What every draw keeps as observed (cold review S7).
pub const HELD_FIXED: &str = "held fixed in every draw: the indicators (x) and their gaps, the folds, each unit's set of waves, the weights that do not read the outcome (rows, units), and the outcome's values within each wave (so per-wave means and common trends between x and the outcome through the wave survive). Weights derived from the outcome or its standard error (which moves with it) are refitted on the permuted outcome, in-fold. The null is: no within-wave, between-unit association between the indicators and the outcome";

/// Version of the null's table layout (a null written under another restarts).
pub const LAYOUT: u32 = 3;

/// The native importance kinds (what `tops` holds).
pub const NATIVE: [&str; 2] = ["coefficient", "impurity"];

/// The null's identity (every setting but `draws`, and the run's identity).
pub fn identity(inp: &NullInput) -> serde_json::Value {
    serde_json::json!({
        "version": env!("CARGO_PKG_VERSION"),
        "data_sha256": inp.data_sha256,
        "config": inp.run_config,
        "specs": inp.settings.specs,
        "top_k": inp.settings.top_k,
        "metric": inp.settings.metric.name(),
        "importance": inp.settings.kinds(),
        "repeats": if inp.settings.permutation || inp.settings.group { inp.repeats } else { 0 },
        "ranks_within": inp.settings.ranks_within,
        // 2: `tops` holds the best spec of each native kind (`spec` column).
        // 3: `goodranks` (the ranks of the specs near each draw's best).
        "layout": LAYOUT,
    })
}

/// The first identity field that differs, in the user's words.
pub fn differs(old: &serde_json::Value, new: &serde_json::Value) -> Option<String> {
    for (key, what) in [
        ("specs", "null.specs"),
        ("top_k", "null.top_k"),
        ("metric", "null.metric (or map.metric, its default)"),
        ("importance", "null.importance"),
        (
            "repeats",
            "importance.repeats (the null's permutation importances use it)",
        ),
        ("ranks_within", "null.ranks_within"),
        ("layout", "null table layout"),
        ("version", "forkmap version"),
        ("data_sha256", "data file (sha256)"),
        ("config", "run config"),
    ] {
        if old[key] != new[key] {
            return Some(format!(
                "{what} changed (was {}, now {})",
                short(&old[key]),
                short(&new[key])
            ));
        }
    }
    None
}

fn short(v: &serde_json::Value) -> String {
    let s = v.to_string();
    if s.len() > 40 {
        "...".into()
    } else {
        s
    }
}

/// Spec indices of the null's sample (every spec without `specs`), sorted.
pub fn sample(inp: &NullInput) -> Vec<usize> {
    sample_specs(
        inp.space.specs.len(),
        inp.settings.specs.map(|s| s as usize),
        inp.seed,
    )
}

fn io_out(path: &Path, msg: String) -> Error {
    Error::Output {
        path: path.to_path_buf(),
        msg,
    }
}

/// Prepare `out/null` for (re)starting: returns the complete draws below `draws` and why
/// it restarted (if so). Removes temporaries, draws at or above `draws`, and `tops` and
/// `goodranks` files without their `draws` file.
fn open(
    null_dir: &Path,
    ident: &serde_json::Value,
    draws: u64,
) -> Result<(Vec<u64>, Option<String>)> {
    crate::store::parts::open_pass(
        null_dir,
        ident,
        draws,
        crate::schema::NULL_DRAW_TABLES,
        table::draw_of,
        differs,
    )
}

fn write_manifest(
    null_dir: &Path,
    inp: &NullInput,
    ex: &Exchange,
    subset: &[usize],
    status: &str,
    done: usize,
    seconds: f64,
) -> Result<()> {
    let mut m = serde_json::json!({
        "status": status,
        "identity": identity(inp),
        "draws": inp.settings.draws,
        "draws_done": done,
        "seed": inp.seed,
        "specs_in_space": inp.space.specs.len(),
        "spec_ids": subset.iter().map(|&i| inp.space.specs[i].id.as_str()).collect::<Vec<_>>(),
        "permutation": "the outcome (and its standard error) is permuted across units; a unit's waves move together; units are exchanged only with units observed in the same set of waves",
        "held_fixed": HELD_FIXED,
        "units": ex.units(),
        "exchange_groups": ex.groups.len(),
        "units_fixed": ex.fixed_units(),
        "top": "for each native importance kind (coefficient, impurity), the draw's best spec of that kind (lowest error among the specs whose native importance is of that kind) gives one set of tops rows; an indicator (group) is top when its rank there is <= top_k and its importance is > 0. The report uses the kind of the observed top spec only",
        "goodranks": format!("for every spec of a draw whose error is within ranks_within = {} of the draw's best ((1 + ranks_within) x best), its error and the importance, rank and in_pool of every indicator and group in every kind the draw computed ({}); the report rebuilds each draw's good set from it and evaluates its conclusions there", inp.settings.ranks_within, inp.settings.kinds().join(", ")),
        "p_value": "p = (1 + #{draws at least as extreme as observed}) / (1 + D) (the +1 correction counts the observed data as one permutation)",
        "seconds_this_invocation": seconds,
        "tables": [format!("{}/{DRAWS}", table::NULL_DIR), format!("{}/{TOPS}", table::NULL_DIR), format!("{}/{GOODRANKS}", table::NULL_DIR)],
    });
    if let Some((sh, mine)) = &inp.shard {
        // `gather` checks these against the other shards and drops them.
        m[SHARD_KEY] = serde_json::json!(sh.to_string());
        m[SHARD_DRAWS_KEY] = serde_json::json!(mine);
    }
    write_bytes_atomic(
        &null_dir.join(crate::schema::MANIFEST),
        serde_json::to_string_pretty(&m)
            .unwrap_or_default()
            .as_bytes(),
    )
}

/// Keys a shard's null manifest adds to the whole run's: the shard and its draws.
pub const SHARD_KEY: &str = "shard";
pub const SHARD_DRAWS_KEY: &str = "shard_draws";

/// Run (or finish) the null of `inp` into `out/null` on `pool` (a shard: its draws only).
pub fn run_null(
    inp: &NullInput,
    out: &Path,
    pool: &rayon::ThreadPool,
    quiet: bool,
) -> Result<NullSummary> {
    let t0 = std::time::Instant::now();
    let null_dir = out.join(table::NULL_DIR);
    let draws = inp.settings.draws as u64;
    let ident = identity(inp);
    let (complete, restarted) = open(&null_dir, &ident, draws)?;
    let subset = sample(inp);
    let ex = Exchange::of(inp.panel)?;
    if let (Some(why), false) = (&restarted, quiet) {
        eprintln!("forkmap: null: {why}: its earlier draws are discarded and the null restarts (the sweep's results are kept)");
    }
    let mine: Vec<u64> = match &inp.shard {
        Some((_, mine)) => mine.iter().copied().filter(|&d| d < draws).collect(),
        None => (0..draws).collect(),
    };
    let todo: Vec<u64> = mine
        .iter()
        .copied()
        .filter(|d| complete.binary_search(d).is_err())
        .collect();
    let done_before = mine.len() - todo.len();
    write_manifest(&null_dir, inp, &ex, &subset, "running", done_before, 0.0)?;
    if !quiet {
        eprintln!(
            "forkmap: null: {} draws x {} specs x {} fits{}",
            todo.len(),
            subset.len(),
            inp.folds.n_fits_per_spec(),
            match (&inp.shard, done_before) {
                (Some((sh, _)), k) => format!(
                    " (shard {sh}: {} of the {draws} draws, {k} already complete)",
                    mine.len()
                ),
                (None, 0) => String::new(),
                (None, k) => format!(" ({k} of {draws} draws already complete)"),
            }
        );
    }
    let progress = Mutex::new(Progress::new(todo.len() * subset.len(), quiet));
    let cache = inp
        .share_stages
        .then(|| std::sync::Arc::new(crate::sweep::cache::StageCache::default()));
    // Draws run side by side (each one's sweep is parallel too); each is written as soon
    // as it is done. A draw depends only on the seed and d, so the tables do not depend
    // on the order draws finish in or on the thread count.
    {
        use rayon::prelude::*;
        pool.install(|| {
            todo.par_iter().try_for_each(|&d| {
                let (row, tops, ranks) = one_draw(inp, &subset, d, pool, &progress, cache.clone())?;
                table::write_draw(&null_dir, &row, &tops, &ranks)
            })
        })?;
    }
    if let Ok(p) = progress.lock() {
        p.finish();
    }
    let seconds = t0.elapsed().as_secs_f64();
    write_manifest(
        &null_dir,
        inp,
        &ex,
        &subset,
        "complete",
        mine.len(),
        seconds,
    )?;
    Ok(NullSummary {
        draws: mine.len(),
        draws_total: draws as usize,
        ran: todo.len(),
        specs_per_draw: subset.len(),
        seconds,
        restarted,
        units: ex.units(),
        units_fixed: ex.fixed_units(),
    })
}

/// One spec's outcome in a draw.
struct Got {
    spec: usize,
    error: f64,
    skill: f64,
    importance: Vec<crate::importance::ImportanceRow>,
}

/// Run draw `d`: permute, sweep the sample with native importances (and the permutation
/// kinds when `[null] importance` asks), summarise. `cache`
/// (one per null run) shares the outcome-independent stage fits across draws.
pub fn one_draw(
    inp: &NullInput,
    subset: &[usize],
    d: u64,
    pool: &rayon::ThreadPool,
    progress: &Mutex<Progress>,
    cache: Option<std::sync::Arc<crate::sweep::cache::StageCache>>,
) -> Result<(DrawRow, Vec<TopRow>, Vec<RankRow>)> {
    let seed = draw_seed(inp.seed, d);
    let permuted = permute_units(inp.panel, seed)?;
    let mut sweep = Sweep::new(&permuted, inp.space, inp.folds, inp.seed, Some(subset))?;
    sweep.describe = false;
    // Only the outcome differs between draws: stages that do not read it are shared.
    sweep.stage_cache = cache;
    let kinds = inp.settings.kinds();
    sweep.importance = Some(ImportanceSection {
        repeats: if kinds.len() > 1 { inp.repeats } else { 0 },
        kinds: kinds.iter().map(|k| k.to_string()).collect(),
        within: None,
    });
    let metric = inp.settings.metric;
    let got: Mutex<Vec<Got>> = Mutex::new(Vec::with_capacity(subset.len()));
    pool.install(|| {
        sweep.run(&|r| {
            if let Ok(mut p) = progress.lock() {
                p.inc();
            }
            let Some(s) = r.scores.filter(|_| r.status.is_ok()) else {
                return;
            };
            let error = match metric {
                crate::config::null::NullMetric::Mae => s.mae,
                crate::config::null::NullMetric::Rmse => s.rmse,
                crate::config::null::NullMetric::UnitMae => s.unit_mae,
            };
            if let Ok(mut g) = got.lock() {
                g.push(Got {
                    spec: r.spec,
                    error,
                    skill: s.skill,
                    importance: r.importance,
                });
            }
        })
    });
    let mut got = got.into_inner().unwrap_or_default();
    // By spec index: nothing below depends on completion order.
    got.sort_by_key(|g| g.spec);
    Ok(summarise_draw(inp, subset.len(), d, seed, &got))
}

/// Lowest error, first (lowest spec index) on ties.
fn argmin<'a>(it: impl Iterator<Item = &'a Got>) -> Option<&'a Got> {
    it.fold(None::<&Got>, |b, g| match b {
        Some(b) if b.error <= g.error => Some(b),
        _ => Some(g),
    })
}

fn summarise_draw(
    inp: &NullInput,
    n_specs: usize,
    d: u64,
    seed: u64,
    got: &[Got],
) -> (DrawRow, Vec<TopRow>, Vec<RankRow>) {
    let ok: Vec<&Got> = got.iter().filter(|g| g.error.is_finite()).collect();
    let errors: Vec<f64> = ok.iter().map(|g| g.error).collect();
    let q = |p: f64| {
        if errors.is_empty() {
            f64::NAN
        } else {
            crate::metrics::quantile(&errors, p)
        }
    };
    // Lowest error, lowest spec index on ties (`got` is sorted by spec).
    let best = argmin(ok.iter().copied());
    let best_skill = got
        .iter()
        .map(|g| g.skill)
        .filter(|s| s.is_finite())
        .fold(f64::NAN, f64::max);
    let id = |g: &Got| inp.space.specs[g.spec].id.clone();
    let k = inp.settings.top_k;
    // One set of rows per native kind: the best spec among those holding that kind (the
    // report keeps the observed top spec's kind, so a draw's top is never of another kind).
    let mut kinds: Vec<&str> = ok
        .iter()
        .flat_map(|g| g.importance.iter().map(|r| r.kind))
        .filter(|k| NATIVE.contains(k))
        .collect();
    kinds.sort_unstable();
    kinds.dedup();
    let mut tops = Vec::new();
    for kind in kinds {
        let holds = |g: &&Got| g.importance.iter().any(|r| r.kind == kind);
        if let Some(g) = argmin(ok.iter().copied().filter(holds)) {
            let spec = id(g);
            tops.extend(
                g.importance
                    .iter()
                    .filter(|r| r.kind == kind)
                    .map(|r| TopRow {
                        draw: d as i64,
                        spec: spec.clone(),
                        level: r.level.to_string(),
                        kind: r.kind.to_string(),
                        name: r.name.to_string(),
                        importance: r.importance,
                        rank: r.rank as i64,
                        top: r.rank <= k && r.importance > 0.0,
                    }),
            );
        }
    }
    // goodranks: every ok spec within ranks_within of the best, every row it holds.
    let cut = best.map_or(f64::NAN, |g| g.error * (1.0 + inp.settings.ranks_within));
    let mut ranks = Vec::new();
    for g in ok.iter().filter(|g| g.error <= cut) {
        let spec = id(g);
        ranks.extend(g.importance.iter().map(|r| RankRow {
            draw: d as i64,
            spec: spec.clone(),
            error: g.error,
            level: r.level.to_string(),
            kind: r.kind.to_string(),
            name: r.name.to_string(),
            importance: r.importance,
            rank: r.rank as i64,
            in_pool: r.in_pool,
        }));
    }
    let row = DrawRow {
        draw: d as i64,
        seed: format!("{seed:016x}"),
        metric: inp.settings.metric.name().into(),
        best_error: best.map_or(f64::NAN, |g| g.error),
        q1_error: q(0.25),
        median_error: q(0.5),
        q3_error: q(0.75),
        best_skill,
        share_skill_positive: got.iter().filter(|g| g.skill > 0.0).count() as f64
            / n_specs.max(1) as f64,
        specs: n_specs as i64,
        n_ok: ok.len() as i64,
        best_spec: best.map(id),
    };
    (row, tops, ranks)
}

/// Draws complete in `out/null` and the draws asked (from its manifest); `None` when the
/// run directory holds no null.
pub fn progress_of(out: &Path) -> Result<Option<(usize, usize)>> {
    let null_dir = out.join(table::NULL_DIR);
    let manifest = null_dir.join(crate::schema::MANIFEST);
    if !manifest.exists() {
        return Ok(None);
    }
    let m: serde_json::Value = std::fs::read_to_string(&manifest)
        .ok()
        .and_then(|t| serde_json::from_str(&t).ok())
        .ok_or_else(|| io_out(&manifest, "unreadable null manifest".into()))?;
    let asked = m["draws"].as_u64().unwrap_or(0) as usize;
    let done = table::complete_files(&null_dir.join(DRAWS))?
        .iter()
        .filter(|(d, _)| (*d as usize) < asked)
        .count();
    Ok(Some((done, asked)))
}

/// `forkmap check`'s lines on the null of a whole-space run directory (`asked`: its
/// manifest says the config asks for a null) and whether the null is complete.
pub fn check_lines(out: &Path, asked: bool) -> Result<(Vec<String>, bool)> {
    Ok(match progress_of(out)? {
        Some((done, want)) if done >= want => (vec![format!("null       {done} of {want} draws")], true),
        Some((done, want)) => (
            vec![format!(
                "null       {done} of {want} draws (incomplete: rerun the same `forkmap run` to finish it; complete draws are kept)"
            )],
            false,
        ),
        None if asked => (
            vec!["null       not run yet (the config asks for one: rerun the same `forkmap run` on this directory)".into()],
            false,
        ),
        None => (Vec::new(), true),
    })
}

/// The draws of `mine` missing from `out/null` (no complete `draws` file), ascending.
pub fn missing_draws(out: &Path, mine: &[u64]) -> Result<Vec<u64>> {
    let have: Vec<u64> = table::complete_files(&out.join(table::NULL_DIR).join(DRAWS))?
        .into_iter()
        .map(|(d, _)| d)
        .collect();
    Ok(mine
        .iter()
        .copied()
        .filter(|d| have.binary_search(d).is_err())
        .collect())
}

/// Up to ten numbers, then how many more.
pub fn list<T: std::fmt::Display>(v: &[T]) -> String {
    let mut s: Vec<String> = v.iter().take(10).map(|x| x.to_string()).collect();
    if v.len() > 10 {
        s.push(format!("... ({} more)", v.len() - 10));
    }
    s.join(", ")
}

/// `forkmap check`'s line on a shard's share of the null (`mine`: its draws, from its run
/// manifest) and whether that share is complete.
pub fn shard_check_lines(out: &Path, shard: &str, mine: &[u64]) -> Result<(Vec<String>, bool)> {
    let missing = missing_draws(out, mine)?;
    Ok(share_lines(
        "null      ",
        shard,
        "draws",
        mine.len(),
        &missing,
        out,
        "; complete draws are kept",
    ))
}

/// `forkmap check`'s line on a shard's share of a derived pass (`unit`: what it is dealt,
/// `missing`: those not done) and whether that share is complete; shared by the null and
/// the nested estimate.
pub fn share_lines<T: std::fmt::Display>(
    tag: &str,
    shard: &str,
    unit: &str,
    total: usize,
    missing: &[T],
    out: &Path,
    kept: &str,
) -> (Vec<String>, bool) {
    let have = total - missing.len();
    if missing.is_empty() {
        return (
            vec![format!("{tag} shard {shard}: {have} of its {total} {unit}")],
            true,
        );
    }
    (
        vec![format!(
            "{tag} shard {shard}: {have} of its {total} {unit}; missing {unit} {} (rerun the same `forkmap run --shard {shard}` on {}{kept})",
            list(missing),
            out.display()
        )],
        false,
    )
}
