//! Shards: a deterministic, cost-balanced split of a choice space into N parts, so that N
//! machines (or N tasks of a Slurm job array) each run one part and `gather` joins the parts into
//! exactly the run one machine would have made.
//!
//! Each spec gets an expected cost from its model's checked parameters (see
//! [`crate::models::Regressor::cost`]) at the spec's input width (pool size, or the number of
//! components), plus a share of its stages. Specs are then dealt longest first to the
//! least-loaded shard (ties: the lower shard number; equal costs: spec id order), the
//! classic LPT rule (Graham 1969), whose makespan is at most 4/3 of the optimum. The split
//! depends on the config and the data's shape only: never on the machine or thread count.

use crate::error::{Error, Result};
use crate::panel::Panel;
use crate::space::{ChoiceSpace, Spec};
use std::str::FromStr;

/// Shard `index` of `count` (1-based, as Slurm numbers array tasks from 1 by default).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Shard {
    pub index: usize,
    pub count: usize,
}

impl FromStr for Shard {
    type Err = String;
    fn from_str(s: &str) -> std::result::Result<Shard, String> {
        let bad = || format!("--shard `{s}`: expected I/N with 1 <= I <= N, e.g. 2/4");
        let (i, n) = s.split_once('/').ok_or_else(bad)?;
        let index: usize = i.trim().parse().map_err(|_| bad())?;
        let count: usize = n.trim().parse().map_err(|_| bad())?;
        if count == 0 || index == 0 || index > count {
            return Err(bad());
        }
        Ok(Shard { index, count })
    }
}

impl std::fmt::Display for Shard {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}/{}", self.index, self.count)
    }
}

/// Expected relative cost of one spec (per fit; every spec has the same number of fits).
pub fn spec_cost(spec: &Spec, panel: &Panel) -> f64 {
    let n = panel.n_rows() as f64;
    let all = panel.indicators.len() as f64;
    let pool = spec.choice(crate::decl::Dim::Pool);
    let mut p = match (&pool.members, pool.param("k")) {
        (Some(m), _) => m.len() as f64,
        (None, Some(k)) => k.min(all),
        (None, None) => all,
    };
    let compress = spec.choice(crate::decl::Dim::Compress);
    if compress.option != "none" {
        if let Some(k) = compress.param("k") {
            p = p.min(k);
        }
    }
    // The stages are shared, so a spec's own share of them is small; a pass over the
    // pooled columns stands for it.
    crate::models::cost(spec.choice(crate::decl::Dim::Model), n, p) + n * all
}

/// The spec indices (ascending) that shard `shard` runs.
pub fn assign(space: &ChoiceSpace, panel: &Panel, shard: Shard) -> Vec<usize> {
    let owner = owners(space, panel, shard.count);
    let mut mine: Vec<usize> = (0..space.specs.len())
        .filter(|&i| owner[i] == shard.index - 1)
        .collect();
    mine.sort_unstable();
    mine
}

/// Shard (0-based) of every spec for a split into `count` shards.
pub fn owners(space: &ChoiceSpace, panel: &Panel, count: usize) -> Vec<usize> {
    let costs: Vec<f64> = space.specs.iter().map(|s| spec_cost(s, panel)).collect();
    let mut order: Vec<usize> = (0..space.specs.len()).collect();
    order.sort_by(|&a, &b| {
        costs[b]
            .total_cmp(&costs[a])
            .then_with(|| space.specs[a].id.cmp(&space.specs[b].id))
    });
    let mut load = vec![0.0f64; count.max(1)];
    let mut owner = vec![0usize; space.specs.len()];
    for i in order {
        let mut best = 0;
        for (s, l) in load.iter().enumerate() {
            if *l < load[best] {
                best = s;
            }
        }
        owner[i] = best;
        load[best] += costs[i];
    }
    owner
}

/// Each shard's load after the spec split `owner` (the sum of its specs' [`spec_cost`]s: per
/// fit, every spec having the same fits).
pub fn loads(space: &ChoiceSpace, panel: &Panel, owner: &[usize], count: usize) -> Vec<f64> {
    let mut load = vec![0.0f64; count.max(1)];
    for (s, &o) in space.specs.iter().zip(owner) {
        load[o] += spec_cost(s, panel);
    }
    load
}

/// Deal jobs of expected `costs` (in the specs' unit, see [`loads`]) onto the shards by the
/// same LPT rule, starting from `load` (updated): longest first (equal costs: lower job
/// index first) to the least-loaded shard (ties: the lower shard). Returns each job's
/// shard (0-based). Jobs of equal cost go in index order, so the owner of job j depends
/// only on the jobs before it: adding jobs at the end moves none of the others.
pub fn deal(load: &mut [f64], costs: &[f64]) -> Vec<usize> {
    let mut order: Vec<usize> = (0..costs.len()).collect();
    order.sort_by(|&a, &b| costs[b].total_cmp(&costs[a]).then(a.cmp(&b)));
    let mut owner = vec![0usize; costs.len()];
    for j in order {
        let mut best = 0;
        for (s, l) in load.iter().enumerate() {
            if *l < load[best] {
                best = s;
            }
        }
        owner[j] = best;
        if let Some(l) = load.get_mut(best) {
            *l += costs[j];
        }
    }
    owner
}

/// Check a shard against the space: every shard must hold at least one spec.
pub fn check(space: &ChoiceSpace, shard: Shard) -> Result<()> {
    if shard.count > space.specs.len() {
        return Err(Error::Space(format!(
            "--shard {shard}: the config has only {} specs, so at most {} shards",
            space.specs.len(),
            space.specs.len()
        )));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parses_and_refuses() {
        assert_eq!("2/4".parse::<Shard>(), Ok(Shard { index: 2, count: 4 }));
        for bad in ["0/4", "5/4", "1/0", "x/2", "2", "1/2/3", ""] {
            let e = bad.parse::<Shard>().unwrap_err();
            assert!(e.contains("I/N"), "{bad}: {e}");
        }
        assert_eq!(Shard { index: 3, count: 7 }.to_string(), "3/7");
    }

    #[test]
    fn deal_is_lpt_from_the_loads_and_prefix_stable() {
        // Worked by hand: loads [5, 3, 4]; a job of 4 goes to shard 1 (load 3 -> 7), then
        // equal jobs of 1 go to the least loaded in turn: shard 2 (4 -> 5), then shards 0
        // and 2 tie at 5: the lower, shard 0.
        let mut load = vec![5.0, 3.0, 4.0];
        assert_eq!(deal(&mut load, &[1.0, 4.0, 1.0]), vec![2, 1, 0]);
        assert_eq!(load, vec![6.0, 7.0, 5.0]);
        // Equal jobs: adding more at the end leaves the first ones where they were.
        let few = deal(&mut [2.0, 0.0], &[1.0; 5]);
        let more = deal(&mut [2.0, 0.0], &[1.0; 9]);
        assert_eq!(few, more[..5]);
        assert_eq!(few, vec![1, 1, 0, 1, 0]);
        // No shards to fill: nothing panics, every job on shard 0.
        assert_eq!(deal(&mut [0.0], &[3.0, 1.0]), vec![0, 0]);
    }
}
