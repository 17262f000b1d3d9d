//! Error metrics on pooled out-of-fold predictions.
//!
//! `baseline_mae` is the MAE of the best constant predictor under absolute error: each
//! test row is predicted by the median of its fold's training outcomes ([`baseline`]; the
//! median minimises the sum of absolute deviations). `skill` = 1 - `mae` / `baseline_mae`,
//! so skill > 0 means the spec beats, out of fold, the constant that fits the training
//! rows best. Metrics that are undefined (e.g. R2 or Spearman when one side is constant,
//! skill when the baseline is exact) are NaN here and stored as null.

use std::collections::HashMap;

/// Mean absolute error.
pub fn mae(obs: &[f64], pred: &[f64]) -> f64 {
    obs.iter()
        .zip(pred)
        .map(|(o, p)| (o - p).abs())
        .sum::<f64>()
        / obs.len() as f64
}

/// Median of a non-empty slice (mean of the two middle values when even).
pub fn median(v: &mut [f64]) -> f64 {
    v.sort_by(f64::total_cmp);
    let n = v.len();
    if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    }
}

/// Quantile with linear interpolation between order statistics (numpy's default
/// "linear" method).
pub fn quantile(v: &[f64], q: f64) -> f64 {
    let mut s = v.to_vec();
    s.sort_by(f64::total_cmp);
    quantile_sorted(&s, q)
}

/// [`quantile`] of values already sorted ascending; NaN when empty.
pub fn quantile_sorted(s: &[f64], q: f64) -> f64 {
    if s.is_empty() {
        return f64::NAN;
    }
    let h = (s.len() - 1) as f64 * q;
    let lo = h.floor() as usize;
    let hi = h.ceil() as usize;
    s[lo] + (h - lo as f64) * (s[hi] - s[lo])
}

/// The baseline prediction from a fold's training outcomes: their median (the mean of the
/// two middle values for an even count; numpy's `median`). NaN when there are none.
pub fn baseline(y_train: &[f64]) -> f64 {
    if y_train.is_empty() {
        return f64::NAN;
    }
    let mut v = y_train.to_vec();
    median(&mut v)
}

/// Root mean squared error.
pub fn rmse(obs: &[f64], pred: &[f64]) -> f64 {
    (obs.iter()
        .zip(pred)
        .map(|(o, p)| (o - p) * (o - p))
        .sum::<f64>()
        / obs.len() as f64)
        .sqrt()
}

/// Coefficient of determination 1 - SSE/SST, SST about the mean of `obs` (as
/// scikit-learn's `r2_score`; NaN when `obs` is constant).
pub fn r2(obs: &[f64], pred: &[f64]) -> f64 {
    let m = obs.iter().sum::<f64>() / obs.len() as f64;
    let sst: f64 = obs.iter().map(|o| (o - m) * (o - m)).sum();
    let sse: f64 = obs.iter().zip(pred).map(|(o, p)| (o - p) * (o - p)).sum();
    if sst == 0.0 {
        f64::NAN
    } else {
        1.0 - sse / sst
    }
}

/// Ranks 1..n with ties given their average rank.
pub fn ranks(v: &[f64]) -> Vec<f64> {
    let mut idx: Vec<usize> = (0..v.len()).collect();
    idx.sort_by(|&a, &b| v[a].total_cmp(&v[b]));
    let mut r = vec![0.0; v.len()];
    let mut i = 0;
    while i < idx.len() {
        let mut j = i;
        while j + 1 < idx.len() && v[idx[j + 1]] == v[idx[i]] {
            j += 1;
        }
        let avg = (i + j) as f64 / 2.0 + 1.0;
        for &k in &idx[i..=j] {
            r[k] = avg;
        }
        i = j + 1;
    }
    r
}

/// Pearson correlation (NaN when either side is constant).
pub fn pearson(a: &[f64], b: &[f64]) -> f64 {
    let n = a.len() as f64;
    let (ma, mb) = (a.iter().sum::<f64>() / n, b.iter().sum::<f64>() / n);
    let (mut sab, mut saa, mut sbb) = (0.0, 0.0, 0.0);
    for (x, y) in a.iter().zip(b) {
        sab += (x - ma) * (y - mb);
        saa += (x - ma) * (x - ma);
        sbb += (y - mb) * (y - mb);
    }
    if saa == 0.0 || sbb == 0.0 {
        f64::NAN
    } else {
        sab / (saa * sbb).sqrt()
    }
}

/// Spearman rank correlation: Pearson correlation of average ranks (as scipy's
/// `spearmanr`).
pub fn spearman(a: &[f64], b: &[f64]) -> f64 {
    pearson(&ranks(a), &ranks(b))
}

/// MAE over the rows whose observed outcome is at or above the 75th percentile of the
/// observed outcomes (numpy's linear quantile): the high-outcome units that upweighting
/// is meant to help.
pub fn top_quartile_mae(obs: &[f64], pred: &[f64]) -> f64 {
    let cut = quantile(obs, 0.75);
    let (mut s, mut n) = (0.0, 0usize);
    for (o, p) in obs.iter().zip(pred) {
        if *o >= cut {
            s += (o - p).abs();
            n += 1;
        }
    }
    s / n as f64
}

/// MAE with every unit counting once: the mean over units of each unit's mean absolute
/// error.
pub fn unit_mae(obs: &[f64], pred: &[f64], unit: &[usize]) -> f64 {
    let mut acc: HashMap<usize, (f64, usize)> = HashMap::new();
    for ((o, p), u) in obs.iter().zip(pred).zip(unit) {
        let e = acc.entry(*u).or_default();
        e.0 += (o - p).abs();
        e.1 += 1;
    }
    let mut per: Vec<(usize, f64)> = acc
        .into_iter()
        .map(|(u, (s, n))| (u, s / n as f64))
        .collect();
    per.sort_by_key(|(u, _)| *u);
    per.iter().map(|(_, m)| m).sum::<f64>() / per.len() as f64
}

/// The metrics of one spec.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Scores {
    pub mae: f64,
    pub rmse: f64,
    pub r2: f64,
    /// MAE of the training-median baseline ([`baseline`]).
    pub baseline_mae: f64,
    /// 1 - mae / baseline_mae.
    pub skill: f64,
    pub top_quartile_mae: f64,
    pub unit_mae: f64,
    pub spearman: f64,
}

impl Scores {
    pub fn compute(obs: &[f64], pred: &[f64], baseline: &[f64], unit: &[usize]) -> Scores {
        let m = mae(obs, pred);
        let b = mae(obs, baseline);
        Scores {
            mae: m,
            rmse: rmse(obs, pred),
            r2: r2(obs, pred),
            baseline_mae: b,
            skill: 1.0 - m / b,
            top_quartile_mae: top_quartile_mae(obs, pred),
            unit_mae: unit_mae(obs, pred, unit),
            spearman: spearman(obs, pred),
        }
    }

    /// (column name, value) of every metric, in output order.
    pub fn columns(&self) -> [(&'static str, f64); 8] {
        [
            ("mae", self.mae),
            ("rmse", self.rmse),
            ("r2", self.r2),
            ("baseline_mae", self.baseline_mae),
            ("skill", self.skill),
            ("top_quartile_mae", self.top_quartile_mae),
            ("unit_mae", self.unit_mae),
            ("spearman", self.spearman),
        ]
    }
}

/// Metric column names, in output order.
pub const METRIC_COLUMNS: [&str; 8] = [
    "mae",
    "rmse",
    "r2",
    "baseline_mae",
    "skill",
    "top_quartile_mae",
    "unit_mae",
    "spearman",
];

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ranks_average_ties() {
        // Worked by hand: [10, 20, 20, 5] -> ranks [2, 3.5, 3.5, 1].
        assert_eq!(ranks(&[10.0, 20.0, 20.0, 5.0]), vec![2.0, 3.5, 3.5, 1.0]);
    }

    /// The baseline is the training median, so on a skewed outcome the constant median
    /// gets skill 0 exactly, where the mean's baseline would have handed it positive
    /// skill. By hand: training outcomes 1, 2, 3, 4, 40 (median 3, mean 10); test rows
    /// 2 and 4: baseline MAE |2-3| + |4-3| = 1 per row.
    #[test]
    fn skill_is_against_the_training_median() {
        let train = [1.0, 2.0, 3.0, 4.0, 40.0];
        assert_eq!(baseline(&train), 3.0);
        assert_eq!(baseline(&[1.0, 2.0, 3.0, 40.0]), 2.5);
        assert!(baseline(&[]).is_nan());
        let obs = [2.0, 4.0];
        let b = [baseline(&train); 2];
        let s = Scores::compute(&obs, &b, &b, &[0, 1]);
        assert_eq!(s.baseline_mae, 1.0);
        assert_eq!(s.skill, 0.0);
        // A predictor at the mean (10) is worse than the median constant: negative skill.
        let s = Scores::compute(&obs, &[10.0, 10.0], &b, &[0, 1]);
        assert_eq!(s.skill, 1.0 - 7.0);
    }

    #[test]
    fn unit_mae_counts_units_once() {
        // Unit 0: errors 1 and 3 (mean 2); unit 1: error 4 -> (2 + 4) / 2 = 3; row MAE 8/3.
        let obs = [0.0, 0.0, 0.0];
        let pred = [1.0, 3.0, 4.0];
        assert!((unit_mae(&obs, &pred, &[0, 0, 1]) - 3.0).abs() < 1e-12);
        assert!((mae(&obs, &pred) - 8.0 / 3.0).abs() < 1e-12);
    }
}
