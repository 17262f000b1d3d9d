//! Preparation stages fitted inside a training fold: pool -> fill -> scale -> compress.
//!
//! The pool comes first: it selects raw indicator columns (gaps included), so no later
//! step reads an indicator outside the spec's pool.
//!
//! A [`Stage`] is a validated, unfitted option. [`Stage::fit`] sees only a
//! [`StageInput`], which holds the training rows of one fold and nothing else; the fitted
//! result is a [`Fitted`] transform applied to any rows (training, test, or new raw rows).
//! Adding an option: write it in the dimension's file, declare it in that file's
//! `OPTIONS`, and add one arm to that file's `build`.

pub mod compress;
pub mod fill;
pub mod nmf;
pub mod pool;
pub mod scale;

use crate::decl::{Choice, Dim, Registered};
use crate::error::FitError;
use ndarray::{Array2, ArrayView1, ArrayView2};
use std::sync::Arc;

/// What a stage may see when it is fitted: the training rows of one fold.
pub struct StageInput<'a> {
    /// Training rows after the stages above (rows in the order of `rows`).
    pub x: ArrayView2<'a, f64>,
    /// Training outcome (already transformed, if a transform is chosen).
    pub y: ArrayView1<'a, f64>,
    /// Panel row ids of the training rows (for audit and for unit-aware stages).
    pub rows: &'a [usize],
    /// Names of the columns of `x`.
    pub names: &'a [String],
}

/// An unfitted stage option with checked parameters.
pub trait Stage: Send + Sync {
    fn fit(&self, input: &StageInput) -> Result<Arc<dyn Fitted>, FitError>;
    /// Whether the fit reads the outcome (`StageInput::y`). A stage that does not may be
    /// fitted once per fold and shared by sweeps that differ only in the outcome (the
    /// permutation null's draws). The default, `true`, never shares: a stage says `false`
    /// only when its fit reads `x`, `rows` and `names` alone.
    fn reads_outcome(&self) -> bool {
        true
    }
}

/// A fitted stage: a pure transform of rows.
pub trait Fitted: Send + Sync {
    /// Transform rows with the input columns into rows with the output columns.
    fn apply(&self, x: ArrayView2<f64>) -> Array2<f64>;
    /// The same when the panel row ids of the rows are known (a stage may use a row's
    /// unit and wave, never its outcome); by default the ids are not needed.
    fn apply_rows(&self, x: ArrayView2<f64>, _rows: Option<&[usize]>) -> Array2<f64> {
        self.apply(x)
    }
    /// Names of the output columns.
    fn names(&self) -> &[String];
    /// For compressions: components x input columns loadings, with the input names.
    fn loadings(&self) -> Option<(&Array2<f64>, &[String])> {
        None
    }
    /// What the fit did that a reader of the results must know (an indicator dropped, an
    /// iteration limit reached); the sweep records each in the spec's `notes` with the
    /// step and fold. Empty by default.
    fn notes(&self) -> Vec<String> {
        Vec::new()
    }
}

/// What builds a stage option: its checked, unfitted stage from a choice. The panel gives
/// a pool its members' names and the `carry` fill its units and waves; `None` outside a
/// run (a stage built on its own, as the reference tests do).
pub type StageBuild = fn(&Choice, Option<&crate::panel::Panel>) -> Result<Arc<dyn Stage>, String>;
/// A stage option's entry in its dimension's `OPTIONS` table.
pub type StageOption = Registered<StageBuild>;

/// The options table of a stage dimension.
pub fn options(dim: Dim) -> Option<&'static [StageOption]> {
    match dim {
        Dim::Fill => Some(fill::OPTIONS),
        Dim::Pool => Some(pool::OPTIONS),
        Dim::Scale => Some(scale::OPTIONS),
        Dim::Compress => Some(compress::OPTIONS),
        Dim::Transform | Dim::Model | Dim::Weighting => None,
    }
}

/// Build the stage of a stage-dimension choice.
pub fn build(choice: &Choice, panel: &crate::panel::Panel) -> Result<Arc<dyn Stage>, String> {
    match options(choice.dim) {
        Some(_) if choice.dim == Dim::Pool => pool::build(choice, Some(panel)),
        Some(table) => {
            (crate::decl::lookup(table, choice.dim, &choice.option)?)(choice, Some(panel))
        }
        None => Err(format!("`{}` is not a stage dimension", choice.dim)),
    }
}

/// Column statistics over non-missing values (NaN skipped).
pub(crate) fn present(col: ArrayView1<f64>) -> Vec<f64> {
    col.iter().copied().filter(|v| !v.is_nan()).collect()
}

/// Predict raw indicator rows through a fitted chain, a model and the back-transform.
pub fn predict_chain(
    chain: &[Arc<dyn Fitted>],
    model: &dyn crate::models::Predictor,
    target: &dyn crate::transform::Target,
    x: ndarray::ArrayView2<f64>,
    rows: Option<&[usize]>,
) -> ndarray::Array1<f64> {
    let mut cur = x.to_owned();
    for st in chain {
        cur = st.apply_rows(cur.view(), rows);
    }
    model.predict(cur.view()).mapv(|z| target.inverse(z))
}
