//! Gap filling: each indicator's gaps get one value fitted on the training rows.

use super::{present, Fitted, Stage, StageInput};
use crate::error::FitError;
use crate::space::{Choice, OptionDecl};
use ndarray::{Array2, ArrayView2, Axis};
use std::sync::Arc;

pub const OPTIONS: &[OptionDecl] = &[
    OptionDecl {
        name: "mean",
        params: &[],
        help: "training-row mean of the indicator",
        weighted: true,
    },
    OptionDecl {
        name: "median",
        params: &[],
        help: "training-row median of the indicator",
        weighted: true,
    },
];

#[derive(Clone, Copy)]
enum Rule {
    Mean,
    Median,
}

struct Fill(Rule);

/// Filled with constants per column.
struct ConstantFill {
    values: Vec<f64>,
    names: Vec<String>,
}

pub fn build(c: &Choice) -> Result<Arc<dyn Stage>, String> {
    match c.option.as_str() {
        "mean" => Ok(Arc::new(Fill(Rule::Mean))),
        "median" => Ok(Arc::new(Fill(Rule::Median))),
        o => Err(format!("unknown fill `{o}`")),
    }
}

/// Median of a non-empty slice (mean of the two middle values when even).
pub fn median(v: &mut [f64]) -> f64 {
    v.sort_by(f64::total_cmp);
    let n = v.len();
    if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    }
}

impl Stage for Fill {
    fn fit(&self, input: &StageInput) -> Result<Arc<dyn Fitted>, FitError> {
        let values = input
            .x
            .axis_iter(Axis(1))
            .map(|col| {
                let mut p = present(col);
                if p.is_empty() {
                    // Missing in every training row: nothing to learn; a constant column
                    // that later stages treat as carrying no information.
                    return 0.0;
                }
                match self.0 {
                    Rule::Mean => p.iter().sum::<f64>() / p.len() as f64,
                    Rule::Median => median(&mut p),
                }
            })
            .collect();
        Ok(Arc::new(ConstantFill {
            values,
            names: input.names.to_vec(),
        }))
    }
}

impl Fitted for ConstantFill {
    fn apply(&self, x: ArrayView2<f64>) -> Array2<f64> {
        let mut out = x.to_owned();
        for (mut col, v) in out.axis_iter_mut(Axis(1)).zip(&self.values) {
            col.mapv_inplace(|a| if a.is_nan() { *v } else { a });
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
    fn fills_from_training_values_only() {
        let x = array![
            [1.0, f64::NAN],
            [f64::NAN, 4.0],
            [3.0, 10.0],
            [5.0, f64::NAN]
        ];
        let names = vec!["a".to_string(), "b".to_string()];
        let y = array![0.0, 0.0, 0.0, 0.0];
        let rows = [0, 1, 2, 3];
        let input = StageInput {
            x: x.view(),
            y: y.view(),
            rows: &rows,
            names: &names,
        };
        let mean = Fill(Rule::Mean).fit(&input).unwrap();
        let med = Fill(Rule::Median).fit(&input).unwrap();
        let test = array![[f64::NAN, f64::NAN]];
        // Hand-checked: mean(1,3,5) = 3, mean(4,10) = 7; median(1,3,5) = 3, median(4,10) = 7.
        assert_eq!(mean.apply(test.view()), array![[3.0, 7.0]]);
        assert_eq!(med.apply(test.view()), array![[3.0, 7.0]]);
        let mut v = vec![5.0, 1.0, 4.0, 100.0];
        assert_eq!(median(&mut v), 4.5);
    }
}
