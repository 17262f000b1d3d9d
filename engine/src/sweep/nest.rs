//! Fits that nest along a path: specs that differ only in their model's path parameter
//! ([`Regressor::path`]: the ensembles' `trees`) are fitted once per fold, at the largest
//! value, and each smaller spec gets the first trees of that fit, the same bit for bit as
//! its own fit (`tests/nested_fits.rs`).
//!
//! What makes them the same is the random stream: a model with a path is seeded by the
//! spec's id with the path parameter left out ([`model_stream`]), so the 100-tree forest
//! and the 500-tree forest of one spec draw the same numbers for their first 100 trees.
//!
//! The seconds of a shared fit are split between its specs by the family's cost of each
//! step along the path (for the ensembles, in proportion to the trees each adds), so the
//! specs' seconds still add up to the work done.

use super::*;
use std::collections::HashMap;

/// Random-stream key of a spec's model fits: the spec's own ([`Spec::stream`]), or, for a
/// model with a path, that of the spec with the path parameter left out of its model.
pub fn model_stream(spec: &Spec, model: &dyn Regressor) -> u64 {
    match model.path() {
        None => spec.stream(),
        Some(param) => {
            let choices = spec
                .choices
                .iter()
                .map(|c| {
                    let mut c = c.clone();
                    if c.dim == crate::decl::Dim::Model {
                        c.params.retain(|(n, _)| *n != param);
                    }
                    c
                })
                .collect();
            Spec::from_choices(choices).stream()
        }
    }
}

impl Sweep<'_> {
    /// `specs` (those ending at one stage node) in groups fitted together: the specs of a
    /// path, its value ascending (so the largest, fitted, comes last), or one spec alone.
    /// Groups keep the order of their first spec.
    pub(super) fn nest_groups(&self, specs: &[usize]) -> Vec<Vec<usize>> {
        let mut groups: Vec<Vec<usize>> = Vec::new();
        let mut by_key: HashMap<u64, usize> = HashMap::new();
        for &si in specs {
            let model = self.models[si].as_ref();
            if model.path().is_none() {
                groups.push(vec![si]);
                continue;
            }
            let key = model_stream(&self.space.specs[si], model);
            match by_key.get(&key) {
                Some(&g) => groups[g].push(si),
                None => {
                    by_key.insert(key, groups.len());
                    groups.push(vec![si]);
                }
            }
        }
        for g in groups.iter_mut().filter(|g| g.len() > 1) {
            g.sort_by(|&a, &b| self.path_value(a).total_cmp(&self.path_value(b)));
        }
        groups
    }

    /// The value of a spec's model path parameter (0 without one).
    fn path_value(&self, si: usize) -> f64 {
        self.models[si]
            .path()
            .and_then(|p| {
                self.space.specs[si]
                    .choice(crate::decl::Dim::Model)
                    .param(p)
            })
            .unwrap_or(0.0)
    }

    /// Each spec's share of a fit along `group`'s path: the family's cost of its step
    /// from the previous spec's value, over the cost of the whole path (1 alone).
    pub(super) fn path_shares(&self, group: &[usize], n: f64, p: f64) -> Vec<f64> {
        let costs: Vec<f64> = group
            .iter()
            .map(|&si| {
                crate::models::cost(self.space.specs[si].choice(crate::decl::Dim::Model), n, p)
            })
            .collect();
        let total = costs.last().copied().unwrap_or(0.0);
        if group.len() == 1 || total.is_nan() || total <= 0.0 {
            let mut s = vec![0.0; group.len()];
            if let Some(l) = s.last_mut() {
                *l = 1.0;
            }
            return s;
        }
        let mut prev = 0.0;
        costs
            .iter()
            .map(|&c| {
                let s = (c - prev).max(0.0) / total;
                prev = c.max(prev);
                s
            })
            .collect()
    }

    /// Fit a group's models on a fold's prepared training rows, once: each spec's model
    /// and back-transform (as [`Sweep::fit_fold`] for each alone), or why it failed.
    pub(super) fn fit_group(
        &self,
        group: &[usize],
        fi: usize,
        st: &FoldState,
    ) -> Vec<std::result::Result<FoldFit, FitError>> {
        let last = match group.last() {
            Some(&l) => l,
            None => return Vec::new(),
        };
        let models = self.with_fit_input(last, fi, st, |input| {
            if group.len() == 1 {
                return Ok(vec![self.models[last].fit(input)?]);
            }
            let values: Vec<f64> = group.iter().map(|&si| self.path_value(si)).collect();
            self.models[last].fit_path(input, &values)
        });
        match models {
            Ok(ms) if ms.len() == group.len() => group
                .iter()
                .zip(ms)
                .map(|(&si, m)| self.back_transform(si, fi, st, m))
                .collect(),
            Ok(ms) => {
                let e = FitError::Invalid(format!(
                    "a nested fit gave {} models for {} specs",
                    ms.len(),
                    group.len()
                ));
                group.iter().map(|_| Err(e.clone())).collect()
            }
            Err(e) => group.iter().map(|_| Err(e.clone())).collect(),
        }
    }
}

/// Each spec's fit cost in [`crate::shard::spec_cost`] units, less what it shares with the
/// next smaller spec of its path among `specs` (all when `None`), as a sweep over them
/// fits it: a path costs its largest fit once. For `plan`'s probe and estimate.
pub fn nested_costs(space: &ChoiceSpace, panel: &Panel, specs: Option<&[usize]>) -> Vec<f64> {
    let mut cost: Vec<f64> = space
        .specs
        .iter()
        .map(|s| crate::shard::spec_cost(s, panel))
        .collect();
    let mut paths: HashMap<u64, Vec<(f64, usize)>> = HashMap::new();
    let all: Vec<usize> = (0..space.specs.len()).collect();
    for &si in specs.unwrap_or(&all) {
        let s = &space.specs[si];
        let Ok(model) = crate::models::build(s.choice(crate::decl::Dim::Model)) else {
            continue;
        };
        if let Some(param) = model.path() {
            let value = s
                .choice(crate::decl::Dim::Model)
                .param(param)
                .unwrap_or(0.0);
            paths
                .entry(model_stream(s, model.as_ref()))
                .or_default()
                .push((value, si));
        }
    }
    for path in paths.values_mut().filter(|p| p.len() > 1) {
        path.sort_by(|a, b| a.0.total_cmp(&b.0));
        let full: Vec<f64> = path.iter().map(|&(_, si)| cost[si]).collect();
        for (j, &(_, si)) in path.iter().enumerate().skip(1) {
            cost[si] = (full[j] - full[j - 1]).max(0.0);
        }
    }
    cost
}
