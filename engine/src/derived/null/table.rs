//! The null's tables under `RUN_DIR/null/`, one Parquet file per draw and table, each
//! written atomically (temporary file, fsync, rename):
//!
//! * `draws/draw-NNNNNN.parquet`: one row per draw (what the draw's sweep says).
//! * `tops/draw-NNNNNN.parquet`: per native importance kind (`coefficient`, `impurity`),
//!   one row per indicator (and codebook group): its rank in the draw's best spec of that
//!   kind and whether it is top-k.
//!
//! * `goodranks/draw-NNNNNN.parquet`: for every spec of the draw whose error is within
//!   `[null] ranks_within` of the draw's best, its error and one row per indicator (and
//!   group) and importance kind the draw computed: importance, rank, in_pool. The report
//!   rebuilds each draw's good set from it and evaluates its claims there.
//!
//! The `tops` and `goodranks` files of a draw are written before its `draws` file, so a
//! draw is complete exactly when its `draws` file exists.

use crate::error::Result;
use crate::schema::null as columns;
use crate::sink::Cols;
use arrow_array::{Array, BooleanArray, Float64Array, Int64Array, StringArray};
use std::path::{Path, PathBuf};

use crate::schema::null_goodranks as gr;
/// Folder of the null inside a run directory.
pub use crate::schema::NULL_DIR;
/// The per-draw table.
pub use crate::schema::NULL_DRAWS as DRAWS;
/// The per-draw ranks of the specs near the draw's best.
pub use crate::schema::NULL_GOODRANKS as GOODRANKS;
/// The per-draw indicator (and group) table.
pub use crate::schema::NULL_TOPS as TOPS;

/// One row of `null/draws`.
#[derive(Debug, Clone, PartialEq)]
pub struct DrawRow {
    /// Draw index d (0-based).
    pub draw: i64,
    /// The draw's seed, `mix(mix(run seed, NULL_STREAM), d)`, as 16 hex digits.
    pub seed: String,
    /// Error the draw ranks specs by (`mae`, `rmse`, `unit_mae`).
    pub metric: String,
    pub best_error: f64,
    pub q1_error: f64,
    pub median_error: f64,
    pub q3_error: f64,
    /// Highest skill (1 - MAE / baseline MAE) over the draw's ok specs.
    pub best_skill: f64,
    /// Share of the draw's specs (all asked, failed ones count as not positive) with
    /// skill > 0.
    pub share_skill_positive: f64,
    /// Specs run in the draw.
    pub specs: i64,
    /// Of them, ok with a finite error.
    pub n_ok: i64,
    /// Spec id of the draw's best spec (lowest error, lowest id on ties).
    pub best_spec: Option<String>,
}

/// One row of `null/tops`.
#[derive(Debug, Clone, PartialEq)]
pub struct TopRow {
    pub draw: i64,
    /// Spec id whose native importances give the row: the draw's best spec (lowest error,
    /// lowest index on ties) among the specs whose native importance is of `kind`.
    pub spec: String,
    /// `indicator` or `group`.
    pub level: String,
    /// Native importance kind of the spec: `coefficient` or `impurity`.
    pub kind: String,
    pub name: String,
    pub importance: f64,
    /// Competition rank (1 = most important) as in the run's importance table.
    pub rank: i64,
    /// rank <= top_k and importance > 0.
    pub top: bool,
}

/// One row of `null/goodranks`: one name's importance in one spec of a draw.
#[derive(Debug, Clone, PartialEq)]
pub struct RankRow {
    pub draw: i64,
    pub spec: String,
    /// The spec's error in the draw (the null's metric).
    pub error: f64,
    /// `indicator` or `group`.
    pub level: String,
    /// `permutation`, `coefficient` or `impurity`, as in the run's importance table.
    pub kind: String,
    pub name: String,
    pub importance: f64,
    /// Competition rank (1 = most important), as in the run's importance table.
    pub rank: i64,
    pub in_pool: bool,
}

/// File name of draw `d`.
pub fn file_name(d: u64) -> String {
    format!("draw-{d:06}.parquet")
}

/// Draw index of a complete file name.
pub fn draw_of(name: &str) -> Option<u64> {
    name.strip_prefix("draw-")?
        .strip_suffix(".parquet")?
        .parse()
        .ok()
}

/// Write one draw's three files (its `draws` file last).
pub fn write_draw(
    null_dir: &Path,
    row: &DrawRow,
    tops: &[TopRow],
    ranks: &[RankRow],
) -> Result<()> {
    let name = format!("draw-{:06}", row.draw);
    Cols::default()
        .i(columns::tops::DRAW, tops.iter().map(|t| t.draw))
        .s(columns::tops::SPEC, tops.iter().map(|t| &t.spec))
        .s(columns::tops::LEVEL, tops.iter().map(|t| &t.level))
        .s(columns::tops::KIND, tops.iter().map(|t| &t.kind))
        .s(columns::tops::NAME, tops.iter().map(|t| &t.name))
        .f(columns::tops::IMPORTANCE, tops.iter().map(|t| t.importance))
        .i(columns::tops::RANK, tops.iter().map(|t| t.rank))
        .b(columns::tops::TOP, tops.iter().map(|t| t.top))
        .write(&null_dir.join(TOPS), &name)?;
    Cols::default()
        .i(gr::DRAW, ranks.iter().map(|t| t.draw))
        .s(gr::SPEC_ID, ranks.iter().map(|t| &t.spec))
        .f(gr::ERROR, ranks.iter().map(|t| t.error))
        .s(gr::LEVEL, ranks.iter().map(|t| &t.level))
        .s(gr::KIND, ranks.iter().map(|t| &t.kind))
        .s(gr::NAME, ranks.iter().map(|t| &t.name))
        .f(gr::IMPORTANCE, ranks.iter().map(|t| t.importance))
        .i(gr::RANK, ranks.iter().map(|t| t.rank))
        .b(gr::IN_POOL, ranks.iter().map(|t| t.in_pool))
        .write(&null_dir.join(GOODRANKS), &name)?;
    let r = std::slice::from_ref(row);
    Cols::default()
        .i(columns::draws::DRAW, r.iter().map(|t| t.draw))
        .s(columns::draws::SEED, r.iter().map(|t| &t.seed))
        .s(columns::draws::METRIC, r.iter().map(|t| &t.metric))
        .f(columns::draws::BEST_ERROR, r.iter().map(|t| t.best_error))
        .f(columns::draws::Q1_ERROR, r.iter().map(|t| t.q1_error))
        .f(
            columns::draws::MEDIAN_ERROR,
            r.iter().map(|t| t.median_error),
        )
        .f(columns::draws::Q3_ERROR, r.iter().map(|t| t.q3_error))
        .f(columns::draws::BEST_SKILL, r.iter().map(|t| t.best_skill))
        .f(
            columns::draws::SHARE_SKILL_POSITIVE,
            r.iter().map(|t| t.share_skill_positive),
        )
        .i(columns::draws::SPECS, r.iter().map(|t| t.specs))
        .i(columns::draws::N_OK, r.iter().map(|t| t.n_ok))
        .os(
            columns::draws::BEST_SPEC,
            r.iter().map(|t| t.best_spec.clone()),
        )
        .write(&null_dir.join(DRAWS), &name)?;
    Ok(())
}

/// Complete draw files of a table folder, by draw index.
pub fn complete_files(dir: &Path) -> Result<Vec<(u64, PathBuf)>> {
    crate::store::parts::complete_files(dir, draw_of)
}

fn each_batch(path: &Path, f: impl FnMut(&arrow_array::RecordBatch) -> Result<()>) -> Result<()> {
    crate::store::parts::each_batch(path, "null", f)
}

fn col<'a, T: 'static>(b: &'a arrow_array::RecordBatch, path: &Path, n: &str) -> Result<&'a T> {
    crate::store::parts::col(b, path, "null", n)
}

/// Read `null/draws` (sorted by draw).
pub fn read_draws(null_dir: &Path) -> Result<Vec<DrawRow>> {
    let mut out = Vec::new();
    for (_, path) in complete_files(&null_dir.join(DRAWS))? {
        each_batch(&path, |b| {
            let draw = col::<Int64Array>(b, &path, columns::draws::DRAW)?;
            let seed = col::<StringArray>(b, &path, columns::draws::SEED)?;
            let metric = col::<StringArray>(b, &path, columns::draws::METRIC)?;
            let f = |n: &str| col::<Float64Array>(b, &path, n);
            let (be, q1, me, q3, bs, sp) = (
                f(columns::draws::BEST_ERROR)?,
                f(columns::draws::Q1_ERROR)?,
                f(columns::draws::MEDIAN_ERROR)?,
                f(columns::draws::Q3_ERROR)?,
                f(columns::draws::BEST_SKILL)?,
                f(columns::draws::SHARE_SKILL_POSITIVE)?,
            );
            let specs = col::<Int64Array>(b, &path, columns::draws::SPECS)?;
            let n_ok = col::<Int64Array>(b, &path, columns::draws::N_OK)?;
            let best = col::<StringArray>(b, &path, columns::draws::BEST_SPEC)?;
            let os = |a: &StringArray, i: usize| (!a.is_null(i)).then(|| a.value(i).to_string());
            for i in 0..b.num_rows() {
                out.push(DrawRow {
                    draw: draw.value(i),
                    seed: seed.value(i).to_string(),
                    metric: metric.value(i).to_string(),
                    best_error: be.value(i),
                    q1_error: q1.value(i),
                    median_error: me.value(i),
                    q3_error: q3.value(i),
                    best_skill: bs.value(i),
                    share_skill_positive: sp.value(i),
                    specs: specs.value(i),
                    n_ok: n_ok.value(i),
                    best_spec: os(best, i),
                });
            }
            Ok(())
        })?;
    }
    Ok(out)
}

/// Read `null/tops` for the given (complete) draws.
pub fn read_tops(null_dir: &Path, draws: &[u64]) -> Result<Vec<TopRow>> {
    let mut out = Vec::new();
    for (d, path) in complete_files(&null_dir.join(TOPS))? {
        if draws.binary_search(&d).is_err() {
            continue;
        }
        each_batch(&path, |b| {
            let draw = col::<Int64Array>(b, &path, columns::tops::DRAW)?;
            let spec = col::<StringArray>(b, &path, columns::tops::SPEC)?;
            let level = col::<StringArray>(b, &path, columns::tops::LEVEL)?;
            let kind = col::<StringArray>(b, &path, columns::tops::KIND)?;
            let name = col::<StringArray>(b, &path, columns::tops::NAME)?;
            let imp = col::<Float64Array>(b, &path, columns::tops::IMPORTANCE)?;
            let rank = col::<Int64Array>(b, &path, columns::tops::RANK)?;
            let top = col::<BooleanArray>(b, &path, columns::tops::TOP)?;
            for i in 0..b.num_rows() {
                out.push(TopRow {
                    draw: draw.value(i),
                    spec: spec.value(i).to_string(),
                    level: level.value(i).to_string(),
                    kind: kind.value(i).to_string(),
                    name: name.value(i).to_string(),
                    importance: imp.value(i),
                    rank: rank.value(i),
                    top: top.value(i),
                });
            }
            Ok(())
        })?;
    }
    Ok(out)
}

/// Read `null/goodranks` for the given (complete) draws; `None` when a draw lacks its file
/// (a null written before the table existed).
pub fn read_goodranks(null_dir: &Path, draws: &[u64]) -> Result<Option<Vec<RankRow>>> {
    let files = complete_files(&null_dir.join(GOODRANKS))?;
    let have: Vec<u64> = files.iter().map(|f| f.0).collect();
    if draws.iter().any(|d| have.binary_search(d).is_err()) {
        return Ok(None);
    }
    let mut out = Vec::new();
    for (d, path) in files {
        if draws.binary_search(&d).is_err() {
            continue;
        }
        each_batch(&path, |b| {
            let draw = col::<Int64Array>(b, &path, gr::DRAW)?;
            let spec = col::<StringArray>(b, &path, gr::SPEC_ID)?;
            let error = col::<Float64Array>(b, &path, gr::ERROR)?;
            let level = col::<StringArray>(b, &path, gr::LEVEL)?;
            let kind = col::<StringArray>(b, &path, gr::KIND)?;
            let name = col::<StringArray>(b, &path, gr::NAME)?;
            let imp = col::<Float64Array>(b, &path, gr::IMPORTANCE)?;
            let rank = col::<Int64Array>(b, &path, gr::RANK)?;
            let in_pool = col::<BooleanArray>(b, &path, gr::IN_POOL)?;
            for i in 0..b.num_rows() {
                out.push(RankRow {
                    draw: draw.value(i),
                    spec: spec.value(i).to_string(),
                    error: error.value(i),
                    level: level.value(i).to_string(),
                    kind: kind.value(i).to_string(),
                    name: name.value(i).to_string(),
                    importance: imp.value(i),
                    rank: rank.value(i),
                    in_pool: in_pool.value(i),
                });
            }
            Ok(())
        })?;
    }
    Ok(Some(out))
}
