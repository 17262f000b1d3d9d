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
            .filter(|&&i| kt.in_pool(i, j))
            .map(|&i| kt.values[i * kt.n_names() + j])
            .collect();
        let ranks: Vec<u32> = rows.iter().map(|&i| kt.rank(i, j)).collect();
        let rf: Vec<f64> = ranks.iter().map(|&r| f64::from(r)).collect();
        let top = |is: &mut dyn Iterator<Item = usize>, n: usize| {
            if n == 0 {
                f64::NAN
            } else {
                is.filter(|&i| kt.is_top(i, j, top_k)).count() as f64 / n as f64
            }
        };
        let all = kt.specs.len();
        sums.push(ImportanceSummary {
            level: kt.level.clone(),
            kind: kt.kind.clone(),
            name: name.clone(),
            importance: spread(&vals),
            out_of_pool: rows.len() - vals.len(),
            median_rank: median(&rf),
            best_rank: ranks.iter().copied().min().unwrap_or(0),
            worst_rank: ranks.iter().copied().max().unwrap_or(0),
            share_top_k: top(&mut rows.iter().copied(), rows.len()),
            share_top_k_all: top(&mut (0..all), all),
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

/// Tau-b between two members' importances over the names both members' pools hold (a
/// name one of them left out is 0 there by construction: counting it would measure how
/// alike the pools are, not the orderings).
pub fn shared_tau_b(kt: &KindTable, a: usize, b: usize) -> f64 {
    let (va, vb) = (kt.row_values(a), kt.row_values(b));
    let (x, y): (Vec<f64>, Vec<f64>) = (0..kt.n_names())
        .filter(|&j| kt.in_pool(a, j) && kt.in_pool(b, j))
        .map(|j| (va[j], vb[j]))
        .unzip();
    tau_b(&x, &y)
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
        .map(|&(a, b)| shared_tau_b(kt, rows[a], rows[b]))
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

#[cfg(test)]
mod pool_tests {
    use super::*;

    /// Two members; member 1's pool left out name c (importance 0 there by construction).
    fn kt() -> KindTable {
        KindTable {
            level: "indicator".into(),
            kind: "permutation".into(),
            names: vec!["a".into(), "b".into(), "c".into(), "d".into()],
            specs: vec![0, 1],
            values: vec![4.0, 3.0, 2.0, 1.0, 1.0, 3.0, 0.0, 2.0],
            ranks: vec![1, 2, 3, 4, 3, 1, 4, 2],
            in_pool: vec![true, true, true, true, true, true, false, true],
        }
    }

    #[test]
    fn the_range_leaves_out_members_whose_pool_left_the_name_out() {
        let (sums, _) = summarise(&kt(), &[true, true], 2);
        let c = sums.iter().find(|s| s.name == "c").unwrap();
        assert_eq!((c.importance.n, c.out_of_pool), (1, 1));
        assert_eq!((c.importance.min, c.importance.max), (2.0, 2.0));
        let a = sums.iter().find(|s| s.name == "a").unwrap();
        assert_eq!((a.importance.n, a.out_of_pool), (2, 0));
        assert_eq!((a.importance.min, a.importance.max), (1.0, 4.0));
    }

    #[test]
    fn agreement_is_over_the_names_both_pools_hold() {
        // Over a, b, d: (4, 3, 1) vs (1, 3, 2): pairs ab discordant, ad discordant, bd
        // concordant: tau = (1 - 2) / 3 (worked by hand, no ties).
        let t = shared_tau_b(&kt(), 0, 1);
        assert!((t - (-1.0 / 3.0)).abs() < 1e-15, "{t}");
        // Counting c (0 in member 1 because it was left out) would give another value.
        let all = tau_b(kt().row_values(0), kt().row_values(1));
        assert!((all - t).abs() > 0.1, "{all} vs {t}");
    }
}
