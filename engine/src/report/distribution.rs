//! Importance over the good set, per indicator and group, per importance kind: five-number
//! summary of the importance values (their min and max are the empirical range across the
//! good set, the model-class-reliance idea of Fisher, Rudin & Dominici, JMLR 2019, here
//! over every family of the sweep), rank summary, share of members where it is top-k, the
//! rank distribution, and the pairwise agreement of members' orderings by Kendall's tau-b.

use super::data::KindTable;
use super::model::{Agreement, ImportanceSummary, RankCount};
use super::stats::{median, spread, tau_b};
use rayon::prelude::*;

/// Rows of `kt` (positions in `kt.specs`) whose spec is a good member.
pub fn good_rows(kt: &KindTable, good: &[bool]) -> Vec<usize> {
    (0..kt.specs.len()).filter(|&i| good[kt.specs[i]]).collect()
}

/// Summaries and rank counts of every name over the good rows.
pub fn summarise(
    kt: &KindTable,
    good: &[bool],
    top_k: usize,
) -> (Vec<ImportanceSummary>, Vec<RankCount>) {
    let rows = good_rows(kt, good);
    let mut sums = Vec::new();
    let mut counts = Vec::new();
    for (j, name) in kt.names.iter().enumerate() {
        let vals: Vec<f64> = rows
            .iter()
            .map(|&i| kt.values[i * kt.n_names() + j])
            .collect();
        let ranks: Vec<u32> = rows.iter().map(|&i| kt.rank(i, j)).collect();
        let rf: Vec<f64> = ranks.iter().map(|&r| f64::from(r)).collect();
        let top = |rs: &mut dyn Iterator<Item = u32>, n: usize| {
            if n == 0 {
                f64::NAN
            } else {
                rs.filter(|&r| r as usize <= top_k).count() as f64 / n as f64
            }
        };
        let all = kt.specs.len();
        sums.push(ImportanceSummary {
            level: kt.level.clone(),
            kind: kt.kind.clone(),
            name: name.clone(),
            importance: spread(&vals),
            median_rank: median(&rf),
            best_rank: ranks.iter().copied().min().unwrap_or(0),
            worst_rank: ranks.iter().copied().max().unwrap_or(0),
            share_top_k: top(&mut ranks.iter().copied(), ranks.len()),
            share_top_k_all: top(&mut (0..all).map(|i| kt.rank(i, j)), all),
        });
        let mut hist: std::collections::BTreeMap<u32, usize> = Default::default();
        for r in ranks {
            *hist.entry(r).or_default() += 1;
        }
        counts.extend(hist.into_iter().map(|(rank, count)| RankCount {
            level: kt.level.clone(),
            kind: kt.kind.clone(),
            name: name.clone(),
            rank,
            count,
        }));
    }
    (sums, counts)
}

/// Tau-b agreement between the good members holding `kt` (the `cap` best by `err` when
/// there are more); `None` below two members.
pub fn agreement(
    kt: &KindTable,
    good: &[bool],
    err: &[f64],
    spec_ids: &[String],
    cap: usize,
) -> Option<Agreement> {
    let mut rows = good_rows(kt, good);
    rows.sort_by(|&a, &b| {
        err[kt.specs[a]]
            .total_cmp(&err[kt.specs[b]])
            .then(kt.specs[a].cmp(&kt.specs[b]))
    });
    let capped = rows.len() > cap;
    rows.truncate(cap);
    let m = rows.len();
    if m < 2 {
        return None;
    }
    let pairs: Vec<(usize, usize)> = (0..m)
        .flat_map(|a| ((a + 1)..m).map(move |b| (a, b)))
        .collect();
    let taus: Vec<f64> = pairs
        .par_iter()
        .map(|&(a, b)| tau_b(kt.row_values(rows[a]), kt.row_values(rows[b])))
        .collect();
    let mut matrix = vec![1.0; m * m];
    for (&(a, b), &t) in pairs.iter().zip(&taus) {
        matrix[a * m + b] = t;
        matrix[b * m + a] = t;
    }
    let finite: Vec<f64> = taus.iter().copied().filter(|t| !t.is_nan()).collect();
    Some(Agreement {
        level: kt.level.clone(),
        kind: kt.kind.clone(),
        members: rows
            .iter()
            .map(|&i| spec_ids[kt.specs[i]].clone())
            .collect(),
        capped,
        mean: if finite.is_empty() {
            f64::NAN
        } else {
            finite.iter().sum::<f64>() / finite.len() as f64
        },
        min: finite.iter().copied().fold(f64::NAN, f64::min),
        matrix,
    })
}
