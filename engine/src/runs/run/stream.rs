//! Streaming a sweep's results into Parquet parts with progress, and the deferred
//! permutation-importance pass (a second stream over the specs near the best).

use super::*;

/// CPU seconds a stream spent in model fits and importances (summed over threads).
#[derive(Debug, Default, Clone, Copy)]
pub(super) struct StreamWork {
    pub(super) fit: f64,
    pub(super) importance: f64,
}

/// Skills of the ok specs with a defined skill (spec index, skill), the number of ok
/// specs, and the work done.
pub(super) type Streamed = (Vec<(usize, f64)>, usize, StreamWork);

/// Stream a sweep's results into a sink on `pool`, with progress; returns the skill of
/// every ok spec with a defined skill (by spec index), the number of ok specs, and the work
/// done.
pub(super) fn stream(
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
