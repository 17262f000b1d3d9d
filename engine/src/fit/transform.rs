//! Outcome transforms. Models are fitted on the transformed outcome; predictions are
//! back-transformed before any metric, so every error is in the outcome's own units.
//!
//! * `identity`
//! * `log1p`: z = ln(1 + y), needs y > -1.
//! * `logit`: for proportions (or percents, declared by `data.outcome_kind`): with p the
//!   outcome on the [0, 1] scale clamped to [clamp, 1 - clamp], z = ln(p / (1 - p)); the
//!   back-transform returns to the outcome's scale (so a prediction never leaves the range).
//!
//! **What a back-transformed prediction estimates.** A model fitted on z = h(y) predicts
//! (roughly) the conditional mean of z. Because h is monotone, the plain inverse h^-1(z_hat)
//! estimates the conditional *median* of y (when the errors on the z scale are symmetric),
//! not its mean: by Jensen's inequality it sits below the mean under `log1p` (convex
//! inverse) and towards the middle of the range under `logit`. That is the right target
//! for MAE (the median minimises absolute error), forkmap's headline metric, and it is the
//! default (`smear = 0`). For RMSE and R2, or to compare transformed and untransformed
//! specs on the mean scale, set `smear = 1`: Duan's smearing estimate (N. Duan, 1983,
//! "Smearing estimate: a nonparametric retransformation method", JASA 78:605-610),
//!
//!   y_hat = (1/n) sum_i h^-1(z_hat + e_i),   e_i = z_i - z_hat_i,
//!
//! the mean of the inverse over the residuals e_i of the fold's model on its own training
//! rows (in sample, on the transformed scale). The residuals come from the training rows
//! only, so the correction is fitted in-fold like every other step ([`Smeared`]).
//! `smear` is left out of a spec's label (and so of its id) at its default 0, so specs
//! that existed before the parameter keep their ids.
//!
//! Each transform also gives its slope h'(y), with which `invvar` weighting carries a
//! standard error to the fitted scale by the delta method (se_z = se_y |h'(y)|).

use crate::decl::{Choice, OptionDecl, ParamDecl, ParamKind, Registered};
use std::sync::Arc;

/// The back-transform's parameter: 0 the plain inverse (a conditional median), 1 Duan's
/// smearing estimate (a conditional mean).
const SMEAR: ParamDecl = ParamDecl {
    name: "smear",
    kind: ParamKind::Int { min: 0, max: 1 },
    default: 0.0,
    help: "back-transform: 0 plain inverse (conditional median), 1 Duan's smearing estimate (conditional mean)",
};

pub const OPTIONS: &[Registered<TransformBuild>] = &[
    Registered {
        decl: OptionDecl {
            name: "identity",
            params: &[],
            help: "the outcome as it is",
            weighted: true,
            excludes: &[],
        },
        build: TransformBuild {
            target: |_, _| Ok(Arc::new(Identity)),
            domain: |_, _| Ok(()),
        },
    },
    Registered {
        decl: OptionDecl {
            name: "log1p",
            params: &[SMEAR],
            help: "ln(1 + outcome); needs outcome > -1",
            weighted: true,
            excludes: &[],
        },
        build: TransformBuild {
            target: |_, _| Ok(Arc::new(Log1p)),
            domain: log1p_domain,
        },
    },
    Registered {
        decl: OptionDecl {
            name: "logit",
            params: &[
                ParamDecl {
                    name: "clamp",
                    kind: ParamKind::Real {
                        min: 0.0,
                        max: 0.25,
                        open_min: true,
                    },
                    default: 0.001,
                    help: "proportions are clamped to [clamp, 1 - clamp] before the logit",
                },
                SMEAR,
            ],
            help: "logit of a proportion or percent (declare data.outcome_kind)",
            weighted: true,
            excludes: &[],
        },
        build: TransformBuild {
            target: logit_target,
            domain: logit_domain,
        },
    },
];

/// A transform of the outcome and its back-transform.
pub trait Target: Send + Sync {
    fn forward(&self, y: f64) -> f64;
    fn inverse(&self, z: f64) -> f64;
    /// The slope h'(y) of the forward transform at y (for the delta method).
    fn slope(&self, y: f64) -> f64;
}

struct Identity;
struct Log1p;
/// Logit with the outcome's scale (1 for proportions, 100 for percents).
pub struct Logit {
    pub clamp: f64,
    pub scale: f64,
}

impl Target for Identity {
    fn forward(&self, y: f64) -> f64 {
        y
    }
    fn inverse(&self, z: f64) -> f64 {
        z
    }
    fn slope(&self, _y: f64) -> f64 {
        1.0
    }
}

impl Target for Log1p {
    fn forward(&self, y: f64) -> f64 {
        y.ln_1p()
    }
    fn inverse(&self, z: f64) -> f64 {
        z.exp_m1()
    }
    /// d ln(1 + y) / dy = 1 / (1 + y).
    fn slope(&self, y: f64) -> f64 {
        1.0 / (1.0 + y)
    }
}

impl Target for Logit {
    fn forward(&self, y: f64) -> f64 {
        let p = (y / self.scale).clamp(self.clamp, 1.0 - self.clamp);
        (p / (1.0 - p)).ln()
    }
    fn inverse(&self, z: f64) -> f64 {
        self.scale / (1.0 + (-z).exp())
    }
    /// With p = y / scale clamped as in `forward`: dz/dy = 1 / (scale p (1 - p)) (a
    /// percent outcome is converted to a proportion first, hence the 1 / scale).
    fn slope(&self, y: f64) -> f64 {
        let p = (y / self.scale).clamp(self.clamp, 1.0 - self.clamp);
        1.0 / (self.scale * p * (1.0 - p))
    }
}

/// Duan's smearing estimate over a transform: the back-transform of z is the mean of
/// h^-1(z + e_i) over the training residuals e_i (transformed scale) of one fold's model.
pub struct Smeared {
    pub inner: Arc<dyn Target>,
    /// Training residuals z_i - z_hat_i, in training-row order.
    pub residuals: Vec<f64>,
}

impl Target for Smeared {
    fn forward(&self, y: f64) -> f64 {
        self.inner.forward(y)
    }
    fn inverse(&self, z: f64) -> f64 {
        if self.residuals.is_empty() {
            return self.inner.inverse(z);
        }
        let s: f64 = self
            .residuals
            .iter()
            .map(|e| self.inner.inverse(z + e))
            .sum();
        s / self.residuals.len() as f64
    }
    fn slope(&self, y: f64) -> f64 {
        self.inner.slope(y)
    }
}

/// True when a transform choice asks for the smearing back-transform.
pub fn smears(c: &Choice) -> bool {
    c.param("smear").unwrap_or(0.0) >= 1.0
}

/// The part of a transform choice that fixes the fitted scale (its label without
/// `smear`): specs that differ only in the back-transform share their stage preparations.
pub fn fit_key(c: &Choice) -> String {
    let mut plain = c.clone();
    plain.params.retain(|(n, _)| *n != "smear");
    plain.label()
}

/// Builds a transform's target from its choice and the outcome's full scale.
pub type TargetBuild = fn(&Choice, Option<f64>) -> Result<Arc<dyn Target>, String>;

/// What builds a transform option: its target (forward, inverse, slope) given the
/// outcome's full scale (1 or 100, for logit), and the check that every outcome is in its
/// domain (the message names the row).
#[derive(Debug, Clone, Copy)]
pub struct TransformBuild {
    pub target: TargetBuild,
    pub domain: fn(&[f64], Option<f64>) -> Result<(), String>,
}

/// Build a transform. `scale` is the outcome's full scale (1 or 100) for logit.
pub fn build(c: &Choice, scale: Option<f64>) -> Result<Arc<dyn Target>, String> {
    (crate::decl::lookup(OPTIONS, crate::decl::Dim::Transform, &c.option)?.target)(c, scale)
}

/// Check that every outcome is in the transform's domain; the message names the row.
pub fn check_domain(option: &str, y: &[f64], scale: Option<f64>) -> Result<(), String> {
    (crate::decl::lookup(OPTIONS, crate::decl::Dim::Transform, option)?.domain)(y, scale)
}

const LOGIT_SCALE: &str =
    "transform `logit` needs data.outcome_kind = \"proportion\" or \"percent\"";

fn logit_target(c: &Choice, scale: Option<f64>) -> Result<Arc<dyn Target>, String> {
    Ok(Arc::new(Logit {
        clamp: c.param("clamp").unwrap_or(0.001),
        scale: scale.ok_or(LOGIT_SCALE)?,
    }))
}

fn log1p_domain(y: &[f64], _scale: Option<f64>) -> Result<(), String> {
    match y.iter().position(|v| *v <= -1.0) {
        Some(i) => Err(format!(
            "transform `log1p` needs outcomes above -1; row {} has {}",
            i + 1,
            y[i]
        )),
        None => Ok(()),
    }
}

fn logit_domain(y: &[f64], scale: Option<f64>) -> Result<(), String> {
    let s = scale.ok_or(LOGIT_SCALE)?;
    match y.iter().position(|v| *v < 0.0 || *v > s) {
        Some(i) => Err(format!(
            "transform `logit` needs outcomes in [0, {s}] (data.outcome_kind); row {} has {}",
            i + 1,
            y[i]
        )),
        None => Ok(()),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn transforms_round_trip() {
        let t: Vec<Box<dyn Target>> = vec![
            Box::new(Identity),
            Box::new(Log1p),
            Box::new(Logit {
                clamp: 1e-3,
                scale: 100.0,
            }),
        ];
        for tr in &t {
            for y in [0.5, 3.0, 12.25, 47.0, 99.0] {
                let back = tr.inverse(tr.forward(y));
                assert!((back - y).abs() < 1e-9 * y.max(1.0), "{y} -> {back}");
            }
        }
        // Worked by hand: logit(0.5) = 0; log1p(e - 1) = 1.
        assert_eq!(
            Logit {
                clamp: 1e-3,
                scale: 1.0
            }
            .forward(0.5),
            0.0
        );
        assert!((Log1p.forward(std::f64::consts::E - 1.0) - 1.0).abs() < 1e-15);
        // The clamp bounds the logit at the edges.
        let l = Logit {
            clamp: 0.01,
            scale: 1.0,
        };
        assert!((l.forward(0.0) - (0.01f64 / 0.99).ln()).abs() < 1e-12);
    }

    /// Duan's smearing estimate, worked by hand (checked with Python's math module):
    /// log1p at z_hat = 1 with training residuals -0.1, 0, 0.2:
    /// ((e^0.9 - 1) + (e^1 - 1) + (e^1.2 - 1)) / 3 = (2.4596031 + 2.7182818 + 3.3201169) / 3
    /// minus 1 = 1.8326672874508472, above the plain inverse e - 1 = 1.718281828459045 (the
    /// median). Logit of a percent at z_hat = 0.5 with residuals -0.3, 0.3, 0.6:
    /// (100/(1+e^-0.2) + 100/(1+e^-0.8) + 100/(1+e^-1.1)) / 3 = (54.983400 + 68.997448 +
    /// 75.026011) / 3 = 66.33561946784027 (plain inverse 62.245933120185455).
    #[test]
    fn smearing_matches_a_hand_computation() {
        let s = Smeared {
            inner: Arc::new(Log1p),
            residuals: vec![-0.1, 0.0, 0.2],
        };
        assert!((s.inverse(1.0) - 1.8326672874508472).abs() < 1e-14);
        assert!((Log1p.inverse(1.0) - 1.718281828459045).abs() < 1e-15);
        assert_eq!(s.forward(3.0), Log1p.forward(3.0));
        let l = Smeared {
            inner: Arc::new(Logit {
                clamp: 0.001,
                scale: 100.0,
            }),
            residuals: vec![-0.3, 0.3, 0.6],
        };
        assert!((l.inverse(0.5) - 66.33561946784027).abs() < 1e-12);
        // Without residuals it is the plain inverse.
        let none = Smeared {
            inner: Arc::new(Log1p),
            residuals: vec![],
        };
        assert_eq!(none.inverse(1.0), Log1p.inverse(1.0));
    }

    /// Slopes by hand: d ln(1+y)/dy at y = 3 is 1/4; the logit of a proportion at p = 0.2
    /// has slope 1/(0.2 * 0.8) = 6.25, of a percent at 20 the same over 100; inside the
    /// clamp the slope is taken at the clamped p.
    #[test]
    fn slopes_for_the_delta_method() {
        assert_eq!(Log1p.slope(3.0), 0.25);
        assert_eq!(Identity.slope(7.0), 1.0);
        let prop = Logit {
            clamp: 0.01,
            scale: 1.0,
        };
        assert!((prop.slope(0.2) - 6.25).abs() < 1e-12);
        let pct = Logit {
            clamp: 0.01,
            scale: 100.0,
        };
        assert!((pct.slope(20.0) - 0.0625).abs() < 1e-14);
        assert!((prop.slope(0.0) - 1.0 / (0.01 * 0.99)).abs() < 1e-9);
    }

    #[test]
    fn logit_refuses_out_of_range_outcomes() {
        let e = check_domain("logit", &[0.2, 1.5], Some(1.0)).unwrap_err();
        assert!(e.contains("row 2") && e.contains("[0, 1]"), "{e}");
        assert!(check_domain("logit", &[0.0, 100.0], Some(100.0)).is_ok());
        assert!(check_domain("logit", &[0.5], None)
            .unwrap_err()
            .contains("outcome_kind"));
        assert!(check_domain("log1p", &[-1.0], None).is_err());
    }
}
