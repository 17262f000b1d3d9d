//! How many subgroups of units: the gap statistic (Tibshirani, Walther & Hastie 2001, "Estimating
//! the number of clusters in a data set via the gap statistic", JRSS B 63(2); recalled from
//! memory), with its reference of no cluster structure drawn uniformly over the box of the
//! unit curves' principal components (the paper's second reference, which follows the data's
//! shape).
//!
//! For k = 1, 2, ...: W(k) is the lowest within-cluster sum of squares k-means finds
//! ([`super::kmeans`]; W(1) is the total sum of squares about the mean). Each of
//! [`REFERENCE_DRAWS`] reference data sets has as many rows as there are units, each drawn
//! uniformly over [min, max] of the units' principal-component scores, and is clustered the
//! same way. Gap(k) = mean over draws of log W*(k) - log W(k); s(k) = sd of log W*(k) (over
//! draws, divisor B) x sqrt(1 + 1/B). The number of groups is the smallest k with
//! Gap(k) >= Gap(k + 1) - s(k + 1), for k up to [`KMAX`] and below units - 1 (when no k
//! checked meets it, the largest k checked).
//! Within-cluster sums of squares do not change under rotation, so the reference rows are
//! clustered in principal-component coordinates, not rotated back.
//!
//! Units whose curves do not differ (total sum of squares about the mean curve at most
//! 1e-16 x the curves' own sum of squares, as with OLS, where every centred curve is the
//! same) form one group and have no gap. A W(k) below 1e-16 x W(1) (as many distinct curves
//! as clusters) is taken as 1e-16 x W(1) so that its log stays finite.

use super::cluster::kmeans;
use crate::streams::{mix, CURVE_GAP_REFERENCE};
use linfa_linalg::eigh::Eigh;
use ndarray::{Array2, ArrayView2, Axis};
use rand::{Rng, SeedableRng};
use rayon::prelude::*;

/// Reference data sets drawn per decision (our choice: enough for s(k) to settle; R's
/// `cluster::clusGap` defaults to 100, recalled from memory).
pub const REFERENCE_DRAWS: usize = 50;
/// The largest number of subgroups considered (Gap is computed up to `KMAX + 1`).
pub const KMAX: usize = 4;
/// Relative size below which a sum of squares counts as zero.
const TINY: f64 = 1e-16;

/// Gap(k) and s(k) for one k, with the data's own log W(k).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GapPoint {
    pub k: usize,
    pub log_w: f64,
    pub gap: f64,
    pub se: f64,
}

/// The decision: the chosen k, its data labels (from [`kmeans`]), and Gap(k), s(k) for every
/// k computed (1 to min(KMAX + 1, units - 1); empty when the curves do not differ).
#[derive(Debug, Clone, PartialEq)]
pub struct GapChoice {
    pub k: usize,
    pub labels: Vec<usize>,
    pub points: Vec<GapPoint>,
}

impl GapChoice {
    /// Gap(k) and s(k) of a k, when computed.
    pub fn at(&self, k: usize) -> Option<GapPoint> {
        self.points.iter().find(|p| p.k == k).copied()
    }
}

fn total_ss(x: ArrayView2<f64>) -> f64 {
    match x.mean_axis(Axis(0)) {
        Some(m) => x
            .rows()
            .into_iter()
            .map(|r| super::cluster::d2(r, m.view()))
            .sum(),
        None => 0.0,
    }
}

/// Principal-component scores of the rows of `x` (centred), or `None` when the
/// eigendecomposition fails.
fn pc_scores(x: ArrayView2<f64>) -> Option<Array2<f64>> {
    let m = x.mean_axis(Axis(0))?;
    let xc = &x - &m;
    let cov = xc.t().dot(&xc);
    let (_, vecs) = cov.eigh().ok()?;
    Some(xc.dot(&vecs))
}

/// Whether the rows of `x` admit no gap decision (too few units for k = 2 against k = 3,
/// or curves that do not differ): then they form one group.
fn one_group(x: ArrayView2<f64>) -> bool {
    let kmax = (KMAX + 1).min(x.nrows().saturating_sub(1));
    let w1 = total_ss(x);
    let own: f64 = x.iter().map(|v| v * v).sum();
    kmax < 2 || !w1.is_finite() || w1 <= TINY * own
}

/// The [`REFERENCE_DRAWS`] reference data sets of no cluster structure for the rows of
/// `x` (as stated in the module doc; in principal-component coordinates), or `None` when
/// the rows form one group without a decision.
pub fn reference_sets(x: ArrayView2<f64>, seed: u64) -> Option<Vec<Array2<f64>>> {
    if one_group(x) {
        return None;
    }
    let n = x.nrows();
    let scores = pc_scores(x)?;
    let g = scores.ncols();
    let lo: Vec<f64> = (0..g)
        .map(|j| {
            scores
                .column(j)
                .iter()
                .copied()
                .fold(f64::INFINITY, f64::min)
        })
        .collect();
    let hi: Vec<f64> = (0..g)
        .map(|j| {
            scores
                .column(j)
                .iter()
                .copied()
                .fold(f64::NEG_INFINITY, f64::max)
        })
        .collect();
    let base = mix(seed, CURVE_GAP_REFERENCE);
    Some(
        (0..REFERENCE_DRAWS)
            .map(|b| {
                let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(mix(base, b as u64));
                let mut z = Array2::<f64>::zeros((n, g));
                for i in 0..n {
                    for j in 0..g {
                        z[[i, j]] = lo[j] + (hi[j] - lo[j]) * rng.gen::<f64>();
                    }
                }
                z
            })
            .collect(),
    )
}

/// Choose the number of subgroups of the rows of `x` (one curve per unit) by the gap
/// statistic, as stated in the module doc.
pub fn choose_k(x: ArrayView2<f64>, seed: u64) -> GapChoice {
    match reference_sets(x, seed) {
        Some(refs) => choose_k_given(x, seed, &refs),
        None => GapChoice {
            k: 1,
            labels: vec![0; x.nrows()],
            points: Vec::new(),
        },
    }
}

/// The gap decision for the rows of `x` against the given reference data sets (B =
/// `reference.len()`, each clustered by [`kmeans`] seeded by its position `b` as in
/// [`choose_k`]); [`choose_k`] is this with [`reference_sets`]. Public so that the
/// decision can be checked against an outside computation on the same reference draws.
pub fn choose_k_given(x: ArrayView2<f64>, seed: u64, reference: &[Array2<f64>]) -> GapChoice {
    let n = x.nrows();
    if one_group(x) || reference.is_empty() {
        return GapChoice {
            k: 1,
            labels: vec![0; n],
            points: Vec::new(),
        };
    }
    let kmax = (KMAX + 1).min(n.saturating_sub(1));
    let w1 = total_ss(x);
    let floor = |w: f64, w1: f64| w.max(TINY * w1).ln();
    let mut labels: Vec<Vec<usize>> = vec![vec![0; n]];
    let mut log_w = vec![w1.ln()];
    for k in 2..=kmax {
        let (l, w) = kmeans(x, k, seed);
        labels.push(l);
        log_w.push(floor(w, w1));
    }
    let base = mix(seed, CURVE_GAP_REFERENCE);
    let reference: Vec<Vec<f64>> = reference
        .par_iter()
        .enumerate()
        .map(|(b, z)| {
            let z1 = total_ss(z.view());
            let mut v = vec![floor(z1, z1)];
            for k in 2..=kmax {
                v.push(floor(kmeans(z.view(), k, mix(base, b as u64)).1, z1));
            }
            v
        })
        .collect();
    let (points, k) = gap_points(&log_w, &reference);
    GapChoice {
        k,
        labels: labels.swap_remove(k - 1),
        points,
    }
}

/// The statistic and the rule alone, from log W(k) of the data (`log_w[k - 1]`, k = 1 to
/// K) and of each reference data set (`reference[b][k - 1]`): Gap(k), s(k) for k = 1..K and
/// the chosen k (smallest k < K with Gap(k) >= Gap(k + 1) - s(k + 1); none: K - 1, at
/// least 1 and at most [`KMAX`]). Public so that the arithmetic can be checked on given
/// sums of squares, apart from k-means' search.
pub fn gap_points(log_w: &[f64], reference: &[Vec<f64>]) -> (Vec<GapPoint>, usize) {
    let kmax = log_w.len();
    let bf = reference.len() as f64;
    let points: Vec<GapPoint> = (1..=kmax)
        .map(|k| {
            let l: Vec<f64> = reference.iter().map(|v| v[k - 1]).collect();
            let mean = l.iter().sum::<f64>() / bf;
            let sd = (l.iter().map(|v| (v - mean) * (v - mean)).sum::<f64>() / bf).sqrt();
            GapPoint {
                k,
                log_w: log_w[k - 1],
                gap: mean - log_w[k - 1],
                se: sd * (1.0 + 1.0 / bf).sqrt(),
            }
        })
        .collect();
    let last = kmax.saturating_sub(1).clamp(1, KMAX);
    let k = (1..kmax)
        .find(|&k| points[k - 1].gap >= points[k].gap - points[k].se)
        .unwrap_or(last);
    (points, k)
}
