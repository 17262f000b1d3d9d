//! Running a sweep into a run directory: validate everything first, then write the
//! manifest, stream results into Parquet parts, and close the manifest.

pub mod extend;
mod open;
pub mod share;
mod stream;

pub use crate::choices::prepared::{prepare, prepare_config, sha256_file, Prepared};
use open::*;
use stream::*;
pub use stream::{permutation_pass, PassSummary};

use crate::error::{Error, Result};
use crate::manifest::{Finish, FoldsInfo, Manifest, PassNote, RunState, Work};
use crate::progress::Progress;
use crate::shard::Shard;
use crate::sink::{ParquetSink, TABLES};
use crate::sweep::{SpecResult, Sweep};
use std::collections::BTreeMap;
use std::path::Path;

/// What a run did.
#[derive(Debug, Clone)]
pub struct RunSummary {
    /// Specs of the run directory written so far (a resumed or extended run counts its
    /// earlier specs too, as `ok` and `failures` do).
    pub specs: usize,
    pub ok: usize,
    pub failures: BTreeMap<&'static str, usize>,
    /// Specs with notes (this invocation's specs; see the `notes` column of `specs`).
    pub noted: usize,
    /// Specs whose importances could not be computed (this invocation, both passes).
    pub importance_failed: usize,
    pub seconds: f64,
    pub best: Option<(String, f64)>,
    /// The permutation null, when the config asks for one and this is a whole-space run.
    pub null: Option<crate::null::run::NullSummary>,
}

/// Settings of one run.
pub struct RunOptions {
    pub threads: usize,
    pub quiet: bool,
    /// Discard a run of another config, data or version found in the folder.
    pub restart: bool,
    /// Run only this shard of the specs.
    pub shard: Option<crate::shard::Shard>,
}

/// The manifest written before the first spec (`status = "running"`); the finished run
/// rewrites it with `complete` and its [`Finish`].
fn manifest(
    p: &Prepared,
    sha: &str,
    threads: usize,
    started: &str,
    shard: Option<Shard>,
    share: Option<&share::Share>,
    shard_specs: usize,
) -> Manifest {
    let json = |v: Option<serde_json::Value>| v.unwrap_or(serde_json::Value::Null);
    Manifest {
        tool: "forkmap".into(),
        version: env!("CARGO_PKG_VERSION").into(),
        status: RunState::Running,
        config_file: p.cfg.source.clone(),
        config: p.cfg.canonical_json(),
        data_file: p.data_path.display().to_string(),
        data_sha256: sha.into(),
        codebook_sha256: p.codebook_sha256.clone(),
        seed: p.cfg.seed,
        threads,
        started: started.into(),
        specs: p.space.specs.len(),
        excluded: p.space.excluded,
        sampled_from: p.space.sampled_from,
        exclusions: p.space.exclusion_rules.clone(),
        rows: p.panel.n_rows(),
        units: p.panel.n_units(),
        indicators: p.panel.indicators.len(),
        folds: FoldsInfo {
            scheme: serde_json::to_value(p.cfg.folds.scheme)
                .ok()
                .and_then(|v| v.as_str().map(str::to_string))
                .unwrap_or_default(),
            k: p.folds.k,
            repeats: p.folds.repeats,
            fits_per_spec: p.folds.n_fits_per_spec(),
        },
        tables: TABLES.iter().map(|t| t.to_string()).collect(),
        map: json(serde_json::to_value(&p.cfg.map).ok()),
        curves: json(serde_json::to_value(&p.cfg.curves).ok()),
        null: json(serde_json::to_value(&p.cfg.null).ok()),
        shard: shard.map(|s| s.to_string()),
        shard_specs: Some(shard_specs),
        shard_draws: share.and_then(|s| s.draws.clone()),
        shard_folds: share.and_then(|s| s.folds.clone()),
        resumes: 0,
        lineage: None,
        gathered_from: None,
        gathered: None,
        importance_pass_failures: None,
        finish: None,
    }
}

/// Run every spec of `p` into `out`.
pub fn run_to_dir(p: &Prepared, out: &Path, opts: &RunOptions) -> Result<RunSummary> {
    run_inner(p, out, opts, false)
}

/// Extend the finished run in `out` with `p`, a config whose space holds every spec of
/// the run: run only the new specs (see [`extend`]). A run of this same config in
/// `out` is resumed as by [`run_to_dir`].
pub fn extend_dir(p: &Prepared, out: &Path, opts: &RunOptions) -> Result<RunSummary> {
    if opts.shard.is_some() || opts.restart {
        return Err(out_err(
            out,
            "--extend takes neither --shard (shards are not extended: gather them, then extend the gathered run) nor --restart",
        ));
    }
    run_inner(p, out, opts, true)
}

/// The sweep of the specs `subset` (all when `None`) with the importances of its first
/// pass: with `importance.within`, the permutation kinds wait for a second pass over the
/// specs near the best, so the first computes the native kind only.
fn first_pass_sweep<'a>(p: &'a Prepared, subset: Option<&[usize]>) -> Result<Sweep<'a>> {
    let imp = &p.cfg.importance;
    let mut sweep = Sweep::new(&p.panel, &p.space, &p.folds, p.cfg.seed, subset)?;
    sweep.importance = Some(if imp.deferred() {
        imp.only(&["native"])
    } else {
        imp.clone()
    });
    Ok(sweep)
}

fn run_inner(p: &Prepared, out: &Path, opts: &RunOptions, extend: bool) -> Result<RunSummary> {
    let imp = &p.cfg.importance;
    let mut sweep = first_pass_sweep(p, None)?;
    let sha = sha256_file(&p.data_path)?;
    if let Some(sh) = opts.shard {
        crate::shard::check(&p.space, sh)?;
    }
    let start = open_out(p, out, &sha, opts.restart, opts.shard, extend)?;
    let t0 = std::time::Instant::now();
    let Begun {
        created,
        done,
        started,
        resumes,
        lineage,
        extension,
    } = begin(start, out)?;
    let share = opts.shard.map(|sh| share::share(p, sh));
    let mine: Vec<usize> = match &share {
        Some(s) => s.specs.clone(),
        None => (0..p.space.specs.len()).collect(),
    };
    let todo: Vec<usize> = mine
        .iter()
        .copied()
        .filter(|&i| !done.ids.contains(&p.space.specs[i].id))
        .collect();
    if todo.len() < p.space.specs.len() {
        sweep = first_pass_sweep(p, Some(&todo))?;
        if let (false, Some(ext)) = (opts.quiet, &extension) {
            eprintln!(
                "forkmap: extending: {} specs kept, {} new to run",
                ext.old,
                todo.len()
            );
        } else if !opts.quiet && resumes > 0 {
            eprintln!(
                "forkmap: resuming: {} specs done, {} to run",
                done.ids.len(),
                todo.len()
            );
        }
    }
    let mut first = manifest(
        p,
        &sha,
        opts.threads,
        &started,
        opts.shard,
        share.as_ref(),
        mine.len(),
    );
    first.resumes = resumes;
    first.lineage = lineage.clone();
    if let Err(e) = first.write(out) {
        if created {
            let _ = std::fs::remove_dir_all(out);
        }
        return Err(Error::Output {
            path: out.into(),
            msg: format!("cannot write: {e}"),
        });
    }
    let mut sink = ParquetSink::new(out, &p.space, &p.panel, p.cfg.output.batch_specs)?
        .starting_at(done.next_part);
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(opts.threads)
        .build()
        .map_err(|e| Error::Output {
            path: out.into(),
            msg: format!("cannot start {} threads: {e}", opts.threads),
        })?;
    let (mut skills, ok_now, work) = stream(&sweep, &mut sink, &pool, todo.len(), opts.quiet, out)
        .map_err(|e| resumable(e, sink.written_specs + done.ids.len()))?;
    let sweep_wall = t0.elapsed().as_secs_f64();
    let index = p.space.index_by_id();
    skills.extend(
        done.skills
            .iter()
            .filter(|(_, sk)| sk.is_finite())
            .filter_map(|(id, sk)| index.get(id.as_str()).map(|&i| (i, *sk))),
    );
    let mut failures = sink.failures.clone();
    for (_, cause) in &done.failed {
        *failures.entry(cause.name()).or_default() += 1;
    }
    let ok = ok_now + done.skills.len();
    let best = skills
        .iter()
        .max_by(|a, b| a.1.total_cmp(&b.1))
        .map(|&(si, sk)| (p.space.specs[si].id.clone(), sk));
    // The deferred permutation pass needs the best skill of the whole space, which a
    // shard does not know: `forkmap gather` runs it over the gathered shards.
    let pending = imp.deferred() && opts.shard.is_some();
    let (importance_specs, pass) = if pending {
        (None, None)
    } else {
        match permutation_pass(p, out, &skills, &pool, opts.quiet)? {
            Some(pass) => (Some(pass.specs), Some(pass)),
            None => (None, None),
        }
    };
    let importance_failed =
        sink.importance_failed + pass.as_ref().map_or(0, |x| x.importance_failed);
    let seconds = t0.elapsed().as_secs_f64();
    let written = sink.written_specs + done.ids.len();
    let mut last = first;
    last.status = RunState::Complete;
    last.lineage = lineage.as_deref().map(extend::finish_lineage);
    last.finish = Some(Finish {
        finished: Some(chrono::Utc::now().to_rfc3339()),
        seconds: Some(seconds),
        specs_written: Some(written),
        specs_ok: Some(ok),
        failures: failures.iter().map(|(k, v)| (k.to_string(), *v)).collect(),
        // Specs of this invocation with notes (`notes` column of `specs`), and those
        // whose importances could not be computed.
        specs_with_notes: Some(sink.noted + done.noted),
        importance_failures: Some(importance_failed),
        importance_pass_notes: pass.as_ref().map(|x| {
            x.notes
                .iter()
                .map(|(id, n)| PassNote {
                    spec_id: id.clone(),
                    notes: n.clone(),
                })
                .collect()
        }),
        skipped_columns: p.panel.skipped.clone(),
        importance_within: imp.within,
        importance_permutation_specs: importance_specs,
        importance_pending: pending,
        work: Some(Work {
            sweep_wall_seconds: sweep_wall,
            threads: opts.threads,
            stage_seconds: sweep.stage_seconds(),
            fit_seconds: work.fit,
            importance_seconds: work.importance,
            other_share: 1.0
                - (sweep.stage_seconds() + work.fit + work.importance)
                    / (sweep_wall * opts.threads as f64).max(1e-9),
        }),
    });
    last.write(out)?;
    // The permutation null (`[null]`), after the sweep is complete; a shard runs the
    // draws dealt to it (`share`), which `gather` joins.
    let null = match &p.cfg.null {
        Some(n) => Some(crate::null::run::run_null(
            &crate::null::run::NullInput {
                panel: &p.panel,
                space: &p.space,
                folds: &p.folds,
                seed: p.cfg.seed,
                settings: n.check(&p.cfg.map.metric).map_err(Error::Space)?,
                run_config: p.cfg.canonical_json(),
                data_sha256: sha.clone(),
                share_stages: true,
                repeats: p.cfg.importance.repeats,
                shard: opts.shard.zip(share.as_ref().and_then(|s| s.draws.clone())),
            },
            out,
            &pool,
            opts.quiet,
        )?),
        None => None,
    };
    Ok(RunSummary {
        null,
        specs: written,
        ok,
        failures,
        noted: sink.noted,
        importance_failed,
        seconds,
        best,
    })
}

/// A write failure mid-run (disk full, folder gone read-only) ends the run with the
/// complete parts kept: say so, and how to go on.
fn resumable(e: Error, kept: usize) -> Error {
    match e {
        Error::Write { path, msg } => Error::Write {
            path,
            msg: format!("{msg}; the {kept} specs in complete parts are kept: free space (or fix the folder) and rerun the same command to resume"),
        },
        Error::Io { path, source } => Error::Write {
            path,
            msg: format!("{source}; the {kept} specs in complete parts are kept: free space (or fix the folder) and rerun the same command to resume"),
        },
        other => other,
    }
}
