//! Extending a finished run with a larger config (`forkmap run BIGGER.toml --out RUN
//! --extend`): only the spec ids new to the run are run, into new parts numbered after the
//! old ones; the old parts are left as they are, byte for byte.
//!
//! An extension is accepted only when nothing that an old spec's results depend on has
//! changed: the forkmap version, the data file (sha256), and every part of the config
//! outside the choice space (`seed`, `[data]` but its file path, `[folds]`,
//! `[importance]`, and any section added later, which is compared by default), and only
//! when every spec id of the run is still in the new space (invariant 2: an id is the hash
//! of the canonical spec, so an unchanged id over unchanged data, folds and seed means
//! unchanged results, invariant 3). The sections that only shape the space (`[choices]`,
//! `[pools]`, `[grid]`, `[exclude]`, `[sample]`) and `[output]` (part sizes) may differ.
//! The run must be finished and a whole-space run: a shard's spec list comes from
//! `shard::owners` over the whole space, which a larger space redistributes, so shards are
//! gathered first and the gathered run is extended.
//!
//! What changes with the space is recomputed, as a resume does: the deferred permutation
//! pass (`importance.within`, `importance/part-iNNNNN`) over the whole extended space, the
//! manifest's counts, and the report. The manifest's `lineage` lists which config (path,
//! sha256 of its canonical form) added which specs, how many and when.

use super::Prepared;
use crate::manifest::{Lineage, Manifest};
use crate::resume::read_done;
use serde_json::Value;
use sha2::{Digest, Sha256};
use std::collections::BTreeSet;
use std::path::Path;

/// Config keys that only shape the choice space (or the part size): they may differ
/// between a run and its extension. Every other key must be equal.
pub const SPACE_KEYS: &[&str] = &["choices", "pools", "grid", "exclude", "sample", "output"];

/// An accepted extension.
#[derive(Debug)]
pub struct Extension {
    /// The lineage to write into the manifest (the run's entries, then this one).
    pub lineage: Vec<Lineage>,
    /// Specs the run holds.
    pub old: usize,
    /// Specs this config adds.
    pub added: usize,
}

/// sha256 (hex) of a canonical config's JSON text.
pub fn config_sha256(config: &Value) -> String {
    hex::encode(Sha256::digest(config.to_string().as_bytes()))
}

fn show(v: &Value) -> String {
    match v {
        Value::Null => "not set".into(),
        other => other.to_string(),
    }
}

/// The first place (a dotted key path) where two JSON values differ, with both values.
fn first_difference(path: &str, a: &Value, b: &Value) -> Option<String> {
    match (a, b) {
        (Value::Object(x), Value::Object(y)) => {
            let keys: BTreeSet<&String> = x.keys().chain(y.keys()).collect();
            keys.into_iter().find_map(|k| {
                let p = if path.is_empty() {
                    k.clone()
                } else {
                    format!("{path}.{k}")
                };
                first_difference(
                    &p,
                    x.get(k).unwrap_or(&Value::Null),
                    y.get(k).unwrap_or(&Value::Null),
                )
            })
        }
        _ if a == b => None,
        _ => Some(format!(
            "{path} (the run's {}, this config's {})",
            show(a),
            show(b)
        )),
    }
}

/// Options, grid values and pools the run's config lists that the new config drops,
/// where both configs list them (a dimension left to its default is judged by spec ids).
fn removed_options(old: &Value, new: &Value) -> Vec<String> {
    let mut out = Vec::new();
    let list = |v: &Value| -> Vec<Value> { v.as_array().cloned().unwrap_or_default() };
    if let (Some(o), Some(n)) = (old["choices"].as_object(), new["choices"].as_object()) {
        for (dim, opts) in o {
            let Some(nopts) = n.get(dim) else { continue };
            for opt in list(opts) {
                if !list(nopts).contains(&opt) {
                    out.push(format!("option {dim} = {opt}"));
                }
            }
        }
    }
    if let (Some(o), Some(n)) = (old["grid"].as_object(), new["grid"].as_object()) {
        for (opt, params) in o {
            for (param, vals) in params.as_object().into_iter().flatten() {
                let nvals = list(&n.get(opt).map(|g| g[param].clone()).unwrap_or_default());
                for v in list(vals) {
                    if !nvals.contains(&v) {
                        out.push(format!("grid value {opt}.{param} = {v}"));
                    }
                }
            }
        }
    }
    if let (Some(o), Some(n)) = (old["pools"].as_object(), new["pools"].as_object()) {
        for (name, members) in o {
            match n.get(name) {
                None => out.push(format!("pool {name}")),
                Some(m) if m != members => out.push(format!("pool {name}'s members")),
                _ => {}
            }
        }
    }
    out
}

/// Whether `p` (with data sha256 `sha`) may extend the run in `out` whose manifest is
/// `manifest`; `Err` names what differs. Reads the run, changes nothing.
pub fn check(
    manifest: &Manifest,
    out: &Path,
    p: &Prepared,
    sha: &str,
) -> std::result::Result<Extension, String> {
    if manifest.version != env!("CARGO_PKG_VERSION") {
        return Err(format!(
            "forkmap version differs (the run's {}, this is {})",
            manifest.version,
            env!("CARGO_PKG_VERSION")
        ));
    }
    if let Some(s) = &manifest.shard {
        return Err(format!(
            "it is shard {s}: a shard's specs follow from the whole space, which an extension changes, so shards are not extended (gather them with `forkmap gather`, then extend the gathered run)"
        ));
    }
    let (done, _) = read_done(out).map_err(|e| e.to_string())?;
    let total = manifest.specs;
    if !manifest.complete() || done.ids.len() < total {
        return Err(format!(
            "it is unfinished ({} of {total} specs): finish it first with `forkmap run {} --out {}`, then extend it",
            done.ids.len(),
            manifest.config_file,
            out.display()
        ));
    }
    if manifest.data_sha256 != sha {
        return Err(format!(
            "data file differs (sha256 of {} is not that of the run's {})",
            p.data_path.display(),
            manifest.data_file
        ));
    }
    if manifest.codebook_sha256 != p.codebook_sha256 {
        return Err(format!(
            "codebook differs (sha256 of {} is not that of the run's codebook): group importances depend on it",
            p.cfg
                .data
                .codebook
                .as_deref()
                .map_or("(none)".to_string(), |c| p.cfg.resolve(c).display().to_string())
        ));
    }
    let new = p.cfg.canonical_json();
    let old = &manifest.config;
    let identity = |c: &Value| -> Value {
        let mut c = c.clone();
        if let Some(o) = c.as_object_mut() {
            for k in SPACE_KEYS {
                o.remove(*k);
            }
        }
        // The data file is judged by its sha256 above, not by the path written.
        if let Some(d) = c.get_mut("data").and_then(Value::as_object_mut) {
            d.remove("file");
        }
        c
    };
    if let Some(d) = first_difference("", &identity(old), &identity(&new)) {
        return Err(format!("{d} differs"));
    }
    let removed = removed_options(old, &new);
    if !removed.is_empty() {
        return Err(format!(
            "config removes {} (an extension keeps every spec of the run)",
            removed.join(", ")
        ));
    }
    let ids: BTreeSet<&str> = p.space.specs.iter().map(|s| s.id.as_str()).collect();
    let mut missing: Vec<&String> = done
        .ids
        .iter()
        .filter(|id| !ids.contains(id.as_str()))
        .collect();
    if !missing.is_empty() {
        missing.sort();
        let shown: Vec<&str> = missing.iter().take(3).map(|s| s.as_str()).collect();
        return Err(format!(
            "space lacks {} of the run's {} specs (e.g. spec_id {}: a removed option, grid value or pool, an added exclusion or a different sample); an extension keeps every spec of the run",
            missing.len(),
            done.ids.len(),
            shown.join(", ")
        ));
    }
    let mut added: Vec<&str> = ids
        .iter()
        .copied()
        .filter(|id| !done.ids.contains(*id))
        .collect();
    if added.is_empty() {
        return Err(
            "config adds no spec to it: nothing to extend (the config's space is the run's)".into(),
        );
    }
    added.sort_unstable();
    let now = chrono::Utc::now().to_rfc3339();
    let mut lineage: Vec<Lineage> = match &manifest.lineage {
        Some(l) => l.clone(),
        None => vec![Lineage {
            config_file: manifest.config_file.clone(),
            config_sha256: Some(config_sha256(old)),
            specs_added: done.ids.len(),
            specs_total: None,
            spec_ids: None,
            started: Some(manifest.started.clone()),
            // A gathered run finished when it was gathered; where its shards were is
            // kept here (the rewritten manifest drops it).
            finished: match &manifest.gathered {
                Some(g) => Some(g.clone()),
                None => manifest.finish.as_ref().and_then(|f| f.finished.clone()),
            },
            gathered_from: manifest.gathered_from.clone(),
        }],
    };
    lineage.push(Lineage {
        config_file: p.cfg.source.clone(),
        config_sha256: Some(config_sha256(&new)),
        specs_added: added.len(),
        specs_total: Some(p.space.specs.len()),
        spec_ids: Some(added.iter().map(|s| s.to_string()).collect()),
        started: Some(now),
        finished: None,
        gathered_from: None,
    });
    Ok(Extension {
        lineage,
        old: done.ids.len(),
        added: added.len(),
    })
}

/// The lineage to write when a run completes: the last entry's `finished` set when unset.
pub fn finish_lineage(lineage: &[Lineage]) -> Vec<Lineage> {
    let mut l = lineage.to_vec();
    if let Some(last) = l.last_mut() {
        if last.finished.is_none() {
            last.finished = Some(chrono::Utc::now().to_rfc3339());
        }
    }
    l
}

/// One line per lineage entry, for `forkmap check`.
pub fn describe(manifest: &Manifest) -> Vec<String> {
    let Some(l) = &manifest.lineage else {
        return Vec::new();
    };
    l.iter()
        .enumerate()
        .map(|(i, e)| {
            format!(
                "{} {} (config sha256 {}): {} specs, {}{}",
                if i == 0 { "lineage   " } else { "extended  " },
                e.config_file,
                e.config_sha256
                    .as_deref()
                    .map(|s| &s[..s.len().min(12)])
                    .unwrap_or("?"),
                e.specs_added,
                e.started.as_deref().unwrap_or("?"),
                if e.finished.is_none() {
                    ", unfinished"
                } else {
                    ""
                }
            )
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    #[test]
    fn first_difference_names_the_key_path() {
        let a = json!({"seed": 1, "folds": {"k": 5, "scheme": "kfold"}});
        let b = json!({"seed": 1, "folds": {"k": 4, "scheme": "kfold"}});
        assert_eq!(
            first_difference("", &a, &b).unwrap(),
            "folds.k (the run's 5, this config's 4)"
        );
        assert!(first_difference("", &a, &a).is_none());
        let c = json!({"seed": 1, "folds": {"k": 5, "scheme": "kfold"}, "x": {"y": 2}});
        assert_eq!(
            first_difference("", &a, &c).unwrap(),
            "x (the run's not set, this config's {\"y\":2})"
        );
    }

    #[test]
    fn removed_options_are_named() {
        let old = json!({"choices": {"model": ["ridge", "tree"]}, "grid": {"ridge": {"alpha": [1, 10]}}, "pools": {"core": ["a"]}});
        let new = json!({"choices": {"model": ["ridge", "forest"]}, "grid": {"ridge": {"alpha": [1]}}, "pools": {"core": ["a", "b"]}});
        let r = removed_options(&old, &new);
        assert_eq!(
            r,
            vec![
                "option model = \"tree\"",
                "grid value ridge.alpha = 10",
                "pool core's members"
            ]
        );
        assert!(removed_options(&old, &old).is_empty());
    }
}
