//! Two-segment continuous hinge fitted by least squares, and the unit-composition range of
//! a breakpoint (units resampled, model held fixed, the shape chosen again per resample).
//!
//! Model: y = a + b x + c max(0, x - t). For a fixed breakpoint t this is ordinary least
//! squares in (a, b, c); t is searched over `SEARCH` evenly spaced candidates between the
//! second and the second-to-last grid points (inclusive), and the candidate with the least
//! residual sum of squares wins (the first on ties). Slopes: b left of t, b + c right.

use crate::folds::mix;
use ndarray::Array2;
use rand::{Rng, SeedableRng};

/// Number of candidate breakpoints searched.
pub const SEARCH: usize = 200;

/// A fitted hinge.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Hinge {
    pub breakpoint: f64,
    pub slope_left: f64,
    pub slope_right: f64,
    pub sse: f64,
}

/// Solve the 3x3 system `m z = r` (Gaussian elimination with partial pivoting); `None`
/// when singular.
#[allow(clippy::needless_range_loop)]
fn solve3(mut m: [[f64; 3]; 3], mut r: [f64; 3]) -> Option<[f64; 3]> {
    for k in 0..3 {
        let p = (k..3).max_by(|&i, &j| m[i][k].abs().total_cmp(&m[j][k].abs()))?;
        if m[p][k].abs() < 1e-12 {
            return None;
        }
        m.swap(k, p);
        r.swap(k, p);
        for i in k + 1..3 {
            let f = m[i][k] / m[k][k];
            for j in k..3 {
                m[i][j] -= f * m[k][j];
            }
            r[i] -= f * r[k];
        }
    }
    let mut z = [0.0; 3];
    for k in (0..3).rev() {
        let s: f64 = (k + 1..3).map(|j| m[k][j] * z[j]).sum();
        z[k] = (r[k] - s) / m[k][k];
    }
    Some(z)
}

/// Fit the hinge to a curve `y` on grid `x` (ascending). `None` with fewer than four
/// points or when no candidate gives a solvable fit.
pub fn fit_hinge(x: &[f64], y: &[f64]) -> Option<Hinge> {
    let n = x.len();
    if n < 4 || y.len() != n || y.iter().any(|v| !v.is_finite()) {
        return None;
    }
    let (t0, t1) = (x[1], x[n - 2]);
    let mut best: Option<Hinge> = None;
    for s in 0..SEARCH {
        let t = t0 + (t1 - t0) * s as f64 / (SEARCH - 1) as f64;
        let mut m = [[0.0; 3]; 3];
        let mut r = [0.0; 3];
        for (&xi, &yi) in x.iter().zip(y) {
            let f = [1.0, xi, (xi - t).max(0.0)];
            for a in 0..3 {
                for b in 0..3 {
                    m[a][b] += f[a] * f[b];
                }
                r[a] += f[a] * yi;
            }
        }
        let Some(z) = solve3(m, r) else { continue };
        let sse: f64 = x
            .iter()
            .zip(y)
            .map(|(&xi, &yi)| {
                let e = yi - (z[0] + z[1] * xi + z[2] * (xi - t).max(0.0));
                e * e
            })
            .sum();
        if best.is_none_or(|b| sse < b.sse) {
            best = Some(Hinge {
                breakpoint: t,
                slope_left: z[1],
                slope_right: z[1] + z[2],
                sse,
            });
        }
    }
    best
}

use crate::streams::CURVE_BOOTSTRAP as STREAM;

/// The unit-composition interval of a breakpoint: the model is held fixed, the units
/// whose ICE rows make up the PD are resampled. `draws` resamples were run; `kept` is the
/// share of them whose PD re-selects the same shape (hinge or jump, [`super::bend::choose`]);
/// `lo`, `hi` are the percentile interval of those resamples' breakpoints (NaN when none
/// keeps it).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Composition {
    pub lo: f64,
    pub hi: f64,
    pub draws: usize,
    pub kept: f64,
}

impl Composition {
    /// No resampling (a curve without a breakpoint).
    pub fn none() -> Composition {
        Composition {
            lo: f64::NAN,
            hi: f64::NAN,
            draws: 0,
            kept: f64::NAN,
        }
    }
}

/// Unit-composition interval (`level`, e.g. 0.9) of the breakpoint of a curve of shape
/// `kind` over `b` unit resamples: each draw takes `n_units` units with replacement
/// (ChaCha8 seeded with `mix(seed, STREAM)`), its PD is the mean of the drawn units' ICE
/// rows (a unit drawn twice counts twice), and the shape is chosen again with flat
/// tolerance `tol`. The fitted model is not refitted: the interval says which units drive
/// the shape of this model's curve, not how sure the threshold is.
#[allow(clippy::too_many_arguments)]
pub fn bootstrap_breakpoint(
    grid: &[f64],
    ice: &Array2<f64>,
    row_unit: &[usize],
    n_units: usize,
    b: usize,
    seed: u64,
    level: f64,
    tol: f64,
    kind: super::bend::Kind,
) -> Composition {
    let m = grid.len();
    let mut sums = vec![vec![0.0; m]; n_units];
    let mut counts = vec![0.0; n_units];
    for (r, &u) in row_unit.iter().enumerate() {
        counts[u] += 1.0;
        for j in 0..m {
            sums[u][j] += ice[[r, j]];
        }
    }
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(mix(seed, STREAM));
    let mut bps = Vec::with_capacity(b);
    let mut draws = 0;
    for _ in 0..b {
        let mut s = vec![0.0; m];
        let mut c = 0.0;
        for _ in 0..n_units {
            let u = rng.gen_range(0..n_units);
            c += counts[u];
            for j in 0..m {
                s[j] += sums[u][j];
            }
        }
        if c == 0.0 {
            continue;
        }
        draws += 1;
        let curve: Vec<f64> = s.iter().map(|v| v / c).collect();
        let sh = super::bend::choose(grid, &curve, tol);
        if sh.kind == kind {
            bps.push(sh.breakpoint);
        }
    }
    bps.sort_by(f64::total_cmp);
    let a = (1.0 - level) / 2.0;
    let q = crate::report::stats::quantile_sorted;
    Composition {
        lo: q(&bps, a),
        hi: q(&bps, 1.0 - a),
        draws,
        kept: if draws == 0 {
            f64::NAN
        } else {
            bps.len() as f64 / draws as f64
        },
    }
}
