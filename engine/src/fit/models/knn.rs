//! k-nearest-neighbour regression: the row-weighted mean outcome of the k training rows
//! nearest in Euclidean distance over the prepared columns (ties by row order). With equal
//! weights this is scikit-learn's KNeighborsRegressor(weights="uniform").

use super::{int_param, Family, FitInput, Predictor, Regressor};
use crate::decl::{Choice, OptionDecl, ParamDecl, ParamKind};
use crate::error::FitError;
use ndarray::{Array1, Array2, ArrayView2};
use std::sync::Arc;

pub const FAMILY: Family = Family {
    decl: OptionDecl {
        name: "nearest",
        params: &[ParamDecl {
            name: "k",
            kind: ParamKind::Int {
                min: 1,
                max: 10_000,
            },
            default: 5.0,
            help: "neighbours averaged",
        }],
        help: "k-nearest-neighbour regression",
        weighted: true,
        excludes: &[],
    },
    build: |c: &Choice| {
        Ok(Arc::new(KnnParams {
            k: int_param(c, "k")?,
        }))
    },
};

#[derive(Debug, Clone, Copy)]
pub struct KnnParams {
    pub k: usize,
}

pub struct Knn {
    k: usize,
    x: Array2<f64>,
    y: Array1<f64>,
    w: Array1<f64>,
}

impl Predictor for Knn {
    fn predict(&self, x: ArrayView2<f64>) -> Array1<f64> {
        x.rows()
            .into_iter()
            .map(|row| {
                let mut d: Vec<(f64, usize)> = self
                    .x
                    .rows()
                    .into_iter()
                    .enumerate()
                    .map(|(i, t)| {
                        (
                            row.iter()
                                .zip(t.iter())
                                .map(|(a, b)| (a - b) * (a - b))
                                .sum::<f64>(),
                            i,
                        )
                    })
                    .collect();
                d.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
                let near = &d[..self.k.min(d.len())];
                let sw: f64 = near.iter().map(|&(_, i)| self.w[i]).sum();
                near.iter()
                    .map(|&(_, i)| self.w[i] * self.y[i])
                    .sum::<f64>()
                    / sw
            })
            .collect()
    }
}

impl Regressor for KnnParams {
    fn cost(&self, n: f64, p: f64) -> f64 {
        n * n * p
    }
    fn fit(&self, input: &FitInput) -> Result<Box<dyn Predictor>, FitError> {
        if input.x.nrows() < self.k {
            return Err(FitError::Invalid(format!(
                "nearest k={} but only {} training rows",
                self.k,
                input.x.nrows()
            )));
        }
        Ok(Box::new(Knn {
            k: self.k,
            x: input.x.to_owned(),
            y: input.y.to_owned(),
            w: input.w.to_owned(),
        }))
    }
}
