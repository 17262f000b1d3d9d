//! Stability under resampling of units, in the spirit of the Rashomon importance
//! distribution (Donnelly, Katta, Rudin & Browne, NeurIPS 2023): for each unit resample,
//! the best spec and the good set are recomputed from the stored per-unit errors (no
//! refit), and each name's top-k membership is counted over that resample's good set and
//! in its best spec. The `paired` definition would need a bootstrap inside each resample:
//! resamples use the `ratio` rule for it (stated in the report).

use super::data::KindTable;
use super::errors::Errors;
use super::model::{BestFrequency, Stability};
use rayon::prelude::*;

/// How a resample's good set is drawn.
#[derive(Debug, Clone, Copy)]
pub enum Rule {
    Ratio(f64),
    Margin(f64),
}

/// Per resample: its best spec and its good set.
pub fn resample_sets(e: &Errors, rule: Rule) -> Vec<(usize, Vec<bool>)> {
    let n = e.point.len();
    (0..e.b)
        .into_par_iter()
        .filter_map(|r| {
            let col = |s: usize| e.reps[s * e.b + r];
            let best = (0..n)
                .filter(|&s| !col(s).is_nan())
                .min_by(|&a, &b| col(a).total_cmp(&col(b)).then(a.cmp(&b)))?;
            let cut = match rule {
                Rule::Ratio(eps) => col(best) * (1.0 + eps),
                Rule::Margin(m) => col(best) + m,
            };
            Some((best, (0..n).map(|s| col(s) <= cut).collect()))
        })
        .collect()
}

/// Stability of every name of one kind table over the resamples' sets.
pub fn stability(kt: &KindTable, sets: &[(usize, Vec<bool>)], top_k: usize) -> Vec<Stability> {
    let m = kt.n_names();
    let row_of: std::collections::HashMap<usize, usize> =
        kt.specs.iter().enumerate().map(|(i, &s)| (s, i)).collect();
    // Per resample: (share of good rows with the name top-k, name top-k in the best).
    let per: Vec<(Vec<f64>, Vec<Option<bool>>)> = sets
        .par_iter()
        .map(|(best, good)| {
            let mut cnt = vec![0usize; m];
            let mut n = 0usize;
            for (i, &s) in kt.specs.iter().enumerate() {
                if !good[s] {
                    continue;
                }
                n += 1;
                for (j, c) in cnt.iter_mut().enumerate() {
                    if kt.is_top(i, j, top_k) {
                        *c += 1;
                    }
                }
            }
            let shares = cnt
                .iter()
                .map(|&c| {
                    if n == 0 {
                        f64::NAN
                    } else {
                        c as f64 / n as f64
                    }
                })
                .collect();
            let in_best = (0..m)
                .map(|j| row_of.get(best).map(|&i| kt.is_top(i, j, top_k)))
                .collect();
            (shares, in_best)
        })
        .collect();
    (0..m)
        .map(|j| {
            let shares: Vec<f64> = per.iter().map(|p| p.0[j]).filter(|v| !v.is_nan()).collect();
            let bests: Vec<bool> = per.iter().filter_map(|p| p.1[j]).collect();
            let frac = |k: usize, n: usize| {
                if n == 0 {
                    f64::NAN
                } else {
                    k as f64 / n as f64
                }
            };
            Stability {
                level: kt.level.clone(),
                kind: kt.kind.clone(),
                name: kt.names[j].clone(),
                mean_share_top_k: if shares.is_empty() {
                    f64::NAN
                } else {
                    shares.iter().sum::<f64>() / shares.len() as f64
                },
                share_majority: frac(shares.iter().filter(|&&v| v >= 0.5).count(), shares.len()),
                share_in_best: frac(bests.iter().filter(|b| **b).count(), bests.len()),
            }
        })
        .collect()
}

/// How often each spec is a resample's best (specs best at least once, most often first).
pub fn best_frequency(sets: &[(usize, Vec<bool>)], spec_ids: &[String]) -> Vec<BestFrequency> {
    let mut count = vec![0usize; spec_ids.len()];
    for (b, _) in sets {
        count[*b] += 1;
    }
    let mut out: Vec<(usize, usize)> = count
        .into_iter()
        .enumerate()
        .filter(|(_, c)| *c > 0)
        .collect();
    out.sort_by(|a, b| b.1.cmp(&a.1).then(a.0.cmp(&b.0)));
    out.into_iter()
        .map(|(s, c)| BestFrequency {
            spec_id: spec_ids[s].clone(),
            share: c as f64 / sets.len().max(1) as f64,
        })
        .collect()
}
