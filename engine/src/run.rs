//! Running a sweep into a run directory: validate everything first, then write the
//! manifest, stream results into Parquet parts, and close the manifest.

use crate::config::Config;
use crate::error::{Error, Result};
use crate::folds::FoldPlan;
use crate::panel::{self, Panel};
use crate::progress::Progress;
use crate::sink::{write_bytes_atomic, ParquetSink, TABLES};
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
    Ok(Prepared {
        cfg,
        panel,
        space,
        folds,
        data_path,
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
    pub specs: usize,
    pub ok: usize,
    pub failures: BTreeMap<&'static str, usize>,
    pub seconds: f64,
    pub best: Option<(String, f64)>,
}

/// Settings of one run.
pub struct RunOptions {
    pub threads: usize,
    pub quiet: bool,
    /// Discard a run of another config, data or version found in the folder.
    pub restart: bool,
}

/// How a run starts in its folder.
enum Start {
    /// A new run; `created` when forkmap made the folder.
    Fresh { created: bool },
    /// The folder holds an unfinished (or finished) run of the same config and data.
    Resume {
        done: crate::resume::Done,
        manifest: serde_json::Value,
    },
}

fn out_err(out: &Path, msg: impl Into<String>) -> Error {
    Error::Output {
        path: out.into(),
        msg: msg.into(),
    }
}

fn open_out(p: &Prepared, out: &Path, sha: &str, restart: bool) -> Result<Start> {
    if !out.exists() {
        std::fs::create_dir_all(out).map_err(|e| out_err(out, format!("cannot create: {e}")))?;
        return Ok(Start::Fresh { created: true });
    }
    if !out.is_dir() {
        return Err(out_err(out, "exists and is not a directory"));
    }
    let manifest_path = out.join("manifest.json");
    if manifest_path.exists() {
        let text = std::fs::read_to_string(&manifest_path)
            .map_err(|e| out_err(out, format!("cannot read manifest.json: {e}")))?;
        let m: serde_json::Value = serde_json::from_str(&text).map_err(|e| {
            out_err(
                out,
                format!("manifest.json is unreadable ({e}): use --restart to discard this run"),
            )
        })?;
        match crate::resume::same_run(&m, &p.cfg.canonical_json(), sha) {
            Ok(()) if !restart => {
                return Ok(Start::Resume {
                    done: crate::resume::scan(out)?,
                    manifest: m,
                });
            }
            Err(what) if !restart => {
                return Err(out_err(
                    out,
                    format!("holds a run whose {what} differs from this one: resume refused (use --restart to discard that run, or choose another --out)"),
                ));
            }
            _ => {
                for t in TABLES {
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

fn manifest(
    p: &Prepared,
    sha: &str,
    threads: usize,
    started: &str,
    status: &str,
    extra: serde_json::Value,
) -> serde_json::Value {
    let mut m = serde_json::json!({
        "tool": "forkmap",
        "version": env!("CARGO_PKG_VERSION"),
        "status": status,
        "config_file": p.cfg.source,
        "config": p.cfg.canonical_json(),
        "data_file": p.data_path.display().to_string(),
        "data_sha256": sha,
        "seed": p.cfg.seed,
        "threads": threads,
        "started": started,
        "specs": p.space.specs.len(),
                "excluded": p.space.excluded,
        "sampled_from": p.space.sampled_from,
        "exclusions": p.space.exclusion_rules,
        "rows": p.panel.n_rows(),
        "units": p.panel.n_units(),
        "indicators": p.panel.indicators.len(),
        "folds": {"scheme": p.cfg.folds.scheme, "k": p.folds.k, "repeats": p.folds.repeats, "fits_per_spec": p.folds.n_fits_per_spec()},
        "tables": TABLES,
    });
    if let (Some(obj), serde_json::Value::Object(e)) = (m.as_object_mut(), extra) {
        obj.extend(e);
    }
    m
}

/// Stream a sweep's results into a sink on `pool`, with progress; returns the skill of
/// every ok spec (by spec index).
fn stream(
    sweep: &Sweep,
    sink: &mut ParquetSink,
    pool: &rayon::ThreadPool,
    total: usize,
    quiet: bool,
    out: &Path,
) -> Result<Vec<(usize, f64)>> {
    let (tx, rx) = std::sync::mpsc::sync_channel::<SpecResult>(1024);
    let mut skills: Vec<(usize, f64)> = Vec::new();
    std::thread::scope(|s| {
        let writer = s.spawn(|| -> Result<()> {
            let mut progress = Progress::new(total, quiet);
            let mut failed: Option<Error> = None;
            for r in rx {
                progress.inc();
                if failed.is_some() {
                    continue;
                }
                if let Some(sc) = &r.scores {
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
    Ok(skills)
}

/// Run every spec of `p` into `out`.
pub fn run_to_dir(p: &Prepared, out: &Path, opts: &RunOptions) -> Result<RunSummary> {
    let imp = &p.cfg.importance;
    let mut sweep = Sweep::new(&p.panel, &p.space, &p.folds, p.cfg.seed, None)?;
    // With `importance.within`, the permutation kinds wait for a second pass over the
    // specs near the best; the first pass computes the native kind only.
    sweep.importance = Some(if imp.deferred() {
        imp.only(&["native"])
    } else {
        imp.clone()
    });
    let sha = sha256_file(&p.data_path)?;
    let start = open_out(p, out, &sha, opts.restart)?;
    let t0 = std::time::Instant::now();
    let manifest_path = out.join("manifest.json");
    let (created, done, started, resumes) = match start {
        Start::Fresh { created } => (
            created,
            crate::resume::Done::default(),
            chrono::Utc::now().to_rfc3339(),
            0u64,
        ),
        Start::Resume { done, manifest } => {
            let started = manifest["started"]
                .as_str()
                .map(str::to_string)
                .unwrap_or_else(|| chrono::Utc::now().to_rfc3339());
            (
                false,
                done,
                started,
                manifest["resumes"].as_u64().unwrap_or(0) + 1,
            )
        }
    };
    let todo: Vec<usize> = (0..p.space.specs.len())
        .filter(|&i| !done.ids.contains(&p.space.specs[i].id))
        .collect();
    if resumes > 0 {
        sweep = Sweep::new(&p.panel, &p.space, &p.folds, p.cfg.seed, Some(&todo))?;
        sweep.importance = Some(if imp.deferred() {
            imp.only(&["native"])
        } else {
            imp.clone()
        });
        if !opts.quiet {
            eprintln!(
                "forkmap: resuming: {} specs done, {} to run",
                done.ids.len(),
                todo.len()
            );
        }
    }
    let first = manifest(
        p,
        &sha,
        opts.threads,
        &started,
        "running",
        serde_json::json!({ "resumes": resumes }),
    );
    if let Err(e) = write_bytes_atomic(
        &manifest_path,
        serde_json::to_string_pretty(&first)
            .unwrap_or_default()
            .as_bytes(),
    ) {
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
    let mut skills = stream(&sweep, &mut sink, &pool, todo.len(), opts.quiet, out)?;
    let index: std::collections::HashMap<&str, usize> = p
        .space
        .specs
        .iter()
        .enumerate()
        .map(|(i, s)| (s.id.as_str(), i))
        .collect();
    skills.extend(
        done.skills
            .iter()
            .filter_map(|(id, sk)| index.get(id.as_str()).map(|&i| (i, *sk))),
    );
    let mut failures = sink.failures.clone();
    for cause in &done.failed {
        *failures.entry(crate::error::cause_name(cause)).or_default() += 1;
    }
    let ok = skills.len();
    let best = skills
        .iter()
        .max_by(|a, b| a.1.total_cmp(&b.1))
        .map(|&(si, sk)| (p.space.specs[si].id.clone(), sk));
    let mut importance_specs = serde_json::Value::Null;
    if let (Some(within), Some((_, top))) = (imp.within.filter(|_| imp.deferred()), &best) {
        let mut subset: Vec<usize> = skills
            .iter()
            .filter(|(_, sk)| *sk >= top - within)
            .map(|(si, _)| *si)
            .collect();
        subset.sort_unstable();
        if !opts.quiet {
            eprintln!("forkmap: permutation importances for the {} specs within {within} skill of the best", subset.len());
        }
        let mut second = Sweep::new(&p.panel, &p.space, &p.folds, p.cfg.seed, Some(&subset))?;
        second.describe = false;
        second.importance = Some(imp.only(&["permutation", "group"]));
        let mut isink =
            ParquetSink::importance_pass(out, &p.space, &p.panel, p.cfg.output.batch_specs)?;
        stream(&second, &mut isink, &pool, subset.len(), opts.quiet, out)?;
        importance_specs = serde_json::json!(subset.len());
    }
    let seconds = t0.elapsed().as_secs_f64();
    let written = sink.written_specs + done.ids.len();
    let extra = serde_json::json!({
        "finished": chrono::Utc::now().to_rfc3339(),
        "seconds": seconds,
        "specs_ok": ok,
        "failures": failures,
        "specs_written": written,
        "resumes": resumes,
        "importance_within": imp.within,
        "importance_permutation_specs": importance_specs,
    });
    let last = manifest(p, &sha, opts.threads, &started, "complete", extra);
    write_bytes_atomic(
        &manifest_path,
        serde_json::to_string_pretty(&last)
            .unwrap_or_default()
            .as_bytes(),
    )?;
    Ok(RunSummary {
        specs: sink.written_specs,
        ok,
        failures,
        seconds,
        best,
    })
}
