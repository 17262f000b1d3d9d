//! Indicator pools: which indicators a spec may use.
//!
//! `all`, `group:NAME` and named lists are fixed by the config; their members are matched
//! by name, so an indicator the fill stage dropped is skipped and its missingness flag
//! (when present) follows it. `screen` is fitted: the k indicators with the largest
//! absolute Pearson correlation with the (transformed) outcome on the training rows
//! (ties keep column order).

use super::fill::FLAG_SUFFIX;
use super::{Fitted, Stage, StageInput};
use crate::error::FitError;
use crate::panel::Panel;
use crate::space::{Choice, OptionDecl, ParamDecl, ParamKind};
use ndarray::{Array2, ArrayView2, Axis, ShapeBuilder};
use std::sync::Arc;

/// Declared pool options that take parameters (`all`, groups and named lists take none).
pub const OPTIONS: &[OptionDecl] = &[OptionDecl {
    name: "screen",
    params: &[ParamDecl {
        name: "k",
        kind: ParamKind::Int {
            min: 1,
            max: 100_000,
        },
        default: 10.0,
        help: "indicators kept: largest |correlation| with the outcome on training rows",
    }],
    help: "in-fold screening by correlation with the outcome",
    weighted: true,
}];

enum Pool {
    Fixed(Vec<String>),
    Screen(usize),
}

struct Select {
    columns: Vec<usize>,
    names: Vec<String>,
}

pub fn build(c: &Choice, panel: &Panel) -> Result<Arc<dyn Stage>, String> {
    if c.option == "screen" {
        return Ok(Arc::new(Pool::Screen(
            c.param("k").ok_or("screen needs k")? as usize,
        )));
    }
    let members = c
        .members
        .as_ref()
        .ok_or_else(|| format!("pool `{}` has no members", c.option))?;
    Ok(Arc::new(Pool::Fixed(
        members
            .iter()
            .map(|&j| panel.indicators[j].clone())
            .collect(),
    )))
}

fn is_flag(name: &str) -> bool {
    name.ends_with(FLAG_SUFFIX)
}

/// Columns of `names` for the chosen indicators, each followed by its flag if present.
fn with_flags(names: &[String], chosen: &[usize]) -> Vec<usize> {
    let mut cols = Vec::new();
    for &j in chosen {
        cols.push(j);
    }
    for &j in chosen {
        let flag = format!("{}{FLAG_SUFFIX}", names[j]);
        if let Some(f) = names.iter().position(|n| *n == flag) {
            cols.push(f);
        }
    }
    cols
}

impl Stage for Pool {
    fn fit(&self, input: &StageInput) -> Result<Arc<dyn Fitted>, FitError> {
        let chosen: Vec<usize> = match self {
            Pool::Fixed(members) => members
                .iter()
                .filter_map(|m| input.names.iter().position(|n| n == m))
                .collect(),
            Pool::Screen(k) => {
                let y = input.y.to_vec();
                let mut scored: Vec<(f64, usize)> = input
                    .names
                    .iter()
                    .enumerate()
                    .filter(|(_, n)| !is_flag(n))
                    .map(|(j, _)| {
                        let c = crate::metrics::pearson(&input.x.column(j).to_vec(), &y);
                        (if c.is_nan() { 0.0 } else { c.abs() }, j)
                    })
                    .collect();
                scored.sort_by(|a, b| b.0.total_cmp(&a.0).then(a.1.cmp(&b.1)));
                let mut c: Vec<usize> = scored.into_iter().take(*k).map(|(_, j)| j).collect();
                c.sort_unstable();
                c
            }
        };
        if chosen.is_empty() {
            return Err(FitError::Invalid(
                "no indicator of the pool is left (all dropped by the fill's drop rule)".into(),
            ));
        }
        let columns = with_flags(input.names, &chosen);
        let names = columns.iter().map(|&j| input.names[j].clone()).collect();
        Ok(Arc::new(Select { columns, names }))
    }
}

impl Fitted for Select {
    fn apply(&self, x: ArrayView2<f64>) -> Array2<f64> {
        // Column by column into column-major order, the layout ndarray's `select` gives
        // (it joins one view per column, which is slow for many columns); later stages
        // sum in memory order, so the layout is part of the result.
        let mut out = Vec::with_capacity(x.nrows() * self.columns.len());
        for &j in &self.columns {
            out.extend(x.column(j).iter().copied());
        }
        Array2::from_shape_vec((x.nrows(), self.columns.len()).f(), out)
            .unwrap_or_else(|_| x.select(Axis(1), &self.columns))
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
    fn screening_keeps_the_most_correlated_on_training_rows() {
        // y = a exactly; b is noise-free negative of y; c is unrelated.
        let x = array![
            [1.0, -1.0, 5.0],
            [2.0, -2.1, 1.0],
            [3.0, -2.9, 4.0],
            [4.0, -4.0, 2.0]
        ];
        let y = array![1.0, 2.0, 3.0, 4.0];
        let names: Vec<String> = ["a", "b", "c"].iter().map(|s| s.to_string()).collect();
        let input = StageInput {
            x: x.view(),
            y: y.view(),
            rows: &[0, 1, 2, 3],
            names: &names,
        };
        let f = Pool::Screen(2).fit(&input).unwrap();
        assert_eq!(f.names(), &["a".to_string(), "b".to_string()]);
        let fixed = Pool::Fixed(vec!["c".into(), "zz".into()])
            .fit(&input)
            .unwrap();
        assert_eq!(fixed.names(), &["c".to_string()]);
    }

    /// The gathered columns are ndarray's `select`: the same values in the same memory
    /// layout (later stages sum in memory order), from row- and column-major inputs, with
    /// columns out of order and one or many rows.
    #[test]
    fn apply_equals_select_in_values_and_layout() {
        let columns = vec![7, 0, 3, 3, 11];
        let sel = Select {
            names: columns.iter().map(|j| format!("c{j}")).collect(),
            columns,
        };
        for rows in [1, 6] {
            let c = Array2::from_shape_fn((rows, 12), |(i, j)| (i * 12 + j) as f64 * 0.5);
            let f = c.t().as_standard_layout().into_owned().reversed_axes();
            for x in [c.view(), f.view()] {
                let got = sel.apply(x);
                let want = x.select(Axis(1), &sel.columns);
                assert_eq!(got, want);
                assert_eq!(got.strides(), want.strides(), "{rows} rows");
            }
        }
    }
}
