//! The run's manifest (`RUN_DIR/manifest.json`), read and written in one place. A run
//! writes it twice: with `status = "running"` before the first spec (identity, space,
//! panel and folds), then, when the sweep and its importance pass are done, with
//! `status = "complete"` and the fields of [`Finish`]. `forkmap gather` rewrites it for
//! the gathered run, `--extend` adds to its [`Lineage`]. The README's output section
//! lists every key; a key added here is added there.
//!
//! Sections a later step reads but that are not part of the run's identity (`map`,
//! `curves`, `null`) are kept as the checked config wrote them (JSON), so that their
//! types stay with their config module.

use crate::error::{Error, Result};
use serde::{Deserialize, Serialize};
use serde_json::Value;
use std::collections::BTreeMap;
use std::path::Path;

/// Whether the sweep of a run directory is finished.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum RunState {
    Running,
    Complete,
}

/// The fold scheme as run.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FoldsInfo {
    pub scheme: String,
    pub k: usize,
    pub repeats: usize,
    pub fits_per_spec: usize,
}

/// One config's contribution to an extended run.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Lineage {
    pub config_file: String,
    #[serde(default)]
    pub config_sha256: Option<String>,
    pub specs_added: usize,
    #[serde(default)]
    pub specs_total: Option<usize>,
    /// The ids this config added (`None` for the first config: every spec not added later).
    #[serde(default)]
    pub spec_ids: Option<Vec<String>>,
    pub started: Option<String>,
    pub finished: Option<String>,
    /// A gathered first run: where its shards were.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub gathered_from: Option<Vec<Gathered>>,
}

/// Where the sweep's time went (this invocation, first pass): worker seconds in stage
/// fits, model fits and importances, against wall seconds x threads.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Work {
    pub sweep_wall_seconds: f64,
    pub threads: usize,
    pub stage_seconds: f64,
    pub fit_seconds: f64,
    pub importance_seconds: f64,
    pub other_share: f64,
}

/// A spec of the deferred permutation pass with notes.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PassNote {
    pub spec_id: String,
    pub notes: String,
}

/// One shard directory a gathered run was made from.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Gathered {
    pub path: String,
    pub shard: Option<String>,
    pub specs: usize,
    pub seconds: Option<f64>,
}

/// What a finished run adds to its manifest.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
pub struct Finish {
    pub finished: Option<String>,
    pub seconds: Option<f64>,
    pub specs_written: Option<usize>,
    pub specs_ok: Option<usize>,
    /// Failed specs by cause (`status` names).
    #[serde(default)]
    pub failures: BTreeMap<String, usize>,
    pub specs_with_notes: Option<usize>,
    pub importance_failures: Option<usize>,
    pub importance_pass_notes: Option<Vec<PassNote>>,
    #[serde(default)]
    pub skipped_columns: Vec<String>,
    pub importance_within: Option<f64>,
    /// Specs the deferred permutation pass ran (null without one).
    pub importance_permutation_specs: Option<usize>,
    /// True while a shard's deferred permutation pass waits for `gather`.
    #[serde(default)]
    pub importance_pending: bool,
    pub work: Option<Work>,
}

/// `RUN_DIR/manifest.json`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Manifest {
    /// Always "forkmap".
    pub tool: String,
    pub version: String,
    pub status: RunState,
    pub config_file: String,
    /// The canonical config (the run's identity with `data_sha256` and `version`).
    pub config: Value,
    pub data_file: String,
    pub data_sha256: String,
    /// sha256 of the codebook file (none without a codebook).
    #[serde(default)]
    pub codebook_sha256: Option<String>,
    pub seed: u64,
    pub threads: usize,
    pub started: String,
    /// Specs in the space (all shards).
    pub specs: usize,
    pub excluded: usize,
    pub sampled_from: Option<usize>,
    pub exclusions: Vec<String>,
    pub rows: usize,
    pub units: usize,
    pub indicators: usize,
    pub folds: FoldsInfo,
    pub tables: Vec<String>,
    /// How the report is made (`[map]`; not part of the identity).
    #[serde(default)]
    pub map: Value,
    /// The curves' settings (`[curves]`; not part of the identity).
    #[serde(default)]
    pub curves: Value,
    /// The permutation null asked for (`[null]`; not part of the identity).
    #[serde(default)]
    pub null: Value,
    /// `I/N` for a shard, null for the whole space.
    #[serde(default)]
    pub shard: Option<String>,
    /// Specs this directory holds when complete.
    #[serde(default)]
    pub shard_specs: Option<usize>,
    /// A shard's null draws (`[null]`) and nested outer folds (`[nested]`), dealt by
    /// `run::share`; absent for the whole space and for shards of a config without them.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub shard_draws: Option<Vec<u64>>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub shard_folds: Option<Vec<usize>>,
    #[serde(default)]
    pub resumes: u64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub lineage: Option<Vec<Lineage>>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub gathered_from: Option<Vec<Gathered>>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub gathered: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub importance_pass_failures: Option<usize>,
    /// Present once the run is complete.
    #[serde(flatten)]
    pub finish: Option<Finish>,
}

impl Manifest {
    /// Read and check `dir/manifest.json`.
    pub fn read(dir: &Path) -> Result<Manifest> {
        let path = dir.join(crate::schema::MANIFEST);
        let text = std::fs::read_to_string(&path).map_err(|e| Error::io(&path, e))?;
        let raw: Value = serde_json::from_str(&text).map_err(|e| Error::Output {
            path: path.clone(),
            msg: format!("unreadable manifest: {e}"),
        })?;
        if raw["tool"] != "forkmap" {
            return Err(Error::Output {
                path,
                msg: "is not a forkmap manifest".into(),
            });
        }
        let mut m: Manifest = serde_json::from_value(raw).map_err(|e| Error::Output {
            path,
            msg: format!("unreadable manifest: {e}"),
        })?;
        // A flattened optional section reads as present even when none of its keys are
        // there: a running manifest has no finish.
        if m.status == RunState::Running && m.finish.as_ref().is_none_or(|f| f.finished.is_none()) {
            m.finish = None;
        }
        Ok(m)
    }

    /// Write `dir/manifest.json` atomically.
    pub fn write(&self, dir: &Path) -> Result<()> {
        let text = serde_json::to_string_pretty(self).map_err(|e| Error::Output {
            path: dir.join(crate::schema::MANIFEST),
            msg: format!("cannot serialise the manifest: {e}"),
        })?;
        crate::sink::write_bytes_atomic(&dir.join(crate::schema::MANIFEST), text.as_bytes())
    }

    /// The manifest as JSON (the report shows it; `resume` compares identities).
    pub fn to_json(&self) -> Value {
        serde_json::to_value(self).unwrap_or(Value::Null)
    }

    pub fn complete(&self) -> bool {
        self.status == RunState::Complete
    }
    pub fn importance_pending(&self) -> bool {
        self.finish.as_ref().is_some_and(|f| f.importance_pending)
    }
    pub fn seconds(&self) -> Option<f64> {
        self.finish.as_ref().and_then(|f| f.seconds)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn running() -> Manifest {
        Manifest {
            tool: "forkmap".into(),
            version: "9.9.9".into(),
            status: RunState::Running,
            config_file: "c.toml".into(),
            config: serde_json::json!({"seed": 3}),
            data_file: "d.csv".into(),
            data_sha256: "ab".into(),
            codebook_sha256: None,
            seed: 3,
            threads: 2,
            started: "then".into(),
            specs: 10,
            excluded: 2,
            sampled_from: None,
            exclusions: vec!["model in [tree] and scale in [none]".into()],
            rows: 5,
            units: 3,
            indicators: 4,
            folds: FoldsInfo {
                scheme: "kfold".into(),
                k: 3,
                repeats: 1,
                fits_per_spec: 3,
            },
            tables: vec!["specs".into()],
            map: Value::Null,
            curves: Value::Null,
            null: serde_json::json!({"draws": 4}),
            shard: None,
            shard_specs: Some(10),
            shard_draws: None,
            shard_folds: None,
            resumes: 0,
            lineage: None,
            gathered_from: None,
            gathered: None,
            importance_pass_failures: None,
            finish: None,
        }
    }

    /// What is written reads back equal, running and complete; a running manifest has
    /// no finish keys; the status is the lowercase word readers compare with.
    #[test]
    fn written_manifests_read_back_equal() {
        let dir = tempfile::tempdir().unwrap();
        let m = running();
        m.write(dir.path()).unwrap();
        let text = std::fs::read_to_string(dir.path().join(crate::schema::MANIFEST)).unwrap();
        assert!(text.contains("\"status\": \"running\""), "{text}");
        assert!(!text.contains("finished"), "{text}");
        assert_eq!(Manifest::read(dir.path()).unwrap(), m);
        let mut done = m.clone();
        done.status = RunState::Complete;
        done.finish = Some(Finish {
            finished: Some("now".into()),
            seconds: Some(1.5),
            specs_written: Some(10),
            specs_ok: Some(9),
            failures: [("singular".to_string(), 1)].into_iter().collect(),
            importance_permutation_specs: None,
            ..Finish::default()
        });
        done.write(dir.path()).unwrap();
        let back = Manifest::read(dir.path()).unwrap();
        assert_eq!(back, done);
        assert!(back.complete());
        assert_eq!(back.seconds(), Some(1.5));
        let raw: Value = serde_json::from_str(
            &std::fs::read_to_string(dir.path().join(crate::schema::MANIFEST)).unwrap(),
        )
        .unwrap();
        assert_eq!(raw["status"], "complete");
        assert_eq!(raw["failures"]["singular"], 1);
        assert!(raw["importance_permutation_specs"].is_null());
    }

    /// A manifest that is not forkmap's is refused, naming the file.
    #[test]
    fn foreign_manifests_are_refused() {
        let dir = tempfile::tempdir().unwrap();
        std::fs::write(
            dir.path().join(crate::schema::MANIFEST),
            "{\"tool\": \"other\"}",
        )
        .unwrap();
        let e = Manifest::read(dir.path()).unwrap_err().to_string();
        assert!(
            e.contains("not a forkmap manifest") && e.contains("manifest.json"),
            "{e}"
        );
    }
}
