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

/// Direction of a curve on its grid. **flat**: the curve's range (max - min) is at most
/// `tol` (callers pass a share of the outcome's standard deviation). Otherwise the overall
/// change is the least-squares slope of the curve over the grid points times the grid's
/// span (the fitted line's rise from the first grid point to the last: a summary of every
/// point, not of the two extreme ones). **rises** / **falls** when that change is above
/// `tol` / below `-tol` and the largest reversal against it (the largest drop after an
/// earlier higher value for a rising curve, the largest rise after an earlier lower value
/// for a falling one) is at most `tol`; else **turns**. **absent** is set by the caller
/// for a spec whose pool does not hold the indicator.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Direction {
    Rises,
    Falls,
    Flat,
    Turns,
    Absent,
}

impl Direction {
    pub fn name(self) -> &'static str {
        match self {
            Direction::Rises => "rises",
            Direction::Falls => "falls",
            Direction::Flat => "flat",
            Direction::Turns => "turns",
            Direction::Absent => "absent",
        }
    }
}

/// The overall change of `curve` over `grid`: least-squares slope times the grid's span
/// (NaN when it cannot be fitted).
pub fn overall_change(grid: &[f64], curve: &[f64]) -> f64 {
    match (
        super::bend::fit_line(grid, curve),
        grid.first(),
        grid.last(),
    ) {
        (Some((_, b, _)), Some(a), Some(z)) => b * (z - a),
        _ => f64::NAN,
    }
}

/// The largest reversal of `curve` against direction `up` (see [`Direction`]).
pub fn largest_reversal(curve: &[f64], up: bool) -> f64 {
    let mut ext = f64::NAN;
    let mut worst = 0.0f64;
    for &v in curve {
        if ext.is_nan() {
            ext = v;
            continue;
        }
        if up {
            ext = ext.max(v);
            worst = worst.max(ext - v);
        } else {
            ext = ext.min(v);
            worst = worst.max(v - ext);
        }
    }
    worst
}

pub fn direction(grid: &[f64], curve: &[f64], tol: f64) -> Direction {
    let hi = curve.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let lo = curve.iter().copied().fold(f64::INFINITY, f64::min);
    if curve.is_empty() || hi - lo <= tol {
        return Direction::Flat;
    }
    let d = overall_change(grid, curve);
    if d.is_nan() || d.abs() <= tol {
        return Direction::Turns;
    }
    if largest_reversal(curve, d > 0.0) > tol {
        Direction::Turns
    } else if d > 0.0 {
        Direction::Rises
    } else {
        Direction::Falls
    }
}

/// Band of PD curves over a set of specs (all on `grid`): per grid point the median and
/// the `lo`/`hi` quantiles (numpy linear), and the shares of curves by direction. Callers
/// pass the curves to count (absent members and duplicate fits left out); with none, the
/// band is NaN and the shares 0.
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

pub fn band(grid: &[f64], curves: &[Vec<f64>], q_lo: f64, q_hi: f64, tol: f64) -> Band {
    let m = grid.len();
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
        let mut v: Vec<f64> = curves.iter().filter_map(|c| c.get(j).copied()).collect();
        v.sort_by(f64::total_cmp);
        let q = crate::report::stats::quantile_sorted;
        b.median.push(q(&v, 0.5));
        b.lo.push(q(&v, q_lo));
        b.hi.push(q(&v, q_hi));
    }
    // Counts first, then shares (so a share of all curves is exactly 1).
    for c in curves {
        match direction(grid, c, tol) {
            Direction::Rises => b.rises += 1.0,
            Direction::Falls => b.falls += 1.0,
            Direction::Flat | Direction::Absent => b.flat += 1.0,
            Direction::Turns => b.turns += 1.0,
        }
    }
    let n = curves.len().max(1) as f64;
    for v in [&mut b.rises, &mut b.falls, &mut b.flat, &mut b.turns] {
        *v /= n;
    }
    b
}
