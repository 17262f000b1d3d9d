//! Error metrics on pooled out-of-fold predictions.

/// Mean absolute error.
pub fn mae(obs: &[f64], pred: &[f64]) -> f64 {
    obs.iter()
        .zip(pred)
        .map(|(o, p)| (o - p).abs())
        .sum::<f64>()
        / obs.len() as f64
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

/// The metrics of one spec.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Scores {
    pub mae: f64,
    pub rmse: f64,
    pub r2: f64,
    pub baseline_mae: f64,
    /// 1 - mae / baseline_mae.
    pub skill: f64,
}

impl Scores {
    pub fn compute(obs: &[f64], pred: &[f64], baseline: &[f64]) -> Scores {
        let m = mae(obs, pred);
        let b = mae(obs, baseline);
        Scores {
            mae: m,
            rmse: rmse(obs, pred),
            r2: r2(obs, pred),
            baseline_mae: b,
            skill: 1.0 - m / b,
        }
    }
}
