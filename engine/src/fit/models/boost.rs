//! Gradient boosting with squared loss (Friedman 2001): start from the weighted mean, then
//! add `trees` shallow weighted CART trees, each fitted to the current residuals and
//! shrunk by `rate`. With squared loss the residual tree's leaf means are the exact line
//! search, and its squared-error splits rank as scikit-learn's friedman_mse criterion
//! does. `subsample` < 1 fits each tree on a seeded random share of the rows (stochastic
//! gradient boosting, Friedman 2002). Hand-written: no maintained crate takes row weights.
//! The first r rounds of a fit are the r-round model (the sweep seeds a fit without its
//! number of rounds, `sweep::nest`), so [`Regressor::fit_path`] runs the most rounds once
//! and hands every smaller model its first trees.

use super::tree::{Candidates, Grower, Presorted, Tree, TreeParams, MIN_LEAF};
use super::{int_param, Family, FitInput, Predictor, Regressor};
use crate::decl::{Choice, OptionDecl, ParamDecl, ParamKind};
use crate::error::FitError;
use ndarray::{Array1, ArrayView2};
use rand::seq::index::sample;
use rand::SeedableRng;
use std::sync::Arc;

const DEPTH: ParamDecl = ParamDecl {
    name: "depth",
    kind: ParamKind::Int { min: 1, max: 64 },
    default: 3.0,
    help: "depth of each tree",
};

pub const FAMILY: Family = Family {
    decl: OptionDecl {
        name: "boost",
        params: &[
            ParamDecl {
                name: "trees",
                kind: ParamKind::Int {
                    min: 1,
                    max: 100_000,
                },
                default: 100.0,
                help: "boosting rounds",
            },
            ParamDecl {
                name: "rate",
                kind: ParamKind::Real {
                    min: 0.0,
                    max: 1.0,
                    open_min: true,
                },
                default: 0.1,
                help: "shrinkage of each tree",
            },
            DEPTH,
            MIN_LEAF,
            ParamDecl {
                name: "subsample",
                kind: ParamKind::Real {
                    min: 0.0,
                    max: 1.0,
                    open_min: true,
                },
                default: 1.0,
                help: "share of rows each tree is fitted on",
            },
        ],
        help: "gradient boosting of regression trees (squared loss)",
        weighted: true,
        excludes: &[],
    },
    build: |c: &Choice| {
        Ok(Arc::new(BoostParams {
            trees: int_param(c, "trees")?,
            rate: c.param("rate").ok_or("boost needs rate")?,
            depth: int_param(c, "depth")?,
            min_leaf: int_param(c, "min_leaf")?,
            subsample: c.param("subsample").ok_or("boost needs subsample")?,
        }))
    },
};

#[derive(Debug, Clone, Copy)]
pub struct BoostParams {
    pub trees: usize,
    pub rate: f64,
    pub depth: usize,
    pub min_leaf: usize,
    pub subsample: f64,
}

/// A boosted model: the first `n` trees of a grown list, which longer models of the same
/// path share.
pub struct Boost {
    init: f64,
    rate: f64,
    grown: Arc<Vec<Tree>>,
    n: usize,
}

impl Predictor for Boost {
    fn predict(&self, x: ArrayView2<f64>) -> Array1<f64> {
        let mut out = vec![self.init; x.nrows()];
        let x = x.as_standard_layout();
        for t in &self.grown[..self.n] {
            t.add_to(x.view(), self.rate, &mut out);
        }
        Array1::from(out)
    }
    fn native(&self, x_train: ArrayView2<f64>) -> Option<(&'static str, Vec<f64>)> {
        Some((
            "impurity",
            super::ensemble_impurity(&self.grown[..self.n], x_train.ncols()),
        ))
    }
}

impl Regressor for BoostParams {
    fn fit(&self, input: &FitInput) -> Result<Box<dyn Predictor>, FitError> {
        let mut models = self.fit_path(input, &[self.trees as f64])?;
        models
            .pop()
            .ok_or_else(|| FitError::Invalid("boosting fitted no model".into()))
    }
    // Per round: every indicator scanned at each level, plus a fixed part (residuals,
    // root lists, the prediction pass) worth about 6 indicators (fitted to the demo's
    // boosting seconds at 4, 8 and 90 columns).
    fn cost(&self, n: f64, p: f64) -> f64 {
        self.trees as f64 * self.subsample * n * (6.0 + p) * self.depth as f64
    }
    fn path(&self) -> Option<&'static str> {
        Some("trees")
    }
    fn fit_path(
        &self,
        input: &FitInput,
        values: &[f64],
    ) -> Result<Vec<Box<dyn Predictor>>, FitError> {
        let sizes = super::forest::path_sizes(values, self.trees)?;
        let n = input.x.nrows();
        let w: Vec<f64> = input.w.to_vec();
        let sw: f64 = w.iter().sum();
        if n == 0 || sw <= 0.0 {
            return Err(FitError::Invalid("no training rows with weight".into()));
        }
        let init = input.y.iter().zip(&w).map(|(y, w)| y * w).sum::<f64>() / sw;
        let mut f = Array1::from_elem(n, init);
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(input.seed);
        let params = TreeParams {
            depth: self.depth,
            min_leaf: self.min_leaf,
        };
        let all: Vec<usize> = (0..n).filter(|&i| w[i] > 0.0).collect();
        let take = ((self.subsample * all.len() as f64).round() as usize).clamp(1, all.len());
        let mut trees = Vec::with_capacity(self.trees);
        let pre = Presorted::new(input.x);
        let mut grower = Grower::new(&pre);
        // Row-major once, for each round's prediction on the training rows.
        let xs = input.x.as_standard_layout();
        for _ in 0..self.trees {
            let resid = &input.y - &f;
            let rows: Vec<usize> = if take < all.len() {
                let mut r: Vec<usize> = sample(&mut rng, all.len(), take)
                    .into_iter()
                    .map(|k| all[k])
                    .collect();
                r.sort_unstable();
                r
            } else {
                all.clone()
            };
            let t = grower.grow::<rand_chacha::ChaCha8Rng>(
                resid.view(),
                &w,
                rows,
                params,
                Candidates::All,
            );
            f.scaled_add(self.rate, &t.predict(xs.view()));
            trees.push(t);
        }
        let grown = Arc::new(trees);
        Ok(sizes
            .into_iter()
            .map(|n| {
                Box::new(Boost {
                    init,
                    rate: self.rate,
                    grown: grown.clone(),
                    n,
                }) as Box<dyn Predictor>
            })
            .collect())
    }
}
