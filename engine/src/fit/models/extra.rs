//! Extremely randomised trees (Geurts, Ernst & Wehenkel 2006): like the forest, but every
//! tree sees all training rows (no bootstrap, as scikit-learn's default) and each split
//! tries one random threshold per candidate indicator. Hand-written on the weighted CART
//! grower of `tree/` (no maintained crate takes row weights). Tree i draws from a stream
//! of its own, and smaller ensembles of a path are the first trees of the largest, as the
//! forest's (`forest.rs`).

use super::forest::{path_sizes, tree_stream, tried_count, Ensemble, TREES};
use super::tree::{Candidates, Grower, Presorted, TreeParams, MIN_LEAF};
use super::{int_param, Family, FitInput, Predictor, Regressor};
use crate::decl::{Choice, OptionDecl, ParamDecl, ParamKind};
use crate::error::FitError;
use std::sync::Arc;

pub const FAMILY: Family = Family {
    decl: OptionDecl {
        name: "extra",
        params: &[
            TREES,
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
        excludes: &[],
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

impl Regressor for ExtraParams {
    fn fit(&self, input: &FitInput) -> Result<Box<dyn Predictor>, FitError> {
        Ok(Box::new(self.grow(input)?))
    }
    fn cost(&self, n: f64, p: f64) -> f64 {
        self.trees as f64 * (self.tried * p).max(1.0) * n * n.log2().max(1.0) * 0.5
    }
    fn path(&self) -> Option<&'static str> {
        Some("trees")
    }
    fn fit_path(
        &self,
        input: &FitInput,
        values: &[f64],
    ) -> Result<Vec<Box<dyn Predictor>>, FitError> {
        let sizes = path_sizes(values, self.trees)?;
        Ok(self.grow(input)?.prefixes(&sizes))
    }
}

impl ExtraParams {
    fn grow(&self, input: &FitInput) -> Result<Ensemble, FitError> {
        let (n, p) = input.x.dim();
        if n == 0 || p == 0 {
            return Err(FitError::Invalid("no training rows or no columns".into()));
        }
        let m = tried_count(self.tried, p);
        let w: Vec<f64> = input.w.to_vec();
        let rows: Vec<usize> = (0..n).filter(|&i| w[i] > 0.0).collect();
        let params = TreeParams {
            depth: usize::MAX,
            min_leaf: self.min_leaf,
        };
        let pre = Presorted::new(input.x);
        let mut grower = Grower::new(&pre);
        let trees = (0..self.trees)
            .map(|i| {
                grower.grow(
                    input.y,
                    &w,
                    rows.clone(),
                    params,
                    Candidates::Extra {
                        m,
                        rng: &mut tree_stream(input.seed, i),
                    },
                )
            })
            .collect();
        Ok(Ensemble::new(trees))
    }
}
