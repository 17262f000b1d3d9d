//! The statistics the report sections share: numpy-style quantiles and five-number
//! summaries, Kendall's tau-b, the LMG (Shapley) decomposition of R^2 over factors, and
//! the unit bootstrap's resamples.
//!
//! Reference checks (tests/reference/make_reference.py -> report.json): tau-b against
//! `scipy.stats.kendalltau` (variant b, with ties); the LMG parts against R^2 of
//! `statsmodels` OLS fitted on every subset of dummy-coded factors of an unbalanced design;
//! the percentile intervals against `numpy.percentile` on the same resample indices.

use super::model::Spread;
use crate::streams::mix;
use rand::{Rng, SeedableRng};

pub use crate::metrics::quantile_sorted;

/// Five-number summary (numpy linear quartiles); NaN-valued fields when `v` is empty.
/// NaN values are left out.
pub fn spread(v: &[f64]) -> Spread {
    let mut s: Vec<f64> = v.iter().copied().filter(|x| !x.is_nan()).collect();
    s.sort_by(f64::total_cmp);
    Spread {
        n: s.len(),
        min: s.first().copied().unwrap_or(f64::NAN),
        q1: quantile_sorted(&s, 0.25),
        median: quantile_sorted(&s, 0.5),
        q3: quantile_sorted(&s, 0.75),
        max: s.last().copied().unwrap_or(f64::NAN),
    }
}

/// Median (numpy linear); NaN when empty.
pub fn median(v: &[f64]) -> f64 {
    spread(v).median
}

/// Kendall's tau-b of two equally long vectors (ties in either counted as by
/// `scipy.stats.kendalltau(variant="b")`); NaN when either side is constant or n < 2.
/// O(n^2): the report uses it on importance vectors of tens to a few hundred names.
/// A NaN on either side makes the result NaN (scipy's default `nan_policy="propagate"`),
/// never a silently counted pair.
pub fn tau_b(x: &[f64], y: &[f64]) -> f64 {
    let n = x.len().min(y.len());
    if x[..n].iter().chain(&y[..n]).any(|v| v.is_nan()) {
        return f64::NAN;
    }
    let (mut conc, mut disc, mut tx, mut ty) = (0i64, 0i64, 0i64, 0i64);
    for i in 0..n {
        for j in (i + 1)..n {
            let dx = x[i] - x[j];
            let dy = y[i] - y[j];
            if dx == 0.0 && dy == 0.0 {
                tx += 1;
                ty += 1;
            } else if dx == 0.0 {
                tx += 1;
            } else if dy == 0.0 {
                ty += 1;
            } else if (dx > 0.0) == (dy > 0.0) {
                conc += 1;
            } else {
                disc += 1;
            }
        }
    }
    let n0 = (n as i64) * (n as i64 - 1) / 2;
    let den = (((n0 - tx) as f64) * ((n0 - ty) as f64)).sqrt();
    if n < 2 || den == 0.0 {
        f64::NAN
    } else {
        (conc - disc) as f64 / den
    }
}

/// A design of categorical factors (one level index per row and factor), dummy coded and
/// centred, with every subset's normal-equation inverse prepared, so that the LMG
/// decomposition of many outcomes on the same design costs one quadratic form per subset.
pub struct LmgDesign {
    n: usize,
    factors: usize,
    /// Centred dummy columns, column-major (n per column).
    cols: Vec<Vec<f64>>,
    /// Per subset (bitmask over factors): kept columns and the inverse of their Gram
    /// matrix (row-major). Columns collinear with earlier ones are dropped (sweep with a
    /// relative pivot tolerance), which leaves the fitted values, hence R^2, unchanged.
    subsets: Vec<(Vec<usize>, Vec<f64>)>,
}

/// Result of one decomposition.
#[derive(Debug, Clone, PartialEq)]
pub struct Lmg {
    /// R^2 with every factor.
    pub r2_total: f64,
    /// Each factor's LMG part (sums to `r2_total`).
    pub parts: Vec<f64>,
    /// R^2 of each factor alone.
    pub alone: Vec<f64>,
}

/// At most this many factors (2^12 subset regressions).
pub const LMG_MAX_FACTORS: usize = 12;

impl LmgDesign {
    /// `levels[f][i]`: level of factor f on row i. Factors: at most [`LMG_MAX_FACTORS`].
    pub fn new(levels: &[Vec<usize>]) -> LmgDesign {
        let factors = levels.len().min(LMG_MAX_FACTORS);
        let n = levels.first().map(|l| l.len()).unwrap_or(0);
        let mut cols: Vec<Vec<f64>> = Vec::new();
        let mut col_factor: Vec<usize> = Vec::new();
        for (f, lv) in levels.iter().take(factors).enumerate() {
            let nl = lv.iter().copied().max().map(|m| m + 1).unwrap_or(0);
            // One dummy per level but the first present (the reference level).
            let mut present = vec![false; nl];
            for &l in lv {
                present[l] = true;
            }
            let mut seen_first = false;
            for (l, &p) in present.iter().enumerate() {
                if !p {
                    continue;
                }
                if !seen_first {
                    seen_first = true;
                    continue;
                }
                let mut c: Vec<f64> = lv.iter().map(|&x| f64::from(u8::from(x == l))).collect();
                let m = c.iter().sum::<f64>() / n as f64;
                c.iter_mut().for_each(|v| *v -= m);
                cols.push(c);
                col_factor.push(f);
            }
        }
        let p = cols.len();
        let mut gram = vec![0.0; p * p];
        for a in 0..p {
            for b in a..p {
                let g: f64 = cols[a].iter().zip(&cols[b]).map(|(x, y)| x * y).sum();
                gram[a * p + b] = g;
                gram[b * p + a] = g;
            }
        }
        let subsets = (0..1usize << factors)
            .map(|mask| {
                let idx: Vec<usize> = (0..p).filter(|&c| mask >> col_factor[c] & 1 == 1).collect();
                inverse_kept(&gram, p, &idx)
            })
            .collect();
        LmgDesign {
            n,
            factors,
            cols,
            subsets,
        }
    }

    pub fn rows(&self) -> usize {
        self.n
    }

    /// R^2 of every subset of factors and the LMG parts, for outcome `y` (length n). A
    /// constant `y` gives zeros.
    pub fn decompose(&self, y: &[f64]) -> Lmg {
        let n = self.n;
        let m = self.factors;
        let mean = y.iter().sum::<f64>() / n.max(1) as f64;
        let yc: Vec<f64> = y.iter().map(|v| v - mean).collect();
        let tss: f64 = yc.iter().map(|v| v * v).sum();
        let c: Vec<f64> = self
            .cols
            .iter()
            .map(|col| col.iter().zip(&yc).map(|(a, b)| a * b).sum())
            .collect();
        let r2: Vec<f64> = self
            .subsets
            .iter()
            .map(|(idx, inv)| {
                if tss <= 0.0 || idx.is_empty() {
                    return 0.0;
                }
                let k = idx.len();
                let mut q = 0.0;
                for a in 0..k {
                    let mut s = 0.0;
                    for b in 0..k {
                        s += inv[a * k + b] * c[idx[b]];
                    }
                    q += c[idx[a]] * s;
                }
                (q / tss).clamp(0.0, 1.0)
            })
            .collect();
        // Shapley weights |S|! (m - |S| - 1)! / m!.
        let fact = |k: usize| (1..=k).map(|v| v as f64).product::<f64>();
        let mut parts = vec![0.0; m];
        for (j, part) in parts.iter_mut().enumerate() {
            for mask in 0..1usize << m {
                if mask >> j & 1 == 1 {
                    continue;
                }
                let s = mask.count_ones() as usize;
                let w = fact(s) * fact(m - s - 1) / fact(m);
                *part += w * (r2[mask | 1 << j] - r2[mask]);
            }
        }
        Lmg {
            r2_total: r2[(1usize << m) - 1],
            parts,
            alone: (0..m).map(|j| r2[1 << j]).collect(),
        }
    }
}

/// Sweep the Gram sub-matrix on `idx`, skipping pivots below 1e-9 of their column's
/// diagonal (collinear or empty columns); returns the kept columns and the inverse of
/// their Gram matrix (row-major).
fn inverse_kept(gram: &[f64], p: usize, idx: &[usize]) -> (Vec<usize>, Vec<f64>) {
    let k = idx.len();
    let mut a: Vec<f64> = Vec::with_capacity(k * k);
    for &r in idx {
        for &c in idx {
            a.push(gram[r * p + c]);
        }
    }
    let diag: Vec<f64> = (0..k).map(|i| a[i * k + i]).collect();
    let mut swept = vec![false; k];
    for piv in 0..k {
        let d = a[piv * k + piv];
        if diag[piv] <= 0.0 || d.is_nan() || d <= 1e-9 * diag[piv] {
            continue;
        }
        // The sweep operator (Goodnight 1979) on pivot `piv`.
        let row: Vec<f64> = (0..k).map(|j| a[piv * k + j]).collect();
        for i in 0..k {
            if i == piv {
                continue;
            }
            let f = a[i * k + piv] / d;
            for j in 0..k {
                if j == piv {
                    continue;
                }
                a[i * k + j] -= f * row[j];
            }
        }
        for j in 0..k {
            if j != piv {
                a[piv * k + j] = row[j] / d;
                a[j * k + piv] /= d;
            }
        }
        a[piv * k + piv] = -1.0 / d;
        swept[piv] = true;
    }
    let kept: Vec<usize> = (0..k).filter(|&i| swept[i]).collect();
    let kk = kept.len();
    let mut inv = Vec::with_capacity(kk * kk);
    for &i in &kept {
        for &j in &kept {
            // The swept block holds -inverse.
            inv.push(-a[i * k + j]);
        }
    }
    (kept.iter().map(|&i| idx[i]).collect(), inv)
}

// Stream of the report's unit bootstrap (mixed with the report seed).
use crate::streams::REPORT_RESAMPLES as RESAMPLE_STREAM;

/// `b` resamples of `n` units drawn with replacement: `b * n` unit indices, resample-major.
/// A pure function of (n, b, seed).
pub fn resample_indices(n: usize, b: usize, seed: u64) -> Vec<u32> {
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(mix(seed, RESAMPLE_STREAM));
    (0..n * b).map(|_| rng.gen_range(0..n as u32)).collect()
}

/// Per resample, how often each unit was drawn (`b * n`, resample-major).
pub fn resample_counts(indices: &[u32], n: usize) -> Vec<f64> {
    let b = indices.len() / n.max(1);
    let mut c = vec![0.0; b * n];
    for (r, chunk) in indices.chunks(n.max(1)).enumerate() {
        for &u in chunk {
            c[r * n + u as usize] += 1.0;
        }
    }
    c
}

/// Two-sided percentile interval at `level` of bootstrap replicates (numpy linear).
pub fn percentile_interval(replicates: &[f64], level: f64) -> (f64, f64) {
    let mut s: Vec<f64> = replicates.iter().copied().filter(|v| !v.is_nan()).collect();
    s.sort_by(f64::total_cmp);
    let a = (1.0 - level) / 2.0;
    (quantile_sorted(&s, a), quantile_sorted(&s, 1.0 - a))
}

/// Sample standard deviation (ddof 1); NaN below two values.
pub fn sd(v: &[f64]) -> f64 {
    if v.len() < 2 {
        return f64::NAN;
    }
    let m = v.iter().sum::<f64>() / v.len() as f64;
    (v.iter().map(|x| (x - m) * (x - m)).sum::<f64>() / (v.len() - 1) as f64).sqrt()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tau_b_is_nan_when_a_value_is_nan() {
        assert!(tau_b(&[1.0, f64::NAN, 3.0], &[1.0, 2.0, 3.0]).is_nan());
        assert!(tau_b(&[1.0, 2.0, 3.0], &[3.0, 2.0, f64::NAN]).is_nan());
        assert_eq!(tau_b(&[1.0, 2.0, 3.0], &[1.0, 2.0, 3.0]), 1.0);
    }

    #[test]
    fn tau_b_worked_examples() {
        // Identical order: 1; reversed: -1 (by definition).
        let a = [1.0, 2.0, 3.0, 4.0];
        assert!((tau_b(&a, &a) - 1.0).abs() < 1e-12);
        assert!((tau_b(&a, &[4.0, 3.0, 2.0, 1.0]) + 1.0).abs() < 1e-12);
        // Worked by hand: x = [1,2,2,3], y = [1,3,2,3]: pairs (6): concordant 4
        // ((0,1),(0,2),(0,3),(2,3)), discordant 0, tied in x 1 ((1,2)), tied in y 1 ((1,3)):
        // 4 / sqrt(5 * 5) = 0.8.
        assert!((tau_b(&[1.0, 2.0, 2.0, 3.0], &[1.0, 3.0, 2.0, 3.0]) - 0.8).abs() < 1e-12);
        assert!(tau_b(&[1.0, 1.0], &[1.0, 2.0]).is_nan());
    }

    #[test]
    fn lmg_parts_sum_to_r2_and_match_a_two_factor_hand_case() {
        // Balanced 2 x 2 with y = 2*a + 1*b: orthogonal factors, so each part is its own
        // R^2 alone, and the total is 1. Var share: a 4/(4+1), b 1/(4+1).
        let a = vec![0, 0, 1, 1, 0, 0, 1, 1];
        let b = vec![0, 1, 0, 1, 0, 1, 0, 1];
        let y: Vec<f64> = a
            .iter()
            .zip(&b)
            .map(|(x, z)| 2.0 * *x as f64 + *z as f64)
            .collect();
        let d = LmgDesign::new(&[a, b]);
        let r = d.decompose(&y);
        assert!((r.r2_total - 1.0).abs() < 1e-12, "{r:?}");
        assert!((r.parts[0] - 0.8).abs() < 1e-12 && (r.parts[1] - 0.2).abs() < 1e-12);
        assert!((r.alone[0] - 0.8).abs() < 1e-12);
    }

    #[test]
    fn lmg_survives_collinear_factors() {
        // Factor c duplicates factor a (an exclusion-like confound): parts split a's
        // R^2 equally between them (Shapley symmetry) and still sum to the total.
        let a = vec![0, 1, 2, 0, 1, 2, 0, 1, 2];
        let c = a.clone();
        let b = vec![0, 0, 0, 1, 1, 1, 0, 1, 0];
        let y = [1.0, 3.0, 2.0, 1.5, 3.2, 2.4, 0.9, 3.1, 2.2];
        let r = LmgDesign::new(&[a, b, c]).decompose(&y);
        let sum: f64 = r.parts.iter().sum();
        assert!((sum - r.r2_total).abs() < 1e-10, "{r:?}");
        assert!((r.parts[0] - r.parts[2]).abs() < 1e-10, "{r:?}");
        assert!(r.r2_total > 0.9 && r.r2_total <= 1.0);
    }

    #[test]
    fn resamples_are_seeded_and_in_range() {
        let a = resample_indices(7, 50, 3);
        assert_eq!(a, resample_indices(7, 50, 3));
        assert_ne!(a, resample_indices(7, 50, 4));
        assert!(a.iter().all(|&u| u < 7));
        let c = resample_counts(&a, 7);
        assert!(c.chunks(7).all(|r| r.iter().sum::<f64>() == 7.0));
    }

    #[test]
    fn quantiles_follow_numpy_linear() {
        // numpy.percentile([1, 2, 3, 4], [25, 50, 75]) = [1.75, 2.5, 3.25] (numpy docs' rule).
        let s = spread(&[4.0, 1.0, 3.0, 2.0]);
        assert_eq!((s.q1, s.median, s.q3), (1.75, 2.5, 3.25));
        assert_eq!((s.min, s.max, s.n), (1.0, 4.0, 4));
    }
}
