//! The refit's tables under `RUN_DIR/refit/`, one Parquet file per subsample and table,
//! each written atomically (temporary file, fsync, rename):
//!
//! * `fits/resample-NNNNNN.parquet`: one row per refitted spec (its error on the
//!   subsample, whether it is the subsample's best and in its good set).
//! * `tops/resample-NNNNNN.parquet`: one row per (level, kind, name) held by a good spec:
//!   how many good specs hold that kind, how many rank the name top-k, and whether the
//!   best spec does.
//!
//! `tops` is written before `fits`, so a subsample is complete exactly when its `fits` file
//! exists. Column names come from [`crate::schema::refit_fits`] and
//! [`crate::schema::refit_tops`].

use crate::error::Result;
use crate::schema::{refit_fits as fc, refit_tops as tc};
use crate::sink::Cols;
use arrow_array::{Array, BooleanArray, Float64Array, Int64Array, StringArray};
use std::path::{Path, PathBuf};

pub use crate::schema::{REFIT_DIR, REFIT_FITS as FITS, REFIT_TOPS as TOPS};

/// One row of `refit/fits`.
#[derive(Debug, Clone, PartialEq)]
pub struct FitRow {
    /// Subsample index r (0-based).
    pub resample: i64,
    /// The subsample's seed, `mix(mix(refit seed, REFIT_UNITS), r)`, as 16 hex digits.
    pub seed: String,
    /// Units and rows the subsample keeps.
    pub units: i64,
    pub rows: i64,
    pub spec_id: String,
    /// Its place in the run's ranking (1 = the run's best) and its error in the run.
    pub run_rank: i64,
    pub run_error: f64,
    /// The error the specs are ranked by (the report's metric).
    pub metric: String,
    /// Its error refitted on the subsample (NaN, written null, when it failed there).
    pub error: f64,
    /// `ok` or the failure's cause.
    pub status: String,
    pub message: Option<String>,
    /// The subsample's best (lowest error, lowest spec id on ties).
    pub best: bool,
    /// In the subsample's good set (the report's rule among the refitted specs).
    pub good: bool,
}

/// One row of `refit/tops`.
#[derive(Debug, Clone, PartialEq)]
pub struct TopRow {
    pub resample: i64,
    /// `indicator` or `group`.
    pub level: String,
    /// Importance kind (`permutation`, `coefficient`, `impurity`).
    pub kind: String,
    pub name: String,
    /// Good specs of the subsample holding this kind.
    pub good_holding: i64,
    /// Of them, those where the name is top-k (rank <= k, importance > 0, in the pool).
    pub good_top: i64,
    /// Whether the subsample's best spec holds this kind, and ranks the name top-k.
    pub best_holds: bool,
    pub top_in_best: bool,
}

/// File name (without `.parquet`) of subsample `r`.
pub fn stem(r: u64) -> String {
    format!("resample-{r:06}")
}

/// Subsample index of a complete file name.
pub fn resample_of(name: &str) -> Option<u64> {
    name.strip_prefix("resample-")?
        .strip_suffix(".parquet")?
        .parse()
        .ok()
}

/// Write one subsample's two files (`tops` first, `fits` last).
pub fn write_resample(dir: &Path, r: u64, fits: &[FitRow], tops: &[TopRow]) -> Result<()> {
    let name = stem(r);
    Cols::default()
        .i(tc::RESAMPLE, tops.iter().map(|t| t.resample))
        .s(tc::LEVEL, tops.iter().map(|t| &t.level))
        .s(tc::KIND, tops.iter().map(|t| &t.kind))
        .s(tc::NAME, tops.iter().map(|t| &t.name))
        .i(tc::GOOD_HOLDING, tops.iter().map(|t| t.good_holding))
        .i(tc::GOOD_TOP, tops.iter().map(|t| t.good_top))
        .b(tc::BEST_HOLDS, tops.iter().map(|t| t.best_holds))
        .b(tc::TOP_IN_BEST, tops.iter().map(|t| t.top_in_best))
        .write(&dir.join(TOPS), &name)?;
    Cols::default()
        .i(fc::RESAMPLE, fits.iter().map(|t| t.resample))
        .s(fc::SEED, fits.iter().map(|t| &t.seed))
        .i(fc::UNITS, fits.iter().map(|t| t.units))
        .i(fc::ROWS, fits.iter().map(|t| t.rows))
        .s(fc::SPEC_ID, fits.iter().map(|t| &t.spec_id))
        .i(fc::RUN_RANK, fits.iter().map(|t| t.run_rank))
        .f(fc::RUN_ERROR, fits.iter().map(|t| t.run_error))
        .s(fc::METRIC, fits.iter().map(|t| &t.metric))
        .of(fc::ERROR, fits.iter().map(|t| t.error))
        .s(fc::STATUS, fits.iter().map(|t| &t.status))
        .os(fc::MESSAGE, fits.iter().map(|t| t.message.clone()))
        .b(fc::BEST, fits.iter().map(|t| t.best))
        .b(fc::GOOD, fits.iter().map(|t| t.good))
        .write(&dir.join(FITS), &name)?;
    Ok(())
}

/// Complete subsample files of a table folder, by subsample index.
pub fn complete_files(dir: &Path) -> Result<Vec<(u64, PathBuf)>> {
    crate::store::parts::complete_files(dir, resample_of)
}

fn each_batch(path: &Path, f: impl FnMut(&arrow_array::RecordBatch) -> Result<()>) -> Result<()> {
    crate::store::parts::each_batch(path, "refit", f)
}

fn col<'a, T: 'static>(b: &'a arrow_array::RecordBatch, path: &Path, n: &str) -> Result<&'a T> {
    crate::store::parts::col(b, path, "refit", n)
}

/// Read `refit/fits` of the complete subsamples below `asked` (by subsample, then run rank).
pub fn read_fits(refit_dir: &Path, asked: u64) -> Result<Vec<FitRow>> {
    let mut out = Vec::new();
    for (r, path) in complete_files(&refit_dir.join(FITS))? {
        if r >= asked {
            continue;
        }
        each_batch(&path, |b| {
            let i64s = |n: &str| col::<Int64Array>(b, &path, n);
            let strs = |n: &str| col::<StringArray>(b, &path, n);
            let f64s = |n: &str| col::<Float64Array>(b, &path, n);
            let bools = |n: &str| col::<BooleanArray>(b, &path, n);
            let (res, units, rows, rank) = (
                i64s(fc::RESAMPLE)?,
                i64s(fc::UNITS)?,
                i64s(fc::ROWS)?,
                i64s(fc::RUN_RANK)?,
            );
            let (seed, id, metric, status, msg) = (
                strs(fc::SEED)?,
                strs(fc::SPEC_ID)?,
                strs(fc::METRIC)?,
                strs(fc::STATUS)?,
                strs(fc::MESSAGE)?,
            );
            let (run_error, error) = (f64s(fc::RUN_ERROR)?, f64s(fc::ERROR)?);
            let (best, good) = (bools(fc::BEST)?, bools(fc::GOOD)?);
            for i in 0..b.num_rows() {
                out.push(FitRow {
                    resample: res.value(i),
                    seed: seed.value(i).to_string(),
                    units: units.value(i),
                    rows: rows.value(i),
                    spec_id: id.value(i).to_string(),
                    run_rank: rank.value(i),
                    run_error: run_error.value(i),
                    metric: metric.value(i).to_string(),
                    error: if error.is_null(i) {
                        f64::NAN
                    } else {
                        error.value(i)
                    },
                    status: status.value(i).to_string(),
                    message: (!msg.is_null(i)).then(|| msg.value(i).to_string()),
                    best: best.value(i),
                    good: good.value(i),
                });
            }
            Ok(())
        })?;
    }
    Ok(out)
}

/// Read `refit/tops` of the given (complete) subsamples.
pub fn read_tops(refit_dir: &Path, resamples: &[u64]) -> Result<Vec<TopRow>> {
    let mut out = Vec::new();
    for (r, path) in complete_files(&refit_dir.join(TOPS))? {
        if resamples.binary_search(&r).is_err() {
            continue;
        }
        each_batch(&path, |b| {
            let i64s = |n: &str| col::<Int64Array>(b, &path, n);
            let strs = |n: &str| col::<StringArray>(b, &path, n);
            let bools = |n: &str| col::<BooleanArray>(b, &path, n);
            let (res, level, kind, name) = (
                i64s(tc::RESAMPLE)?,
                strs(tc::LEVEL)?,
                strs(tc::KIND)?,
                strs(tc::NAME)?,
            );
            let (holding, top) = (i64s(tc::GOOD_HOLDING)?, i64s(tc::GOOD_TOP)?);
            let (holds, in_best) = (bools(tc::BEST_HOLDS)?, bools(tc::TOP_IN_BEST)?);
            for i in 0..b.num_rows() {
                out.push(TopRow {
                    resample: res.value(i),
                    level: level.value(i).to_string(),
                    kind: kind.value(i).to_string(),
                    name: name.value(i).to_string(),
                    good_holding: holding.value(i),
                    good_top: top.value(i),
                    best_holds: holds.value(i),
                    top_in_best: in_best.value(i),
                });
            }
            Ok(())
        })?;
    }
    Ok(out)
}
