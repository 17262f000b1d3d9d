//! Weighted CART regression tree (squared error), written here because no maintained Rust
//! crate fits regression trees with row weights (smartcore's and linfa's trees take none).
//!
//! A split falls midway between consecutive distinct values (as in scikit-learn) and must
//! leave at least `min_leaf` rows on each side. The split maximising the weighted
//! reduction in squared error wins; ties keep the first indicator in column order. A leaf
//! predicts the weighted mean outcome of its rows. The forest, the extremely randomised
//! trees and boosting grow their trees with the same grower.
//!
//! The folder, by concern:
//!
//! - this file: the family's declaration, [`TreeParams`], [`Candidates`] and the
//!   one-call growers [`grow`] / [`grow_presorted`];
//! - `fitted.rs`: the fitted [`Tree`] and its prediction walk;
//! - `presort.rs`: [`Presorted`], every indicator's order sorted once per fit, and its
//!   byte rank tables with the bitsets made from them;
//! - `grower.rs`: [`Grower`], which grows a tree node by node over an arena of row lists;
//! - `draw.rs`: the draw of the indicators tried at a split;
//! - `scan.rs`: the split scan over one indicator's order and the cursors that feed it;
//! - `tests.rs`: the per-node-sort grower the presorted one is checked against, and the
//!   tests.

mod draw;
mod fitted;
mod grower;
mod presort;
mod scan;
#[cfg(test)]
mod tests;

pub use fitted::Tree;
pub use grower::Grower;
pub use presort::Presorted;

use super::{int_param, Family, FitInput, Predictor, Regressor};
use crate::decl::{Choice, OptionDecl, ParamDecl, ParamKind};
use crate::error::FitError;
use ndarray::{ArrayView1, ArrayView2};
use rand::Rng;
use std::sync::Arc;

/// Consecutive values closer than this are not split between (scikit-learn's
/// FEATURE_THRESHOLD rule), so splits never hinge on rounding noise.
pub const FEATURE_THRESHOLD: f64 = 1e-7;

pub const DEPTH: ParamDecl = ParamDecl {
    name: "depth",
    kind: ParamKind::Int { min: 1, max: 64 },
    default: 4.0,
    help: "maximum depth (root = 0)",
};
pub const MIN_LEAF: ParamDecl = ParamDecl {
    name: "min_leaf",
    kind: ParamKind::Int {
        min: 1,
        max: 100_000,
    },
    default: 5.0,
    help: "fewest training rows in a leaf",
};

pub const FAMILY: Family = Family {
    decl: OptionDecl {
        name: "tree",
        params: &[DEPTH, MIN_LEAF],
        help: "regression tree (CART, squared error)",
        weighted: true,
        excludes: &[],
    },
    build: |c: &Choice| {
        Ok(Arc::new(TreeParams {
            depth: int_param(c, "depth")?,
            min_leaf: int_param(c, "min_leaf")?,
        }))
    },
};

/// Checked tree hyperparameters.
#[derive(Debug, Clone, Copy)]
pub struct TreeParams {
    pub depth: usize,
    pub min_leaf: usize,
}

/// How a grower picks candidate indicators at a split.
pub enum Candidates<'r, R: Rng> {
    All,
    /// `m` indicators drawn afresh at each split.
    Sample {
        m: usize,
        rng: &'r mut R,
    },
    /// Extremely randomised splits (Geurts, Ernst & Wehenkel 2006): `m` indicators drawn
    /// at each split, each with one threshold drawn uniformly between its node minimum and
    /// maximum; the best of those splits wins.
    Extra {
        m: usize,
        rng: &'r mut R,
    },
}

/// Grow a tree on `rows` (indices into x; repeated rows are not allowed, weights carry
/// multiplicity) with weights `w` (indexed like x's rows).
pub fn grow<R: Rng>(
    x: ArrayView2<f64>,
    y: ArrayView1<f64>,
    w: &[f64],
    rows: Vec<usize>,
    params: TreeParams,
    cand: Candidates<R>,
) -> Tree {
    grow_presorted(&Presorted::new(x), y, w, rows, params, cand)
}

/// [`Grower::grow`] with working memory of its own.
pub fn grow_presorted<R: Rng>(
    pre: &Presorted,
    y: ArrayView1<f64>,
    w: &[f64],
    rows: Vec<usize>,
    params: TreeParams,
    cand: Candidates<R>,
) -> Tree {
    Grower::new(pre).grow(y, w, rows, params, cand)
}

impl Regressor for TreeParams {
    fn cost(&self, n: f64, p: f64) -> f64 {
        p * n * (self.depth as f64).min(n.log2().max(1.0))
    }
    fn fit(&self, input: &FitInput) -> Result<Box<dyn Predictor>, FitError> {
        let n = input.x.nrows();
        if n == 0 {
            return Err(FitError::Invalid("no training rows".into()));
        }
        let w: Vec<f64> = input.w.to_vec();
        let rows: Vec<usize> = (0..n).filter(|&i| w[i] > 0.0).collect();
        Ok(Box::new(grow::<rand_chacha::ChaCha8Rng>(
            input.x,
            input.y,
            &w,
            rows,
            *self,
            Candidates::All,
        )))
    }
}
