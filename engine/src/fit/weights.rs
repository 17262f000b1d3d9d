//! Row weighting, derived from training rows only (units, outcomes and standard errors of
//! the fold's training rows), then normalised to mean 1 over them so that a ridge penalty
//! means the same under every weighting.
//!
//! * `rows`: 1. `units`: 1 / (the unit's number of training rows).
//! * `high`: `factor` for rows whose outcome is above the training `q`-quantile (numpy's
//!   linear quantile), else 1.
//! * `power`: (1 + (y - min) / (max - min))^a with min and max the training outcomes'
//!   range: from 1 at the training minimum to 2^a at the maximum. Scale- and shift-free: a
//!   percent outcome and the same outcome as a proportion get the same weights. All 1 when
//!   the training outcomes are constant.
//! * `invvar`: 1 / se_z^2, with se_z the outcome's standard error carried to the scale
//!   the model is fitted on by the delta method, se_z = se_y |h'(y)| (h the transform;
//!   `log1p`: se_y / (1 + y); `logit`: se_y / (s p (1 - p)) with p = y / s clamped as the
//!   transform clamps it and s the outcome's full scale, 1 or 100; `identity`: se_y).

use crate::decl::{Choice, OptionDecl, ParamDecl, ParamKind, Registered};
pub use crate::metrics::quantile;
use ndarray::Array1;
use std::collections::HashMap;

pub const OPTIONS: &[Registered<WeightBuild>] = &[
    Registered {
        decl: OptionDecl {
            name: "rows",
            params: &[],
            help: "every row weighs the same",
            weighted: true,
            excludes: &[],
        },
        build: |_, input| Ok(Array1::ones(input.units.len())),
    },
    Registered {
        decl: OptionDecl {
            name: "units",
            params: &[],
            help: "every unit weighs the same: its rows share one unit of weight",
            weighted: true,
            excludes: &[],
        },
        build: units,
    },
    Registered {
        decl: OptionDecl {
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
            excludes: &[],
        },
        build: high,
    },
    Registered {
        decl: OptionDecl {
            name: "power",
            params: &[ParamDecl {
                name: "a",
                kind: ParamKind::Real {
                    min: 0.0,
                    max: 10.0,
                    open_min: true,
                },
                default: 1.0,
                help: "weight (1 + (outcome - training min) / (training max - training min))^a",
            }],
            help: "continuous upweighting of high outcomes",
            weighted: true,
            excludes: &[],
        },
        build: power,
    },
    Registered {
        decl: OptionDecl {
            name: "invvar",
            params: &[],
            help:
                "1 / standard error^2 on the fitted scale (delta method; needs data.standard_error)",
            weighted: true,
            excludes: &[],
        },
        build: invvar,
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
    /// The outcome transform the model is fitted under (its slope carries `se` to the
    /// fitted scale); `None` for the identity.
    pub target: Option<&'a dyn crate::transform::Target>,
}

/// What computes a weighting option: the raw weights of the training rows (scaled to mean
/// 1 by [`weights`]).
pub type WeightBuild = fn(&Choice, &WeightInput) -> Result<Array1<f64>, String>;

/// Weights of the training rows under a weighting choice (mean 1).
pub fn weights(choice: &Choice, input: &WeightInput) -> Result<Array1<f64>, String> {
    let n = input.units.len();
    let raw = (crate::decl::lookup(OPTIONS, crate::decl::Dim::Weighting, &choice.option)?)(
        choice, input,
    )?;
    let mean = raw.sum() / n.max(1) as f64;
    if !(mean.is_finite() && mean > 0.0) {
        return Err("weights are not finite and positive".into());
    }
    Ok(raw / mean)
}

/// Every unit weighs the same: its rows share one unit of weight.
fn units(_choice: &Choice, input: &WeightInput) -> Result<Array1<f64>, String> {
    Ok({
        let mut count: HashMap<usize, usize> = HashMap::new();
        for u in input.units {
            *count.entry(*u).or_default() += 1;
        }
        input.units.iter().map(|u| 1.0 / count[u] as f64).collect()
    })
}

/// Rows above the training-outcome quantile `q` weigh `factor`, others 1.
fn high(choice: &Choice, input: &WeightInput) -> Result<Array1<f64>, String> {
    Ok({
        let q = choice.param("q").unwrap_or(0.75);
        let f = choice.param("factor").unwrap_or(2.0);
        let cut = quantile(input.y, q);
        input
            .y
            .iter()
            .map(|&y| if y > cut { f } else { 1.0 })
            .collect()
    })
}

/// (1 + (y - training min) / (training max - training min))^a.
fn power(choice: &Choice, input: &WeightInput) -> Result<Array1<f64>, String> {
    Ok({
        let a = choice.param("a").unwrap_or(1.0);
        let lo = input.y.iter().copied().fold(f64::INFINITY, f64::min);
        let hi = input.y.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let range = hi - lo;
        input
            .y
            .iter()
            .map(|&y| {
                if range > 0.0 {
                    (1.0 + (y - lo) / range).powf(a)
                } else {
                    1.0
                }
            })
            .collect()
    })
}

/// 1 / se^2 on the fitted scale (delta method: se times |h'(y)| at the row's outcome).
fn invvar(_choice: &Choice, input: &WeightInput) -> Result<Array1<f64>, String> {
    let n = input.units.len();
    Ok({
        let se = input
            .se
            .ok_or("weighting `invvar` needs data.standard_error")?;
        if se.len() != n || input.y.len() != n {
            return Err(format!(
                "weighting `invvar`: {} standard errors and {} outcomes for {n} rows",
                se.len(),
                input.y.len()
            ));
        }
        se.iter()
            .zip(input.y)
            .map(|(s, &y)| {
                let sz = match input.target {
                    Some(t) => s * t.slope(y).abs(),
                    None => *s,
                };
                1.0 / (sz * sz)
            })
            .collect()
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn choice(option: &str, params: Vec<(&'static str, f64)>) -> Choice {
        Choice {
            dim: crate::decl::Dim::Weighting,
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
                target: None,
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
                target: None,
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
                target: None,
            },
        )
        .unwrap();
        // Scale-free power weights: training range 1..10, so row 4 weighs 1 + 9/9 = 2 and
        // row 1 weighs 1 (by hand).
        assert!((w[3] / w[0] - 2.0).abs() < 1e-12);
        let se = [1.0, 2.0, 1.0, 0.5];
        let w = weights(
            &choice("invvar", vec![]),
            &WeightInput {
                units: &units,
                y: &y,
                se: Some(&se),
                target: None,
            },
        )
        .unwrap();
        assert!((w[1] / w[0] - 0.25).abs() < 1e-12 && (w[3] / w[0] - 4.0).abs() < 1e-12);
        assert!(weights(
            &choice("invvar", vec![]),
            &WeightInput {
                units: &units,
                y: &y,
                se: None,
                target: None,
            }
        )
        .is_err());
    }

    /// Power weights do not move when the outcome changes units (x 100) or is shifted.
    /// By hand, a = 2 on y = 1, 2, 3, 10 (range 9): raw (1 + 0/9)^2 = 1, (1 + 1/9)^2 =
    /// 100/81, (1 + 2/9)^2 = 121/81, 2^2 = 4; mean (81 + 100 + 121 + 324) / (4 * 81) =
    /// 626/324, so the last row weighs 4 * 324/626 = 2.0702875...
    #[test]
    fn power_weights_are_scale_and_shift_free() {
        let y = [1.0, 2.0, 3.0, 10.0];
        let units = [0, 1, 2, 3];
        let at = |y: &[f64]| {
            weights(
                &choice("power", vec![("a", 2.0)]),
                &WeightInput {
                    units: &units,
                    y,
                    se: None,
                    target: None,
                },
            )
            .unwrap()
        };
        let w = at(&y);
        assert!((w[3] - 4.0 * 324.0 / 626.0).abs() < 1e-12, "{w}");
        let percent: Vec<f64> = y.iter().map(|v| v * 100.0).collect();
        let shifted: Vec<f64> = y.iter().map(|v| v - 37.5).collect();
        for other in [at(&percent), at(&shifted)] {
            for (a, b) in w.iter().zip(other.iter()) {
                assert!((a - b).abs() < 1e-12, "{w} vs {other}");
            }
        }
        // Constant training outcomes: every row weighs 1.
        assert_eq!(at(&[5.0; 4]), Array1::<f64>::ones(4));
    }

    /// invvar carries the standard error to the fitted scale (delta method). By hand:
    /// log1p at y = 1 and 3 with se 0.5 and 2: se_z = 0.5/2 = 0.25 and 2/4 = 0.5, raw
    /// weights 16 and 4 (ratio 4; on the raw scale it would be 16). logit of a percent at
    /// y = 50 and 10 (p = 0.5, 0.1), se 5 and 3: se_z = 5/(100 * 0.25) = 0.2 and
    /// 3/(100 * 0.09) = 1/3, raw weights 25 and 9.
    #[test]
    fn inverse_variance_uses_the_fitted_scale() {
        use crate::transform::{Logit, Target};
        let units = [0, 1];
        let log1p = crate::transform::build(
            &Choice {
                dim: crate::decl::Dim::Transform,
                option: "log1p".into(),
                params: vec![("smear", 0.0)],
                members: None,
                digest: None,
            },
            None,
        )
        .unwrap();
        let w = weights(
            &choice("invvar", vec![]),
            &WeightInput {
                units: &units,
                y: &[1.0, 3.0],
                se: Some(&[0.5, 2.0]),
                target: Some(log1p.as_ref()),
            },
        )
        .unwrap();
        assert!((w[0] / w[1] - 4.0).abs() < 1e-12, "{w}");
        assert!((w[0] - 2.0 * 16.0 / 20.0).abs() < 1e-12, "{w}");
        let logit = Logit {
            clamp: 0.001,
            scale: 100.0,
        };
        assert!((logit.slope(50.0) - 0.04).abs() < 1e-15);
        let t: &dyn Target = &logit;
        let w = weights(
            &choice("invvar", vec![]),
            &WeightInput {
                units: &units,
                y: &[50.0, 10.0],
                se: Some(&[5.0, 3.0]),
                target: Some(t),
            },
        )
        .unwrap();
        assert!((w[0] / w[1] - 25.0 / 9.0).abs() < 1e-12, "{w}");
    }
}
