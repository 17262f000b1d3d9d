//! PLS regression (linfa-pls, NIPALS, no internal scaling: the scale stage has already
//! run). PLS takes no row weights: `plan` says so, and the space excludes PLS with any
//! weighting but `rows` automatically.

use super::{int_param, Family, FitInput, Predictor, Regressor};
use crate::decl::{Choice, OptionDecl, ParamDecl, ParamKind};
use crate::error::FitError;
use linfa::prelude::*;
use linfa_pls::PlsRegression;
use ndarray::{Array1, Array2, ArrayView1, ArrayView2, Axis};
use std::sync::Arc;

pub const K: ParamDecl = ParamDecl {
    name: "k",
    kind: ParamKind::Int {
        min: 1,
        max: 10_000,
    },
    default: 2.0,
    help: "number of PLS components",
};

pub const FAMILY: Family = Family {
    decl: OptionDecl {
        name: "plsr",
        params: &[K],
        help: "partial least squares regression",
        weighted: false,
        excludes: &[],
    },
    build: |c: &Choice| {
        Ok(Arc::new(PlsParams {
            k: int_param(c, "k")?,
        }))
    },
};

/// Checked PLS settings.
#[derive(Debug, Clone, Copy)]
pub struct PlsParams {
    pub k: usize,
}

/// A fitted PLS regression (also used by the PLS compression stage).
pub struct PlsFit(pub PlsRegression<f64>);

impl PlsParams {
    pub fn fit_pls(&self, x: ArrayView2<f64>, y: ArrayView1<f64>) -> Result<PlsFit, FitError> {
        let (n, p) = x.dim();
        if self.k > p || self.k >= n {
            return Err(FitError::Invalid(format!(
                "pls k={} but the training rows have {n} rows and {p} columns",
                self.k
            )));
        }
        let ds = DatasetBase::new(x.to_owned(), y.to_owned().insert_axis(Axis(1)));
        let m = PlsRegression::params(self.k)
            .scale(false)
            .max_iterations(1000)
            .tolerance(1e-12)
            .fit(&ds)
            .map_err(|e| FitError::NoConvergence(format!("pls: {e}")))?;
        Ok(PlsFit(m))
    }
}

impl PlsFit {
    pub fn predict_rows(&self, x: ArrayView2<f64>) -> Array1<f64> {
        let p: Array2<f64> = self.0.predict(&x.to_owned());
        p.column(0).to_owned()
    }
    /// X scores of rows.
    pub fn scores(&self, x: ArrayView2<f64>) -> Array2<f64> {
        let ds = DatasetBase::new(x.to_owned(), Array2::<f64>::zeros((x.nrows(), 1)));
        self.0.transform(ds).records().to_owned()
    }
    /// k x p rotations (scores = centred X times their transpose).
    pub fn rotations(&self) -> Array2<f64> {
        self.0.rotations().0.t().to_owned()
    }
}

impl Predictor for PlsFit {
    fn predict(&self, x: ArrayView2<f64>) -> Array1<f64> {
        self.predict_rows(x)
    }
}

impl Regressor for PlsParams {
    fn cost(&self, n: f64, p: f64) -> f64 {
        self.k as f64 * 4.0 * n * p
    }
    fn fit(&self, input: &FitInput) -> Result<Box<dyn Predictor>, FitError> {
        if input.w.iter().any(|w| (w - input.w[0]).abs() > 1e-12) {
            return Err(FitError::Invalid("pls takes no row weights".into()));
        }
        Ok(Box::new(self.fit_pls(input.x, input.y)?))
    }
}
