//! A test-only model family (cargo feature `test-options`, which the crate's tests turn on;
//! never in the binary): it proves that a new option is one file plus one registration
//! line. `probe` predicts the weighted mean of its training outcomes and declares an
//! automatic exclusion (never after `pca`), so the tests see a declared parameter, its
//! checks, its builder, its cost and its exclusion reach `plan`, `run` and the tables
//! through the same path as every real family.

use super::{Family, FitInput, Predictor, Regressor};
use crate::decl::{Excludes, OptionDecl, ParamDecl, ParamKind};
use crate::error::FitError;
use ndarray::{Array1, ArrayView2};
use std::sync::Arc;

pub const FAMILY: Family = Family {
    decl: OptionDecl {
        name: "probe",
        params: &[ParamDecl {
            name: "shift",
            kind: ParamKind::Real {
                min: -1e6,
                max: 1e6,
                open_min: false,
            },
            default: 0.0,
            help: "added to the training mean",
        }],
        help: "test only: the weighted training mean plus a shift",
        weighted: true,
        excludes: &[Excludes {
            dim: crate::decl::Dim::Compress,
            options: &["pca"],
            why: "a test of declared exclusions",
        }],
    },
    build: |c| {
        Ok(Arc::new(Probe {
            shift: c.param("shift").ok_or("probe needs shift")?,
        }))
    },
};

struct Probe {
    shift: f64,
}

struct Fitted(f64);

impl Regressor for Probe {
    fn fit(&self, input: &FitInput) -> Result<Box<dyn Predictor>, FitError> {
        let w = input.w.sum();
        if input.y.is_empty() || w <= 0.0 {
            return Err(FitError::Invalid("no training rows".into()));
        }
        let m = input.y.dot(&input.w) / w;
        Ok(Box::new(Fitted(m + self.shift)))
    }
    fn cost(&self, n: f64, _p: f64) -> f64 {
        n
    }
}

impl Predictor for Fitted {
    fn predict(&self, x: ArrayView2<f64>) -> Array1<f64> {
        Array1::from_elem(x.nrows(), self.0)
    }
}
