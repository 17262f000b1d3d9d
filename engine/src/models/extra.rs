//! Extremely randomised trees (Geurts, Ernst & Wehenkel 2006): like the forest, but every
//! tree sees all training rows (no bootstrap, as scikit-learn's default) and each split
//! tries one random threshold per candidate indicator. Hand-written on the weighted CART
//! grower of `tree.rs` (no maintained crate takes row weights).

use super::tree::{grow, Candidates, Tree, TreeParams, MIN_LEAF};
use super::{int_param, Family, FitInput, Predictor, Regressor};
use crate::error::FitError;
use crate::space::{Choice, OptionDecl, ParamDecl, ParamKind};
use ndarray::{Array1, ArrayView2};
use rand::SeedableRng;
use std::sync::Arc;

pub const FAMILY: Family = Family {
    decl: OptionDecl {
        name: "extra",
        params: &[
            ParamDecl {
                name: "trees",
                kind: ParamKind::Int {
                    min: 1,
                    max: 100_000,
                },
                default: 200.0,
                help: "number of trees",
            },
            ParamDecl {
                name: "tried",
                kind: ParamKind::Real {
                    min: 0.0,
                    max: 1.0,
                    open_min: true,
                },
                default: 1.0,
                help: "share of indicators tried at each split (at least one)",
            },
            MIN_LEAF,
        ],
        help: "extremely randomised trees",
        weighted: true,
    },
    build: |c: &Choice| {
        Ok(Arc::new(ExtraParams {
            trees: int_param(c, "trees")?,
            tried: c.param("tried").ok_or("extra needs tried")?,
            min_leaf: int_param(c, "min_leaf")?,
        }))
    },
};

#[derive(Debug, Clone, Copy)]
pub struct ExtraParams {
    pub trees: usize,
    pub tried: f64,
    pub min_leaf: usize,
}

pub struct Extra {
    trees: Vec<Tree>,
}

impl Predictor for Extra {
    fn predict(&self, x: ArrayView2<f64>) -> Array1<f64> {
        let mut out = Array1::zeros(x.nrows());
        for t in &self.trees {
            out += &t.predict(x);
        }
        out / self.trees.len() as f64
    }
    fn native(&self, x_train: ArrayView2<f64>) -> Option<(&'static str, Vec<f64>)> {
        Some((
            "impurity",
            super::ensemble_impurity(&self.trees, x_train.ncols()),
        ))
    }
}

impl Regressor for ExtraParams {
    fn fit(&self, input: &FitInput) -> Result<Box<dyn Predictor>, FitError> {
        let (n, p) = input.x.dim();
        if n == 0 || p == 0 {
            return Err(FitError::Invalid("no training rows or no columns".into()));
        }
        let m = ((self.tried * p as f64).round() as usize).clamp(1, p);
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(input.seed);
        let w: Vec<f64> = input.w.to_vec();
        let rows: Vec<usize> = (0..n).filter(|&i| w[i] > 0.0).collect();
        let params = TreeParams {
            depth: usize::MAX,
            min_leaf: self.min_leaf,
        };
        let trees = (0..self.trees)
            .map(|_| {
                grow(
                    input.x,
                    input.y,
                    &w,
                    rows.clone(),
                    params,
                    Candidates::Extra { m, rng: &mut rng },
                )
            })
            .collect();
        Ok(Box::new(Extra { trees }))
    }
}
