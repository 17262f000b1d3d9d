//! Random forest of weighted CART trees (see `tree/`): each tree is grown on a
//! bootstrap sample of the training rows (drawn uniformly; a row drawn c times enters
//! with weight c x its row weight, as scikit-learn implements bootstrapping), with a fresh
//! random subset of indicators tried at each split: `tried` x p of the indicators that
//! vary among the node's rows (drawing goes on past constant ones, as scikit-learn's
//! splitter does; a drawn constant indicator cannot split and would only add noise to
//! which indicators compete). Trees grow until `min_leaf` stops them. Predictions average
//! the trees.
//!
//! Tree i draws from a random stream of its own, seeded by the fit seed and i; the sweep
//! seeds a forest's fit without its number of trees (`sweep::nest`), so the forest of 100
//! trees is the first 100 trees of the forest of 500, and [`Regressor::fit_path`] grows
//! the largest forest once and hands every smaller one its first trees.

use super::tree::{Candidates, Grower, Presorted, Tree, TreeParams, MIN_LEAF};
use super::{int_param, Family, FitInput, Predictor, Regressor};
use crate::decl::{Choice, OptionDecl, ParamDecl, ParamKind};
use crate::error::FitError;
use ndarray::{Array1, ArrayView2};
use rand::{Rng, SeedableRng};
use std::sync::Arc;

/// Number of trees (the forest's and the extremely randomised trees').
pub const TREES: ParamDecl = ParamDecl {
    name: "trees",
    kind: ParamKind::Int {
        min: 1,
        max: 100_000,
    },
    default: 200.0,
    help: "number of trees",
};

pub const FAMILY: Family = Family {
    decl: OptionDecl {
        name: "forest",
        params: &[
            TREES,
            ParamDecl {
                name: "tried",
                kind: ParamKind::Real {
                    min: 0.0,
                    max: 1.0,
                    open_min: true,
                },
                default: 0.33,
                help: "share of indicators tried at each split, among those that vary there (at least one)",
            },
            MIN_LEAF,
        ],
        help: "random forest (bootstrap, random indicator subsets)",
        weighted: true,
        excludes: &[],
    },
    build: |c: &Choice| {
        Ok(Arc::new(ForestParams {
            trees: int_param(c, "trees")?,
            tried: c.param("tried").ok_or("forest needs tried")?,
            min_leaf: int_param(c, "min_leaf")?,
        }))
    },
};

/// Checked forest hyperparameters.
#[derive(Debug, Clone, Copy)]
pub struct ForestParams {
    pub trees: usize,
    pub tried: f64,
    pub min_leaf: usize,
}

/// An averaging ensemble of trees (the forest's and the extremely randomised trees'): the
/// first `n` trees of a grown list, which larger ensembles of the same path share.
pub struct Ensemble {
    grown: Arc<Vec<Tree>>,
    n: usize,
}

impl Ensemble {
    /// The ensemble of all `trees`.
    pub fn new(trees: Vec<Tree>) -> Ensemble {
        let n = trees.len();
        Ensemble {
            grown: Arc::new(trees),
            n,
        }
    }
    /// The ensembles of the first `sizes[j]` trees of this one's (each at most its
    /// length), sharing them.
    pub fn prefixes(self, sizes: &[usize]) -> Vec<Box<dyn Predictor>> {
        let grown = self.grown;
        sizes
            .iter()
            .map(|&n| {
                Box::new(Ensemble {
                    grown: grown.clone(),
                    n: n.min(grown.len()),
                }) as Box<dyn Predictor>
            })
            .collect()
    }
    pub fn trees(&self) -> &[Tree] {
        &self.grown[..self.n]
    }
}

/// The whole-number sizes of a path's values (trees, rounds), the largest last; an error
/// unless they ascend to `own` (the size of the regressor asked).
pub(crate) fn path_sizes(values: &[f64], own: usize) -> Result<Vec<usize>, FitError> {
    let sizes: Vec<usize> = values.iter().map(|&v| v as usize).collect();
    if sizes.last() != Some(&own) || sizes.windows(2).any(|w| w[0] > w[1]) {
        return Err(FitError::Invalid(format!(
            "a nested fit of {own} trees was asked for {values:?}"
        )));
    }
    Ok(sizes)
}

/// Indicators tried per split: `share` of `p`, rounded, at least one.
pub fn tried_count(share: f64, p: usize) -> usize {
    ((share * p as f64).round() as usize).clamp(1, p)
}

impl Predictor for Ensemble {
    fn predict(&self, x: ArrayView2<f64>) -> Array1<f64> {
        // Summed tree by tree in order (as adding the trees' prediction vectors would),
        // then averaged.
        let mut out = vec![0.0; x.nrows()];
        let x = x.as_standard_layout();
        for t in self.trees() {
            t.add_to(x.view(), 1.0, &mut out);
        }
        Array1::from(out) / self.n as f64
    }
    fn native(&self, x_train: ArrayView2<f64>) -> Option<(&'static str, Vec<f64>)> {
        Some((
            "impurity",
            super::ensemble_impurity(self.trees(), x_train.ncols()),
        ))
    }
}

impl Regressor for ForestParams {
    fn fit(&self, input: &FitInput) -> Result<Box<dyn Predictor>, FitError> {
        Ok(Box::new(self.grow_forest(input)?))
    }
    // Per tree: the split search over the tried indicators, keeping every indicator's
    // order through the splits, and a fixed part (bootstrap, root lists, leaves) worth
    // about 14 indicators (fitted to the demo's forest seconds at 4, 8 and 90 columns;
    // the divisor puts it on boosting's scale, measured the same way).
    fn cost(&self, n: f64, p: f64) -> f64 {
        self.trees as f64 * (14.0 + p * (0.5 + self.tried)) * n * n.log2().max(1.0) / 3.3
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
        Ok(self.grow_forest(input)?.prefixes(&sizes))
    }
}

impl ForestParams {
    /// Grow the forest (the `Regressor` boxes it).
    pub fn grow_forest(&self, input: &FitInput) -> Result<Ensemble, FitError> {
        let (n, p) = input.x.dim();
        if n == 0 || p == 0 {
            return Err(FitError::Invalid("no training rows or no columns".into()));
        }
        let m = tried_count(self.tried, p);
        let params = TreeParams {
            depth: usize::MAX,
            min_leaf: self.min_leaf,
        };
        let mut trees = Vec::with_capacity(self.trees);
        let pre = Presorted::new(input.x);
        let mut grower = Grower::new(&pre);
        let mut counts = vec![0u32; n];
        let mut w = vec![0.0; n];
        for i in 0..self.trees {
            let mut rng = tree_stream(input.seed, i);
            counts.iter_mut().for_each(|c| *c = 0);
            for _ in 0..n {
                counts[rng.gen_range(0..n)] += 1;
            }
            for i in 0..n {
                w[i] = counts[i] as f64 * input.w[i];
            }
            let rows: Vec<usize> = (0..n).filter(|&i| w[i] > 0.0).collect();
            // Trying every indicator, the draw would list all that vary at the node,
            // whatever the stream: the grower tries them all without drawing (an
            // indicator constant at the node offers no split), the same tree bit for bit
            // (tested; without NaN, where the draw's test of varying and the scan's
            // could differ), and the stream is not read again.
            let cand = if m == p && !pre.has_nan() {
                Candidates::All
            } else {
                Candidates::Sample { m, rng: &mut rng }
            };
            trees.push(grower.grow(input.y, &w, rows, params, cand));
        }
        Ok(Ensemble::new(trees))
    }
}

/// The random stream of tree `i` of an ensemble fitted with `seed`.
pub(crate) fn tree_stream(seed: u64, i: usize) -> rand_chacha::ChaCha8Rng {
    rand_chacha::ChaCha8Rng::seed_from_u64(crate::streams::mix(seed, i as u64))
}
