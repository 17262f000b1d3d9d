//! Subgroups of units from their centred ICE curves.
//!
//! Each unit's curve is the mean of its rows' centred ICE curves. The number of groups is
//! chosen by the gap statistic against a reference of no cluster structure
//! ([`super::gap`]): units whose curves differ only continuously (a spread of amplitudes,
//! noise) form one group. The groups themselves are those of k-means (Lloyd, k-means++
//! starts from the `CURVE_KMEANS` stream, the lowest within-cluster sum of squares over
//! [`STARTS`] starts, as scikit-learn's `n_init` keeps). The mean silhouette of the chosen
//! partition is reported beside it, as a description only. A unit departs from the mean when the root-mean-square
//! distance of its curve from the mean centred curve exceeds the median of those distances
//! plus 3 x 1.4826 x their median absolute deviation (a robust 3-sigma bound; common
//! practice).

use crate::streams::{mix, CURVE_KMEANS};
use ndarray::{Array2, ArrayView2, Axis};
use rand::{Rng, SeedableRng};

/// k-means++ starts per k; the lowest within-cluster sum of squares is kept.
pub const STARTS: usize = 50;
/// Lloyd iterations per start at most (scikit-learn's default `max_iter`, recalled from
/// memory).
pub const MAX_ITER: usize = 300;

pub(crate) fn d2(a: ndarray::ArrayView1<f64>, b: ndarray::ArrayView1<f64>) -> f64 {
    a.iter().zip(b).map(|(x, y)| (x - y) * (x - y)).sum()
}

/// k-means of the rows of `x`: (labels, within-cluster sum of squares), the lowest over
/// [`STARTS`] k-means++ starts (ties keep the earlier start).
pub fn kmeans(x: ArrayView2<f64>, k: usize, seed: u64) -> (Vec<usize>, f64) {
    let n = x.nrows();
    if k == 0 || n == 0 {
        return (vec![0; n], 0.0);
    }
    let base = mix(seed, CURVE_KMEANS);
    let mut best: Option<(Vec<usize>, f64)> = None;
    for s in 0..STARTS {
        let mut rng =
            rand_chacha::ChaCha8Rng::seed_from_u64(mix(base, (k as u64) << 16 | s as u64));
        let run = lloyd(x, plus_plus(x, k.min(n), &mut rng));
        if best.as_ref().is_none_or(|b| run.1 < b.1) {
            best = Some(run);
        }
    }
    best.unwrap_or((vec![0; n], 0.0))
}

/// k-means++ seeding (Arthur & Vassilvitskii 2007): the first centre uniform, each next
/// one drawn with probability proportional to the squared distance to the nearest chosen.
fn plus_plus(x: ArrayView2<f64>, k: usize, rng: &mut rand_chacha::ChaCha8Rng) -> Array2<f64> {
    let n = x.nrows();
    let mut centres: Vec<usize> = vec![rng.gen_range(0..n)];
    let mut w: Vec<f64> = (0..n).map(|i| d2(x.row(i), x.row(centres[0]))).collect();
    while centres.len() < k {
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
        for (i, wi) in w.iter_mut().enumerate() {
            *wi = wi.min(d2(x.row(i), x.row(pick)));
        }
    }
    x.select(Axis(0), &centres)
}

/// Lloyd's iterations from the given centres until no label changes (at most
/// [`MAX_ITER`]); an emptied cluster keeps its centre. (labels, within-cluster SS about
/// the final centres).
fn lloyd(x: ArrayView2<f64>, mut c: Array2<f64>) -> (Vec<usize>, f64) {
    let (n, g, k) = (x.nrows(), x.ncols(), c.nrows());
    let mut labels = vec![usize::MAX; n];
    for _ in 0..MAX_ITER {
        let mut changed = false;
        for (i, li) in labels.iter_mut().enumerate() {
            let mut bi = 0;
            let mut bd = f64::INFINITY;
            for j in 0..k {
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
        if !changed {
            break;
        }
        let mut sum = Array2::<f64>::zeros((k, g));
        let mut cnt = vec![0usize; k];
        for (i, &l) in labels.iter().enumerate() {
            cnt[l] += 1;
            sum.row_mut(l).zip_mut_with(&x.row(i), |s, v| *s += v);
        }
        for (j, &nj) in cnt.iter().enumerate() {
            if nj > 0 {
                let m = nj as f64;
                c.row_mut(j).zip_mut_with(&sum.row(j), |cj, s| *cj = s / m);
            }
        }
    }
    let wss = (0..n).map(|i| d2(x.row(i), c.row(labels[i]))).sum();
    (labels, wss)
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
    /// Mean silhouette of the chosen partition (NaN for one group): a description, not
    /// the criterion.
    pub silhouette: f64,
    /// The gap statistic's decision (Gap(k), s(k) per k; none when the curves do not
    /// differ).
    pub gap: super::gap::GapChoice,
    pub labels: Vec<usize>,
    /// RMS distance of each unit's centred curve from the mean centred curve.
    pub distance: Vec<f64>,
    pub bound: f64,
    pub departs: Vec<bool>,
}

/// Group units (rows of `curves`: one centred curve per unit) as stated in the module doc.
pub fn subgroups(curves: ArrayView2<f64>, seed: u64) -> Subgroups {
    let n = curves.nrows();
    let gap = super::gap::choose_k(curves, seed);
    let silhouette = if gap.k > 1 {
        silhouette(curves, &gap.labels)
    } else {
        f64::NAN
    };
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
        k: gap.k,
        silhouette,
        labels: gap.labels.clone(),
        gap,
        distance,
        bound,
        departs,
    }
}
