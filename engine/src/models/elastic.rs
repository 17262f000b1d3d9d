//! Lasso and elastic net by coordinate descent (linfa-elasticnet), honouring row weights.
//!
//! Objective (scikit-learn's convention, with weights w of mean 1):
//!   1/(2n) sum_i w_i (y_i - b0 - x_i b)^2 + alpha * l1_ratio * ||b||_1
//!     + alpha * (1 - l1_ratio) / 2 * ||b||_2^2,
//! lasso being l1_ratio = 1. Weights enter exactly: X and y are centred on their weighted
//! means (which fits the unpenalised intercept) and rows are scaled by sqrt(w) before the
//! unweighted solver runs with no intercept.

use super::linear::{centre, Centred, Linear};
use super::{Family, FitInput, Predictor, Regressor};
use crate::error::FitError;
use crate::space::{Choice, OptionDecl, ParamDecl, ParamKind};
use linfa::prelude::*;
use linfa_elasticnet::ElasticNet;
use ndarray::{Array1, ArrayView1, ArrayView2, Axis};
use std::sync::Arc;

const ALPHA: ParamDecl = ParamDecl {
    name: "alpha",
    kind: ParamKind::Real {
        min: 0.0,
        max: 1e12,
        open_min: true,
    },
    default: 1.0,
    help: "penalty strength (scikit-learn's alpha)",
};

pub const LASSO: Family = Family {
    decl: OptionDecl {
        name: "lasso",
        params: &[ALPHA],
        help: "lasso (L1 penalty)",
        weighted: true,
    },
    cost: |_c, n, p| 100.0 * n * p,
    build: |c: &Choice| {
        Ok(Arc::new(ElasticParams {
            alpha: c.param("alpha").ok_or("lasso needs alpha")?,
            l1_ratio: 1.0,
        }))
    },
};

pub const ELASTIC: Family = Family {
    decl: OptionDecl {
        name: "elastic",
        params: &[
            ALPHA,
            ParamDecl {
                name: "l1_ratio",
                kind: ParamKind::Real {
                    min: 0.0,
                    max: 1.0,
                    open_min: true,
                },
                default: 0.5,
                help: "share of the penalty that is L1",
            },
        ],
        help: "elastic net (L1 + L2 penalty)",
        weighted: true,
    },
    cost: |_c, n, p| 100.0 * n * p,
    build: |c: &Choice| {
        Ok(Arc::new(ElasticParams {
            alpha: c.param("alpha").ok_or("elastic needs alpha")?,
            l1_ratio: c.param("l1_ratio").ok_or("elastic needs l1_ratio")?,
        }))
    },
};

/// Checked penalty settings.
#[derive(Debug, Clone, Copy)]
pub struct ElasticParams {
    pub alpha: f64,
    pub l1_ratio: f64,
}

/// Solver tolerance on the duality gap, relative to ||y||^2 (as scikit-learn's `tol`).
pub const TOL: f64 = 1e-10;
const MAX_ITER: u32 = 100_000;

impl ElasticParams {
    pub fn fit_linear(
        &self,
        x: ArrayView2<f64>,
        y: ArrayView1<f64>,
        w: ArrayView1<f64>,
    ) -> Result<Linear, FitError> {
        // Weighted centring (shared with OLS and ridge; it also checks the weights), then
        // weights rescaled to sum to n (scikit-learn's sample_weight convention) enter as
        // sqrt(w) row scaling.
        let Centred { xm, ym, xc, yc } = centre(x, y, w)?;
        let n = w.len() as f64;
        let sq = w.mapv(|v| (v * n / w.sum()).sqrt());
        let xs = xc * sq.view().insert_axis(Axis(1));
        let ys: Array1<f64> = yc * &sq;
        let model = ElasticNet::params()
            .penalty(self.alpha)
            .l1_ratio(self.l1_ratio)
            .with_intercept(false)
            .tolerance(TOL)
            .max_iterations(MAX_ITER)
            .fit(&Dataset::new(xs, ys))
            .map_err(|e| FitError::Invalid(format!("elastic net: {e}")))?;
        if model.n_steps() >= MAX_ITER {
            return Err(FitError::NoConvergence(format!(
                "coordinate descent stopped after {MAX_ITER} sweeps (duality gap {:.3e})",
                model.duality_gap()
            )));
        }
        let coef = model.hyperplane().to_owned();
        let intercept = ym - xm.dot(&coef);
        Ok(Linear { intercept, coef })
    }
}

impl Regressor for ElasticParams {
    fn fit(&self, input: &FitInput) -> Result<Box<dyn Predictor>, FitError> {
        Ok(Box::new(self.fit_linear(input.x, input.y, input.w)?))
    }
}
