//! Gathering the shards' shares of the permutation null (`null/`) and of the nested
//! estimate (`nested/`): each shard ran the draws and outer folds dealt to it
//! (`run::share`, listed in its run manifest as `shard_draws` and `shard_folds`).
//!
//! [`check`] runs before anything is written: every shard's null identity (and `draws`)
//! and nested settings must agree (else an error naming the shard and the field), and
//! every draw 0..D-1 and outer fold 0..K-1 must be present in the shard that owns it (else
//! an error naming what is missing and which shard owns it). [`copy`] then copies each
//! draw's three files and each fold's file from its owner (fsynced) and writes the
//! manifests: the gathered `null/` and `nested/` tables are byte for byte the files a
//! whole-space run writes (each is a pure function of config, data, seed and its index).

use crate::error::{Error, Result};
use crate::null::run::{differs, list, SHARD_DRAWS_KEY, SHARD_KEY};
use crate::results::{RunDir, RunSet};
use crate::schema::{NESTED_DIR, NESTED_SETTINGS, NULL_DIR, NULL_DRAWS, NULL_DRAW_TABLES};
use serde_json::Value;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

/// What the shards hold of the null and the nested estimate, checked.
#[derive(Debug, Default)]
pub struct Derived {
    /// The null: its manifest (a shard's, to be completed) and each draw's directory.
    null: Option<(Value, Vec<PathBuf>, f64)>,
    /// The nested estimate: the settings file to copy and each outer fold's directory.
    nested: Option<(PathBuf, Vec<PathBuf>)>,
}

impl Derived {
    pub fn draws(&self) -> Option<usize> {
        self.null.as_ref().map(|n| n.1.len())
    }
    pub fn folds(&self) -> Option<usize> {
        self.nested.as_ref().map(|n| n.1.len())
    }
}

/// Why the shards cannot be gathered (a sentence; `check` makes it an error).
type Refusal = std::result::Result<Derived, String>;

/// "shard I/N", for naming values side by side.
fn label(d: &RunDir) -> String {
    format!(
        "shard {}",
        d.shard.map(|s| s.to_string()).unwrap_or_else(|| "-".into())
    )
}

fn name(d: &RunDir) -> String {
    format!(
        "shard {} ({})",
        d.shard.map(|s| s.to_string()).unwrap_or_else(|| "-".into()),
        d.path.display()
    )
}

fn read_json(path: &Path) -> Option<Value> {
    std::fs::read_to_string(path)
        .ok()
        .and_then(|t| serde_json::from_str(&t).ok())
}

fn rerun(d: &RunDir) -> String {
    format!(
        "rerun `forkmap run CONFIG --shard {} --out {}` to finish it",
        d.shard.map(|s| s.to_string()).unwrap_or_default(),
        d.path.display()
    )
}

/// Owner of each index 0..total by the shards' lists; an index no shard lists is named.
fn owners<'a>(
    shards: &[(&'a RunDir, Vec<usize>)],
    total: usize,
    what: &str,
) -> std::result::Result<Vec<&'a RunDir>, String> {
    let mut owner: Vec<Option<&RunDir>> = vec![None; total];
    for (d, mine) in shards {
        for &i in mine {
            if let Some(o) = owner.get_mut(i) {
                o.get_or_insert(*d);
            }
        }
    }
    let orphan: Vec<usize> = (0..total).filter(|&i| owner[i].is_none()).collect();
    if !orphan.is_empty() {
        return Err(format!(
            "{what} {} belong to no shard: the shards were not split from one config",
            list(&orphan)
        ));
    }
    Ok(owner.into_iter().flatten().collect())
}

/// Missing items, grouped by owner, as one message.
fn missing_message(what: &str, missing: &[(usize, &RunDir)]) -> String {
    let mut by: BTreeMap<String, (Vec<usize>, &RunDir)> = BTreeMap::new();
    for (i, d) in missing {
        by.entry(d.path.display().to_string())
            .or_insert_with(|| (Vec::new(), d))
            .0
            .push(*i);
    }
    let parts: Vec<String> = by
        .values()
        .map(|(v, d)| format!("{what} {} (owned by {}: {})", list(v), name(d), rerun(d)))
        .collect();
    format!("missing {}", parts.join("; "))
}

/// The shards (with their lists) that hold a share of `key`; an error when only some do.
fn sharing<'a>(
    set: &'a RunSet,
    list_of: impl Fn(&RunDir) -> Option<Vec<usize>>,
    what: &str,
) -> std::result::Result<Vec<(&'a RunDir, Vec<usize>)>, String> {
    let shards: Vec<&RunDir> = set.dirs.iter().filter(|d| d.shard.is_some()).collect();
    let with: Vec<(&RunDir, Vec<usize>)> = shards
        .iter()
        .filter_map(|d| list_of(d).map(|l| (*d, l)))
        .collect();
    if !with.is_empty() && with.len() < shards.len() {
        if let Some(d) = shards.iter().find(|d| list_of(d).is_none()) {
            return Err(format!(
                "{} ran without a share of the {what} but {} ran one: the shards ran different configs ([{what}] differs); rerun it with the same config",
                name(d),
                name(with[0].0)
            ));
        }
    }
    Ok(with)
}

/// Check the shards' null and nested shares (nothing is written); the error names the
/// gathered folder `out`.
pub fn check(set: &RunSet, out: &Path) -> Result<Derived> {
    problems(set).map_err(|msg| Error::Output {
        path: out.to_path_buf(),
        msg: format!("not written: {msg}"),
    })
}

/// The checks of [`check`], the refusal as a sentence (`forkmap check` prints it).
pub fn problems(set: &RunSet) -> Refusal {
    let mut out = Derived::default();
    let mut problems: Vec<String> = Vec::new();
    // Identities first: a difference there explains any missing part.
    let null_shards = sharing(
        set,
        |d| {
            d.manifest
                .shard_draws
                .as_ref()
                .map(|v| v.iter().map(|&x| x as usize).collect())
        },
        "null",
    )?;
    let mut null_ref: Option<(&RunDir, Value)> = None;
    for (d, _) in &null_shards {
        let Some(m) = read_json(&d.path.join(NULL_DIR).join(crate::schema::MANIFEST)) else {
            continue; // killed before its null started: its draws are reported missing
        };
        match &null_ref {
            None => null_ref = Some((d, m)),
            Some((r, rm)) => {
                // `differs` words a change over time (was, now); here two shards differ.
                let why = differs(&rm["identity"], &m["identity"])
                    .map(|w| {
                        w.replace(" changed (was ", &format!(" differs ({}: ", label(r)))
                            .replace(", now ", &format!(", {}: ", label(d)))
                    })
                    .or_else(|| {
                        (rm["draws"] != m["draws"]).then(|| {
                            format!(
                                "null.draws differs ({}: {}, {}: {})",
                                label(r),
                                rm["draws"],
                                label(d),
                                m["draws"]
                            )
                        })
                    });
                if let Some(why) = why {
                    return Err(format!(
                        "the null of {} differs from that of {}: {why}; rerun the shards with one config",
                        name(d),
                        name(r)
                    ));
                }
            }
        }
    }
    let nested_shards = sharing(set, |d| d.manifest.shard_folds.clone(), "nested")?;
    let mut nested_ref: Option<(&RunDir, Value)> = None;
    for (d, _) in &nested_shards {
        let Some(s) = read_json(&d.path.join(NESTED_DIR).join(NESTED_SETTINGS)) else {
            continue;
        };
        match &nested_ref {
            None => nested_ref = Some((d, s)),
            Some((r, rs)) => {
                if rs != &s {
                    let k = rs
                        .as_object()
                        .into_iter()
                        .chain(s.as_object())
                        .flat_map(|o| o.keys())
                        .find(|k| rs[k.as_str()] != s[k.as_str()])
                        .cloned()
                        .unwrap_or_default();
                    // A key of the `[nested]` section itself is named as the user writes it.
                    let (field, was, now) = match (&rs[k.as_str()], &s[k.as_str()]) {
                        (Value::Object(a), Value::Object(b)) if k == "nested" => a
                            .keys()
                            .chain(b.keys())
                            .find(|j| a.get(*j) != b.get(*j))
                            .map(|j| (format!("nested.{j}"), &rs[k.as_str()][j], &s[k.as_str()][j]))
                            .unwrap_or((k.clone(), &rs[k.as_str()], &s[k.as_str()])),
                        (a, b) => (format!("settings' {k}"), a, b),
                    };
                    return Err(format!(
                        "the nested estimate of {} differs from that of {}: {field} differs ({}: {}, {}: {}); rerun the shards with one config and the same map flags",
                        name(d),
                        name(r),
                        label(r),
                        short(was),
                        label(d),
                        short(now)
                    ));
                }
            }
        }
    }
    // Then presence, draw by draw and fold by fold, in the shard that owns it.
    if !null_shards.is_empty() {
        let total = match &null_ref {
            Some((_, m)) => m["draws"].as_u64().unwrap_or(0) as usize,
            None => null_shards.iter().map(|(_, l)| l.len()).sum(),
        };
        let owner = owners(&null_shards, total, "null draws")?;
        let missing: Vec<(usize, &RunDir)> = (0..total)
            .filter(|&i| {
                !owner[i]
                    .path
                    .join(NULL_DIR)
                    .join(NULL_DRAWS)
                    .join(crate::null::table::file_name(i as u64))
                    .is_file()
            })
            .map(|i| (i, owner[i]))
            .collect();
        if !missing.is_empty() {
            problems.push(format!("null: {}", missing_message("draws", &missing)));
        } else if let Some((_, m)) = null_ref {
            let seconds = null_shards
                .iter()
                .filter_map(|(d, _)| {
                    read_json(&d.path.join(NULL_DIR).join(crate::schema::MANIFEST))
                })
                .filter_map(|m| m["seconds_this_invocation"].as_f64())
                .sum();
            out.null = Some((m, owner.iter().map(|d| d.path.clone()).collect(), seconds));
        }
    }
    if !nested_shards.is_empty() {
        let total = match &nested_ref {
            Some((_, s)) => s["outer_folds"].as_u64().unwrap_or(0) as usize,
            None => nested_shards.iter().map(|(_, l)| l.len()).sum(),
        };
        let owner = owners(&nested_shards, total, "nested outer folds")?;
        let missing: Vec<(usize, &RunDir)> = (0..total)
            .filter(|&o| !fold_path(&owner[o].path, o).is_file())
            .map(|o| (o, owner[o]))
            .collect();
        if !missing.is_empty() {
            problems.push(format!(
                "nested: {}",
                missing_message("outer folds", &missing)
            ));
        } else if let Some((r, _)) = nested_ref {
            out.nested = Some((
                r.path.join(NESTED_DIR).join(NESTED_SETTINGS),
                owner.iter().map(|d| d.path.clone()).collect(),
            ));
        }
    }
    if problems.is_empty() {
        Ok(out)
    } else {
        Err(problems.join("\n  "))
    }
}

fn short(v: &Value) -> String {
    let s = v.to_string();
    if s.len() > 60 {
        format!("{}...", s.chars().take(57).collect::<String>())
    } else {
        s
    }
}

fn fold_path(run: &Path, o: usize) -> PathBuf {
    run.join(NESTED_DIR)
        .join(format!("{}.parquet", crate::nested::table::fold_file(o)))
}

/// Copy the checked null and nested parts into the gathered folder `tmp` (fsynced), with
/// their manifests; `copy_synced` and `fsync_dir` are gather's.
pub fn copy(
    d: &Derived,
    tmp: &Path,
    copy_synced: impl Fn(&Path, &Path) -> Result<()>,
    fsync_dir: impl Fn(&Path) -> Result<()>,
) -> Result<()> {
    let mkdir = |p: &Path| std::fs::create_dir_all(p).map_err(|e| Error::io(p, e));
    if let Some((manifest, owner, seconds)) = &d.null {
        let dir = tmp.join(NULL_DIR);
        for t in NULL_DRAW_TABLES {
            mkdir(&dir.join(t))?;
        }
        // Each draw's `draws` file last, as the null writes them.
        for (i, from) in owner.iter().enumerate() {
            let f = crate::null::table::file_name(i as u64);
            for t in NULL_DRAW_TABLES {
                copy_synced(&from.join(NULL_DIR).join(t).join(&f), &dir.join(t).join(&f))?;
            }
        }
        for t in NULL_DRAW_TABLES {
            fsync_dir(&dir.join(t))?;
        }
        let mut m = manifest.clone();
        if let Some(o) = m.as_object_mut() {
            o.remove(SHARD_KEY);
            o.remove(SHARD_DRAWS_KEY);
        }
        m["status"] = "complete".into();
        m["draws_done"] = owner.len().into();
        m["seconds_this_invocation"] = (*seconds).into();
        m["gathered"] =
            "from the shards' draws (`forkmap gather`); seconds_this_invocation is their sum"
                .into();
        crate::sink::write_bytes_atomic(
            &dir.join(crate::schema::MANIFEST),
            serde_json::to_string_pretty(&m)
                .unwrap_or_default()
                .as_bytes(),
        )?;
        fsync_dir(&dir)?;
    }
    if let Some((settings, owner)) = &d.nested {
        let dir = tmp.join(NESTED_DIR);
        mkdir(&dir)?;
        copy_synced(settings, &dir.join(NESTED_SETTINGS))?;
        for (o, from) in owner.iter().enumerate() {
            copy_synced(&fold_path(from, o), &fold_path(tmp, o))?;
        }
        fsync_dir(&dir)?;
    }
    Ok(())
}
