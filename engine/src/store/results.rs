//! Reading results: one run directory, several, or a folder of shard directories, taken
//! as one run. Every verb that reads results opens them through [`RunSet::open`], which
//! checks that the directories belong to the same config, data and forkmap version and
//! reports how complete the set is (missing shards, unfinished shards, specs present in
//! more than one directory, failures by cause).
//!
//! Nothing here changes a run directory: interrupted runs are read as they are (only the
//! batches whose specs part is in place count; orphan parts are ignored).

use crate::error::{Error, Result};
use crate::manifest::Manifest;
use crate::resume::{read_done, Done};
use crate::shard::Shard;
use crate::sink::TABLES;
use std::collections::{BTreeMap, BTreeSet, HashMap, HashSet};
use std::path::{Path, PathBuf};

/// One run directory as read.
#[derive(Debug)]
pub struct RunDir {
    pub path: PathBuf,
    pub manifest: Manifest,
    /// `None` for a run of the whole space.
    pub shard: Option<Shard>,
    /// Specs this directory should hold when complete.
    pub expected: usize,
    pub done: Done,
    /// Names of the complete specs parts (`part-NNNNN.parquet`), in part order.
    pub parts: Vec<String>,
}

impl RunDir {
    fn open(path: &Path) -> Result<RunDir> {
        let mpath = path.join(crate::schema::MANIFEST);
        let manifest = Manifest::read(path)?;
        let shard = match manifest.shard.as_deref() {
            Some(s) => Some(s.parse::<Shard>().map_err(|e| Error::Output {
                path: mpath.clone(),
                msg: format!("bad shard field: {e}"),
            })?),
            None => None,
        };
        let total = manifest.specs;
        let expected = match shard {
            Some(_) => manifest.shard_specs.unwrap_or(0),
            None => total,
        };
        let (done, complete) = read_done(path)?;
        let mut parts: Vec<String> = complete.into_iter().collect();
        parts.sort();
        Ok(RunDir {
            path: path.to_path_buf(),
            manifest,
            shard,
            expected,
            done,
            parts,
        })
    }

    /// Finished: the manifest says so and every expected spec has its row.
    pub fn complete(&self) -> bool {
        self.manifest.complete() && self.done.ids.len() >= self.expected
    }
}

/// Several run directories read as one run.
#[derive(Debug)]
pub struct RunSet {
    /// Sharded runs sorted by shard index, a whole-space run first.
    pub dirs: Vec<RunDir>,
}

/// How complete a run set is.
#[derive(Debug, Default)]
pub struct Completeness {
    /// Specs of the whole space.
    pub total: usize,
    /// Distinct specs with a row.
    pub present: usize,
    /// Shards (of `count`) with no directory.
    pub missing_shards: Vec<Shard>,
    /// Directories that are not finished: (path, specs present, specs expected).
    pub unfinished: Vec<(PathBuf, usize, usize)>,
    /// Specs with a row in more than one directory: id -> directories.
    pub duplicated: BTreeMap<String, Vec<PathBuf>>,
    /// Failed specs by cause.
    pub failures: BTreeMap<String, usize>,
    /// Ok specs.
    pub ok: usize,
}

impl Completeness {
    pub fn is_complete(&self) -> bool {
        self.missing_shards.is_empty()
            && self.unfinished.is_empty()
            && self.duplicated.is_empty()
            && self.present == self.total
    }

    /// Human-readable lines, for `check` and for refusals.
    pub fn describe(&self) -> Vec<String> {
        let mut out = vec![format!(
            "specs      {} of {} present ({} ok, {} failed)",
            self.present,
            self.total,
            self.ok,
            self.failures.values().sum::<usize>()
        )];
        for (cause, n) in &self.failures {
            out.push(format!("  failed: {cause}: {n}"));
        }
        for s in &self.missing_shards {
            out.push(format!(
                "missing    shard {s}: no directory holds it (run it with --shard {s})"
            ));
        }
        for (p, have, want) in &self.unfinished {
            out.push(format!(
                "unfinished {}: {have} of {want} specs (rerun the same command to resume it)",
                p.display()
            ));
        }
        if !self.duplicated.is_empty() {
            out.push(format!(
                "duplicated {} specs present in more than one directory",
                self.duplicated.len()
            ));
            for (id, dirs) in self.duplicated.iter().take(5) {
                let ds: Vec<String> = dirs.iter().map(|d| d.display().to_string()).collect();
                out.push(format!("  spec {id}: {}", ds.join(", ")));
            }
        }
        out
    }
}

fn is_run(p: &Path) -> bool {
    p.join(crate::schema::MANIFEST).is_file()
}

impl RunSet {
    /// Open run directories; a path that holds no run but run folders (a folder of shard
    /// directories) stands for those folders.
    pub fn open(paths: &[PathBuf]) -> Result<RunSet> {
        if paths.is_empty() {
            return Err(Error::Space("no run directories given".into()));
        }
        let mut found: Vec<PathBuf> = Vec::new();
        for p in paths {
            if is_run(p) {
                found.push(p.clone());
                continue;
            }
            if !p.is_dir() {
                return Err(Error::Output {
                    path: p.clone(),
                    msg: "no such run directory".into(),
                });
            }
            let mut subs: Vec<PathBuf> = std::fs::read_dir(p)
                .map_err(|e| Error::io(p, e))?
                .filter_map(|e| e.ok().map(|e| e.path()))
                .filter(|s| is_run(s))
                .collect();
            if subs.is_empty() {
                return Err(Error::Output {
                    path: p.clone(),
                    msg: "holds no forkmap run (no manifest.json) and no run directories".into(),
                });
            }
            subs.sort();
            found.extend(subs);
        }
        let mut seen = HashSet::new();
        found.retain(|p| {
            let key = std::fs::canonicalize(p).unwrap_or_else(|_| p.clone());
            seen.insert(key)
        });
        let mut dirs: Vec<RunDir> = found
            .iter()
            .map(|p| RunDir::open(p))
            .collect::<Result<_>>()?;
        let first = &dirs[0];
        for d in &dirs[1..] {
            for (same, what) in [
                (
                    d.manifest.version == first.manifest.version,
                    "forkmap version",
                ),
                (
                    d.manifest.data_sha256 == first.manifest.data_sha256,
                    "data file (sha256)",
                ),
                (d.manifest.config == first.manifest.config, "config"),
            ] {
                if !same {
                    return Err(Error::Output {
                        path: d.path.clone(),
                        msg: format!(
                            "its {what} differs from that of {}: these are not parts of one run",
                            first.path.display()
                        ),
                    });
                }
            }
            if let (Some(a), Some(b)) = (first.shard, d.shard) {
                if a.count != b.count {
                    return Err(Error::Output {
                        path: d.path.clone(),
                        msg: format!(
                            "is shard {b} but {} is shard {a}: shards of different splits cannot be combined",
                            first.path.display()
                        ),
                    });
                }
            }
        }
        dirs.sort_by_key(|d| d.shard.map(|s| s.index).unwrap_or(0));
        Ok(RunSet { dirs })
    }

    pub fn manifest(&self) -> &Manifest {
        &self.dirs[0].manifest
    }

    /// Whether any directory deferred its permutation importances to `gather`.
    pub fn importance_pending(&self) -> bool {
        self.dirs.iter().any(|d| d.manifest.importance_pending())
    }

    pub fn completeness(&self) -> Completeness {
        let mut c = Completeness {
            total: self.manifest().specs,
            ..Default::default()
        };
        let whole = self.dirs.iter().any(|d| d.shard.is_none());
        if let (false, Some(count)) = (whole, self.dirs.iter().find_map(|d| d.shard)) {
            let have: BTreeSet<usize> = self
                .dirs
                .iter()
                .filter_map(|d| d.shard.map(|s| s.index))
                .collect();
            c.missing_shards = (1..=count.count)
                .filter(|i| !have.contains(i))
                .map(|index| Shard {
                    index,
                    count: count.count,
                })
                .collect();
        }
        let mut owner: HashMap<&str, Vec<PathBuf>> = HashMap::new();
        for d in &self.dirs {
            if !d.complete() {
                c.unfinished
                    .push((d.path.clone(), d.done.ids.len(), d.expected));
            }
            for id in &d.done.ids {
                owner.entry(id.as_str()).or_default().push(d.path.clone());
            }
        }
        c.present = owner.len();
        for (id, dirs) in owner {
            if dirs.len() > 1 {
                c.duplicated.insert(id.to_string(), dirs);
            }
        }
        // Ok and failed counts: each spec once, however many directories hold it.
        let mut counted: HashSet<&str> = HashSet::new();
        for d in &self.dirs {
            for (id, _) in &d.done.skills {
                if counted.insert(id.as_str()) {
                    c.ok += 1;
                }
            }
            for (id, cause) in &d.done.failed {
                if counted.insert(id.as_str()) {
                    *c.failures.entry(cause.name().to_string()).or_default() += 1;
                }
            }
        }
        c
    }

    /// (directory, part file name) of every complete batch, in the order `gather` copies them.
    pub fn parts(&self) -> Vec<(&Path, &str)> {
        self.dirs
            .iter()
            .flat_map(|d| d.parts.iter().map(move |n| (d.path.as_path(), n.as_str())))
            .collect()
    }

    /// Every table directory of every run, for readers that scan Parquet parts (the
    /// complete batches only).
    pub fn table_files(&self, table: &str) -> Vec<PathBuf> {
        if !TABLES.contains(&table) {
            return Vec::new();
        }
        let mut out = Vec::new();
        for (dir, name) in self.parts() {
            let f = dir.join(table).join(name);
            if f.is_file() {
                out.push(f);
            }
        }
        if table == crate::schema::IMPORTANCE {
            // The deferred permutation pass of finished runs (`part-iNNNNN`).
            for d in &self.dirs {
                if !d.manifest.complete() || d.manifest.importance_pending() {
                    continue;
                }
                out.extend(second_pass_parts(&d.path.join(crate::schema::IMPORTANCE)));
            }
        }
        out
    }
}

/// The `part-iNNNNN.parquet` files of an importance folder, sorted.
pub fn second_pass_parts(dir: &Path) -> Vec<PathBuf> {
    let mut v: Vec<PathBuf> = std::fs::read_dir(dir)
        .map(|r| {
            r.filter_map(|e| e.ok().map(|e| e.path()))
                .filter(|p| {
                    p.file_name()
                        .and_then(|n| n.to_str())
                        .is_some_and(|n| n.starts_with("part-i") && n.ends_with(".parquet"))
                })
                .collect()
        })
        .unwrap_or_default();
    v.sort();
    v
}
