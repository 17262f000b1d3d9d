//! Gathering a complete set of shard directories into one run directory that is, table by
//! table and row by row, the run a single machine would have made.
//!
//! Gathering is all or nothing: parts are copied (renumbered) into a hidden sibling of the
//! target, fsynced, the deferred permutation-importance pass (`importance.within`) runs
//! there over the whole space, the manifest is written, and only then is the folder renamed
//! into place. An interrupted gather leaves no target; running it again starts over. The
//! shards' shares of the permutation null and the nested estimate are checked first and
//! copied with the parts ([`derived`]).

use crate::error::{Error, Result};
use crate::manifest::{Gathered, RunState};
use crate::results::RunSet;
use crate::run::{prepare, sha256_file};
use crate::sink::TABLES;
use std::path::{Path, PathBuf};

pub mod derived;

pub struct GatherOptions {
    pub threads: usize,
    pub quiet: bool,
    /// The sweep config, needed when the shards deferred permutation importances (else the
    /// config file named in the manifests is tried).
    pub config: Option<PathBuf>,
}

#[derive(Debug)]
pub struct GatherSummary {
    pub dirs: usize,
    pub specs: usize,
    pub parts: usize,
    pub permutation_specs: Option<usize>,
    /// Null draws and nested outer folds gathered from the shards (when they ran them).
    pub null_draws: Option<usize>,
    pub nested_folds: Option<usize>,
}

fn out_err(path: &Path, msg: impl Into<String>) -> Error {
    Error::Output {
        path: path.to_path_buf(),
        msg: msg.into(),
    }
}

fn fsync_dir(dir: &Path) -> Result<()> {
    std::fs::File::open(dir)
        .and_then(|f| f.sync_all())
        .map_err(|e| Error::io(dir, e))
}

fn copy_synced(from: &Path, to: &Path) -> Result<()> {
    std::fs::copy(from, to)
        .map_err(|e| out_err(to, format!("cannot copy {}: {e}", from.display())))?;
    std::fs::File::open(to)
        .and_then(|f| f.sync_all())
        .map_err(|e| Error::io(to, e))
}

/// Gather `set` into the new run directory `out`.
pub fn gather(set: &RunSet, out: &Path, opts: &GatherOptions) -> Result<GatherSummary> {
    let c = set.completeness();
    if !c.is_complete() {
        return Err(out_err(
            out,
            format!(
                "not written: the run set is not complete\n  {}",
                c.describe().join("\n  ")
            ),
        ));
    }
    let out_empty_dir = out.is_dir()
        && std::fs::read_dir(out)
            .map(|mut r| r.next().is_none())
            .unwrap_or(false);
    if out.exists() && !out_empty_dir {
        return Err(out_err(
            out,
            "already exists and is not empty: choose a new --out",
        ));
    }
    let name = out
        .file_name()
        .and_then(|n| n.to_str())
        .ok_or_else(|| out_err(out, "needs a folder name"))?;
    let parent = match out.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    if !parent.is_dir() {
        return Err(out_err(out, "its parent folder does not exist"));
    }
    // The null's and nested estimate's shares: identities agree, nothing missing.
    let derived = derived::check(set, out)?;
    let tmp = parent.join(format!(".{name}.forkmap-gather"));
    if tmp.exists() {
        std::fs::remove_dir_all(&tmp).map_err(|e| Error::io(&tmp, e))?;
    }
    let result = write_gathered(set, &tmp, opts, &c, &derived);
    let summary = match result {
        Ok(s) => s,
        Err(e) => {
            let _ = std::fs::remove_dir_all(&tmp);
            return Err(e);
        }
    };
    if out_empty_dir {
        std::fs::remove_dir(out).map_err(|e| Error::io(out, e))?;
    }
    std::fs::rename(&tmp, out)
        .map_err(|e| out_err(out, format!("cannot move the gathered run into place: {e}")))?;
    fsync_dir(&parent)?;
    Ok(summary)
}

fn write_gathered(
    set: &RunSet,
    tmp: &Path,
    opts: &GatherOptions,
    c: &crate::results::Completeness,
    derived: &derived::Derived,
) -> Result<GatherSummary> {
    for t in TABLES {
        let d = tmp.join(t);
        std::fs::create_dir_all(&d).map_err(|e| out_err(&d, format!("cannot create: {e}")))?;
    }
    let parts = set.parts();
    for (k, (dir, part)) in parts.iter().enumerate() {
        let new = format!("part-{k:05}.parquet");
        for t in TABLES {
            let from = dir.join(t).join(part);
            if from.is_file() {
                copy_synced(&from, &tmp.join(t).join(&new))?;
            }
        }
    }
    let mut permutation_specs = None;
    let mut importance_failures: Option<usize> = None;
    if !set.importance_pending() {
        // A finished whole-space run keeps its own permutation pass.
        let mut k = 0;
        for d in &set.dirs {
            for f in crate::results::second_pass_parts(&d.path.join(crate::schema::IMPORTANCE)) {
                copy_synced(
                    &f,
                    &tmp.join(crate::schema::IMPORTANCE)
                        .join(format!("part-i{k:05}.parquet")),
                )?;
                k += 1;
            }
        }
    } else {
        let cfg_path = match &opts.config {
            Some(p) => p.clone(),
            None => Some(PathBuf::from(&set.manifest().config_file))
                .filter(|p| p.is_file())
                .ok_or_else(|| {
                    out_err(
                        tmp,
                        "the shards deferred their permutation importances (importance.within) and the config file named in their manifest is not here: pass --config CONFIG",
                    )
                })?,
        };
        let p = prepare(&cfg_path)?;
        let sha = sha256_file(&p.data_path)?;
        crate::resume::same_run(
            set.manifest(),
            &p.cfg.canonical_json(),
            &sha,
            p.codebook_sha256.as_deref(),
        ).map_err(|what| {
            Error::Config {
                file: cfg_path.display().to_string(),
                msg: format!("its {what} differs from the shards' run: cannot finish their importance pass with it"),
            }
        })?;
        let index = p.space.index_by_id();
        let mut skills: Vec<(usize, f64)> = Vec::new();
        for d in &set.dirs {
            for (id, sk) in d.done.skills.iter().filter(|(_, sk)| sk.is_finite()) {
                if let Some(&i) = index.get(id.as_str()) {
                    skills.push((i, *sk));
                }
            }
        }
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(opts.threads)
            .build()
            .map_err(|e| out_err(tmp, format!("cannot start {} threads: {e}", opts.threads)))?;
        permutation_specs =
            crate::run::permutation_pass(&p, tmp, &skills, &pool, opts.quiet)?.map(|pass| {
                importance_failures = Some(pass.importance_failed);
                pass.specs
            });
    }
    for t in TABLES {
        fsync_dir(&tmp.join(t))?;
    }
    derived::copy(derived, tmp, copy_synced, fsync_dir)?;
    let mut m = set.manifest().clone();
    m.shard_draws = None;
    m.shard_folds = None;
    let seconds: f64 = set.dirs.iter().filter_map(|d| d.manifest.seconds()).sum();
    m.status = RunState::Complete;
    m.shard = None;
    m.shard_specs = Some(c.total);
    m.gathered_from = Some(
        set.dirs
            .iter()
            .map(|d| Gathered {
                path: d.path.display().to_string(),
                shard: d.shard.map(|s| s.to_string()),
                specs: d.done.ids.len(),
                seconds: d.manifest.seconds(),
            })
            .collect(),
    );
    m.gathered = Some(chrono::Utc::now().to_rfc3339());
    m.importance_pass_failures = importance_failures;
    let mut finish = m.finish.take().unwrap_or_default();
    finish.seconds = Some(seconds);
    finish.specs_written = Some(c.present);
    finish.specs_ok = Some(c.ok);
    finish.failures = c
        .failures
        .iter()
        .map(|(k, v)| (k.to_string(), *v))
        .collect();
    finish.specs_with_notes = Some(set.dirs.iter().map(|d| d.done.noted).sum::<usize>());
    finish.importance_pending = false;
    if permutation_specs.is_some() || set.importance_pending() {
        finish.importance_permutation_specs = permutation_specs;
    }
    m.finish = Some(finish);
    m.write(tmp)?;
    fsync_dir(tmp)?;
    Ok(GatherSummary {
        dirs: set.dirs.len(),
        specs: c.present,
        parts: parts.len(),
        permutation_specs,
        null_draws: derived.draws(),
        nested_folds: derived.folds(),
    })
}
