//! The nested estimate's tables under RUN_DIR/nested/:
//!
//! * `settings.json`: what the tables were computed under (the `[nested]` section, the
//!   inner folds, the metric, the run seed, the swept spec ids' count). A resume goes on
//!   only under the same settings.
//! * `fold-OOO.parquet`: one row per outer fold `OOO`, written atomically when the fold
//!   is done (a kill loses at most the fold in flight; a resume skips the folds present).
//!   Columns: `outer_fold`, `spec_id` (null when no spec succeeded inside), one column per
//!   choice dimension with the chosen option's label, `inner_error`, `outer_error` (null
//!   when undefined),
//!   `baseline_error` (the training-median baseline on the same outer test rows),
//!   `n_rows`, `n_units` (outer test rows and units), `n_specs`, `n_ok` (specs swept
//!   inside, and those that succeeded), `metric`, `message`.

use super::{OuterResult, Plan};
use crate::error::{Error, Result};
use crate::schema::nested as columns;
use crate::sink::Cols;
use crate::space::{ChoiceSpace, Dim, DIMENSIONS};
use arrow_array::{Array, Float64Array, Int64Array, StringArray};
use parquet::arrow::arrow_reader::ParquetRecordBatchReaderBuilder;
use std::path::{Path, PathBuf};

/// Folder of the nested tables inside a run directory.
pub use crate::schema::NESTED_DIR;
/// The settings file inside [`NESTED_DIR`].
pub use crate::schema::NESTED_SETTINGS as SETTINGS_FILE;

/// One outer fold as read back from its table.
#[derive(Debug, Clone, PartialEq)]
pub struct FoldRow {
    pub fold: usize,
    pub spec_id: Option<String>,
    /// (dimension, chosen option label) in [`DIMENSIONS`] order; empty without a choice.
    pub choices: Vec<(String, String)>,
    pub inner_error: f64,
    pub outer_error: f64,
    pub baseline_error: f64,
    pub n_rows: usize,
    pub n_units: usize,
    pub n_specs: usize,
    pub n_ok: usize,
    pub metric: String,
    pub message: Option<String>,
}

impl FoldRow {
    /// As an [`OuterResult`] (the spec index is not needed for pooling).
    pub fn as_result(&self) -> OuterResult {
        OuterResult {
            fold: self.fold,
            chosen: None,
            inner_error: self.inner_error,
            outer_error: self.outer_error,
            baseline_error: self.baseline_error,
            n_rows: self.n_rows,
            n_units: self.n_units,
            n_specs: self.n_specs,
            n_ok: self.n_ok,
            message: self.message.clone(),
        }
    }
}

/// The settings stored beside the tables.
pub fn settings_json(
    plan: &Plan,
    space: &crate::space::ChoiceSpace,
    section: &crate::config::nested::NestedSection,
) -> serde_json::Value {
    // The swept specs by id: an extended run (`run --extend`) has a larger space, and its
    // sample differs even when its size does not, so the tables are redone.
    use sha2::{Digest, Sha256};
    let mut h = Sha256::new();
    for &i in &plan.subset {
        h.update(space.specs[i].id.as_bytes());
        h.update(b"\n");
    }
    let ids: Vec<&str> = plan
        .subset
        .iter()
        .map(|&i| space.specs[i].id.as_str())
        .collect();
    serde_json::json!({
        "specs_sha256": hex::encode(h.finalize()),
        "spec_ids": ids,
        "nested": section,
        "outer_folds": plan.outer.k,
        "inner_folds": plan.inner,
        "specs_swept": plan.subset.len(),
        "seed": plan.seed,
        "run_seed": plan.run_seed,
        "metric": plan.metric,
    })
}

fn out_err(path: &Path, msg: impl Into<String>) -> Error {
    Error::Output {
        path: path.to_path_buf(),
        msg: msg.into(),
    }
}

/// File name of outer fold `o`.
pub fn fold_file(o: usize) -> String {
    format!("fold-{o:03}")
}

/// Write outer fold `r` atomically as `dir/fold-OOO.parquet`.
pub fn write_fold(
    dir: &Path,
    space: &ChoiceSpace,
    metric: &str,
    r: &OuterResult,
) -> Result<PathBuf> {
    let spec = r.chosen.map(|i| &space.specs[i]);
    let mut cols = Cols::default()
        .i(columns::fold::OUTER_FOLD, [r.fold as i64])
        .os(columns::fold::SPEC_ID, [spec.map(|s| s.id.clone())]);
    for dim in Dim::ALL {
        cols = cols.os(dim.name(), [spec.map(|s| s.choice(dim).label())]);
    }
    cols.of(columns::fold::INNER_ERROR, [r.inner_error])
        .of(columns::fold::OUTER_ERROR, [r.outer_error])
        .of(columns::fold::BASELINE_ERROR, [r.baseline_error])
        .i(columns::fold::N_ROWS, [r.n_rows as i64])
        .i(columns::fold::N_UNITS, [r.n_units as i64])
        .i(columns::fold::N_SPECS, [r.n_specs as i64])
        .i(columns::fold::N_OK, [r.n_ok as i64])
        .s(columns::fold::METRIC, [metric])
        .os(columns::fold::MESSAGE, [r.message.clone()])
        .write(dir, &fold_file(r.fold))
}

/// Outer fold numbers present in `dir` (finished folds), ascending.
pub fn done_folds(dir: &Path) -> Result<Vec<usize>> {
    let mut out = Vec::new();
    if !dir.is_dir() {
        return Ok(out);
    }
    for e in std::fs::read_dir(dir).map_err(|e| Error::io(dir, e))? {
        let e = e.map_err(|e| Error::io(dir, e))?;
        let name = e.file_name().to_string_lossy().to_string();
        if let Some(n) = name
            .strip_prefix("fold-")
            .and_then(|s| s.strip_suffix(".parquet"))
            .and_then(|s| s.parse::<usize>().ok())
        {
            out.push(n);
        }
    }
    out.sort_unstable();
    Ok(out)
}

/// Read every finished fold of `dir`, in fold order.
pub fn read_folds(dir: &Path) -> Result<Vec<FoldRow>> {
    let mut rows = Vec::new();
    for o in done_folds(dir)? {
        let path = dir.join(format!("{}.parquet", fold_file(o)));
        let f = std::fs::File::open(&path).map_err(|e| Error::io(&path, e))?;
        let reader = ParquetRecordBatchReaderBuilder::try_new(f)
            .and_then(|b| b.build())
            .map_err(|e| out_err(&path, format!("unreadable nested table: {e}")))?;
        for b in reader {
            let b = b.map_err(|e| out_err(&path, format!("unreadable nested table: {e}")))?;
            let col = |n: &str| {
                b.column_by_name(n)
                    .cloned()
                    .ok_or_else(|| out_err(&path, format!("column `{n}` is missing")))
            };
            let text = |n: &str| -> Result<StringArray> {
                col(n)?
                    .as_any()
                    .downcast_ref::<StringArray>()
                    .cloned()
                    .ok_or_else(|| out_err(&path, format!("column `{n}` is not text")))
            };
            let num = |n: &str| -> Result<Float64Array> {
                col(n)?
                    .as_any()
                    .downcast_ref::<Float64Array>()
                    .cloned()
                    .ok_or_else(|| out_err(&path, format!("column `{n}` is not a number")))
            };
            let int = |n: &str| -> Result<Int64Array> {
                col(n)?
                    .as_any()
                    .downcast_ref::<Int64Array>()
                    .cloned()
                    .ok_or_else(|| out_err(&path, format!("column `{n}` is not an integer")))
            };
            let opt = |a: &StringArray, i: usize| (!a.is_null(i)).then(|| a.value(i).to_string());
            // null (undefined) reads back as NaN
            let val = |a: &Float64Array, i: usize| if a.is_null(i) { f64::NAN } else { a.value(i) };
            let (fold, id, msg, metric) = (
                int(columns::fold::OUTER_FOLD)?,
                text(columns::fold::SPEC_ID)?,
                text(columns::fold::MESSAGE)?,
                text(columns::fold::METRIC)?,
            );
            let (inner, outer, base) = (
                num(columns::fold::INNER_ERROR)?,
                num(columns::fold::OUTER_ERROR)?,
                num(columns::fold::BASELINE_ERROR)?,
            );
            let (nr, nu, ns, nok) = (
                int(columns::fold::N_ROWS)?,
                int(columns::fold::N_UNITS)?,
                int(columns::fold::N_SPECS)?,
                int(columns::fold::N_OK)?,
            );
            let dims: Vec<StringArray> =
                DIMENSIONS.iter().map(|d| text(d)).collect::<Result<_>>()?;
            for i in 0..b.num_rows() {
                let choices = DIMENSIONS
                    .iter()
                    .zip(&dims)
                    .filter_map(|(d, a)| opt(a, i).map(|v| (d.to_string(), v)))
                    .collect();
                rows.push(FoldRow {
                    fold: fold.value(i).max(0) as usize,
                    spec_id: opt(&id, i),
                    choices,
                    inner_error: val(&inner, i),
                    outer_error: val(&outer, i),
                    baseline_error: val(&base, i),
                    n_rows: nr.value(i).max(0) as usize,
                    n_units: nu.value(i).max(0) as usize,
                    n_specs: ns.value(i).max(0) as usize,
                    n_ok: nok.value(i).max(0) as usize,
                    metric: metric.value(i).to_string(),
                    message: opt(&msg, i),
                });
            }
        }
    }
    rows.sort_by_key(|r| r.fold);
    Ok(rows)
}
