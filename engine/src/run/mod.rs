//! Running a sweep into a run directory: validate everything first, then write the
//! manifest, stream results into Parquet parts, and close the manifest.

pub mod extend;

use crate::config::Config;
use crate::error::{Error, Result};
use crate::folds::FoldPlan;
use crate::manifest::{Finish, FoldsInfo, Manifest, PassNote, RunState, Work};
use crate::panel::{self, Panel};
use crate::progress::Progress;
use crate::shard::Shard;
use crate::sink::{ParquetSink, TABLES};
use crate::space::ChoiceSpace;
use crate::sweep::{SpecResult, Sweep};
use sha2::{Digest, Sha256};
use std::collections::BTreeMap;
use std::io::Read;
use std::path::{Path, PathBuf};

/// A config with its panel, choice space and folds, all validated.
pub struct Prepared {
    pub cfg: Config,
    pub panel: Panel,
    pub space: ChoiceSpace,
    pub folds: FoldPlan,
    pub data_path: PathBuf,
    /// sha256 of the codebook file, when the config names one: part of the run's identity
    /// (a regrouped codebook changes every group importance), compared on resume, extend
    /// and gather like the data file's.
    pub codebook_sha256: Option<String>,
}

/// Read and check a config file and everything it names.
pub fn prepare(config: &Path) -> Result<Prepared> {
    let cfg = Config::from_file(config)?;
    prepare_config(cfg)
}

pub fn prepare_config(cfg: Config) -> Result<Prepared> {
    let panel = panel::load(&cfg)?;
    let space = ChoiceSpace::build(&cfg, &panel)?;
    let folds = FoldPlan::new(&panel, &cfg.folds, cfg.seed)?;
    let data_path = cfg.resolve(&cfg.data.file);
    let codebook_sha256 = match &cfg.data.codebook {
        Some(c) => Some(sha256_file(&cfg.resolve(c))?),
        None => None,
    };
    Ok(Prepared {
        cfg,
        panel,
        space,
        folds,
        data_path,
        codebook_sha256,
    })
}

/// sha256 of a file, hex.
pub fn sha256_file(path: &Path) -> Result<String> {
    let mut f = std::fs::File::open(path).map_err(|e| Error::io(path, e))?;
    let mut h = Sha256::new();
    let mut buf = vec![0u8; 1 << 16];
    loop {
        let n = f.read(&mut buf).map_err(|e| Error::io(path, e))?;
        if n == 0 {
            break;
        }
        h.update(&buf[..n]);
    }
    Ok(hex::encode(h.finalize()))
}

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

/// How a run starts in its folder.
enum Start {
    /// A new run; `created` when forkmap made the folder.
    Fresh { created: bool },
    /// The folder holds an unfinished (or finished) run of the same config and data.
    Resume {
        done: crate::resume::Done,
        manifest: Box<Manifest>,
        /// Set when the folder's run is extended with a larger config (`--extend`).
        extension: Option<Box<extend::Extension>>,
    },
}

fn out_err(out: &Path, msg: impl Into<String>) -> Error {
    Error::Output {
        path: out.into(),
        msg: msg.into(),
    }
}

fn open_out(
    p: &Prepared,
    out: &Path,
    sha: &str,
    restart: bool,
    shard: Option<crate::shard::Shard>,
    extend: bool,
) -> Result<Start> {
    if extend && !out.join(crate::schema::MANIFEST).is_file() {
        return Err(out_err(
            out,
            "holds no forkmap run to extend (--extend adds specs to a finished run)",
        ));
    }
    if !out.exists() {
        std::fs::create_dir_all(out).map_err(|e| out_err(out, format!("cannot create: {e}")))?;
        return Ok(Start::Fresh { created: true });
    }
    if !out.is_dir() {
        return Err(out_err(out, "exists and is not a directory"));
    }
    let manifest_path = out.join(crate::schema::MANIFEST);
    if manifest_path.exists() {
        let text = std::fs::read_to_string(&manifest_path)
            .map_err(|e| out_err(out, format!("cannot read manifest.json: {e}")))?;
        let m: serde_json::Value = serde_json::from_str(&text).map_err(|e| {
            out_err(
                out,
                format!("manifest.json is unreadable ({e}): use --restart to discard this run"),
            )
        })?;
        if m["tool"] != "forkmap" {
            return Err(out_err(
                out,
                "holds a manifest.json that is not forkmap's: choose a new --out (forkmap never mixes its results with other files)",
            ));
        }
        // A manifest of another forkmap version may not read as this one's: its version
        // differs, which resume refuses and --restart discards.
        let typed: std::result::Result<Manifest, String> = serde_json::from_value(m.clone())
            .map_err(|e| {
                format!(
                    "forkmap version ({}, this is {}; its manifest reads differently: {e})",
                    m["version"],
                    env!("CARGO_PKG_VERSION")
                )
            });
        let same = typed.as_ref().map_err(Clone::clone).and_then(|m| {
            crate::resume::same_run(
                m,
                &p.cfg.canonical_json(),
                sha,
                p.codebook_sha256.as_deref(),
            )
            .and_then(|()| {
                let want = shard.map(|s| s.to_string());
                if want == m.shard {
                    Ok(())
                } else {
                    Err(format!(
                        "shard ({}, this is {})",
                        m.shard.as_deref().unwrap_or("none"),
                        want.as_deref().unwrap_or("none")
                    ))
                }
            })
        });
        match (same, typed) {
            (Ok(()), Ok(m)) if !restart => {
                return Ok(Start::Resume {
                    done: crate::resume::scan(out)?,
                    manifest: Box::new(m),
                    extension: None,
                });
            }
            (Err(_), Ok(m)) if extend => {
                let ext = extend::check(&m, out, p, sha).map_err(|what| {
                    out_err(
                        out,
                        format!("cannot be extended with this config: its {what}"),
                    )
                })?;
                return Ok(Start::Resume {
                    done: crate::resume::scan(out)?,
                    manifest: Box::new(m),
                    extension: Some(Box::new(ext)),
                });
            }
            (Err(what), typed) if !restart => {
                let keeps = typed
                    .as_ref()
                    .is_ok_and(|m| extend::check(m, out, p, sha).is_ok());
                let hint = if shard.is_none() && keeps {
                    " (this config keeps every spec of that run: add --extend to run only its new specs)"
                } else {
                    ""
                };
                return Err(out_err(
                    out,
                    format!("holds a run whose {what} differs from this one: resume refused (use --restart to discard that run, or choose another --out){hint}"),
                ));
            }
            _ => {
                for t in TABLES.iter().chain(crate::schema::DERIVED_DIRS) {
                    let d = out.join(t);
                    if d.exists() {
                        std::fs::remove_dir_all(&d).map_err(|e| Error::io(&d, e))?;
                    }
                }
                std::fs::remove_file(&manifest_path).map_err(|e| Error::io(&manifest_path, e))?;
            }
        }
    }
    // A run killed before its manifest was written leaves only forkmap's own leftovers
    // (the manifest's temporary file, table folders without parts): start afresh.
    let entries: Vec<std::path::PathBuf> = std::fs::read_dir(out)
        .map_err(|e| out_err(out, format!("cannot read: {e}")))?
        .filter_map(|e| e.ok().map(|e| e.path()))
        .collect();
    let leftover = |p: &std::path::PathBuf| {
        let name = p.file_name().and_then(|n| n.to_str()).unwrap_or("");
        if name == ".manifest.json.tmp" {
            return true;
        }
        TABLES.contains(&name)
            && p.is_dir()
            && std::fs::read_dir(p)
                .map(|r| {
                    r.filter_map(|e| e.ok())
                        .all(|e| e.file_name().to_string_lossy().starts_with('.'))
                })
                .unwrap_or(false)
    };
    if !entries.is_empty() && entries.iter().all(leftover) {
        for p in &entries {
            let r = if p.is_dir() {
                std::fs::remove_dir_all(p)
            } else {
                std::fs::remove_file(p)
            };
            r.map_err(|e| Error::io(p, e))?;
        }
        return Ok(Start::Fresh { created: false });
    }
    if !entries.is_empty() {
        return Err(out_err(
            out,
            "already exists, is not empty and holds no forkmap run: choose a new --out (forkmap never mixes its results with other files)",
        ));
    }
    Ok(Start::Fresh { created: false })
}

/// The manifest written before the first spec (`status = "running"`); the finished run
/// rewrites it with `complete` and its [`Finish`].
fn manifest(
    p: &Prepared,
    sha: &str,
    threads: usize,
    started: &str,
    shard: Option<Shard>,
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
        resumes: 0,
        lineage: None,
        gathered_from: None,
        gathered: None,
        importance_pass_failures: None,
        finish: None,
    }
}

/// CPU seconds a stream spent in model fits and importances (summed over threads).
#[derive(Debug, Default, Clone, Copy)]
struct StreamWork {
    fit: f64,
    importance: f64,
}

/// Skills of the ok specs with a defined skill (spec index, skill), the number of ok
/// specs, and the work done.
type Streamed = (Vec<(usize, f64)>, usize, StreamWork);

/// Stream a sweep's results into a sink on `pool`, with progress; returns the skill of
/// every ok spec with a defined skill (by spec index), the number of ok specs, and the work
/// done.
fn stream(
    sweep: &Sweep,
    sink: &mut ParquetSink,
    pool: &rayon::ThreadPool,
    total: usize,
    quiet: bool,
    out: &Path,
) -> Result<Streamed> {
    let (tx, rx) = std::sync::mpsc::sync_channel::<SpecResult>(1024);
    let mut skills: Vec<(usize, f64)> = Vec::new();
    let mut ok = 0usize;
    let mut work = StreamWork::default();
    std::thread::scope(|s| {
        let writer = s.spawn(|| -> Result<()> {
            let mut progress = Progress::new(total, quiet);
            let mut failed: Option<Error> = None;
            for r in rx {
                progress.inc();
                work.fit += r.seconds;
                work.importance += r.importance_seconds;
                if failed.is_some() {
                    continue;
                }
                if r.status.is_ok() {
                    ok += 1;
                }
                if let Some(sc) = r.scores.as_ref().filter(|sc| sc.skill.is_finite()) {
                    skills.push((r.spec, sc.skill));
                }
                if let Err(e) = sink.accept(r) {
                    failed = Some(e);
                }
            }
            progress.finish();
            match failed {
                Some(e) => Err(e),
                None => sink.flush(),
            }
        });
        pool.install(|| {
            let emit = |r: SpecResult| {
                let _ = tx.send(r);
            };
            sweep.run(&emit);
        });
        drop(tx);
        writer.join().unwrap_or_else(|_| {
            Err(Error::Output {
                path: out.into(),
                msg: "result writer panicked".into(),
            })
        })
    })?;
    Ok((skills, ok, work))
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

/// Where a run starts: whether this invocation created the folder, the specs already done,
/// when the run first started, how often it was resumed, its lineage and, for an
/// extension, what the extension adds.
struct Begun {
    created: bool,
    done: crate::resume::Done,
    started: String,
    resumes: u64,
    lineage: Option<Vec<crate::manifest::Lineage>>,
    extension: Option<Box<extend::Extension>>,
}

/// Turn the output folder's state into a [`Begun`]; an extension first removes the
/// smaller run's report and curves.
fn begin(start: Start, out: &Path) -> Result<Begun> {
    Ok(match start {
        Start::Fresh { created } => Begun {
            created,
            done: crate::resume::Done::default(),
            started: chrono::Utc::now().to_rfc3339(),
            resumes: 0,
            lineage: None,
            extension: None,
        },
        Start::Resume {
            done,
            manifest,
            extension: Some(ext),
        } => {
            // The old report and curves describe a smaller run (its best spec and good
            // set): both go now; the report is rewritten at the end, the curves too
            // unless `--no-curves` (then there are none rather than stale ones).
            for dir in [crate::schema::REPORT_DIR, crate::schema::CURVES_DIR] {
                let d = out.join(dir);
                if d.is_dir() {
                    std::fs::remove_dir_all(&d).map_err(|e| Error::io(&d, e))?;
                }
            }
            Begun {
                created: false,
                done,
                started: manifest.started.clone(),
                resumes: 0,
                lineage: Some(ext.lineage.clone()),
                extension: Some(ext),
            }
        }
        Start::Resume {
            done,
            manifest,
            extension: None,
        } => Begun {
            created: false,
            done,
            started: manifest.started.clone(),
            resumes: manifest.resumes + 1,
            lineage: manifest.lineage.clone(),
            extension: None,
        },
    })
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
    let mine: Vec<usize> = match opts.shard {
        Some(sh) => crate::shard::assign(&p.space, &p.panel, sh),
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
    let mut first = manifest(p, &sha, opts.threads, &started, opts.shard, mine.len());
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
    // The permutation null (`[null]`), after the sweep is complete; a shard leaves it to
    // the gathered run.
    let null = match (&p.cfg.null, opts.shard) {
        (Some(n), None) => Some(crate::null::run::run_null(
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
            },
            out,
            &pool,
            opts.quiet,
        )?),
        _ => None,
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

/// The deferred permutation-importance pass: with `importance.within`, rerun the specs
/// whose skill is within that distance of the best (`skills`: spec index and skill of every
/// ok spec of the whole space) for the permutation kinds, into `part-iNNNNN` parts of
/// `out/importance`. Returns what the pass did, `None` when nothing is deferred.
pub fn permutation_pass(
    p: &Prepared,
    out: &Path,
    skills: &[(usize, f64)],
    pool: &rayon::ThreadPool,
    quiet: bool,
) -> Result<Option<PassSummary>> {
    let imp = &p.cfg.importance;
    let Some(within) = imp.within.filter(|_| imp.deferred()) else {
        return Ok(None);
    };
    let Some(top) = skills
        .iter()
        .map(|s| s.1)
        .filter(|s| s.is_finite())
        .max_by(f64::total_cmp)
    else {
        return Ok(None);
    };
    let mut subset: Vec<usize> = skills
        .iter()
        .filter(|(_, sk)| *sk >= top - within)
        .map(|(si, _)| *si)
        .collect();
    subset.sort_unstable();
    subset.dedup();
    if !quiet {
        eprintln!(
            "forkmap: permutation importances for the {} specs within {within} skill of the best",
            subset.len()
        );
    }
    let mut second = Sweep::new(&p.panel, &p.space, &p.folds, p.cfg.seed, Some(&subset))?;
    second.describe = false;
    second.importance = Some(imp.only(&["permutation", "group"]));
    let mut isink =
        ParquetSink::importance_pass(out, &p.space, &p.panel, p.cfg.output.batch_specs)?;
    stream(&second, &mut isink, pool, subset.len(), quiet, out)?;
    Ok(Some(PassSummary {
        specs: subset.len(),
        importance_failed: isink.importance_failed,
        notes: isink.pass_notes,
    }))
}

/// What the deferred permutation pass did.
#[derive(Debug, Clone, Default)]
pub struct PassSummary {
    /// Specs rerun.
    pub specs: usize,
    /// Of them, specs whose permutation importances could not be computed.
    pub importance_failed: usize,
    /// (spec id, `; `-joined notes) of rerun specs with notes.
    pub notes: Vec<(String, String)>,
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
