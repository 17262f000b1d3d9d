//! The report's Parquet tables, one per section (`report/NAME.parquet`), each written
//! atomically with [`crate::sink::write_parquet_atomic`].

use super::model::{Spread, GOOD_DEFINITIONS};
use super::Built;
use crate::error::Result;
use crate::schema::report as columns;
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
        .s(columns::curve::SPEC_ID, c.iter().map(|p| &p.spec_id))
        .i(
            columns::curve::POSITION,
            c.iter().map(|p| p.position as i64),
        )
        .f(columns::curve::ERROR, c.iter().map(|p| p.error))
        .f(columns::curve::LOWER, c.iter().map(|p| p.lower))
        .f(columns::curve::UPPER, c.iter().map(|p| p.upper));
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
            .s(
                columns::error_by_choice::DIMENSION,
                v.iter().map(|x| &x.dimension),
            )
            .s(
                columns::error_by_choice::CHOICE,
                v.iter().map(|x| &x.choice),
            )
            .spread(
                columns::error_by_choice::ERROR_SPREAD,
                v.iter().map(|x| &x.error),
            )
            .write(dir, "error_by_choice")?,
    );
    let v = &r.error_by_param;
    out.push(
        Cols::default()
            .s(columns::error_by_param::OPTION, v.iter().map(|x| &x.option))
            .s(columns::error_by_param::PARAM, v.iter().map(|x| &x.param))
            .f(columns::error_by_param::VALUE, v.iter().map(|x| x.value))
            .spread(
                columns::error_by_param::ERROR_SPREAD,
                v.iter().map(|x| &x.error),
            )
            .write(dir, "error_by_param")?,
    );
    let v = &r.error_shares;
    out.push(
        Cols::default()
            .s(
                columns::error_shares::DIMENSION,
                v.iter().map(|x| &x.dimension),
            )
            .f(columns::error_shares::LMG, v.iter().map(|x| x.lmg))
            .f(columns::error_shares::SHARE, v.iter().map(|x| x.share))
            .f(
                columns::error_shares::R2_ALONE,
                v.iter().map(|x| x.r2_alone),
            )
            .f(
                columns::error_shares::R2_TOTAL,
                v.iter().map(|x| x.r2_total),
            )
            .write(dir, "error_shares")?,
    );
    let v = &r.rank_by_choice;
    out.push(
        Cols::default()
            .s(columns::rank_by_choice::LEVEL, v.iter().map(|x| &x.level))
            .s(columns::rank_by_choice::KIND, v.iter().map(|x| &x.kind))
            .s(columns::rank_by_choice::NAME, v.iter().map(|x| &x.name))
            .s(
                columns::rank_by_choice::DIMENSION,
                v.iter().map(|x| &x.dimension),
            )
            .s(columns::rank_by_choice::CHOICE, v.iter().map(|x| &x.choice))
            .i(columns::rank_by_choice::N, v.iter().map(|x| x.n as i64))
            .f(
                columns::rank_by_choice::MEDIAN_RANK,
                v.iter().map(|x| x.median_rank),
            )
            .f(
                columns::rank_by_choice::SHARE_TOP_K,
                v.iter().map(|x| x.share_top_k),
            )
            .write(dir, "rank_by_choice")?,
    );
    let v = &r.rank_shares;
    out.push(
        Cols::default()
            .s(columns::rank_shares::LEVEL, v.iter().map(|x| &x.level))
            .s(columns::rank_shares::KIND, v.iter().map(|x| &x.kind))
            .s(columns::rank_shares::NAME, v.iter().map(|x| &x.name))
            .s(
                columns::rank_shares::DIMENSION,
                v.iter().map(|x| &x.dimension),
            )
            .f(columns::rank_shares::LMG, v.iter().map(|x| x.lmg))
            .f(columns::rank_shares::SHARE, v.iter().map(|x| x.share))
            .f(columns::rank_shares::R2_TOTAL, v.iter().map(|x| x.r2_total))
            .write(dir, "rank_shares")?,
    );
    let v = &r.good_sets;
    out.push(
        Cols::default()
            .s(
                columns::good_sets::DEFINITION,
                v.iter().map(|x| &x.definition),
            )
            .s(columns::good_sets::RULE, v.iter().map(|x| &x.rule))
            .f(columns::good_sets::THRESHOLD, v.iter().map(|x| x.threshold))
            .i(columns::good_sets::SIZE, v.iter().map(|x| x.size as i64))
            .i(
                columns::good_sets::DISTINCT_FITS,
                v.iter().map(|x| x.distinct_fits as i64),
            )
            .f(
                columns::good_sets::SHARE_OF_OK,
                v.iter().map(|x| x.share_of_ok),
            )
            .write(dir, "good_sets")?,
    );
    let v = &r.good_makeup;
    out.push(
        Cols::default()
            .s(
                columns::good_makeup::DEFINITION,
                v.iter().map(|x| &x.definition),
            )
            .s(
                columns::good_makeup::DIMENSION,
                v.iter().map(|x| &x.dimension),
            )
            .s(columns::good_makeup::CHOICE, v.iter().map(|x| &x.choice))
            .i(
                columns::good_makeup::IN_GOOD,
                v.iter().map(|x| x.in_good as i64),
            )
            .i(
                columns::good_makeup::IN_OK,
                v.iter().map(|x| x.in_ok as i64),
            )
            .f(
                columns::good_makeup::SHARE_OF_GOOD,
                v.iter().map(|x| x.share_of_good),
            )
            .write(dir, "good_makeup")?,
    );
    let v = &r.importance;
    out.push(
        Cols::default()
            .s(
                columns::importance_spread::LEVEL,
                v.iter().map(|x| &x.level),
            )
            .s(columns::importance_spread::KIND, v.iter().map(|x| &x.kind))
            .s(columns::importance_spread::NAME, v.iter().map(|x| &x.name))
            .spread(
                columns::importance_spread::IMPORTANCE_SPREAD,
                v.iter().map(|x| &x.importance),
            )
            .i(
                columns::importance_spread::OUT_OF_POOL,
                v.iter().map(|x| x.out_of_pool as i64),
            )
            .f(
                columns::importance_spread::MEDIAN_RANK,
                v.iter().map(|x| x.median_rank),
            )
            .i(
                columns::importance_spread::BEST_RANK,
                v.iter().map(|x| i64::from(x.best_rank)),
            )
            .i(
                columns::importance_spread::WORST_RANK,
                v.iter().map(|x| i64::from(x.worst_rank)),
            )
            .f(
                columns::importance_spread::SHARE_TOP_K,
                v.iter().map(|x| x.share_top_k),
            )
            .f(
                columns::importance_spread::SHARE_TOP_K_ALL,
                v.iter().map(|x| x.share_top_k_all),
            )
            .write(dir, "importance_spread")?,
    );
    let v = &r.rank_counts;
    out.push(
        Cols::default()
            .s(columns::rank_counts::LEVEL, v.iter().map(|x| &x.level))
            .s(columns::rank_counts::KIND, v.iter().map(|x| &x.kind))
            .s(columns::rank_counts::NAME, v.iter().map(|x| &x.name))
            .i(
                columns::rank_counts::RANK,
                v.iter().map(|x| i64::from(x.rank)),
            )
            .i(
                columns::rank_counts::COUNT,
                v.iter().map(|x| x.count as i64),
            )
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
            .s(columns::agreement::LEVEL, lv)
            .s(columns::agreement::KIND, kd)
            .s(columns::agreement::SPEC_A, sa)
            .s(columns::agreement::SPEC_B, sb)
            .f(columns::agreement::TAU_B, tau)
            .write(dir, "agreement")?,
    );
    let v = &r.conclusions;
    out.push(
        Cols::default()
            .s(columns::conclusions::SOURCE, v.iter().map(|x| &x.source))
            .s(
                columns::conclusions::STATEMENT,
                v.iter().map(|x| &x.statement),
            )
            .s(columns::conclusions::LEVEL, v.iter().map(|x| &x.level))
            .s(columns::conclusions::KIND, v.iter().map(|x| &x.kind))
            .f(
                columns::conclusions::SUPPORT_ALL,
                v.iter().map(|x| x.support_all),
            )
            .i(
                columns::conclusions::N_ALL,
                v.iter().map(|x| x.n_all as i64),
            )
            .f(
                columns::conclusions::SUPPORT_GOOD,
                v.iter().map(|x| x.support_good),
            )
            .i(
                columns::conclusions::N_GOOD,
                v.iter().map(|x| x.n_good as i64),
            )
            .s(
                columns::conclusions::PIVOT_DIMENSION,
                v.iter().map(|x| &x.pivot_dimension),
            )
            .s(
                columns::conclusions::PIVOT_CHOICE,
                v.iter().map(|x| &x.pivot_choice),
            )
            .f(
                columns::conclusions::SUPPORT_WITHOUT_PIVOT,
                v.iter().map(|x| x.support_without),
            )
            .write(dir, "conclusions")?,
    );
    let v = &r.stability;
    out.push(
        Cols::default()
            .s(columns::stability::LEVEL, v.iter().map(|x| &x.level))
            .s(columns::stability::KIND, v.iter().map(|x| &x.kind))
            .s(columns::stability::NAME, v.iter().map(|x| &x.name))
            .f(
                columns::stability::MEAN_SHARE_TOP_K,
                v.iter().map(|x| x.mean_share_top_k),
            )
            .f(
                columns::stability::SHARE_MAJORITY,
                v.iter().map(|x| x.share_majority),
            )
            .f(
                columns::stability::SHARE_IN_BEST,
                v.iter().map(|x| x.share_in_best),
            )
            .write(dir, "stability")?,
    );
    let v = &r.best_frequency;
    out.push(
        Cols::default()
            .s(
                columns::best_frequency::SPEC_ID,
                v.iter().map(|x| &x.spec_id),
            )
            .f(columns::best_frequency::SHARE, v.iter().map(|x| x.share))
            .write(dir, "best_frequency")?,
    );
    // resamples: the bootstrap's draws, one row per (resample, draw).
    let nu = built.units.len().max(1);
    let ru = &built.resample_units;
    out.push(
        Cols::default()
            .i(
                columns::resamples::RESAMPLE,
                (0..ru.len()).map(|k| (k / nu) as i64),
            )
            .i(
                columns::resamples::DRAW,
                (0..ru.len()).map(|k| (k % nu) as i64),
            )
            .s(
                columns::resamples::UNIT,
                ru.iter().map(|&u| built.units[u as usize].as_str()),
            )
            .write(dir, "resamples")?,
    );
    if let Some(n) = &built.report.null {
        out.extend(super::null::write_tables(n, dir)?);
    }
    if let Some(r) = &built.report.refit {
        out.extend(super::refit::write_tables(r, dir)?);
    }
    Ok(out)
}
