//! Subgroups of units from their centred ICE curves.
//!
//! Each unit's curve is the mean of its rows' centred ICE curves. k-means (Lloyd, at most
//! 100 iterations, k-means++ starts from a ChaCha8 stream seeded with `mix(seed, k)`, the
//! best of `STARTS` starts by within-cluster sum of squares) is run for k = 2..=4 (k below
//! the number of units); k is the one with the largest mean silhouette (Euclidean), and it
//! is kept only when that silhouette is at least `MIN_SILHOUETTE` (0.5, the "reasonable
//! structure" level of Kaufman & Rousseeuw 1990, recalled from memory; common practice),
//! else there is one group. A unit departs from the mean when the root-mean-square
//! distance of its curve from the mean centred curve exceeds the median of those distances
//! plus 3 x 1.4826 x their median absolute deviation (a robust 3-sigma bound; common
//! practice).

use crate::folds::mix;
use ndarray::{Array2, ArrayView2, Axis};
use rand::{Rng, SeedableRng};

pub const STARTS: usize = 10;
pub const MIN_SILHOUETTE: f64 = 0.5;

fn d2(a: ndarray::ArrayView1<f64>, b: ndarray::ArrayView1<f64>) -> f64 {
    a.iter().zip(b).map(|(x, y)| (x - y) * (x - y)).sum()
}

/// k-means of the rows of `x`: (labels, within-cluster sum of squares).
pub fn kmeans(x: ArrayView2<f64>, k: usize, seed: u64) -> (Vec<usize>, f64) {
    let n = x.nrows();
    if k == 0 || n == 0 {
        return (vec![0; n], 0.0);
    }
    let mut best: Option<(Vec<usize>, f64)> = None;
    for s in 0..STARTS {
        let mut rng =
            rand_chacha::ChaCha8Rng::seed_from_u64(mix(seed, (k as u64) << 16 | s as u64));
        // k-means++ seeding.
        let mut centres: Vec<usize> = vec![rng.gen_range(0..n)];
        while centres.len() < k.min(n) {
            let w: Vec<f64> = (0..n)
                .map(|i| {
                    centres
                        .iter()
                        .map(|&c| d2(x.row(i), x.row(c)))
                        .fold(f64::INFINITY, f64::min)
                })
                .collect();
            let total: f64 = w.iter().sum();
            let pick = if total <= 0.0 {
                rng.gen_range(0..n)
            } else {
                let mut r = rng.gen::<f64>() * total;
                let mut p = n - 1;
                for (i, &wi) in w.iter().enumerate() {
                    if r < wi {
                        p = i;
                        break;
                    }
                    r -= wi;
                }
                p
            };
            centres.push(pick);
        }
        let mut c: Array2<f64> = x.select(Axis(0), &centres);
        let mut labels = vec![0usize; n];
        for _ in 0..100 {
            let mut changed = false;
            for (i, li) in labels.iter_mut().enumerate() {
                let mut bi = 0;
                let mut bd = f64::INFINITY;
                for j in 0..c.nrows() {
                    let d = d2(x.row(i), c.row(j));
                    if d < bd {
                        bd = d;
                        bi = j;
                    }
                }
                if *li != bi {
                    *li = bi;
                    changed = true;
                }
            }
            for j in 0..c.nrows() {
                let members: Vec<usize> = (0..n).filter(|&i| labels[i] == j).collect();
                if !members.is_empty() {
                    let m = x.select(Axis(0), &members).mean_axis(Axis(0));
                    if let Some(m) = m {
                        c.row_mut(j).assign(&m);
                    }
                }
            }
            if !changed {
                break;
            }
        }
        let wss: f64 = (0..n).map(|i| d2(x.row(i), c.row(labels[i]))).sum();
        if best.as_ref().is_none_or(|b| wss < b.1) {
            best = Some((labels, wss));
        }
    }
    best.unwrap_or((vec![0; n], 0.0))
}

/// Mean silhouette (Euclidean) of a labelling; a point alone in its cluster scores 0
/// (as scikit-learn does). NaN with fewer than two clusters.
pub fn silhouette(x: ArrayView2<f64>, labels: &[usize]) -> f64 {
    let n = x.nrows();
    let k = labels.iter().copied().max().map_or(0, |m| m + 1);
    let used = (0..k).filter(|c| labels.contains(c)).count();
    if used < 2 || n < 2 {
        return f64::NAN;
    }
    let mut total = 0.0;
    for i in 0..n {
        let mut sum = vec![0.0; k];
        let mut cnt = vec![0usize; k];
        for j in 0..n {
            if i != j {
                sum[labels[j]] += d2(x.row(i), x.row(j)).sqrt();
                cnt[labels[j]] += 1;
            }
        }
        let own = labels[i];
        if cnt[own] == 0 {
            continue;
        }
        let a = sum[own] / cnt[own] as f64;
        let b = (0..k)
            .filter(|&c| c != own && cnt[c] > 0)
            .map(|c| sum[c] / cnt[c] as f64)
            .fold(f64::INFINITY, f64::min);
        let s = if a.max(b) > 0.0 {
            (b - a) / a.max(b)
        } else {
            0.0
        };
        total += s;
    }
    total / n as f64
}

/// The chosen grouping of units.
#[derive(Debug, Clone, PartialEq)]
pub struct Subgroups {
    pub k: usize,
    /// Mean silhouette of the chosen k (NaN for one group), and of every k tried.
    pub silhouette: f64,
    pub tried: Vec<(usize, f64)>,
    pub labels: Vec<usize>,
    /// RMS distance of each unit's centred curve from the mean centred curve.
    pub distance: Vec<f64>,
    pub bound: f64,
    pub departs: Vec<bool>,
}

/// Group units (rows of `curves`: one centred curve per unit) as stated in the module doc.
pub fn subgroups(curves: ArrayView2<f64>, seed: u64) -> Subgroups {
    let n = curves.nrows();
    let mut tried = Vec::new();
    let mut pick: (usize, f64, Vec<usize>) = (1, f64::NAN, vec![0; n]);
    for k in 2..=4usize {
        if k >= n {
            break;
        }
        let (labels, _) = kmeans(curves, k, seed);
        let s = silhouette(curves, &labels);
        tried.push((k, s));
        if s.is_finite() && s >= MIN_SILHOUETTE && (pick.1.is_nan() || s > pick.1) {
            pick = (k, s, labels);
        }
    }
    let m = curves.ncols().max(1) as f64;
    let mean = curves
        .mean_axis(Axis(0))
        .unwrap_or_else(|| ndarray::Array1::zeros(curves.ncols()));
    let distance: Vec<f64> = (0..n)
        .map(|i| (d2(curves.row(i), mean.view()) / m).sqrt())
        .collect();
    let mut s = distance.clone();
    s.sort_by(f64::total_cmp);
    let med = crate::report::stats::quantile_sorted(&s, 0.5);
    let mut dev: Vec<f64> = distance.iter().map(|d| (d - med).abs()).collect();
    dev.sort_by(f64::total_cmp);
    let mad = crate::report::stats::quantile_sorted(&dev, 0.5);
    let bound = med + 3.0 * 1.4826 * mad;
    let departs = distance
        .iter()
        .map(|&d| d > bound + 1e-12 * (1.0 + bound.abs()))
        .collect();
    Subgroups {
        k: pick.0,
        silhouette: pick.1,
        tried,
        labels: pick.2,
        distance,
        bound,
        departs,
    }
}
