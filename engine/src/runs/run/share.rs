//! A shard's share of the whole run: its specs (`shard::owners`, unchanged), then the
//! nested estimate's outer folds and the null's draws dealt onto the shards by the same
//! LPT rule, starting from the loads the specs left (`shard::deal`).
//!
//! Costs, in the specs' unit (expected cost per fit of the run's fold plan): a null draw
//! is its spec sample's sweep on the run's folds, the sum of those specs' costs; an outer
//! fold is its inner sweep, the sum of the nested sample's costs times inner fits per
//! spec over the run's fits per spec, times the share of rows it trains on (the refit of
//! the chosen spec, one fit, is left out). Outer folds are dealt first (larger jobs, LPT),
//! then the draws, all of equal cost, in index order: so draw d's shard depends only on
//! the draws before it, and changing `[null] draws` moves none of the draws kept. Like the
//! spec split, the deal depends on the config and the data's shape only.

use super::Prepared;
use crate::shard::{self, Shard};

/// What one shard runs.
#[derive(Debug, Clone, PartialEq)]
pub struct Share {
    /// Spec indices, ascending.
    pub specs: Vec<usize>,
    /// Null draws (ascending), when the config has `[null]`.
    pub draws: Option<Vec<u64>>,
    /// Nested outer folds (ascending), when the config has `[nested]`.
    pub folds: Option<Vec<usize>>,
}

/// The owner (0-based shard) of every spec, outer fold and draw for a split into `count`.
#[derive(Debug, Clone, PartialEq)]
pub struct Split {
    pub specs: Vec<usize>,
    pub draws: Option<Vec<usize>>,
    pub folds: Option<Vec<usize>>,
    /// Each shard's expected load at the end (the specs' unit, see `shard::loads`).
    pub loads: Vec<f64>,
}

impl Split {
    pub fn of(p: &Prepared, count: usize) -> Split {
        let owner = shard::owners(&p.space, &p.panel, count);
        let mut load = shard::loads(&p.space, &p.panel, &owner, count);
        let cost: Vec<f64> = p
            .space
            .specs
            .iter()
            .map(|s| shard::spec_cost(s, &p.panel))
            .collect();
        let sum = |idx: &[usize]| idx.iter().map(|&i| cost[i]).sum::<f64>();
        // The metric only checks the choice rule; the folds and the sample do not read it.
        let folds = p.cfg.nested.as_ref().and_then(|section| {
            let plan = crate::nested::Plan::new(
                &p.panel,
                &p.space,
                section,
                &p.cfg.folds,
                p.cfg.seed,
                "mae",
            )
            .ok()?;
            let per_fold = plan.n_fits(p.panel.n_units()) / plan.outer.folds.len().max(1);
            let inner = per_fold.saturating_sub(1) as f64 / plan.subset.len().max(1) as f64;
            let scale = inner / p.folds.n_fits_per_spec().max(1) as f64;
            let rows = p.panel.n_rows().max(1) as f64;
            let of_sample = sum(&plan.subset);
            let costs: Vec<f64> = plan
                .outer
                .folds
                .iter()
                .map(|f| of_sample * scale * f.train.len() as f64 / rows)
                .collect();
            Some(shard::deal(&mut load, &costs))
        });
        let draws = p.cfg.null.as_ref().map(|n| {
            let sample = crate::null::sample_specs(p.space.specs.len(), n.specs, p.cfg.seed);
            shard::deal(&mut load, &vec![sum(&sample); n.draws])
        });
        Split {
            specs: owner,
            draws,
            folds,
            loads: load,
        }
    }

    /// Shard `shard`'s share (its `count` must be this split's).
    pub fn share(&self, shard: Shard) -> Share {
        let me = shard.index - 1;
        let mine = |owner: &[usize]| -> Vec<usize> {
            (0..owner.len()).filter(|&i| owner[i] == me).collect()
        };
        Share {
            specs: mine(&self.specs),
            draws: self
                .draws
                .as_ref()
                .map(|d| mine(d).into_iter().map(|d| d as u64).collect()),
            folds: self.folds.as_ref().map(|f| mine(f)),
        }
    }
}

/// Shard `shard`'s share of the run `p`.
pub fn share(p: &Prepared, shard: Shard) -> Share {
    Split::of(p, shard.count).share(shard)
}

/// `forkmap plan --shards N`: each shard's specs, null draws, nested outer folds and share
/// of the expected cost.
pub fn plan_table(p: &Prepared, count: usize) -> crate::error::Result<String> {
    use std::fmt::Write;
    shard::check(&p.space, Shard { index: 1, count })?;
    let split = Split::of(p, count);
    let total: f64 = split.loads.iter().sum();
    let mut t = format!(
        "\nshards  {count} (--shard I/{count}; specs, then the nested outer folds and the null draws dealt by expected cost)\n  shard  specs  draws  folds  expected cost\n"
    );
    for i in 1..=count {
        let s = split.share(Shard { index: i, count });
        let n = |v: &Option<Vec<_>>| v.as_ref().map_or("-".to_string(), |v| v.len().to_string());
        let _ = writeln!(
            t,
            "  {:>5}  {:>5}  {:>5}  {:>5}  {:>12.1}%",
            format!("{i}/{count}"),
            s.specs.len(),
            n(&s.draws.map(|d| d.into_iter().map(|x| x as usize).collect())),
            n(&s.folds),
            100.0 * split.loads[i - 1] / total.max(f64::MIN_POSITIVE)
        );
    }
    Ok(t)
}
