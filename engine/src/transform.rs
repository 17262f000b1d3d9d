//! Outcome transforms. Models are fitted on the transformed outcome; predictions are
//! back-transformed before any metric, so every error is in the outcome's own units.
//!
//! * `identity`
//! * `log1p`: z = ln(1 + y), needs y > -1.
//! * `logit`: for proportions (or percents, declared by `data.outcome_kind`): with p the
//!   outcome on the [0, 1] scale clamped to [clamp, 1 - clamp], z = ln(p / (1 - p)); the
//!   back-transform returns to the outcome's scale (so a prediction never leaves the range).

use crate::space::{Choice, OptionDecl, ParamDecl, ParamKind};
use std::sync::Arc;

pub const OPTIONS: &[OptionDecl] = &[
    OptionDecl {
        name: "identity",
        params: &[],
        help: "the outcome as it is",
        weighted: true,
    },
    OptionDecl {
        name: "log1p",
        params: &[],
        help: "ln(1 + outcome); needs outcome > -1",
        weighted: true,
    },
    OptionDecl {
        name: "logit",
        params: &[ParamDecl {
            name: "clamp",
            kind: ParamKind::Real {
                min: 0.0,
                max: 0.25,
                open_min: true,
            },
            default: 0.001,
            help: "proportions are clamped to [clamp, 1 - clamp] before the logit",
        }],
        help: "logit of a proportion or percent (declare data.outcome_kind)",
        weighted: true,
    },
];

/// A fixed (not fitted) transform of the outcome.
pub trait Target: Send + Sync {
    fn forward(&self, y: f64) -> f64;
    fn inverse(&self, z: f64) -> f64;
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
}

impl Target for Log1p {
    fn forward(&self, y: f64) -> f64 {
        y.ln_1p()
    }
    fn inverse(&self, z: f64) -> f64 {
        z.exp_m1()
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
}

/// Build a transform. `scale` is the outcome's full scale (1 or 100) for logit.
pub fn build(c: &Choice, scale: Option<f64>) -> Result<Arc<dyn Target>, String> {
    match c.option.as_str() {
        "identity" => Ok(Arc::new(Identity)),
        "log1p" => Ok(Arc::new(Log1p)),
        "logit" => {
            let scale = scale.ok_or(
                "transform `logit` needs data.outcome_kind = \"proportion\" or \"percent\"",
            )?;
            Ok(Arc::new(Logit {
                clamp: c.param("clamp").unwrap_or(0.001),
                scale,
            }))
        }
        o => Err(format!("unknown transform `{o}`")),
    }
}

/// Check that every outcome is in the transform's domain; the message names the row.
pub fn check_domain(option: &str, y: &[f64], scale: Option<f64>) -> Result<(), String> {
    match option {
        "log1p" => match y.iter().position(|v| *v <= -1.0) {
            Some(i) => Err(format!(
                "transform `log1p` needs outcomes above -1; row {} has {}",
                i + 1,
                y[i]
            )),
            None => Ok(()),
        },
        "logit" => {
            let s = scale.ok_or(
                "transform `logit` needs data.outcome_kind = \"proportion\" or \"percent\"",
            )?;
            match y.iter().position(|v| *v < 0.0 || *v > s) {
                Some(i) => Err(format!(
                    "transform `logit` needs outcomes in [0, {s}] (data.outcome_kind); row {} has {}",
                    i + 1,
                    y[i]
                )),
                None => Ok(()),
            }
        }
        _ => Ok(()),
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
