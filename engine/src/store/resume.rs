//! Resuming an interrupted run. A run directory is trusted part by part: a specs part is
//! renamed into place only after the other tables' parts of its batch, so the spec ids
//! in the complete specs parts are exactly the specs that are done. On resume, hidden
//! temporary files and parts of other tables without a specs part of the same name (a
//! crash between renames) are removed, and only the remaining specs run.

use crate::error::{Error, Result};
use crate::schema::specs;
use crate::sink::TABLES;
use arrow_array::{Array, Float64Array, StringArray};
use parquet::arrow::arrow_reader::ParquetRecordBatchReaderBuilder;
use std::collections::HashSet;
use std::path::{Path, PathBuf};

/// What a run directory already holds.
#[derive(Debug, Default)]
pub struct Done {
    /// Spec ids with a complete specs row.
    pub ids: HashSet<String>,
    /// (spec id, skill) of the ok specs among them (NaN where the skill is null: undefined).
    pub skills: Vec<(String, f64)>,
    /// (spec id, failure cause) of the failed ones.
    pub failed: Vec<(String, crate::error::Status)>,
    /// Next free part number.
    pub next_part: usize,
    /// Specs with notes among them (the `notes` column not null).
    pub noted: usize,
}

fn part_number(name: &str) -> Option<usize> {
    name.strip_prefix("part-")?
        .strip_suffix(".parquet")?
        .parse()
        .ok()
}

fn out_err(path: &Path, msg: String) -> Error {
    Error::Output {
        path: path.to_path_buf(),
        msg,
    }
}

/// Clean a run directory for resuming and read what is done.
pub fn scan(out: &Path) -> Result<Done> {
    let (done, complete) = read_done(out)?;
    remove_leftovers(out, &complete)?;
    Ok(done)
}

/// Read what a run directory holds without changing it: the done specs and the names of
/// the complete specs parts.
pub fn read_done(out: &Path) -> Result<(Done, HashSet<String>)> {
    let specs_dir = out.join(crate::schema::SPECS);
    let mut done = Done::default();
    let mut complete: HashSet<String> = HashSet::new();
    if specs_dir.is_dir() {
        for e in std::fs::read_dir(&specs_dir).map_err(|e| Error::io(&specs_dir, e))? {
            let path = e.map_err(|e| Error::io(&specs_dir, e))?.path();
            let name = path
                .file_name()
                .and_then(|n| n.to_str())
                .unwrap_or("")
                .to_string();
            let Some(k) = part_number(&name) else {
                continue;
            };
            done.next_part = done.next_part.max(k + 1);
            let file = std::fs::File::open(&path).map_err(|e| Error::io(&path, e))?;
            let reader = ParquetRecordBatchReaderBuilder::try_new(file)
                .and_then(|b| b.build())
                .map_err(|e| out_err(&path, format!("unreadable part: {e}")))?;
            for batch in reader {
                let batch = batch.map_err(|e| out_err(&path, format!("unreadable part: {e}")))?;
                let col = |n: &str| {
                    batch
                        .column_by_name(n)
                        .cloned()
                        .ok_or_else(|| out_err(&path, format!("part lacks column {n}")))
                };
                let (ids, status, skill) =
                    (col(specs::SPEC_ID)?, col(specs::STATUS)?, col("skill")?);
                let ids = ids
                    .as_any()
                    .downcast_ref::<StringArray>()
                    .ok_or_else(|| out_err(&path, "spec_id is not text".into()))?;
                let status = status
                    .as_any()
                    .downcast_ref::<StringArray>()
                    .ok_or_else(|| out_err(&path, "status is not text".into()))?;
                let skill = skill
                    .as_any()
                    .downcast_ref::<Float64Array>()
                    .ok_or_else(|| out_err(&path, "skill is not a number".into()))?;
                if let Some(n) = batch.column_by_name(specs::NOTES) {
                    done.noted += n.len() - n.null_count();
                }
                for i in 0..batch.num_rows() {
                    let id = ids.value(i).to_string();
                    let st = crate::error::Status::parse(status.value(i)).ok_or_else(|| {
                        out_err(
                            &path,
                            format!(
                                "row {} (spec {id}) has status `{}`, which this version never writes",
                                i + 1,
                                status.value(i)
                            ),
                        )
                    })?;
                    if st.is_ok() {
                        let sk = if skill.is_null(i) {
                            f64::NAN
                        } else {
                            skill.value(i)
                        };
                        done.skills.push((id.clone(), sk));
                    } else {
                        done.failed.push((id.clone(), st));
                    }
                    done.ids.insert(id);
                }
            }
            complete.insert(name);
        }
    }
    Ok((done, complete))
}

/// Remove temporaries everywhere, orphan parts of the other tables and second-pass parts.
fn remove_leftovers(out: &Path, complete: &HashSet<String>) -> Result<()> {
    for t in TABLES {
        let dir: PathBuf = out.join(t);
        if !dir.is_dir() {
            continue;
        }
        for e in std::fs::read_dir(&dir).map_err(|e| Error::io(&dir, e))? {
            let path = e.map_err(|e| Error::io(&dir, e))?.path();
            let name = path
                .file_name()
                .and_then(|n| n.to_str())
                .unwrap_or("")
                .to_string();
            let orphan = *t != "specs" && part_number(&name).is_some() && !complete.contains(&name);
            let second_pass = name.starts_with("part-i");
            if name.starts_with('.') || orphan || second_pass {
                std::fs::remove_file(&path).map_err(|e| Error::io(&path, e))?;
            }
        }
    }
    Ok(())
}

/// Whether a manifest belongs to the same config, data and tool version; `Err` names the
/// first field that differs.
pub fn same_run(
    manifest: &crate::manifest::Manifest,
    config: &serde_json::Value,
    sha: &str,
    codebook_sha: Option<&str>,
) -> std::result::Result<(), String> {
    if manifest.version != env!("CARGO_PKG_VERSION") {
        return Err(format!(
            "forkmap version ({}, this is {})",
            manifest.version,
            env!("CARGO_PKG_VERSION")
        ));
    }
    if manifest.data_sha256 != sha {
        return Err("data file (sha256)".into());
    }
    if manifest.codebook_sha256.as_deref() != codebook_sha {
        return Err("codebook file (sha256)".into());
    }
    if &manifest.config != config {
        return Err("config".into());
    }
    Ok(())
}
