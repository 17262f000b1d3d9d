//! Row weighting, derived from training rows only (units, outcomes and standard errors of
//! the fold's training rows), then normalised to mean 1 over them so that a ridge penalty
//! means the same under every weighting.

use crate::space::{Choice, OptionDecl, ParamDecl, ParamKind};
use ndarray::Array1;
use std::collections::HashMap;

pub const OPTIONS: &[OptionDecl] = &[
    OptionDecl {
        name: "rows",
        params: &[],
        help: "every row weighs the same",
        weighted: true,
    },
    OptionDecl {
        name: "units",
        params: &[],
        help: "every unit weighs the same: its rows share one unit of weight",
        weighted: true,
    },
    OptionDecl {
        name: "high",
        params: &[
            ParamDecl {
                name: "q",
                kind: ParamKind::Real {
                    min: 0.0,
                    max: 1.0,
                    open_min: true,
                },
                default: 0.75,
                help: "training-outcome quantile above which rows are upweighted",
            },
            ParamDecl {
                name: "factor",
                kind: ParamKind::Real {
                    min: 1.0,
                    max: 1000.0,
                    open_min: false,
                },
                default: 2.0,
                help: "weight of rows above the quantile (others 1)",
            },
        ],
        help: "upweight rows whose outcome is above a training quantile",
        weighted: true,
    },
    OptionDecl {
        name: "power",
        params: &[ParamDecl {
            name: "a",
            kind: ParamKind::Real {
                min: 0.0,
                max: 10.0,
                open_min: true,
            },
            default: 1.0,
            help: "weight proportional to (outcome - training minimum + 1)^a",
        }],
        help: "continuous upweighting of high outcomes",
        weighted: true,
    },
    OptionDecl {
        name: "invvar",
        params: &[],
        help: "1 / standard error^2 (needs data.standard_error)",
        weighted: true,
    },
];

/// Training-row context a weighting may use.
pub struct WeightInput<'a> {
    /// Unit index of each training row.
    pub units: &'a [usize],
    /// Training outcome on its own scale.
    pub y: &'a [f64],
    /// Standard errors of the training rows' outcomes, when the data declare them.
    pub se: Option<&'a [f64]>,
}

/// Quantile with linear interpolation between order statistics (numpy's default
/// "linear" method).
pub fn quantile(v: &[f64], q: f64) -> f64 {
    let mut s = v.to_vec();
    s.sort_by(f64::total_cmp);
    if s.is_empty() {
        return f64::NAN;
    }
    let h = (s.len() - 1) as f64 * q;
    let lo = h.floor() as usize;
    let hi = h.ceil() as usize;
    s[lo] + (h - lo as f64) * (s[hi] - s[lo])
}

/// Weights of the training rows under a weighting choice.
pub fn weights(choice: &Choice, input: &WeightInput) -> Result<Array1<f64>, String> {
    let n = input.units.len();
    let raw: Array1<f64> = match choice.option.as_str() {
        "rows" => Array1::ones(n),
        "units" => {
            let mut count: HashMap<usize, usize> = HashMap::new();
            for u in input.units {
                *count.entry(*u).or_default() += 1;
            }
            input.units.iter().map(|u| 1.0 / count[u] as f64).collect()
        }
        "high" => {
            let q = choice.param("q").unwrap_or(0.75);
            let f = choice.param("factor").unwrap_or(2.0);
            let cut = quantile(input.y, q);
            input
                .y
                .iter()
                .map(|&y| if y > cut { f } else { 1.0 })
                .collect()
        }
        "power" => {
            let a = choice.param("a").unwrap_or(1.0);
            let lo = input.y.iter().copied().fold(f64::INFINITY, f64::min);
            input.y.iter().map(|&y| (y - lo + 1.0).powf(a)).collect()
        }
        "invvar" => {
            let se = input
                .se
                .ok_or("weighting `invvar` needs data.standard_error")?;
            se.iter().map(|s| 1.0 / (s * s)).collect()
        }
        other => return Err(format!("unknown weighting `{other}`")),
    };
    let mean = raw.sum() / n.max(1) as f64;
    if !(mean.is_finite() && mean > 0.0) {
        return Err("weights are not finite and positive".into());
    }
    Ok(raw / mean)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn choice(option: &str, params: Vec<(&'static str, f64)>) -> Choice {
        Choice {
            dim: "weighting",
            option: option.into(),
            params,
            members: None,
            digest: None,
        }
    }

    #[test]
    fn unit_weights_share_one_per_unit() {
        // Unit 0 has two rows, unit 1 one: raw weights 1/2, 1/2, 1, mean 2/3.
        let w = weights(
            &choice("units", vec![]),
            &WeightInput {
                units: &[0, 0, 1],
                y: &[0.0; 3],
                se: None,
            },
        )
        .unwrap();
        assert!((w[0] - 0.75).abs() < 1e-12 && (w[2] - 1.5).abs() < 1e-12);
        assert!((w.sum() - 3.0).abs() < 1e-12);
    }

    #[test]
    fn high_power_and_inverse_variance() {
        let y = [1.0, 2.0, 3.0, 10.0];
        let units = [0, 1, 2, 3];
        // numpy.quantile([1,2,3,10], 0.75) = 4.75 (linear): only the last row is above.
        assert!((quantile(&y, 0.75) - 4.75).abs() < 1e-12);
        let w = weights(
            &choice("high", vec![("q", 0.75), ("factor", 3.0)]),
            &WeightInput {
                units: &units,
                y: &y,
                se: None,
            },
        )
        .unwrap();
        // raw 1,1,1,3 -> mean 1.5
        assert!((w[3] / w[0] - 3.0).abs() < 1e-12 && (w.sum() - 4.0).abs() < 1e-12);
        let w = weights(
            &choice("power", vec![("a", 1.0)]),
            &WeightInput {
                units: &units,
                y: &y,
                se: None,
            },
        )
        .unwrap();
        assert!((w[3] / w[0] - 10.0).abs() < 1e-12);
        let se = [1.0, 2.0, 1.0, 0.5];
        let w = weights(
            &choice("invvar", vec![]),
            &WeightInput {
                units: &units,
                y: &y,
                se: Some(&se),
            },
        )
        .unwrap();
        assert!((w[1] / w[0] - 0.25).abs() < 1e-12 && (w[3] / w[0] - 4.0).abs() < 1e-12);
        assert!(weights(
            &choice("invvar", vec![]),
            &WeightInput {
                units: &units,
                y: &y,
                se: None
            }
        )
        .is_err());
    }
}
