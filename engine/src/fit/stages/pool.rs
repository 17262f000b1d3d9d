//! Indicator pools: which indicators a spec may use.
//!
//! The pool is the first stage of the tree (pool -> fill -> scale -> compress): it acts on
//! the raw indicator columns, gaps included, before any step that reads indicator values,
//! so everything below it (the fill's drop rule, missingness flags, kNN distances, chained
//! regressions, scaling, compression, the model) sees only the pool's indicators. A spec's
//! predictions do not depend on the values or gaps of indicators outside its pool
//! (`tests/pools.rs`), and their importances are 0 with `in_pool = false`.
//!
//! * `all`, `group:NAME` and named lists are fixed by the config: their members, matched
//!   by name, in panel column order.
//! * `screen` is fitted on a fold's training rows as they are, gaps included: each
//!   indicator scores the absolute Pearson correlation between its values and the
//!   (transformed) training outcome over the training rows where it has a value
//!   (pairwise-complete rows; pandas' `DataFrame.corrwith` computes the same). An indicator
//!   with fewer than 3 such rows, or with zero variance of the indicator or of the outcome
//!   over them, scores 0. The k highest scores are kept (ties: the earlier column first),
//!   in panel column order; with k at least the number of indicators, all are kept.

use super::{Fitted, Stage, StageInput, StageOption};
use crate::decl::{Choice, OptionDecl, ParamDecl, ParamKind, Registered};
use crate::error::FitError;
use crate::panel::Panel;
use ndarray::{Array2, ArrayView1, ArrayView2, Axis, ShapeBuilder};
use std::sync::Arc;

/// Registered pool options (`all`, groups and named lists are declared by the config and
/// codebook instead: a [`Choice`] with `members`, built by [`build`]).
pub const OPTIONS: &[StageOption] = &[Registered {
    decl: OptionDecl {
        name: "screen",
        params: &[ParamDecl {
            name: "k",
            kind: ParamKind::Int {
                min: 1,
                max: 100_000,
            },
            default: 10.0,
            help: "indicators kept: largest |correlation| with the outcome over the training rows where each has a value",
        }],
        help: "in-fold screening by correlation with the outcome",
        weighted: true,
        excludes: &[],
    },
    build: |c, _| {
        Ok(Arc::new(Pool::Screen(
            c.param("k").ok_or("screen needs k")? as usize,
        )))
    },
}];

enum Pool {
    Fixed(Vec<String>),
    Screen(usize),
}

struct Select {
    columns: Vec<usize>,
    names: Vec<String>,
}

/// Build a pool: a fixed list (the choice's `members`: `all`, a group, a named list) or a
/// registered option.
pub fn build(c: &Choice, panel: Option<&Panel>) -> Result<Arc<dyn Stage>, String> {
    let Some(members) = c.members.as_ref() else {
        return (crate::decl::lookup(OPTIONS, crate::decl::Dim::Pool, &c.option)?)(c, panel);
    };
    let panel =
        panel.ok_or_else(|| format!("pool `{}` needs the panel's indicator names", c.option))?;
    Ok(Arc::new(Pool::Fixed(
        members
            .iter()
            .map(|&j| panel.indicators[j].clone())
            .collect(),
    )))
}

/// Screening scores of the columns of `x` against `y` (see the module doc): |Pearson r|
/// over the rows where the column has a value, 0 with fewer than 3 such rows or zero
/// variance of either side over them.
pub fn screen_scores(x: ArrayView2<f64>, y: ArrayView1<f64>) -> Vec<f64> {
    x.columns()
        .into_iter()
        .map(|col| {
            let (a, b): (Vec<f64>, Vec<f64>) = col
                .iter()
                .zip(y.iter())
                .filter(|(v, _)| !v.is_nan())
                .map(|(v, t)| (*v, *t))
                .unzip();
            if a.len() < 3 {
                return 0.0;
            }
            let r = crate::metrics::pearson(&a, &b);
            if r.is_finite() {
                r.abs()
            } else {
                0.0
            }
        })
        .collect()
}

/// The `k` columns with the highest scores (ties: the earlier column), in column order.
fn top_k(scores: &[f64], k: usize) -> Vec<usize> {
    let mut order: Vec<usize> = (0..scores.len()).collect();
    order.sort_by(|&a, &b| scores[b].total_cmp(&scores[a]).then(a.cmp(&b)));
    order.truncate(k);
    order.sort_unstable();
    order
}

impl Stage for Pool {
    /// A fixed pool reads names only; `screen` scores columns against the outcome.
    fn reads_outcome(&self) -> bool {
        matches!(self, Pool::Screen(_))
    }
    fn fit(&self, input: &StageInput) -> Result<Arc<dyn Fitted>, FitError> {
        let columns: Vec<usize> = match self {
            Pool::Fixed(members) => {
                let mut c = Vec::with_capacity(members.len());
                for m in members {
                    match input.names.iter().position(|n| n == m) {
                        Some(j) => c.push(j),
                        None => {
                            return Err(FitError::Invalid(format!(
                                "pool member `{m}` is not among the indicators"
                            )))
                        }
                    }
                }
                c.sort_unstable();
                c
            }
            Pool::Screen(k) => top_k(&screen_scores(input.x, input.y), *k),
        };
        if columns.is_empty() {
            return Err(FitError::Invalid("the pool has no indicator".into()));
        }
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
        let fixed = Pool::Fixed(vec!["c".into(), "a".into()])
            .fit(&input)
            .unwrap();
        assert_eq!(fixed.names(), &["a".to_string(), "c".to_string()]);
        assert!(Pool::Fixed(vec!["c".into(), "zz".into()])
            .fit(&input)
            .is_err());
    }

    /// Screening reads the raw training rows with their gaps. Worked by hand: `a` has a
    /// gap in row 2; over rows 0, 1, 3 it is (1, 2, 4) against y (1, 2, 4): r = 1. `b`
    /// has only two values: score 0. `c` is constant where present: score 0. `d` is
    /// (4, 3, 2, 1) against y (1, 2, 3, 4): |r| = 1, tied with `a`; the earlier column
    /// wins a tie, so k = 1 keeps `a`, k = 2 keeps `a` and `d`, and k = 3 adds `b`, the
    /// first of the zero scores.
    #[test]
    fn screening_uses_pairwise_complete_rows() {
        let nan = f64::NAN;
        let x = array![
            [1.0, nan, 5.0, 4.0],
            [2.0, 7.0, nan, 3.0],
            [nan, nan, 5.0, 2.0],
            [4.0, 1.0, 5.0, 1.0]
        ];
        let y = array![1.0, 2.0, 3.0, 4.0];
        let s = screen_scores(x.view(), y.view());
        assert!(
            (s[0] - 1.0).abs() < 1e-15 && (s[3] - 1.0).abs() < 1e-15,
            "{s:?}"
        );
        assert_eq!((s[1], s[2]), (0.0, 0.0));
        let names: Vec<String> = ["a", "b", "c", "d"].iter().map(|s| s.to_string()).collect();
        let input = StageInput {
            x: x.view(),
            y: y.view(),
            rows: &[0, 1, 2, 3],
            names: &names,
        };
        for (k, want) in [
            (1, vec!["a"]),
            (2, vec!["a", "d"]),
            (3, vec!["a", "b", "d"]),
        ] {
            let f = Pool::Screen(k).fit(&input).unwrap();
            assert_eq!(f.names(), want.as_slice(), "k = {k}");
        }
        assert_eq!(Pool::Screen(9).fit(&input).unwrap().names().len(), 4);
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
