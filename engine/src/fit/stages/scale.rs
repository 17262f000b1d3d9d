//! Scaling, fitted on training rows: standardise (mean 0, sd 1 with the population sd,
//! as scikit-learn's StandardScaler) or min-max to [0, 1] over the training range.
//! A column constant on the training rows maps to 0 (it carries no information there).

use super::{Fitted, Stage, StageInput, StageOption};
use crate::decl::{OptionDecl, Registered};
use crate::error::FitError;
use ndarray::{Array2, ArrayView2, Axis};
use std::sync::Arc;

pub const OPTIONS: &[StageOption] = &[
    Registered {
        decl: OptionDecl {
            name: "standardise",
            params: &[],
            help: "centre on the training mean, divide by the training sd",
            weighted: true,
            excludes: &[],
        },
        build: |_, _| Ok(Arc::new(Scale(Kind::Standardise))),
    },
    Registered {
        decl: OptionDecl {
            name: "minmax",
            params: &[],
            help: "map the training range to [0, 1]",
            weighted: true,
            excludes: &[],
        },
        build: |_, _| Ok(Arc::new(Scale(Kind::MinMax))),
    },
    Registered {
        decl: OptionDecl {
            name: "none",
            params: &[],
            help: "leave values as they are",
            weighted: true,
            excludes: &[],
        },
        build: |_, _| Ok(Arc::new(Scale(Kind::Identity))),
    },
];

#[derive(Clone, Copy)]
enum Kind {
    Standardise,
    MinMax,
    Identity,
}

struct Scale(Kind);

/// x -> (x - shift) * factor, per column.
struct Affine {
    shift: Vec<f64>,
    factor: Vec<f64>,
    names: Vec<String>,
}

impl Stage for Scale {
    fn reads_outcome(&self) -> bool {
        false
    }
    fn fit(&self, input: &StageInput) -> Result<Arc<dyn Fitted>, FitError> {
        let n = input.x.nrows();
        if n == 0 {
            return Err(FitError::Invalid("no training rows".into()));
        }
        let mut shift = Vec::new();
        let mut factor = Vec::new();
        for col in input.x.axis_iter(Axis(1)) {
            let (s, f) = match self.0 {
                Kind::Identity => (0.0, 1.0),
                Kind::Standardise => {
                    let m = col.sum() / n as f64;
                    let var = col.iter().map(|v| (v - m) * (v - m)).sum::<f64>() / n as f64;
                    let sd = var.sqrt();
                    (
                        m,
                        if sd > 1e-12 * m.abs().max(1.0) {
                            1.0 / sd
                        } else {
                            0.0
                        },
                    )
                }
                Kind::MinMax => {
                    let lo = col.iter().copied().fold(f64::INFINITY, f64::min);
                    let hi = col.iter().copied().fold(f64::NEG_INFINITY, f64::max);
                    let r = hi - lo;
                    (
                        lo,
                        if r > 1e-12 * lo.abs().max(1.0) {
                            1.0 / r
                        } else {
                            0.0
                        },
                    )
                }
            };
            shift.push(s);
            factor.push(f);
        }
        Ok(Arc::new(Affine {
            shift,
            factor,
            names: input.names.to_vec(),
        }))
    }
}

impl Fitted for Affine {
    fn apply(&self, x: ArrayView2<f64>) -> Array2<f64> {
        let mut out = x.to_owned();
        for ((mut col, s), f) in out
            .axis_iter_mut(Axis(1))
            .zip(&self.shift)
            .zip(&self.factor)
        {
            col.mapv_inplace(|a| (a - s) * f);
        }
        out
    }
    fn names(&self) -> &[String] {
        &self.names
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::array;

    #[test]
    fn standardise_matches_population_sd() {
        // Reference: numpy.std default ddof=0 (as sklearn StandardScaler); for [1,2,3,4]
        // mean 2.5, sd sqrt(1.25) (worked by hand).
        let x = array![[1.0, 7.0], [2.0, 7.0], [3.0, 7.0], [4.0, 7.0]];
        let names = vec!["a".into(), "b".into()];
        let y = array![0.0, 0.0, 0.0, 0.0];
        let input = StageInput {
            x: x.view(),
            y: y.view(),
            rows: &[0, 1, 2, 3],
            names: &names,
        };
        let f = Scale(Kind::Standardise).fit(&input).unwrap();
        let out = f.apply(array![[4.0, 9.0]].view());
        assert!((out[[0, 0]] - 1.5 / 1.25f64.sqrt()).abs() < 1e-12);
        assert_eq!(out[[0, 1]], 0.0, "constant training column maps to 0");
        let m = Scale(Kind::MinMax).fit(&input).unwrap();
        assert_eq!(m.apply(array![[2.5, 1.0]].view()), array![[0.5, 0.0]]);
    }
}
