//! Each spec's error and its bootstrap replicates over units, from the per-unit sums of
//! [`RunTables`]. A resample weights each unit by how often it was drawn, so a unit's rows
//! (all its waves and repeats) move together.

use super::data::RunTables;
use rayon::prelude::*;

/// A spec's error under `metric` with unit weights `w` (1 for every unit: the plain error).
/// mae: sum w|e| / sum w n; rmse: sqrt(sum w e^2 / sum w n); unit_mae: sum w (|e|/n) / sum w
/// over units with predictions.
pub fn weighted(metric: &str, abs: &[f64], sq: &[f64], n: &[f64], w: &[f64]) -> f64 {
    let (mut num, mut den) = (0.0, 0.0);
    match metric {
        "rmse" => {
            for u in 0..n.len() {
                num += w[u] * sq[u];
                den += w[u] * n[u];
            }
            (num / den).sqrt()
        }
        "unit_mae" => {
            for u in 0..n.len() {
                if n[u] > 0.0 {
                    num += w[u] * abs[u] / n[u];
                    den += w[u];
                }
            }
            num / den
        }
        _ => {
            for u in 0..n.len() {
                num += w[u] * abs[u];
                den += w[u] * n[u];
            }
            num / den
        }
    }
}

/// Errors of every spec and their replicates.
#[derive(Debug, Clone)]
pub struct Errors {
    /// Per spec (RunTables order).
    pub point: Vec<f64>,
    /// Number of resamples.
    pub b: usize,
    /// `reps[s * b + r]`: spec s's error on resample r (NaN when the resample drew none of
    /// the spec's units).
    pub reps: Vec<f64>,
}

impl Errors {
    /// `counts`: per resample, draws of each unit (`b * n_units`).
    pub fn compute(t: &RunTables, metric: &str, counts: &[f64]) -> Errors {
        let nu = t.n_units();
        let ones = vec![1.0; nu];
        let b = counts.len().checked_div(nu).unwrap_or(0);
        let point: Vec<f64> = (0..t.n_specs())
            .into_par_iter()
            .map(|s| {
                let r = s * nu..(s + 1) * nu;
                weighted(
                    metric,
                    &t.unit_abs[r.clone()],
                    &t.unit_sq[r.clone()],
                    &t.unit_n[r],
                    &ones,
                )
            })
            .collect();
        let mut reps = vec![0.0; t.n_specs() * b];
        reps.par_chunks_mut(b.max(1))
            .enumerate()
            .for_each(|(s, out)| {
                let r = s * nu..(s + 1) * nu;
                let (a, q, n) = (&t.unit_abs[r.clone()], &t.unit_sq[r.clone()], &t.unit_n[r]);
                for (k, o) in out.iter_mut().enumerate() {
                    *o = weighted(metric, a, q, n, &counts[k * nu..(k + 1) * nu]);
                }
            });
        Errors { point, b, reps }
    }

    pub fn replicates(&self, s: usize) -> &[f64] {
        &self.reps[s * self.b..(s + 1) * self.b]
    }

    /// The best spec: lowest error, ties to the lower index (spec id order).
    pub fn best(&self) -> Option<usize> {
        (0..self.point.len())
            .filter(|&s| !self.point[s].is_nan())
            .min_by(|&a, &b| self.point[a].total_cmp(&self.point[b]).then(a.cmp(&b)))
    }
}
