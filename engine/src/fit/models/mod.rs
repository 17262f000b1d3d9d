//! Model families. A family declares its options and hyperparameters
//! ([`OptionDecl`]), validates a grid point into a checked parameter type (`build`), and
//! fits a [`Regressor`] into a [`Predictor`].
//!
//! Adding a family: one file with its `FAMILY` constant, plus one line in [`registry`].

pub mod boost;
pub mod elastic;
pub mod extra;
pub mod forest;
pub mod knn;
pub mod linear;
pub mod pls;
#[cfg(feature = "test-options")]
pub mod probe;
pub mod tree;

use crate::decl::{Choice, OptionDecl};
use crate::error::FitError;
use ndarray::{Array1, ArrayView1, ArrayView2};
use std::sync::Arc;

/// Training data of one fit: rows already prepared by the stages.
pub struct FitInput<'a> {
    pub x: ArrayView2<'a, f64>,
    pub y: ArrayView1<'a, f64>,
    /// Row weights (positive; mean 1 for the built-in weightings).
    pub w: ArrayView1<'a, f64>,
    /// Seed of this fit's random stream (from run seed, spec id, repeat and fold).
    pub seed: u64,
}

/// An unfitted model with checked hyperparameters.
pub trait Regressor: Send + Sync {
    fn fit(&self, input: &FitInput) -> Result<Box<dyn Predictor>, FitError>;
    /// Relative cost of one fit on `n` rows and `p` input columns (both at least 1), in
    /// arbitrary units (roughly the passes over the data the algorithm makes), from these
    /// checked parameters (so a default lives only in its `ParamDecl`). Used to balance
    /// shards and, calibrated by `plan`'s probe, to estimate run time. Only ratios matter.
    fn cost(&self, n: f64, p: f64) -> f64;
    /// The parameter along which this family's fits nest (the ensembles' `trees`): one
    /// fit at its largest value serves every smaller one through [`Regressor::fit_path`],
    /// each model the same bit for bit as its own fit. The sweep seeds such a fit without
    /// this parameter (`sweep::nest`), so the fits of a path draw the same numbers.
    fn path(&self) -> Option<&'static str> {
        None
    }
    /// The models at `values` of the [`Regressor::path`] parameter (ascending, the last
    /// this regressor's own), from one fit, in that order.
    fn fit_path(
        &self,
        _input: &FitInput,
        _values: &[f64],
    ) -> Result<Vec<Box<dyn Predictor>>, FitError> {
        Err(FitError::Invalid("this model has no nested fits".into()))
    }
}

/// A fitted model.
pub trait Predictor: Send + Sync {
    fn predict(&self, x: ArrayView2<f64>) -> Array1<f64>;
    /// The family's own importance of each input column, with its kind (`coefficient`,
    /// `impurity`); `x_train` are the rows the model was fitted on. `None` when the family
    /// has none.
    fn native(&self, _x_train: ArrayView2<f64>) -> Option<(&'static str, Vec<f64>)> {
        None
    }
}

/// Scale non-negative values to sum 1 (all zeros stay zeros).
pub fn normalise(v: Vec<f64>) -> Vec<f64> {
    let s: f64 = v.iter().sum();
    if s > 0.0 {
        v.into_iter().map(|x| x / s).collect()
    } else {
        v
    }
}

/// Mean of per-tree normalised impurity importances (scikit-learn's ensemble convention).
pub fn ensemble_impurity(trees: &[tree::Tree], p: usize) -> Vec<f64> {
    let mut acc = vec![0.0; p];
    for t in trees {
        for (a, v) in acc.iter_mut().zip(normalise(t.impurity(p))) {
            *a += v;
        }
    }
    normalise(acc)
}

/// A registered family.
pub struct Family {
    pub decl: OptionDecl,
    pub build: fn(&Choice) -> Result<Arc<dyn Regressor>, String>,
}

/// Every model family, in the order `plan` lists them.
pub fn registry() -> &'static [Family] {
    static FAMILIES: std::sync::OnceLock<Vec<Family>> = std::sync::OnceLock::new();
    FAMILIES.get_or_init(|| {
        #[allow(unused_mut)]
        let mut v = vec![
            linear::OLS,
            linear::RIDGE,
            elastic::LASSO,
            elastic::ELASTIC,
            pls::FAMILY,
            tree::FAMILY,
            forest::FAMILY,
            extra::FAMILY,
            boost::FAMILY,
            knn::FAMILY,
        ];
        #[cfg(feature = "test-options")]
        v.push(probe::FAMILY);
        v
    })
}

/// Relative cost of one fit of a model choice on `n` rows and `p` columns: the
/// [`Regressor::cost`] of its checked parameters. A choice the family refuses (never one
/// of a built space, which checks every grid point) costs `n p`.
pub fn cost(choice: &Choice, n: f64, p: f64) -> f64 {
    build(choice)
        .map(|m| m.cost(n.max(1.0), p.max(1.0)))
        .unwrap_or(n * p)
}

/// Build the regressor of a model choice.
pub fn build(choice: &Choice) -> Result<Arc<dyn Regressor>, String> {
    let fam = registry()
        .iter()
        .find(|f| f.decl.name == choice.option)
        .ok_or_else(|| format!("unknown model `{}`", choice.option))?;
    (fam.build)(choice)
}

/// Read a whole-number parameter validated by the space.
pub(crate) fn int_param(c: &Choice, name: &str) -> Result<usize, String> {
    c.param(name)
        .map(|v| v as usize)
        .ok_or_else(|| format!("{} needs {name}", c.option))
}
