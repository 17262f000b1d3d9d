//! ICE curves, partial dependence, centred ICE, the grid and the band over specs.

use crate::sweep::FittedSpec;
use ndarray::{Array2, ArrayView1, ArrayView2};

/// Grid of `n` observed quantiles of an indicator (numpy-linear quantiles at i/(n-1) of
/// its finite values), duplicates dropped. Empty when the column has no finite value.
pub fn quantile_grid(col: ArrayView1<f64>, n: usize) -> Vec<f64> {
    let mut v: Vec<f64> = col.iter().copied().filter(|x| x.is_finite()).collect();
    if v.is_empty() || n == 0 {
        return Vec::new();
    }
    v.sort_by(f64::total_cmp);
    let mut g: Vec<f64> = (0..n)
        .map(|i| {
            let q = if n == 1 {
                0.5
            } else {
                i as f64 / (n - 1) as f64
            };
            crate::report::stats::quantile_sorted(&v, q)
        })
        .collect();
    g.dedup();
    g
}

/// ICE curves (rows x grid) of a fitted spec: for every grid value, all rows of `x` (raw
/// indicators, panel rows `rows`) with column `col` set to that value, passed through the
/// whole fitted chain.
pub fn ice(
    f: &FittedSpec,
    x: ArrayView2<f64>,
    rows: &[usize],
    col: usize,
    grid: &[f64],
) -> Array2<f64> {
    let mut out = Array2::zeros((x.nrows(), grid.len()));
    let mut xm = x.to_owned();
    for (j, &g) in grid.iter().enumerate() {
        xm.column_mut(col).fill(g);
        let p = f.predict_rows(xm.view(), rows);
        out.column_mut(j).assign(&p);
    }
    out
}

/// Partial dependence: the mean of the ICE curves at each grid point.
pub fn pd(ice: &Array2<f64>) -> Vec<f64> {
    let n = ice.nrows().max(1) as f64;
    ice.columns().into_iter().map(|c| c.sum() / n).collect()
}

/// Centred ICE: each curve minus its value at the first grid point.
pub fn centred(ice: &Array2<f64>) -> Array2<f64> {
    let mut c = ice.clone();
    for mut r in c.rows_mut() {
        let a = r[0];
        r.mapv_inplace(|v| v - a);
    }
    c
}

/// Direction of a curve. Flatness rule: the curve's range (max - min) is at most `tol`
/// (callers pass a share of the outcome's standard deviation). Otherwise it rises when its
/// last value exceeds its first by more than `tol`, falls when it is below by more than
/// `tol`, and else `turns` (it moves but ends where it began, within `tol`).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Direction {
    Rises,
    Falls,
    Flat,
    Turns,
}

impl Direction {
    pub fn name(self) -> &'static str {
        match self {
            Direction::Rises => "rises",
            Direction::Falls => "falls",
            Direction::Flat => "flat",
            Direction::Turns => "turns",
        }
    }
}

pub fn direction(curve: &[f64], tol: f64) -> Direction {
    let (Some(&a), Some(&b)) = (curve.first(), curve.last()) else {
        return Direction::Flat;
    };
    let hi = curve.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let lo = curve.iter().copied().fold(f64::INFINITY, f64::min);
    if hi - lo <= tol {
        Direction::Flat
    } else if b - a > tol {
        Direction::Rises
    } else if a - b > tol {
        Direction::Falls
    } else {
        Direction::Turns
    }
}

/// Band of PD curves over a set of specs (all on the same grid): per grid point the
/// median and the `lo`/`hi` quantiles (numpy linear), and the shares of curves by
/// direction.
#[derive(Debug, Clone, PartialEq)]
pub struct Band {
    pub median: Vec<f64>,
    pub lo: Vec<f64>,
    pub hi: Vec<f64>,
    pub rises: f64,
    pub falls: f64,
    pub flat: f64,
    pub turns: f64,
}

pub fn band(curves: &[Vec<f64>], q_lo: f64, q_hi: f64, tol: f64) -> Band {
    let m = curves.first().map_or(0, Vec::len);
    let mut b = Band {
        median: Vec::with_capacity(m),
        lo: Vec::with_capacity(m),
        hi: Vec::with_capacity(m),
        rises: 0.0,
        falls: 0.0,
        flat: 0.0,
        turns: 0.0,
    };
    for j in 0..m {
        let mut v: Vec<f64> = curves.iter().map(|c| c[j]).collect();
        v.sort_by(f64::total_cmp);
        let q = crate::report::stats::quantile_sorted;
        b.median.push(q(&v, 0.5));
        b.lo.push(q(&v, q_lo));
        b.hi.push(q(&v, q_hi));
    }
    let n = curves.len().max(1) as f64;
    for c in curves {
        match direction(c, tol) {
            Direction::Rises => b.rises += 1.0 / n,
            Direction::Falls => b.falls += 1.0 / n,
            Direction::Flat => b.flat += 1.0 / n,
            Direction::Turns => b.turns += 1.0 / n,
        }
    }
    b
}
