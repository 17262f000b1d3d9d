//! The refit of the top N specs on unit subsamples in the report (`[refit]`): reads
//! `RUN_DIR/refit/` one-way and sets it beside the stored-error stability.
//!
//! Per (level, kind, name), over the complete subsamples in which some good spec holds that
//! kind: the mean share of the subsample's good specs (holding the kind) where the name is
//! top-k (a name a good spec's importances do not list counts as not top), the share of
//! subsamples where that share is at least one half, and, over the subsamples whose best
//! spec holds the kind, the share where the best ranks it top-k. The same three numbers as
//! [`super::stability`], so the two sit side by side; they differ in what moves: there
//! the units are resampled and the stored errors reweighted (no fit changes), here the top
//! N specs are refitted on each subsample (fits, importances and ranks change), and the
//! best and the good set are among those N only.

use super::model::Stability;
use crate::error::Result;
use crate::refit::table::{read_fits, read_tops, REFIT_DIR};
use crate::results::RunSet;
use crate::sink::Cols;
use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};

/// The refit as the report shows it.
#[derive(Debug, Clone, Default)]
pub struct RefitReport {
    /// Complete subsamples read (B) and asked.
    pub resamples: usize,
    pub resamples_asked: usize,
    /// N: specs refitted.
    pub specs: usize,
    pub units: usize,
    pub units_kept: usize,
    pub metric: String,
    pub top_k: usize,
    /// The good rule among the N, and why it is not the report's own (if so).
    pub rule: String,
    pub rule_note: Option<String>,
    pub scheme: String,
    pub names: Vec<RefitName>,
    pub specs_table: Vec<RefitSpec>,
    pub notes: Vec<String>,
}

/// One name's stability under the refit, beside the stored-error stability.
#[derive(Debug, Clone, Default)]
pub struct RefitName {
    pub level: String,
    pub kind: String,
    pub name: String,
    /// Subsamples in which a good spec holds the kind.
    pub resamples: usize,
    pub mean_share_top_k: f64,
    pub share_majority: f64,
    pub share_in_best: f64,
    /// The same name's stored-error stability (NaN when the report has none for it).
    pub stored_mean_share_top_k: f64,
    pub stored_share_majority: f64,
    pub stored_share_in_best: f64,
}

/// One refitted spec over the subsamples.
#[derive(Debug, Clone, Default)]
pub struct RefitSpec {
    pub spec_id: String,
    pub run_rank: usize,
    pub run_error: f64,
    /// Median error over the subsamples where it succeeded (NaN: none).
    pub median_error: f64,
    pub share_best: f64,
    pub share_good: f64,
    pub failed: usize,
    /// The spec whose run fit is bit for bit this one's (lowest index of its fit class),
    /// when that is another spec: the two count as two specs but are one fit.
    pub same_fit_as: Option<String>,
}

fn frac(k: usize, n: usize) -> f64 {
    if n == 0 {
        f64::NAN
    } else {
        k as f64 / n as f64
    }
}

/// The refit of a whole-space run read as `set`, when it has one; `stability` is the
/// report's stored-error stability (joined by level, kind and name).
pub fn load(
    set: &RunSet,
    stability: &[Stability],
    twin_of: &dyn Fn(&str) -> Option<String>,
) -> Result<Option<RefitReport>> {
    let Some(dir) = set.dirs.iter().find(|d| d.shard.is_none()) else {
        return Ok(None);
    };
    let rdir = dir.path.join(REFIT_DIR);
    let Ok(text) = std::fs::read_to_string(rdir.join(crate::schema::MANIFEST)) else {
        return Ok(None);
    };
    let m: serde_json::Value = serde_json::from_str(&text).unwrap_or_default();
    let asked = m["resamples"].as_u64().unwrap_or(0);
    let fits = read_fits(&rdir, asked)?;
    if fits.is_empty() {
        return Ok(None);
    }
    let mut done: Vec<u64> = fits.iter().map(|f| f.resample as u64).collect();
    done.sort_unstable();
    done.dedup();
    let tops = read_tops(&rdir, &done)?;
    let id = &m["identity"];
    let mut r = RefitReport {
        resamples: done.len(),
        resamples_asked: asked as usize,
        specs: id["specs"].as_u64().unwrap_or(0) as usize,
        units: m["units"].as_u64().unwrap_or(0) as usize,
        units_kept: m["units_kept"].as_u64().unwrap_or(0) as usize,
        metric: id["metric"].as_str().unwrap_or("").to_string(),
        top_k: id["top_k"].as_u64().unwrap_or(0) as usize,
        rule: m["good_rule"].as_str().unwrap_or("").to_string(),
        rule_note: m["good_rule_note"].as_str().map(str::to_string),
        scheme: m["scheme"].as_str().unwrap_or("").to_string(),
        ..Default::default()
    };
    if r.resamples < r.resamples_asked {
        r.notes.push(format!(
            "The refit is incomplete: {} of {} subsamples (rerun the same `forkmap run` to finish it); its shares use the subsamples present.",
            r.resamples, r.resamples_asked
        ));
    }
    // Per spec.
    let mut per: BTreeMap<(i64, String), Vec<&crate::refit::table::FitRow>> = BTreeMap::new();
    for f in &fits {
        per.entry((f.run_rank, f.spec_id.clone()))
            .or_default()
            .push(f);
    }
    for ((rank, spec_id), v) in per {
        let mut errs: Vec<f64> = v
            .iter()
            .map(|f| f.error)
            .filter(|e| e.is_finite())
            .collect();
        errs.sort_by(f64::total_cmp);
        r.specs_table.push(RefitSpec {
            same_fit_as: twin_of(&spec_id),
            spec_id,
            run_rank: rank as usize,
            run_error: v[0].run_error,
            median_error: if errs.is_empty() {
                f64::NAN
            } else {
                crate::metrics::quantile(&errs, 0.5)
            },
            share_best: frac(v.iter().filter(|f| f.best).count(), done.len()),
            share_good: frac(v.iter().filter(|f| f.good).count(), done.len()),
            failed: v.iter().filter(|f| !f.error.is_finite()).count(),
        });
    }
    // Per name: subsamples where a good spec holds the kind, and where the best does.
    let mut held: BTreeMap<(String, String), BTreeSet<i64>> = BTreeMap::new();
    let mut best_held: BTreeMap<(String, String), BTreeSet<i64>> = BTreeMap::new();
    let mut by_name: BTreeMap<(String, String, String), Vec<&crate::refit::table::TopRow>> =
        BTreeMap::new();
    for t in &tops {
        let lk = (t.level.clone(), t.kind.clone());
        held.entry(lk.clone()).or_default().insert(t.resample);
        if t.best_holds {
            best_held.entry(lk).or_default().insert(t.resample);
        }
        by_name
            .entry((t.level.clone(), t.kind.clone(), t.name.clone()))
            .or_default()
            .push(t);
    }
    let stored: BTreeMap<(&str, &str, &str), &Stability> = stability
        .iter()
        .map(|s| ((s.level.as_str(), s.kind.as_str(), s.name.as_str()), s))
        .collect();
    for ((level, kind, name), rows) in by_name {
        let lk = (level.clone(), kind.clone());
        let n = held.get(&lk).map_or(0, BTreeSet::len);
        let nb = best_held.get(&lk).map_or(0, BTreeSet::len);
        // Subsamples holding the kind without a row for this name add a share of 0.
        let shares: Vec<f64> = rows
            .iter()
            .filter(|t| t.good_holding > 0)
            .map(|t| t.good_top as f64 / t.good_holding as f64)
            .collect();
        let s = stored.get(&(level.as_str(), kind.as_str(), name.as_str()));
        r.names.push(RefitName {
            resamples: n,
            mean_share_top_k: if n == 0 {
                f64::NAN
            } else {
                shares.iter().sum::<f64>() / n as f64
            },
            share_majority: frac(shares.iter().filter(|&&v| v >= 0.5).count(), n),
            share_in_best: frac(rows.iter().filter(|t| t.top_in_best).count(), nb),
            stored_mean_share_top_k: s.map_or(f64::NAN, |s| s.mean_share_top_k),
            stored_share_majority: s.map_or(f64::NAN, |s| s.share_majority),
            stored_share_in_best: s.map_or(f64::NAN, |s| s.share_in_best),
            level,
            kind,
            name,
        });
    }
    // Indicators before groups, then by refit share (highest first), then by name.
    r.names.sort_by(|a, b| {
        (a.level != "indicator")
            .cmp(&(b.level != "indicator"))
            .then(a.kind.cmp(&b.kind))
            .then(b.mean_share_top_k.total_cmp(&a.mean_share_top_k))
            .then(a.name.cmp(&b.name))
    });
    Ok(Some(r))
}

/// The headline sentence: how often the run's best spec stays best and good when the top
/// N are refitted, and the indicators most often top-k across the refitted good sets (the
/// permutation kind when present, else the kind held in the most subsamples).
pub fn headline(r: &RefitReport) -> String {
    let first = r.specs_table.iter().find(|s| s.run_rank == 1);
    let kind = r
        .names
        .iter()
        .filter(|n| n.level == "indicator")
        .max_by_key(|n| {
            (
                n.kind == "permutation",
                n.resamples,
                std::cmp::Reverse(n.kind.clone()),
            )
        })
        .map(|n| n.kind.clone());
    let mut tops: Vec<&RefitName> = r
        .names
        .iter()
        .filter(|n| n.level == "indicator" && Some(&n.kind) == kind.as_ref())
        .filter(|n| n.mean_share_top_k >= 0.5)
        .collect();
    tops.sort_by(|a, b| {
        b.mean_share_top_k
            .total_cmp(&a.mean_share_top_k)
            .then(a.name.cmp(&b.name))
    });
    let names = if tops.is_empty() {
        format!(
            "no indicator is top-{} in half of the refitted good sets on average",
            r.top_k
        )
    } else {
        format!(
            "top-{} on average in the refitted good sets ({} importance): {}",
            r.top_k,
            kind.unwrap_or_default(),
            tops.iter()
                .take(5)
                .map(|n| format!("{} ({:.0}%)", n.name, 100.0 * n.mean_share_top_k))
                .collect::<Vec<_>>()
                .join(", ")
        )
    };
    format!(
        "Refitting the top {} specs on {} unit subsamples ({} of {} units each, without replacement), the run's best spec is best among them in {:.0}% and good in {:.0}% of the subsamples; {names}.",
        r.specs,
        r.resamples,
        r.units_kept,
        r.units,
        100.0 * first.map_or(f64::NAN, |f| f.share_best),
        100.0 * first.map_or(f64::NAN, |f| f.share_good),
    )
}

/// Report tables written when the run has a refit.
pub const TABLES: &[&str] = &["refit_stability", "refit_specs"];

/// `refit_stability.parquet` and `refit_specs.parquet` under the report folder.
pub fn write_tables(r: &RefitReport, dir: &Path) -> Result<Vec<PathBuf>> {
    use crate::schema::report::{refit_specs as sp, refit_stability as rs};
    let v = &r.names;
    let a = Cols::default()
        .s(rs::LEVEL, v.iter().map(|x| &x.level))
        .s(rs::KIND, v.iter().map(|x| &x.kind))
        .s(rs::NAME, v.iter().map(|x| &x.name))
        .i(rs::RESAMPLES, v.iter().map(|x| x.resamples as i64))
        .of(rs::MEAN_SHARE_TOP_K, v.iter().map(|x| x.mean_share_top_k))
        .of(rs::SHARE_MAJORITY, v.iter().map(|x| x.share_majority))
        .of(rs::SHARE_IN_BEST, v.iter().map(|x| x.share_in_best))
        .of(
            rs::STORED_MEAN_SHARE_TOP_K,
            v.iter().map(|x| x.stored_mean_share_top_k),
        )
        .of(
            rs::STORED_SHARE_MAJORITY,
            v.iter().map(|x| x.stored_share_majority),
        )
        .of(
            rs::STORED_SHARE_IN_BEST,
            v.iter().map(|x| x.stored_share_in_best),
        )
        .i(rs::SPECS, v.iter().map(|_| r.specs as i64))
        .i(rs::TOP_K, v.iter().map(|_| r.top_k as i64))
        .write(dir, TABLES[0])?;
    let v = &r.specs_table;
    let b = Cols::default()
        .s(sp::SPEC_ID, v.iter().map(|x| &x.spec_id))
        .i(sp::RUN_RANK, v.iter().map(|x| x.run_rank as i64))
        .f(sp::RUN_ERROR, v.iter().map(|x| x.run_error))
        .of(sp::MEDIAN_ERROR, v.iter().map(|x| x.median_error))
        .f(sp::SHARE_BEST, v.iter().map(|x| x.share_best))
        .f(sp::SHARE_GOOD, v.iter().map(|x| x.share_good))
        .i(sp::FAILED, v.iter().map(|x| x.failed as i64))
        .i(sp::RESAMPLES, v.iter().map(|_| r.resamples as i64))
        .s(sp::METRIC, v.iter().map(|_| r.metric.as_str()))
        .os(sp::SAME_FIT_AS, v.iter().map(|x| x.same_fit_as.clone()))
        .write(dir, TABLES[1])?;
    Ok(vec![a, b])
}
