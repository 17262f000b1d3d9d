//! The report's Parquet tables, one per section (`report/NAME.parquet`), each written
//! atomically with [`crate::sink::write_parquet_atomic`].

use super::model::{Spread, GOOD_DEFINITIONS};
use super::Built;
use crate::error::Result;
use crate::sink::Cols;
use std::path::{Path, PathBuf};

/// Columns of a [`Spread`]: n, min, q1, median, q3, max, prefixed (a report-side addition
/// to the store's column builder, which knows nothing of the report's types).
trait SpreadCols {
    fn spread<'a, I: IntoIterator<Item = &'a Spread> + Clone>(self, prefix: &str, v: I) -> Self;
}

impl SpreadCols for Cols {
    fn spread<'a, I: IntoIterator<Item = &'a Spread> + Clone>(self, prefix: &str, v: I) -> Self {
        let p = |s: &str| format!("{prefix}_{s}");
        self.i("n", v.clone().into_iter().map(|s| s.n as i64))
            .f(&p("min"), v.clone().into_iter().map(|s| s.min))
            .f(&p("q1"), v.clone().into_iter().map(|s| s.q1))
            .f(&p("median"), v.clone().into_iter().map(|s| s.median))
            .f(&p("q3"), v.clone().into_iter().map(|s| s.q3))
            .f(&p("max"), v.into_iter().map(|s| s.max))
    }
}

/// Table names, in report order.
pub const REPORT_TABLES: &[&str] = &[
    "curve",
    "error_by_choice",
    "error_by_param",
    "error_shares",
    "rank_by_choice",
    "rank_shares",
    "good_sets",
    "good_makeup",
    "importance_spread",
    "rank_counts",
    "agreement",
    "conclusions",
    "stability",
    "best_frequency",
    "resamples",
];

/// Tables written only when the run has a permutation null (`report/null.rs`).
pub const NULL_TABLES: &[&str] = &["null_summary", "null_indicators", "null_claims"];

/// Write every table of `built` into `dir`.
pub fn write_all(built: &Built, dir: &Path) -> Result<Vec<PathBuf>> {
    let r = &built.report;
    let mut out = Vec::new();
    // curve: one row per ok spec, best first; a column per varying dimension.
    let c = &r.curve;
    let mut t = Cols::default()
        .s("spec_id", c.iter().map(|p| &p.spec_id))
        .i("position", c.iter().map(|p| p.position as i64))
        .f("error", c.iter().map(|p| p.error))
        .f("lower", c.iter().map(|p| p.lower))
        .f("upper", c.iter().map(|p| p.upper));
    for (g, def) in GOOD_DEFINITIONS.iter().enumerate() {
        t = t.b(&format!("good_{def}"), c.iter().map(|p| p.good[g]));
    }
    for (d, dim) in r.dimensions.iter().enumerate() {
        t = t.s(
            &dim.dimension,
            c.iter().map(|p| dim.choices[p.choices[d]].as_str()),
        );
    }
    out.push(t.write(dir, "curve")?);

    let v = &r.error_by_choice;
    out.push(
        Cols::default()
            .s("dimension", v.iter().map(|x| &x.dimension))
            .s("choice", v.iter().map(|x| &x.choice))
            .spread("error", v.iter().map(|x| &x.error))
            .write(dir, "error_by_choice")?,
    );
    let v = &r.error_by_param;
    out.push(
        Cols::default()
            .s("option", v.iter().map(|x| &x.option))
            .s("param", v.iter().map(|x| &x.param))
            .f("value", v.iter().map(|x| x.value))
            .spread("error", v.iter().map(|x| &x.error))
            .write(dir, "error_by_param")?,
    );
    let v = &r.error_shares;
    out.push(
        Cols::default()
            .s("dimension", v.iter().map(|x| &x.dimension))
            .f("lmg", v.iter().map(|x| x.lmg))
            .f("share", v.iter().map(|x| x.share))
            .f("r2_alone", v.iter().map(|x| x.r2_alone))
            .f("r2_total", v.iter().map(|x| x.r2_total))
            .write(dir, "error_shares")?,
    );
    let v = &r.rank_by_choice;
    out.push(
        Cols::default()
            .s("level", v.iter().map(|x| &x.level))
            .s("kind", v.iter().map(|x| &x.kind))
            .s("name", v.iter().map(|x| &x.name))
            .s("dimension", v.iter().map(|x| &x.dimension))
            .s("choice", v.iter().map(|x| &x.choice))
            .i("n", v.iter().map(|x| x.n as i64))
            .f("median_rank", v.iter().map(|x| x.median_rank))
            .f("share_top_k", v.iter().map(|x| x.share_top_k))
            .write(dir, "rank_by_choice")?,
    );
    let v = &r.rank_shares;
    out.push(
        Cols::default()
            .s("level", v.iter().map(|x| &x.level))
            .s("kind", v.iter().map(|x| &x.kind))
            .s("name", v.iter().map(|x| &x.name))
            .s("dimension", v.iter().map(|x| &x.dimension))
            .f("lmg", v.iter().map(|x| x.lmg))
            .f("share", v.iter().map(|x| x.share))
            .f("r2_total", v.iter().map(|x| x.r2_total))
            .write(dir, "rank_shares")?,
    );
    let v = &r.good_sets;
    out.push(
        Cols::default()
            .s("definition", v.iter().map(|x| &x.definition))
            .s("rule", v.iter().map(|x| &x.rule))
            .f("threshold", v.iter().map(|x| x.threshold))
            .i("size", v.iter().map(|x| x.size as i64))
            .i("distinct_fits", v.iter().map(|x| x.distinct_fits as i64))
            .f("share_of_ok", v.iter().map(|x| x.share_of_ok))
            .write(dir, "good_sets")?,
    );
    let v = &r.good_makeup;
    out.push(
        Cols::default()
            .s("definition", v.iter().map(|x| &x.definition))
            .s("dimension", v.iter().map(|x| &x.dimension))
            .s("choice", v.iter().map(|x| &x.choice))
            .i("in_good", v.iter().map(|x| x.in_good as i64))
            .i("in_ok", v.iter().map(|x| x.in_ok as i64))
            .f("share_of_good", v.iter().map(|x| x.share_of_good))
            .write(dir, "good_makeup")?,
    );
    let v = &r.importance;
    out.push(
        Cols::default()
            .s("level", v.iter().map(|x| &x.level))
            .s("kind", v.iter().map(|x| &x.kind))
            .s("name", v.iter().map(|x| &x.name))
            .spread("importance", v.iter().map(|x| &x.importance))
            .i("out_of_pool", v.iter().map(|x| x.out_of_pool as i64))
            .f("median_rank", v.iter().map(|x| x.median_rank))
            .i("best_rank", v.iter().map(|x| i64::from(x.best_rank)))
            .i("worst_rank", v.iter().map(|x| i64::from(x.worst_rank)))
            .f("share_top_k", v.iter().map(|x| x.share_top_k))
            .f("share_top_k_all", v.iter().map(|x| x.share_top_k_all))
            .write(dir, "importance_spread")?,
    );
    let v = &r.rank_counts;
    out.push(
        Cols::default()
            .s("level", v.iter().map(|x| &x.level))
            .s("kind", v.iter().map(|x| &x.kind))
            .s("name", v.iter().map(|x| &x.name))
            .i("rank", v.iter().map(|x| i64::from(x.rank)))
            .i("count", v.iter().map(|x| x.count as i64))
            .write(dir, "rank_counts")?,
    );
    // agreement: long form, one row per ordered pair of members (a != b).
    let (mut lv, mut kd, mut sa, mut sb, mut tau) = (vec![], vec![], vec![], vec![], vec![]);
    for a in &r.agreement {
        let m = a.members.len();
        for i in 0..m {
            for j in 0..m {
                if i != j {
                    lv.push(a.level.as_str());
                    kd.push(a.kind.as_str());
                    sa.push(a.members[i].as_str());
                    sb.push(a.members[j].as_str());
                    tau.push(a.matrix[i * m + j]);
                }
            }
        }
    }
    out.push(
        Cols::default()
            .s("level", lv)
            .s("kind", kd)
            .s("spec_a", sa)
            .s("spec_b", sb)
            .f("tau_b", tau)
            .write(dir, "agreement")?,
    );
    let v = &r.conclusions;
    out.push(
        Cols::default()
            .s("source", v.iter().map(|x| &x.source))
            .s("statement", v.iter().map(|x| &x.statement))
            .s("level", v.iter().map(|x| &x.level))
            .s("kind", v.iter().map(|x| &x.kind))
            .f("support_all", v.iter().map(|x| x.support_all))
            .i("n_all", v.iter().map(|x| x.n_all as i64))
            .f("support_good", v.iter().map(|x| x.support_good))
            .i("n_good", v.iter().map(|x| x.n_good as i64))
            .s("pivot_dimension", v.iter().map(|x| &x.pivot_dimension))
            .s("pivot_choice", v.iter().map(|x| &x.pivot_choice))
            .f("support_without_pivot", v.iter().map(|x| x.support_without))
            .write(dir, "conclusions")?,
    );
    let v = &r.stability;
    out.push(
        Cols::default()
            .s("level", v.iter().map(|x| &x.level))
            .s("kind", v.iter().map(|x| &x.kind))
            .s("name", v.iter().map(|x| &x.name))
            .f("mean_share_top_k", v.iter().map(|x| x.mean_share_top_k))
            .f("share_majority", v.iter().map(|x| x.share_majority))
            .f("share_in_best", v.iter().map(|x| x.share_in_best))
            .write(dir, "stability")?,
    );
    let v = &r.best_frequency;
    out.push(
        Cols::default()
            .s("spec_id", v.iter().map(|x| &x.spec_id))
            .f("share", v.iter().map(|x| x.share))
            .write(dir, "best_frequency")?,
    );
    // resamples: the bootstrap's draws, one row per (resample, draw).
    let nu = built.units.len().max(1);
    let ru = &built.resample_units;
    out.push(
        Cols::default()
            .i("resample", (0..ru.len()).map(|k| (k / nu) as i64))
            .i("draw", (0..ru.len()).map(|k| (k % nu) as i64))
            .s("unit", ru.iter().map(|&u| built.units[u as usize].as_str()))
            .write(dir, "resamples")?,
    );
    if let Some(n) = &built.report.null {
        out.extend(super::null::write_tables(n, dir)?);
    }
    Ok(out)
}
