//! The subgroup decision (engine/src/derived/curves/gap.rs) on controls with a known answer.
//!
//! Negative controls: unit curves that differ only by a continuous amplitude (normal, and
//! skewed lognormal, amplitudes times a hinge-shaped ramp, plus noise) and curves of plain
//! noise have no cluster structure, so the gap statistic must say one group. Each control
//! is repeated on 20 seeded data sets and must give k = 1 in at least 17 (our allowance:
//! at most 15% false splits). Measured: normal amplitudes and noise 20 of 20 at k = 1, the
//! skewed lognormal amplitudes 18 of 20 (its long tail can look like a group of its own
//! against the gap statistic's uniform reference). The old silhouette >= 0.5 rule split
//! the amplitude continuum in every repetition (cold review M4). Positive controls: two and
//! three planted groups with different thresholds, on the same scale of noise, are found.
#![allow(clippy::needless_range_loop)]

use crate::common::normals;
use forkmap::curves::compute::unit_groups;
use forkmap::curves::{choose_k, subgroups};
use ndarray::Array2;

const UNITS: usize = 64;
const GRID: usize = 20;

fn grid() -> Vec<f64> {
    (0..GRID).map(|j| j as f64 / (GRID - 1) as f64).collect()
}

/// Rows: 5 + a_u x max(0, g - 0.3) + 0.05 x noise, for amplitudes `a`.
fn amplitude_curves(a: &[f64], seed: u64) -> Array2<f64> {
    let g = grid();
    let z = normals(a.len() * GRID, seed);
    let mut m = Array2::zeros((a.len(), GRID));
    for (u, &au) in a.iter().enumerate() {
        for j in 0..GRID {
            m[[u, j]] = 5.0 + au * (g[j] - 0.3).max(0.0) + 0.05 * z[u * GRID + j];
        }
    }
    m
}

/// k chosen on each of 20 seeded repetitions of a control.
fn ks(make: impl Fn(u64) -> Array2<f64>) -> Vec<usize> {
    let rows: Vec<usize> = (0..UNITS).collect();
    (0..20u64)
        .map(|r| {
            let m = make(r);
            unit_groups(&m, &rows, UNITS, &grid(), 1000 + r).0.k
        })
        .collect()
}

fn assert_one_group(name: &str, k: &[usize]) {
    let ones = k.iter().filter(|&&k| k == 1).count();
    assert!(ones >= 17, "{name}: k = 1 in {ones} of 20 ({k:?})");
}

#[test]
fn a_continuum_of_normal_amplitudes_is_one_group() {
    let k = ks(|r| amplitude_curves(&normals(UNITS, 500 + r), 900 + r));
    assert_one_group("normal amplitudes", &k);
}

#[test]
fn a_continuum_of_lognormal_amplitudes_is_one_group() {
    let k = ks(|r| {
        let a: Vec<f64> = normals(UNITS, 600 + r).iter().map(|z| z.exp()).collect();
        amplitude_curves(&a, 950 + r)
    });
    assert_one_group("lognormal amplitudes", &k);
}

#[test]
fn plain_noise_is_one_group() {
    let k = ks(|r| {
        let z = normals(UNITS * GRID, 700 + r);
        Array2::from_shape_vec((UNITS, GRID), z).unwrap()
    });
    assert_one_group("noise", &k);
}

/// Curves that are all the same (as OLS gives: every centred curve is the model's line)
/// are one group with no gap computed, and nothing departs.
#[test]
fn identical_curves_are_one_group_without_a_gap() {
    let g = grid();
    let c = Array2::from_shape_fn((UNITS, GRID), |(_, j)| 0.7 * g[j]);
    let sg = subgroups(c.view(), 3);
    assert_eq!(sg.k, 1);
    assert!(sg.gap.points.is_empty());
    assert!(sg.silhouette.is_nan());
    assert!(sg.departs.iter().all(|d| !d));
}

/// Planted groups (thresholds 0.25 / 0.75, and 0.2 / 0.5 / 0.8) with a continuous
/// amplitude inside each group (1 + 0.1 x noise), 20 repetitions each. The gap statistic
/// never merges planted groups: k is at least the plant, every planted group names a
/// cluster, and each cluster holds units of one plant but for at most 4 units of 64 per
/// repetition (with amplitude and noise a unit can lie nearer another group's mean curve,
/// where k-means rightly puts it; measured: none off with two groups, at most 3 with
/// three, whose thresholds 0.5 and 0.8 lie closer). Two groups: k = 2 in every repetition. Three groups: k = 3 or
/// 4; measured 13 of 20 at 3 and 7 at 4, a group spread in amplitude split in two (the
/// page says subgroups of one shape may be one group). The test holds the measured
/// behaviour within a margin: k = 3 in at least 10 of 20.
#[test]
fn planted_groups_with_different_thresholds_are_found() {
    let g = grid();
    for plant in [vec![0.25, 0.75], vec![0.2, 0.5, 0.8]] {
        let p = plant.len();
        let mut exact = 0;
        for r in 0..20u64 {
            let z = normals(UNITS * (GRID + 1), 800 + r);
            let m = Array2::from_shape_fn((UNITS, GRID), |(u, j)| {
                let amp = 1.0 + 0.1 * z[UNITS * GRID + u];
                3.0 + amp * (g[j] - plant[u % p]).max(0.0) + 0.05 * z[u * GRID + j]
            });
            let rows: Vec<usize> = (0..UNITS).collect();
            let (sg, _) = unit_groups(&m, &rows, UNITS, &g, r);
            assert!(
                sg.k == p || sg.k == p + 1,
                "plant {plant:?} rep {r}: k = {}: {:?}",
                sg.k,
                sg.gap.points
            );
            exact += usize::from(sg.k == p);
            // Each cluster named by the plant most of its units carry; count the others.
            let mut off = 0;
            let mut named = vec![false; p];
            for c in 0..sg.k {
                let mut count = vec![0usize; p];
                for u in (0..UNITS).filter(|&u| sg.labels[u] == c) {
                    count[u % p] += 1;
                }
                let (most, at) = count
                    .iter()
                    .enumerate()
                    .map(|(i, &n)| (n, i))
                    .max()
                    .unwrap_or((0, 0));
                named[at] = true;
                off += count.iter().sum::<usize>() - most;
            }
            assert!(
                off <= 4,
                "plant {plant:?} rep {r}: {off} units off the plant: {:?}",
                sg.labels
            );
            assert!(
                named.iter().all(|&n| n),
                "plant {plant:?} rep {r}: a planted group has no cluster"
            );
        }
        let want = if p == 2 { 20 } else { 10 };
        assert!(exact >= want, "plant {plant:?}: k = {p} in {exact} of 20");
    }
}

/// The decision is a pure function of the data and the seed (whatever rayon's thread
/// count), and the reported gap row obeys the rule at the chosen k.
#[test]
fn the_gap_decision_is_deterministic_and_follows_its_rule() {
    let a: Vec<f64> = (0..UNITS)
        .map(|u| if u % 2 == 0 { 0.0 } else { 1.0 })
        .collect();
    let m = amplitude_curves(&a, 77);
    let one = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .unwrap();
    let two = rayon::ThreadPoolBuilder::new()
        .num_threads(2)
        .build()
        .unwrap();
    let c1 = one.install(|| choose_k(m.view(), 5));
    let c2 = two.install(|| choose_k(m.view(), 5));
    assert_eq!(c1, c2);
    assert_eq!(c1.k, 2, "{:?}", c1.points);
    let (at, next) = (c1.at(2).unwrap(), c1.at(3).unwrap());
    assert!(at.gap >= next.gap - next.se);
    let prev = c1.at(1).unwrap();
    assert!(prev.gap < at.gap - at.se);
}
