//! The refit of the run's top N specs on unit subsamples (`[refit]`, issue 17's optional
//! half of "stability under resampling"). The report's stability section recomputes the
//! best spec and the good set from the stored per-unit errors without refitting; this pass
//! refits, so the fits themselves (stages, models, importances) move with the units.
//!
//! * Scheme: subsampling without replacement. Subsample `r` keeps `round(fraction x units)`
//!   units drawn by a seeded shuffle (`mix(mix(seed, REFIT_UNITS), r)`), with every row
//!   (wave) of a kept unit and none of a dropped one. Without replacement no unit appears
//!   twice, so grouped folds on the subsample cannot put copies of one unit on both sides
//!   of a fold (the leak a bootstrap with replacement would need extra care against).
//! * Each subsample is a derived panel ([`crate::nested::subset_rows`]: units renumbered,
//!   codebook, standard errors and outcome scale carried) with folds of its own: the run's
//!   `[folds]` scheme drawn on it from `mix(mix(seed, REFIT_FOLDS), r)`. The ordinary
//!   [`Sweep`] runs the N specs there with the run's importance kinds (the permutation
//!   kinds for all N, never deferred), so every fit sees the subsample's training rows only
//!   (the sweep's invariant; `tests/refit.rs` audits it and poisons the dropped units).
//! * Top N: the run's ok specs by the report's metric, lowest first, ties by spec id.
//! * Per subsample: each spec's error, the best (lowest error, ties by spec id), the good
//!   set by the report's rule among the N (ratio; margin when `[map] margin` is given; the
//!   paired rule and the default margin need a bootstrap inside every subsample, so the
//!   ratio rule stands in, stated), and per (level, kind, name) how many good specs holding
//!   that kind rank it top-k (rank <= k, importance > 0, in the pool) and whether the best
//!   spec does. Model streams are the run seed's, keyed by spec id, as in the main sweep.

pub mod exec;
pub mod table;

use crate::config::importance::ImportanceSection;
use crate::config::FoldsSection;
use crate::error::{Error, Result};
use crate::folds::FoldPlan;
use crate::importance::ImportanceRow;
use crate::panel::Panel;
use crate::space::ChoiceSpace;
use crate::streams::{mix, REFIT_FOLDS, REFIT_UNITS};
use crate::sweep::{Audit, Sweep};
use rand::seq::SliceRandom;
use rand::SeedableRng;
use std::collections::BTreeMap;
use std::sync::{Arc, Mutex};
use table::{FitRow, TopRow};

/// How a subsample's good set is drawn among the refitted specs.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Rule {
    /// error <= (1 + eps) x best.
    Ratio(f64),
    /// error <= best + margin.
    Margin(f64),
}

impl Rule {
    /// The rule from the report's settings (`good`, `ratio_eps`, `margin`) and, when it is
    /// not the report's own rule, why.
    pub fn from_map(good: &str, ratio_eps: f64, margin: Option<f64>) -> (Rule, Option<String>) {
        match (good, margin) {
            ("ratio", _) => (Rule::Ratio(ratio_eps), None),
            ("margin", Some(m)) => (Rule::Margin(m), None),
            ("margin", None) => (
                Rule::Ratio(ratio_eps),
                Some(format!("the report's margin rule takes its default margin from a bootstrap of the best spec's error, which a subsample does not have: the ratio rule (eps {ratio_eps}) stands in")),
            ),
            _ => (
                Rule::Ratio(ratio_eps),
                Some(format!("the paired rule needs a bootstrap inside every subsample: the ratio rule (eps {ratio_eps}) stands in")),
            ),
        }
    }

    /// Plain statement, e.g. `mae <= (1 + 0.05) x best`.
    pub fn text(&self, metric: &str) -> String {
        match self {
            Rule::Ratio(e) => format!("{metric} <= (1 + {e}) x best"),
            Rule::Margin(m) => format!("{metric} <= best + {m}"),
        }
    }

    fn cut(&self, best: f64) -> f64 {
        match self {
            Rule::Ratio(e) => best * (1.0 + e),
            Rule::Margin(m) => best + m,
        }
    }
}

/// Everything one subsample needs.
pub struct RefitInput<'a> {
    pub panel: &'a Panel,
    pub space: &'a ChoiceSpace,
    /// The run's `[folds]` (drawn anew on each subsample).
    pub folds: &'a FoldsSection,
    /// The run's `[importance]` (`within` is ignored: every kind for every refitted spec).
    pub importance: &'a ImportanceSection,
    /// The run's seed (model streams) and the refit's seed (subsamples, folds).
    pub run_seed: u64,
    pub seed: u64,
    /// Share of units kept.
    pub fraction: f64,
    /// The top N: (spec index, the run's error), best first.
    pub top: Vec<(usize, f64)>,
    /// The report's metric, top k and good rule.
    pub metric: String,
    pub top_k: usize,
    pub rule: Rule,
}

/// Units each subsample keeps out of `n_units`: `round(fraction x n)`, at least 1.
pub fn kept(n_units: usize, fraction: f64) -> usize {
    ((fraction * n_units as f64).round() as usize).clamp(1, n_units.max(1))
}

/// Seed of subsample `r`.
pub fn units_seed(seed: u64, r: u64) -> u64 {
    mix(mix(seed, REFIT_UNITS), r)
}

/// The units of subsample `r` (indices into `panel.units`), ascending.
pub fn subsample_units(n_units: usize, fraction: f64, seed: u64, r: u64) -> Vec<usize> {
    let mut all: Vec<usize> = (0..n_units).collect();
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(units_seed(seed, r));
    all.shuffle(&mut rng);
    all.truncate(kept(n_units, fraction));
    all.sort_unstable();
    all
}

/// The rows of `units` (every wave of each), in panel order.
pub fn rows_of(panel: &Panel, units: &[usize]) -> Vec<usize> {
    (0..panel.n_rows())
        .filter(|&r| units.binary_search(&panel.row_unit[r]).is_ok())
        .collect()
}

/// The derived panel of subsample `r` and the original panel rows it holds (row `i` of the
/// derived panel is original row `rows[i]`).
pub fn subsample(panel: &Panel, fraction: f64, seed: u64, r: u64) -> Result<(Panel, Vec<usize>)> {
    let units = subsample_units(panel.n_units(), fraction, seed, r);
    let rows = rows_of(panel, &units);
    Ok((crate::nested::subset_rows(panel, &rows)?, rows))
}

/// The fold plan of subsample `r` on its derived panel.
pub fn fold_plan(inp: &RefitInput, sub: &Panel, r: u64) -> Result<FoldPlan> {
    FoldPlan::new(sub, inp.folds, mix(mix(inp.seed, REFIT_FOLDS), r)).map_err(|e| {
        Error::Folds(format!(
            "refit: subsample {r} ({} units, refit.fraction = {}): {e}",
            sub.n_units(),
            inp.fraction
        ))
    })
}

/// Checks before anything runs: a subsample must hold enough units for the folds.
pub fn check(panel: &Panel, folds: &FoldsSection, fraction: f64) -> Result<()> {
    let m = kept(panel.n_units(), fraction);
    let need = match folds.scheme {
        crate::config::FoldScheme::GroupedKfold => folds.k,
        crate::config::FoldScheme::LeaveOneUnitOut => 2,
    };
    if m < need || m >= panel.n_units() {
        return Err(Error::Folds(format!(
            "refit.fraction = {fraction} keeps {m} of {} units: a subsample needs at least {need} units (the folds) and must leave one out",
            panel.n_units()
        )));
    }
    Ok(())
}

/// One refitted spec in a subsample.
struct Got {
    spec: usize,
    error: f64,
    status: String,
    message: Option<String>,
    importance: Vec<ImportanceRow>,
}

fn metric_of(s: &crate::metrics::Scores, metric: &str) -> f64 {
    match metric {
        "rmse" => s.rmse,
        "unit_mae" => s.unit_mae,
        _ => s.mae,
    }
}

/// Run subsample `r`: derive the panel, draw its folds, refit the top N through the sweep
/// (with `audit`, when given, on every fitted step), and summarise. A pure function of the
/// input and `r`, whatever the thread count (results are ordered by spec index).
pub fn resample(
    inp: &RefitInput,
    r: u64,
    audit: Option<Arc<dyn Audit>>,
) -> Result<(Vec<FitRow>, Vec<TopRow>)> {
    let (sub, rows) = subsample(inp.panel, inp.fraction, inp.seed, r)?;
    let folds = fold_plan(inp, &sub, r)?;
    let subset: Vec<usize> = {
        let mut v: Vec<usize> = inp.top.iter().map(|t| t.0).collect();
        v.sort_unstable();
        v
    };
    let mut sweep = Sweep::new(&sub, inp.space, &folds, inp.run_seed, Some(&subset))?;
    sweep.describe = false;
    sweep.audit = audit;
    sweep.importance = Some(ImportanceSection {
        within: None,
        ..inp.importance.clone()
    });
    let got: Mutex<Vec<Got>> = Mutex::new(Vec::with_capacity(subset.len()));
    sweep.run(&|res| {
        let error = res
            .scores
            .as_ref()
            .filter(|_| res.status.is_ok())
            .map_or(f64::NAN, |s| metric_of(s, &inp.metric));
        if let Ok(mut g) = got.lock() {
            g.push(Got {
                spec: res.spec,
                error,
                status: res.status.to_string(),
                message: res.message,
                importance: res.importance,
            });
        }
    });
    let mut got = got.into_inner().unwrap_or_default();
    got.sort_by_key(|g| g.spec);
    Ok(summarise(inp, r, &sub, rows.len(), &got))
}

/// (level, kind, name) -> (good specs holding the kind, of them ranking the name top-k,
/// the best holds the kind, the best ranks it top-k).
type Tally = BTreeMap<(String, String, String), (i64, i64, bool, bool)>;

/// The best of `got` (lowest finite error, ties by `id`), the good cut under `rule`, and
/// the top-k tally over the good specs. A name is top-k in a spec when its rank is <= k,
/// its importance > 0 and it is in the spec's pool (the report's `KindTable::is_top`).
fn tally<'g>(
    got: &'g [Got],
    id: &dyn Fn(usize) -> String,
    rule: Rule,
    k: usize,
) -> (Option<&'g Got>, f64, Tally) {
    let best = got.iter().filter(|g| g.error.is_finite()).min_by(|a, b| {
        a.error
            .total_cmp(&b.error)
            .then(id(a.spec).cmp(&id(b.spec)))
    });
    let cut = best.map_or(f64::NAN, |b| rule.cut(b.error));
    let k = k as u32;
    let is_top = |row: &ImportanceRow| row.rank <= k && row.importance > 0.0 && row.in_pool;
    let mut acc: Tally = BTreeMap::new();
    for g in got.iter().filter(|g| g.error <= cut) {
        let is_best = best.is_some_and(|b| b.spec == g.spec);
        for row in &g.importance {
            let e = acc
                .entry((row.level.into(), row.kind.into(), row.name.to_string()))
                .or_default();
            e.0 += 1;
            if is_top(row) {
                e.1 += 1;
            }
            if is_best {
                e.2 = true;
                e.3 = is_top(row);
            }
        }
    }
    (best, cut, acc)
}

fn summarise(
    inp: &RefitInput,
    r: u64,
    sub: &Panel,
    n_rows: usize,
    got: &[Got],
) -> (Vec<FitRow>, Vec<TopRow>) {
    let id = |s: usize| inp.space.specs[s].id.clone();
    let (best, cut, acc) = tally(got, &id, inp.rule, inp.top_k);
    let good = |g: &Got| g.error.is_finite() && g.error <= cut;
    let seed = format!("{:016x}", units_seed(inp.seed, r));
    let by_spec: BTreeMap<usize, &Got> = got.iter().map(|g| (g.spec, g)).collect();
    let fits: Vec<FitRow> = inp
        .top
        .iter()
        .enumerate()
        .map(|(rank, &(s, run_error))| {
            let g = by_spec.get(&s);
            FitRow {
                resample: r as i64,
                seed: seed.clone(),
                units: sub.n_units() as i64,
                rows: n_rows as i64,
                spec_id: id(s),
                run_rank: rank as i64 + 1,
                run_error,
                metric: inp.metric.clone(),
                error: g.map_or(f64::NAN, |g| g.error),
                status: g.map_or("missing".into(), |g| g.status.clone()),
                message: g.and_then(|g| g.message.clone()),
                best: best.is_some_and(|b| b.spec == s),
                good: g.is_some_and(|g| good(g)),
            }
        })
        .collect();
    let tops = acc
        .into_iter()
        .map(
            |((level, kind, name), (holding, top, holds, in_best))| TopRow {
                resample: r as i64,
                level,
                kind,
                name,
                good_holding: holding,
                good_top: top,
                best_holds: holds,
                top_in_best: in_best,
            },
        )
        .collect();
    (fits, tops)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn row(
        name: &str,
        kind: &'static str,
        importance: f64,
        rank: u32,
        in_pool: bool,
    ) -> ImportanceRow {
        ImportanceRow {
            name: name.into(),
            level: "indicator",
            kind,
            importance,
            spread: 0.0,
            rank,
            in_pool,
        }
    }

    fn got(spec: usize, error: f64, importance: Vec<ImportanceRow>) -> Got {
        Got {
            spec,
            error,
            status: "ok".into(),
            message: None,
            importance,
        }
    }

    /// A hand-made subsample: specs 0..4 with errors 1.02, 1.00, 1.04, 1.20 and a failed
    /// spec 4. Ratio 0.05: cut 1.05, good = {0, 1, 2}, best = 1. Top 2 by hand: a is top in
    /// 0 and 1 (in 2 its importance is 0: not top), b is top in 0 and 2 (in 1 out of pool),
    /// c is top in 1 only (rank 2); spec 2 holds the impurity kind alone.
    #[test]
    fn best_good_and_top_k_counts_by_hand() {
        let p = "permutation";
        let g = vec![
            got(
                0,
                1.02,
                vec![
                    row("a", p, 0.5, 1, true),
                    row("b", p, 0.3, 2, true),
                    row("c", p, 0.1, 3, true),
                ],
            ),
            got(
                1,
                1.00,
                vec![
                    row("a", p, 0.5, 1, true),
                    row("c", p, 0.2, 2, true),
                    row("b", p, 0.0, 3, false),
                ],
            ),
            got(
                2,
                1.04,
                vec![
                    row("b", "impurity", 0.4, 1, true),
                    row("a", "impurity", 0.0, 1, true),
                ],
            ),
            got(3, 1.20, vec![row("a", p, 0.9, 1, true)]),
            got(4, f64::NAN, vec![]),
        ];
        let id = |s: usize| format!("s{s}");
        let (best, cut, t) = tally(&g, &id, Rule::Ratio(0.05), 2);
        assert_eq!(best.map(|b| b.spec), Some(1));
        assert!((cut - 1.05).abs() < 1e-12);
        let at =
            |kind: &str, n: &str| t[&("indicator".to_string(), kind.to_string(), n.to_string())];
        assert_eq!(at(p, "a"), (2, 2, true, true));
        assert_eq!(at(p, "b"), (2, 1, true, false));
        assert_eq!(at(p, "c"), (2, 1, true, true));
        assert_eq!(at("impurity", "b"), (1, 1, false, false));
        assert_eq!(at("impurity", "a"), (1, 0, false, false));
        // Spec 3 is not good: its rows are not counted (no key beyond a, b, c).
        assert_eq!(t.len(), 5);
        // Margin 0.01: good = {1} only.
        let (_, _, t) = tally(&g, &id, Rule::Margin(0.01), 2);
        assert_eq!(
            t[&("indicator".into(), p.into(), "b".into())],
            (1, 0, true, false)
        );
        // Ties broken by id: equal errors, the lower id wins.
        let tie = vec![got(7, 1.0, vec![]), got(3, 1.0, vec![])];
        assert_eq!(
            tally(&tie, &id, Rule::Ratio(0.0), 1).0.map(|b| b.spec),
            Some(3)
        );
    }

    #[test]
    fn rule_from_the_report_settings() {
        assert_eq!(Rule::from_map("ratio", 0.1, None), (Rule::Ratio(0.1), None));
        assert_eq!(
            Rule::from_map("margin", 0.1, Some(0.3)).0,
            Rule::Margin(0.3)
        );
        let (r, why) = Rule::from_map("margin", 0.1, None);
        assert_eq!(r, Rule::Ratio(0.1));
        assert!(why.is_some_and(|w| w.contains("ratio rule")));
        let (r, why) = Rule::from_map("paired", 0.05, Some(1.0));
        assert_eq!(r, Rule::Ratio(0.05));
        assert!(why.is_some());
        assert_eq!(kept(64, 0.8), 51);
        assert_eq!(kept(10, 0.01), 1);
    }
}
