//! Linear models with an unpenalised intercept, honouring row weights.
//!
//! OLS minimises sum_i w_i (y_i - b0 - x_i b)^2. It centres X and y on their weighted
//! means (which removes the intercept and improves conditioning), scales rows by sqrt(w),
//! and solves by Householder QR (linfa-linalg). A column set of less than full rank
//! (|r_jj| below 1e-10 of the largest) is reported as a singular system, not fitted.
//!
//! Ridge minimises sum_i w_i (y_i - b0 - x_i b)^2 + alpha ||b||^2 (scikit-learn's `Ridge`
//! objective, with `sample_weight`), solved from the normal equations by Cholesky.

use super::{Family, FitInput, Predictor, Regressor};
use crate::decl::{Choice, OptionDecl, ParamDecl, ParamKind};
use crate::error::FitError;
use linfa_linalg::cholesky::SolveC;
use linfa_linalg::qr::QRInto;
use ndarray::{Array1, Array2, ArrayView1, ArrayView2, Axis};
use std::sync::Arc;

pub const OLS: Family = Family {
    decl: OptionDecl {
        name: "ols",
        params: &[],
        help: "ordinary least squares",
        weighted: true,
        excludes: &[],
    },
    build: |_| Ok(Arc::new(Ols)),
};

pub const RIDGE: Family = Family {
    decl: OptionDecl {
        name: "ridge",
        params: &[ParamDecl {
            name: "alpha",
            kind: ParamKind::Real {
                min: 0.0,
                max: 1e12,
                open_min: true,
            },
            default: 1.0,
            help: "L2 penalty on the coefficients (not on the intercept)",
        }],
        help: "ridge regression",
        weighted: true,
        excludes: &[],
    },
    build: |c: &Choice| {
        let alpha = c.param("alpha").ok_or("ridge needs alpha")?;
        Ok(Arc::new(Ridge { alpha }))
    },
};

/// Ordinary least squares.
pub struct Ols;

/// Ridge with a checked positive penalty.
pub struct Ridge {
    pub alpha: f64,
}

/// A fitted linear model.
#[derive(Debug, Clone)]
pub struct Linear {
    pub intercept: f64,
    pub coef: Array1<f64>,
}

impl Predictor for Linear {
    fn predict(&self, x: ArrayView2<f64>) -> Array1<f64> {
        x.dot(&self.coef) + self.intercept
    }
    /// |coefficient| x training sd of its column: the change in prediction per training
    /// standard deviation (a standardised coefficient).
    fn native(&self, x_train: ArrayView2<f64>) -> Option<(&'static str, Vec<f64>)> {
        let n = x_train.nrows().max(1) as f64;
        let v = x_train
            .columns()
            .into_iter()
            .zip(self.coef.iter())
            .map(|(c, b)| {
                let m = c.sum() / n;
                let sd = (c.iter().map(|x| (x - m) * (x - m)).sum::<f64>() / n).sqrt();
                (b * sd).abs()
            })
            .collect();
        Some(("coefficient", v))
    }
}

/// Weighted column means of X, weighted mean of y, and the centred X and y.
pub(crate) struct Centred {
    pub xm: Array1<f64>,
    pub ym: f64,
    pub xc: Array2<f64>,
    pub yc: Array1<f64>,
}

pub(crate) fn centre(
    x: ArrayView2<f64>,
    y: ArrayView1<f64>,
    w: ArrayView1<f64>,
) -> Result<Centred, FitError> {
    let sw = w.sum();
    let valid = |v: f64| v.is_finite() && v >= 0.0;
    if !(valid(sw) && sw > 0.0 && w.iter().all(|v| valid(*v))) {
        return Err(FitError::Invalid(
            "row weights must be finite, non-negative, not all 0".into(),
        ));
    }
    let xm = x.t().dot(&w) / sw;
    let ym = y.dot(&w) / sw;
    let xc = &x - &xm;
    let yc = &y - ym;
    Ok(Centred { xm, ym, xc, yc })
}

impl Ols {
    pub fn fit_linear(
        &self,
        x: ArrayView2<f64>,
        y: ArrayView1<f64>,
        w: ArrayView1<f64>,
    ) -> Result<Linear, FitError> {
        let (n, p) = x.dim();
        if n <= p {
            return Err(FitError::Singular(format!(
                "OLS with {p} columns needs more than {p} training rows, has {n}"
            )));
        }
        let Centred { xm, ym, mut xc, yc } = centre(x, y, w)?;
        let sq: Array1<f64> = w.mapv(f64::sqrt);
        for (mut row, s) in xc.axis_iter_mut(Axis(0)).zip(sq.iter()) {
            row *= *s;
        }
        let b = (&yc * &sq).insert_axis(Axis(1));
        let qr = xc
            .qr_into()
            .map_err(|e| FitError::Singular(e.to_string()))?;
        let r = qr.clone().into_r();
        let d = r.diag();
        let dmax = d.iter().fold(0.0f64, |a, v| a.max(v.abs()));
        if let Some(j) = d.iter().position(|v| v.abs() <= 1e-10 * dmax) {
            return Err(FitError::Singular(format!(
                "column {} is (nearly) a linear combination of the others",
                j + 1
            )));
        }
        let coef = qr
            .solve_into(b)
            .map_err(|e| FitError::Singular(e.to_string()))?;
        let coef = coef.column(0).to_owned();
        let intercept = ym - xm.dot(&coef);
        Ok(Linear { intercept, coef })
    }
}

impl Regressor for Ols {
    fn cost(&self, n: f64, p: f64) -> f64 {
        n * p * p + p * p * p
    }
    fn fit(&self, input: &FitInput) -> Result<Box<dyn Predictor>, FitError> {
        Ok(Box::new(self.fit_linear(input.x, input.y, input.w)?))
    }
}

impl Ridge {
    pub fn fit_linear(
        &self,
        x: ArrayView2<f64>,
        y: ArrayView1<f64>,
        w: ArrayView1<f64>,
    ) -> Result<Linear, FitError> {
        let Centred { xm, ym, xc, yc } = centre(x, y, w)?;
        let xw = &xc * &w.insert_axis(Axis(1));
        let mut a = xw.t().dot(&xc);
        for j in 0..a.nrows() {
            a[[j, j]] += self.alpha;
        }
        let rhs = xw.t().dot(&yc).insert_axis(Axis(1));
        let coef = a
            .solvec(&rhs)
            .map_err(|e| FitError::Singular(format!("ridge normal equations: {e}")))?;
        let coef = coef.column(0).to_owned();
        let intercept = ym - xm.dot(&coef);
        Ok(Linear { intercept, coef })
    }
}

impl Regressor for Ridge {
    fn cost(&self, n: f64, p: f64) -> f64 {
        n * p * p + p * p * p
    }
    fn fit(&self, input: &FitInput) -> Result<Box<dyn Predictor>, FitError> {
        Ok(Box::new(self.fit_linear(input.x, input.y, input.w)?))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::array;

    #[test]
    fn ols_recovers_exact_line_and_flags_collinearity() {
        let x = array![[1.0, 0.0], [2.0, 1.0], [3.0, 0.0], [4.0, 1.0], [5.0, 3.0]];
        let y = x.column(0).mapv(|v| 2.0 * v) + x.column(1).mapv(|v| -v) + 0.5;
        let w = Array1::ones(5);
        let m = Ols.fit_linear(x.view(), y.view(), w.view()).unwrap();
        assert!((m.intercept - 0.5).abs() < 1e-12 && (m.coef[0] - 2.0).abs() < 1e-12);
        let xd = array![[1.0, 2.0], [2.0, 4.0], [3.0, 6.0], [4.0, 8.0]];
        let e = Ols.fit_linear(
            xd.view(),
            array![1.0, 2.0, 3.0, 5.0].view(),
            Array1::ones(4).view(),
        );
        assert!(matches!(e, Err(FitError::Singular(_))));
    }
}
