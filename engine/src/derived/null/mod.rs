//! Permutation null of the whole sweep (first slice of issue 18).
//!
//! Each draw permutes the outcome across units and reruns the sweep (the same stage tree
//! code, [`Sweep`], on the derived panel) for every spec or a seeded sample of specs.
//!
//! * Units move whole: a draw shuffles units, and every row of unit `u` takes the outcome
//!   (and its standard error, when the panel has one) of the row of the donor unit with the
//!   same wave. In an unbalanced panel, units are shuffled only among units with the same
//!   set of waves, so every row still finds its donor row.
//! * Draw `d` is seeded by `mix(mix(seed, NULL_STREAM), d)`: a stream of its own, so a draw
//!   does not depend on other draws, shards or threads.
//! * The fold plan is reused unchanged: folds group units, and units are not moved between
//!   folds; only outcomes are.
//!
//! Per draw we record the best (lowest) MAE, its quartiles and median over the specs
//! that succeeded, the best skill, and the share of specs with skill > 0.
//! p-values follow `p = (1 + #{null as good as or better than observed}) / (1 + D)`.

pub mod plan;
pub mod run;
pub mod table;

use crate::error::{Error, Result};
use crate::folds::FoldPlan;
use crate::panel::Panel;
use crate::space::ChoiceSpace;
use crate::streams::mix;
use crate::sweep::Sweep;
use rand::seq::SliceRandom;
use rand::SeedableRng;
use std::collections::BTreeMap;
use std::sync::Mutex;

pub use crate::streams::{NULL_DRAWS as NULL_STREAM, NULL_SAMPLE as SAMPLE_STREAM};

/// Units of a panel grouped for the permutation: units are exchanged only within a group
/// of units observed in the same set of waves.
#[derive(Debug, Clone, PartialEq)]
pub struct Exchange {
    /// Rows of each unit, keyed by wave label.
    pub unit_rows: Vec<BTreeMap<Option<String>, usize>>,
    /// Units by their set of waves (BTreeMap: deterministic order).
    pub groups: BTreeMap<Vec<Option<String>>, Vec<usize>>,
}

/// Above this share of units that cannot be exchanged, the run and the page warn: a rule
/// of thumb of our own (cold review S7), not a published threshold.
pub const FIXED_WARN_SHARE: f64 = 0.2;

impl Exchange {
    /// Group the units of `panel`; errors if a unit has two rows with one wave.
    pub fn of(panel: &Panel) -> Result<Exchange> {
        let mut unit_rows: Vec<BTreeMap<Option<String>, usize>> =
            vec![BTreeMap::new(); panel.n_units()];
        for (r, (&u, w)) in panel.row_unit.iter().zip(&panel.row_wave).enumerate() {
            if unit_rows[u].insert(w.clone(), r).is_some() {
                return Err(Error::Data {
                    file: "<null>".into(),
                    msg: format!(
                        "unit '{}' has two rows for wave {:?}; cannot permute units",
                        panel.units[u],
                        w.as_deref().unwrap_or("<none>")
                    ),
                });
            }
        }
        let mut groups: BTreeMap<Vec<Option<String>>, Vec<usize>> = BTreeMap::new();
        for (u, rows) in unit_rows.iter().enumerate() {
            groups
                .entry(rows.keys().cloned().collect())
                .or_default()
                .push(u);
        }
        Ok(Exchange { unit_rows, groups })
    }

    /// Units.
    pub fn units(&self) -> usize {
        self.unit_rows.len()
    }

    /// Units alone in their group (no other unit has their set of waves): a permutation
    /// never moves their outcome.
    pub fn fixed_units(&self) -> usize {
        self.groups.values().filter(|g| g.len() == 1).count()
    }

    /// Whether the share of fixed units is above [`FIXED_WARN_SHARE`].
    pub fn warn(&self) -> bool {
        self.fixed_units() as f64 > FIXED_WARN_SHARE * self.units() as f64
    }
}

/// The warning printed (and shown on the page) when too many units cannot be exchanged.
pub fn fixed_warning(fixed: usize, units: usize) -> String {
    format!(
        "{fixed} of {units} units ({:.0}%) have no other unit observed in the same set of waves, so the null never permutes their outcome: the test is conservative (it loses power, p drifts toward 1). Warned above {:.0}% of units, a rule of thumb of our own.",
        100.0 * fixed as f64 / units.max(1) as f64,
        100.0 * FIXED_WARN_SHARE
    )
}

/// The outcome of `panel` permuted across units (waves of a unit move together), with the
/// standard error, if any, moved alongside. Errors if a unit has two rows with one wave.
pub fn permute_units(panel: &Panel, seed: u64) -> Result<Panel> {
    let Exchange { unit_rows, groups } = Exchange::of(panel)?;
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(seed);
    let mut y = panel.y.clone();
    let mut se = panel.se.clone();
    for units in groups.values() {
        let mut donors = units.clone();
        donors.shuffle(&mut rng);
        for (&u, &d) in units.iter().zip(&donors) {
            for (w, &r) in &unit_rows[u] {
                let dr = unit_rows[d][w];
                y[r] = panel.y[dr];
                if let (Some(s), Some(orig)) = (se.as_mut(), panel.se.as_ref()) {
                    s[r] = orig[dr];
                }
            }
        }
    }
    let mut out = panel.with_outcome(y)?;
    out.se = se;
    Ok(out)
}

/// Seed of draw `d` under run seed `seed`.
pub fn draw_seed(seed: u64, d: u64) -> u64 {
    mix(mix(seed, NULL_STREAM), d)
}

/// A seeded sample of `k` spec indices out of `n` (all, in order, when `k >= n`), sorted.
pub fn sample_specs(n: usize, k: Option<usize>, seed: u64) -> Vec<usize> {
    let mut all: Vec<usize> = (0..n).collect();
    match k {
        Some(k) if k < n => {
            let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(mix(seed, SAMPLE_STREAM));
            all.shuffle(&mut rng);
            all.truncate(k);
            all.sort_unstable();
            all
        }
        _ => all,
    }
}

/// What one sweep (observed or null draw) says, over the specs that succeeded.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepSummary {
    pub best_mae: f64,
    pub q1_mae: f64,
    pub median_mae: f64,
    pub q3_mae: f64,
    pub best_skill: f64,
    pub share_skill_positive: f64,
    pub n_ok: usize,
}

/// Linear-interpolation quantile of sorted values (numpy's default, "linear").
fn quantile(sorted: &[f64], q: f64) -> f64 {
    let h = (sorted.len() - 1) as f64 * q;
    let lo = h.floor() as usize;
    let hi = h.ceil() as usize;
    sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo])
}

/// Summarise `(mae, skill)` pairs; `None` when no spec succeeded.
pub fn summarise(scores: &[(f64, f64)]) -> Option<SweepSummary> {
    let mut mae: Vec<f64> = scores
        .iter()
        .map(|s| s.0)
        .filter(|v| v.is_finite())
        .collect();
    if mae.is_empty() {
        return None;
    }
    mae.sort_by(f64::total_cmp);
    let best_skill = scores
        .iter()
        .map(|s| s.1)
        .filter(|v| v.is_finite())
        .fold(f64::NEG_INFINITY, f64::max);
    Some(SweepSummary {
        best_mae: mae[0],
        q1_mae: quantile(&mae, 0.25),
        median_mae: quantile(&mae, 0.5),
        q3_mae: quantile(&mae, 0.75),
        best_skill,
        share_skill_positive: scores.iter().filter(|s| s.1 > 0.0).count() as f64
            / scores.len() as f64,
        n_ok: mae.len(),
    })
}

/// Run the sweep over `subset` of `space` on `panel` and summarise it (importance off).
pub fn sweep_summary(
    panel: &Panel,
    space: &ChoiceSpace,
    folds: &FoldPlan,
    seed: u64,
    subset: &[usize],
) -> Result<Option<SweepSummary>> {
    let mut sweep = Sweep::new(panel, space, folds, seed, Some(subset))?;
    sweep.describe = false;
    sweep.importance = None;
    let scores = Mutex::new(Vec::with_capacity(subset.len()));
    sweep.run(&|r| {
        if let Some(s) = r.scores {
            if let Ok(mut v) = scores.lock() {
                v.push((r.spec, s.mae, s.skill));
            }
        }
    });
    let mut v = scores.into_inner().unwrap_or_default();
    // order by spec id so the summary does not depend on completion order
    v.sort_by_key(|s| s.0);
    let pairs: Vec<(f64, f64)> = v.iter().map(|s| (s.1, s.2)).collect();
    Ok(summarise(&pairs))
}

/// One null draw: permute (seeded from the run seed and `d`), rerun, summarise.
pub fn null_draw(
    panel: &Panel,
    space: &ChoiceSpace,
    folds: &FoldPlan,
    seed: u64,
    subset: &[usize],
    d: u64,
) -> Result<Option<SweepSummary>> {
    let permuted = permute_units(panel, draw_seed(seed, d))?;
    sweep_summary(&permuted, space, folds, seed, subset)
}

/// p-value of an observed statistic against null draws:
/// `(1 + #{null at least as extreme}) / (1 + D)`, where "at least as extreme" is
/// `null <= observed` for an error (`lower_is_better`) and `null >= observed` otherwise.
/// A draw that is not finite (no spec of the draw succeeded) counts as at least as
/// extreme: an unknown draw must not make the observed result look rarer than it is.
/// `D` counts every draw.
pub fn p_value(null: &[f64], observed: f64, lower_is_better: bool) -> f64 {
    let hits = null
        .iter()
        .filter(|&&v| {
            if !v.is_finite() {
                true
            } else if lower_is_better {
                v <= observed
            } else {
                v >= observed
            }
        })
        .count();
    (1 + hits) as f64 / (1 + null.len()) as f64
}
