//! The nested estimate of choosing the best spec (issue 18, `[nested]`).
//!
//! Keeping the best of many specs makes its cross-validated error optimistic: the same
//! folds chose it and scored it. The nested estimate repeats the whole choice inside
//! each outer training set and scores the chosen spec on units the choice never saw:
//!
//! 1. Outer grouped folds over units (a unit's waves together; [`FoldPlan`] on a stream
//!    of its own, [`crate::streams::NESTED_OUTER`]).
//! 2. For outer fold `o`, the derived panel of the outer training units
//!    ([`subset_rows`]) gets inner folds of its own (the run's `[folds]` scheme, or
//!    `inner_folds` grouped folds; seeded from `NESTED_INNER` and `o`), and the ordinary
//!    [`Sweep`] (importance off) runs every spec, or a seeded sample
//!    ([`crate::streams::NESTED_SAMPLE`]), on it.
//! 3. The spec with the lowest inner error under the metric is chosen (ties: lowest spec
//!    id), refitted on the whole outer training set (a one-fold [`Sweep`] on the full
//!    panel whose only fold is the outer fold) and scored on the outer test units, beside
//!    the training-median baseline of the same fold.
//!
//! Every fit of step 2 sees only outer training rows (they are all the derived panel has),
//! and every fit of step 3 only outer training rows (the sweep's invariant). The outer
//! test rows reach nothing but predictions: `tests/nested.rs` poisons them and checks
//! that the choice and its inner errors do not move.
//!
//! The nested error pools the outer test rows: each row is predicted once, by the spec
//! chosen without it, and the metric is taken over all of them ([`pooled`]).

use crate::config::{FoldScheme, FoldsSection};
use crate::error::{Error, Result};
use crate::folds::{Fold, FoldPlan};
use crate::panel::Panel;
use crate::space::ChoiceSpace;
use crate::streams::mix;
use crate::sweep::Sweep;
use ndarray::Axis;
use rand::seq::SliceRandom;
use rand::SeedableRng;
use std::sync::Mutex;

pub mod exec;
pub mod table;

/// Error metrics a spec can be chosen by (those the report ranks by).
pub const METRICS: &[&str] = &["mae", "rmse", "unit_mae"];

/// Everything the nested estimate needs, checked.
#[derive(Debug, Clone)]
pub struct Plan {
    /// Outer folds (one repeat).
    pub outer: FoldPlan,
    /// Inner fold settings (applied to each outer training set).
    pub inner: FoldsSection,
    /// Spec indices swept inside each outer training set, ascending.
    pub subset: Vec<usize>,
    /// Seed of the nested streams (outer folds, inner folds, sample).
    pub seed: u64,
    /// Seed of the sweeps (the run's: a spec's model stream is the main sweep's).
    pub run_seed: u64,
    /// Error metric the choice is made by.
    pub metric: String,
}

/// One outer fold's result.
#[derive(Debug, Clone, PartialEq)]
pub struct OuterResult {
    /// Outer fold index.
    pub fold: usize,
    /// Chosen spec (index into the space); `None` when no spec succeeded inside.
    pub chosen: Option<usize>,
    /// The chosen spec's inner error (pooled over the inner folds).
    pub inner_error: f64,
    /// The chosen spec refitted on the outer training set, scored on the outer test rows.
    pub outer_error: f64,
    /// The training-median baseline on the same outer test rows.
    pub baseline_error: f64,
    pub n_rows: usize,
    pub n_units: usize,
    /// Specs swept inside and how many of them succeeded.
    pub n_specs: usize,
    pub n_ok: usize,
    /// Why the fold has no outer error (no spec succeeded inside; the refit failed).
    pub message: Option<String>,
}

impl Plan {
    /// Outer folds and spec sample from `[nested]`, the run's folds and the space.
    pub fn new(
        panel: &Panel,
        space: &ChoiceSpace,
        cfg: &crate::config::nested::NestedSection,
        run_folds: &FoldsSection,
        run_seed: u64,
        metric: &str,
    ) -> Result<Plan> {
        if !METRICS.contains(&metric) {
            return Err(Error::Folds(format!(
                "nested: cannot choose by `{metric}`; metrics: {}",
                METRICS.join(", ")
            )));
        }
        let seed = cfg.seed.unwrap_or(run_seed);
        let outer_cfg = FoldsSection {
            scheme: FoldScheme::GroupedKfold,
            k: cfg.outer_folds,
            repeats: 1,
        };
        let outer = FoldPlan::new(panel, &outer_cfg, mix(seed, crate::streams::NESTED_OUTER))
            .map_err(|e| Error::Folds(format!("nested.outer_folds: {e}")))?;
        let inner = match cfg.inner_folds {
            Some(k) => FoldsSection {
                scheme: FoldScheme::GroupedKfold,
                k,
                repeats: 1,
            },
            None => run_folds.clone(),
        };
        // Every outer training set must hold enough units for the inner folds.
        for f in &outer.folds {
            let units = units_of(panel, &f.train);
            let need = match inner.scheme {
                FoldScheme::GroupedKfold => inner.k,
                FoldScheme::LeaveOneUnitOut => 2,
            };
            if units < need {
                return Err(Error::Folds(format!(
                    "nested: outer fold {} leaves {units} training units, fewer than the {need} inner folds",
                    f.index
                )));
            }
        }
        Ok(Plan {
            outer,
            inner,
            subset: sample_specs(space.specs.len(), cfg.specs, seed),
            seed,
            run_seed,
            metric: metric.to_string(),
        })
    }

    /// Model fits of the whole estimate: outer folds x (specs x inner folds + 1 refit).
    pub fn n_fits(&self, n_units: usize) -> usize {
        let inner = match self.inner.scheme {
            FoldScheme::GroupedKfold => self.inner.k * self.inner.repeats,
            // each outer training set holds about (k-1)/k of the units
            FoldScheme::LeaveOneUnitOut => n_units - n_units / self.outer.k.max(1),
        };
        self.outer.folds.len() * (self.subset.len() * inner + 1)
    }
}

fn units_of(panel: &Panel, rows: &[usize]) -> usize {
    let mut u: Vec<usize> = rows.iter().map(|&r| panel.row_unit[r]).collect();
    u.sort_unstable();
    u.dedup();
    u.len()
}

/// A seeded sample of `k` spec indices out of `n` on the nested sample stream (all, in
/// order, when `k` is absent or not below `n`), ascending.
pub fn sample_specs(n: usize, k: Option<usize>, seed: u64) -> Vec<usize> {
    let mut all: Vec<usize> = (0..n).collect();
    if let Some(k) = k.filter(|&k| k < n) {
        let mut rng =
            rand_chacha::ChaCha8Rng::seed_from_u64(mix(seed, crate::streams::NESTED_SAMPLE));
        all.shuffle(&mut rng);
        all.truncate(k);
        all.sort_unstable();
    }
    all
}

/// The derived panel of `rows` (whole units, in row order): indicators, outcome, waves,
/// standard errors, codebook and outcome scale carried over; units renumbered.
pub fn subset_rows(panel: &Panel, rows: &[usize]) -> Result<Panel> {
    let mut p = Panel::new(
        rows.iter()
            .map(|&r| panel.units[panel.row_unit[r]].clone())
            .collect(),
        rows.iter().map(|&r| panel.row_wave[r].clone()).collect(),
        panel.y.select(Axis(0), rows),
        panel.x.select(Axis(0), rows),
        panel.indicators.clone(),
    )?;
    p.codebook = panel.codebook.clone();
    p.se = panel.se.as_ref().map(|s| s.select(Axis(0), rows));
    p.outcome_scale = panel.outcome_scale;
    p.skipped = panel.skipped.clone();
    Ok(p)
}

/// The error of a spec's scores under `metric`.
fn metric_of(s: &crate::metrics::Scores, metric: &str) -> f64 {
    match metric {
        "rmse" => s.rmse,
        "unit_mae" => s.unit_mae,
        _ => s.mae,
    }
}

/// Errors under `metric` of the `subset` specs swept on `panel` with `folds` (importance
/// off), sorted by spec index; failed specs are left out.
pub fn sweep_errors(
    panel: &Panel,
    space: &ChoiceSpace,
    folds: &FoldPlan,
    seed: u64,
    subset: &[usize],
    metric: &str,
) -> Result<Vec<(usize, f64)>> {
    let mut sweep = Sweep::new(panel, space, folds, seed, Some(subset))?;
    sweep.describe = false;
    sweep.importance = None;
    let out = Mutex::new(Vec::with_capacity(subset.len()));
    sweep.run(&|r| {
        if let Some(s) = r.scores {
            let e = metric_of(&s, metric);
            if e.is_finite() {
                if let Ok(mut v) = out.lock() {
                    v.push((r.spec, e));
                }
            }
        }
    });
    let mut v = out.into_inner().unwrap_or_default();
    v.sort_by_key(|s| s.0);
    Ok(v)
}

/// The lowest error, ties broken by the lowest spec id (the stable id, not the index).
pub fn choose(space: &ChoiceSpace, errors: &[(usize, f64)]) -> Option<(usize, f64)> {
    errors.iter().copied().min_by(|a, b| {
        a.1.total_cmp(&b.1)
            .then_with(|| space.specs[a.0].id.cmp(&space.specs[b.0].id))
    })
}

/// The inner fold plan of outer fold `o` on its derived panel.
pub fn inner_plan(plan: &Plan, sub: &Panel, o: usize) -> Result<FoldPlan> {
    let seed = mix(mix(plan.seed, crate::streams::NESTED_INNER), o as u64);
    FoldPlan::new(sub, &plan.inner, seed)
}

/// The inner errors of outer fold `o` (sorted by spec index): the subset swept on the
/// derived panel of the outer training units.
pub fn inner_errors(
    plan: &Plan,
    panel: &Panel,
    space: &ChoiceSpace,
    o: usize,
) -> Result<Vec<(usize, f64)>> {
    let fold = &plan.outer.folds[o];
    let sub = subset_rows(panel, &fold.train)?;
    let folds = inner_plan(plan, &sub, o)?;
    sweep_errors(
        &sub,
        space,
        &folds,
        plan.run_seed,
        &plan.subset,
        &plan.metric,
    )
}

/// Error of predictions `pred` of the rows `rows` under `metric`.
fn error_of(panel: &Panel, rows: &[usize], pred: &[f64], metric: &str) -> f64 {
    let obs: Vec<f64> = rows.iter().map(|&r| panel.y[r]).collect();
    let units: Vec<usize> = rows.iter().map(|&r| panel.row_unit[r]).collect();
    match metric {
        "rmse" => crate::metrics::rmse(&obs, pred),
        "unit_mae" => crate::metrics::unit_mae(&obs, pred, &units),
        _ => crate::metrics::mae(&obs, pred),
    }
}

/// Spec `si` refitted on the training rows of outer fold `o` (a one-fold sweep whose only
/// fold is the outer fold: every fit sees its training rows only) and its predictions of
/// the fold's test rows, as (panel row, prediction) by row; `Err` names why the spec
/// failed.
pub fn refit_predictions(
    plan: &Plan,
    panel: &Panel,
    space: &ChoiceSpace,
    o: usize,
    si: usize,
) -> Result<std::result::Result<Vec<(usize, f64)>, String>> {
    let fold = &plan.outer.folds[o];
    let one = FoldPlan {
        folds: vec![Fold {
            repeat: 0,
            index: 0,
            train: fold.train.clone(),
            test: fold.test.clone(),
        }],
        repeats: 1,
        k: 1,
    };
    let mut sweep = Sweep::new(panel, space, &one, plan.run_seed, Some(&[si]))?;
    sweep.describe = false;
    sweep.importance = None;
    let got = Mutex::new(None);
    sweep.run(&|r| {
        if let Ok(mut g) = got.lock() {
            *g = Some(r);
        }
    });
    Ok(match got.into_inner().ok().flatten() {
        Some(r) if r.scores.is_some() => {
            let mut p: Vec<(usize, f64)> = r
                .predictions
                .iter()
                .map(|p| (p.row as usize, p.value))
                .collect();
            p.sort_by_key(|p| p.0);
            Ok(p)
        }
        Some(r) => Err(r.message.unwrap_or_else(|| r.status.to_string())),
        None => Err("no result".into()),
    })
}

/// Run outer fold `o`: inner sweep, choice, refit on the outer training set, outer score.
pub fn outer_fold(
    plan: &Plan,
    panel: &Panel,
    space: &ChoiceSpace,
    o: usize,
) -> Result<OuterResult> {
    let fold: &Fold = &plan.outer.folds[o];
    let errors = inner_errors(plan, panel, space, o)?;
    let y_train: Vec<f64> = fold.train.iter().map(|&r| panel.y[r]).collect();
    let base = crate::metrics::baseline(&y_train);
    let baseline_error = error_of(
        panel,
        &fold.test,
        &vec![base; fold.test.len()],
        &plan.metric,
    );
    let mut res = OuterResult {
        fold: o,
        chosen: None,
        inner_error: f64::NAN,
        outer_error: f64::NAN,
        baseline_error,
        n_rows: fold.test.len(),
        n_units: units_of(panel, &fold.test),
        n_specs: plan.subset.len(),
        n_ok: errors.len(),
        message: None,
    };
    let Some((si, inner)) = choose(space, &errors) else {
        res.message = Some("no spec succeeded on the inner folds".into());
        return Ok(res);
    };
    res.chosen = Some(si);
    res.inner_error = inner;
    match refit_predictions(plan, panel, space, o, si)? {
        Ok(p) => {
            let rows: Vec<usize> = p.iter().map(|p| p.0).collect();
            let pred: Vec<f64> = p.iter().map(|p| p.1).collect();
            res.outer_error = error_of(panel, &rows, &pred, &plan.metric);
        }
        Err(m) => res.message = Some(format!("refit on the outer training set failed: {m}")),
    }
    Ok(res)
}

/// The pooled error over the outer test rows of `folds` under `metric` (each fold's error
/// weighted by its rows; by its units for `unit_mae`; rmse pools squared errors), for
/// (outer, baseline). NaN when any fold has no outer error: a fold without a choice
/// cannot be left out without biasing the estimate.
pub fn pooled(folds: &[OuterResult], metric: &str) -> (f64, f64) {
    let w = |f: &OuterResult| {
        if metric == "unit_mae" {
            f.n_units as f64
        } else {
            f.n_rows as f64
        }
    };
    let total: f64 = folds.iter().map(w).sum();
    let pool = |get: &dyn Fn(&OuterResult) -> f64| {
        if metric == "rmse" {
            (folds.iter().map(|f| get(f).powi(2) * w(f)).sum::<f64>() / total).sqrt()
        } else {
            folds.iter().map(|f| get(f) * w(f)).sum::<f64>() / total
        }
    };
    (pool(&|f| f.outer_error), pool(&|f| f.baseline_error))
}

/// Run every outer fold not in `done` (in fold order; each fold's sweeps run on the
/// current rayon pool), handing each result to `emit` as soon as it is ready.
pub fn run(
    plan: &Plan,
    panel: &Panel,
    space: &ChoiceSpace,
    done: &[usize],
    emit: &mut dyn FnMut(OuterResult) -> Result<()>,
) -> Result<()> {
    for o in 0..plan.outer.folds.len() {
        if done.contains(&o) {
            continue;
        }
        emit(outer_fold(plan, panel, space, o)?)?;
    }
    Ok(())
}
