//! Reading back a table written as one Parquet file per part (a null draw, a refit
//! subsample): the complete parts of a folder, every batch of one file, a typed column.
//! Each part is written whole (temporary file, fsync, rename), so a file that is there
//! under its final name is complete.

use crate::error::{Error, Result};
use arrow_array::RecordBatch;
use parquet::arrow::arrow_reader::ParquetRecordBatchReaderBuilder;
use std::path::{Path, PathBuf};

/// The part files of `dir` whose names `index_of` reads as a part index, by index (none
/// when the folder is missing).
pub fn complete_files(
    dir: &Path,
    index_of: impl Fn(&str) -> Option<u64>,
) -> Result<Vec<(u64, PathBuf)>> {
    let mut out = Vec::new();
    if !dir.is_dir() {
        return Ok(out);
    }
    for e in std::fs::read_dir(dir).map_err(|e| Error::io(dir, e))? {
        let path = e.map_err(|e| Error::io(dir, e))?.path();
        if let Some(i) = path
            .file_name()
            .and_then(|n| n.to_str())
            .and_then(&index_of)
        {
            out.push((i, path));
        }
    }
    out.sort();
    Ok(out)
}

fn bad(path: &Path, msg: String) -> Error {
    Error::Output {
        path: path.to_path_buf(),
        msg,
    }
}

/// Read every batch of one Parquet file with `f`; `what` names the table in errors.
pub fn each_batch(
    path: &Path,
    what: &str,
    mut f: impl FnMut(&RecordBatch) -> Result<()>,
) -> Result<()> {
    let file = std::fs::File::open(path).map_err(|e| Error::io(path, e))?;
    let reader = ParquetRecordBatchReaderBuilder::try_new(file)
        .and_then(|b| b.build())
        .map_err(|e| bad(path, format!("unreadable {what} table: {e}")))?;
    for b in reader {
        let b = b.map_err(|e| bad(path, format!("unreadable {what} table: {e}")))?;
        f(&b)?;
    }
    Ok(())
}

/// Column `n` of a batch as array type `T`, or an error naming the file and the column.
pub fn col<'a, T: 'static>(b: &'a RecordBatch, path: &Path, what: &str, n: &str) -> Result<&'a T> {
    b.column_by_name(n)
        .and_then(|c| c.as_any().downcast_ref::<T>())
        .ok_or_else(|| {
            bad(
                path,
                format!("{what} table lacks column {n} (or it has another type)"),
            )
        })
}

/// Prepare the folder `dir` of a resumable pass (the null, the refit) for a (re)start:
/// the complete parts below `asked` and, when it restarted, why. A folder whose manifest
/// holds another identity (`differs` names the first difference) or cannot be read, or one
/// killed before its manifest, is removed. `tables` are the pass's tables in the order a
/// part writes them, the last completing the part: temporaries, parts at or above `asked`,
/// and parts of the other tables without their completing file are removed.
pub fn open_pass(
    dir: &Path,
    ident: &serde_json::Value,
    asked: u64,
    tables: &[&str],
    index_of: impl Fn(&str) -> Option<u64>,
    differs: impl Fn(&serde_json::Value, &serde_json::Value) -> Option<String>,
) -> Result<(Vec<u64>, Option<String>)> {
    let manifest = dir.join(crate::schema::MANIFEST);
    let mut restarted = None;
    if manifest.exists() {
        let old: Option<serde_json::Value> = std::fs::read_to_string(&manifest)
            .ok()
            .and_then(|t| serde_json::from_str(&t).ok());
        let why = match &old {
            Some(m) => differs(&m["identity"], ident),
            None => Some(format!("{} unreadable", manifest.display())),
        };
        if let Some(why) = why {
            std::fs::remove_dir_all(dir).map_err(|e| Error::io(dir, e))?;
            restarted = Some(why);
        }
    } else if dir.exists() {
        // Killed before its manifest: nothing of value.
        std::fs::remove_dir_all(dir).map_err(|e| Error::io(dir, e))?;
    }
    for t in tables {
        let d = dir.join(t);
        std::fs::create_dir_all(&d).map_err(|e| Error::io(&d, e))?;
    }
    let Some(last) = tables.last() else {
        return Ok((Vec::new(), restarted));
    };
    let complete: Vec<u64> = complete_files(&dir.join(last), &index_of)?
        .into_iter()
        .map(|(i, _)| i)
        .collect();
    for t in tables {
        let d = dir.join(t);
        for e in std::fs::read_dir(&d).map_err(|e| Error::io(&d, e))? {
            let path = e.map_err(|e| Error::io(&d, e))?.path();
            let name = path.file_name().and_then(|n| n.to_str()).unwrap_or("");
            let stale = match index_of(name) {
                Some(k) => k >= asked || (t != last && complete.binary_search(&k).is_err()),
                None => name.starts_with('.'),
            };
            if stale {
                std::fs::remove_file(&path).map_err(|e| Error::io(&path, e))?;
            }
        }
    }
    Ok((
        complete.into_iter().filter(|&i| i < asked).collect(),
        restarted,
    ))
}
