//! Gap filling, fitted on the training rows: one rule for every indicator of a spec.
//!
//! * `mean`, `median`: the training-row mean or median of the indicator.
//! * `knn`: the mean of the k nearest training rows that have the indicator, with
//!   distances over the indicators both rows have, scaled up for the ones missing
//!   (scikit-learn's `KNNImputer` with its nan-euclidean distance:
//!   sqrt(p / present * sum of squared differences)). Distances use the raw indicator
//!   values, as in scikit-learn, so indicators on large scales weigh more. A row with no
//!   usable donor gets the training mean.
//!
//! Every rule also takes `drop_share` (indicators missing in more than this share of the
//! training rows are dropped; default 1: keep all) and `flags` (1: append a 0/1 column
//! `NAME__missing` for each kept indicator that has gaps in the training rows).

use super::{present, Fitted, Stage, StageInput};
use crate::error::FitError;
use crate::space::{Choice, OptionDecl, ParamDecl, ParamKind};
use ndarray::{Array2, ArrayView1, ArrayView2, Axis};
use std::sync::Arc;

/// Suffix of missingness-flag columns.
pub const FLAG_SUFFIX: &str = "__missing";

const DROP: ParamDecl = ParamDecl {
    name: "drop_share",
    kind: ParamKind::Real {
        min: 0.0,
        max: 1.0,
        open_min: false,
    },
    default: 1.0,
    help: "drop indicators missing in more than this share of training rows",
};
const FLAGS: ParamDecl = ParamDecl {
    name: "flags",
    kind: ParamKind::Int { min: 0, max: 1 },
    default: 0.0,
    help: "1: add a 0/1 missingness column per indicator with gaps",
};

pub const OPTIONS: &[OptionDecl] = &[
    OptionDecl {
        name: "mean",
        params: &[DROP, FLAGS],
        help: "training-row mean of the indicator",
        weighted: true,
    },
    OptionDecl {
        name: "median",
        params: &[DROP, FLAGS],
        help: "training-row median of the indicator",
        weighted: true,
    },
    OptionDecl {
        name: "knn",
        params: &[
            ParamDecl {
                name: "k",
                kind: ParamKind::Int { min: 1, max: 1000 },
                default: 5.0,
                help: "neighbours averaged",
            },
            DROP,
            FLAGS,
        ],
        help: "mean of the k nearest training rows (nan-euclidean distance)",
        weighted: true,
    },
];

#[derive(Clone, Copy)]
enum Rule {
    Mean,
    Median,
    Knn(usize),
}

struct Fill {
    rule: Rule,
    drop_share: f64,
    flags: bool,
}

/// A fitted fill: kept columns, their fill values or donors, and the flag columns.
struct FittedFill {
    keep: Vec<usize>,
    /// Constant fill per kept column (also the kNN fallback).
    values: Vec<f64>,
    /// kNN donors: the training rows (kept columns only) and k.
    donors: Option<(Array2<f64>, usize)>,
    /// Kept-column positions that get a flag column.
    flagged: Vec<usize>,
    names: Vec<String>,
}

pub fn build(c: &Choice) -> Result<Arc<dyn Stage>, String> {
    let rule = match c.option.as_str() {
        "mean" => Rule::Mean,
        "median" => Rule::Median,
        "knn" => Rule::Knn(c.param("k").ok_or("knn needs k")? as usize),
        o => return Err(format!("unknown fill `{o}`")),
    };
    Ok(Arc::new(Fill {
        rule,
        drop_share: c.param("drop_share").unwrap_or(1.0),
        flags: c.param("flags").unwrap_or(0.0) >= 1.0,
    }))
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

/// scikit-learn's nan-euclidean distance; None when no coordinate is present in both.
pub fn nan_euclidean(a: ArrayView1<f64>, b: ArrayView1<f64>) -> Option<f64> {
    let (mut s, mut m) = (0.0, 0usize);
    for (x, y) in a.iter().zip(b.iter()) {
        if !x.is_nan() && !y.is_nan() {
            s += (x - y) * (x - y);
            m += 1;
        }
    }
    (m > 0).then(|| (a.len() as f64 / m as f64 * s).sqrt())
}

impl Stage for Fill {
    fn fit(&self, input: &StageInput) -> Result<Arc<dyn Fitted>, FitError> {
        let n = input.x.nrows().max(1) as f64;
        let mut keep = Vec::new();
        let mut values = Vec::new();
        let mut flagged = Vec::new();
        for (j, col) in input.x.axis_iter(Axis(1)).enumerate() {
            let mut p = present(col);
            let missing_share = 1.0 - p.len() as f64 / n;
            if missing_share > self.drop_share {
                continue;
            }
            let v = if p.is_empty() {
                0.0
            } else {
                match self.rule {
                    Rule::Median => median(&mut p),
                    Rule::Mean | Rule::Knn(_) => p.iter().sum::<f64>() / p.len() as f64,
                }
            };
            if self.flags && missing_share > 0.0 {
                flagged.push(keep.len());
            }
            keep.push(j);
            values.push(v);
        }
        if keep.is_empty() {
            return Err(FitError::Invalid(format!(
                "the drop rule (drop_share = {}) leaves no indicator",
                self.drop_share
            )));
        }
        let mut names: Vec<String> = keep.iter().map(|&j| input.names[j].clone()).collect();
        for &f in &flagged {
            names.push(format!("{}{FLAG_SUFFIX}", names[f]));
        }
        let donors = match self.rule {
            Rule::Knn(k) => Some((input.x.select(Axis(1), &keep), k)),
            _ => None,
        };
        Ok(Arc::new(FittedFill {
            keep,
            values,
            donors,
            flagged,
            names,
        }))
    }
}

impl Fitted for FittedFill {
    fn apply(&self, x: ArrayView2<f64>) -> Array2<f64> {
        let kept = x.select(Axis(1), &self.keep);
        let p = self.keep.len();
        let mut out = Array2::zeros((x.nrows(), p + self.flagged.len()));
        for (i, row) in kept.axis_iter(Axis(0)).enumerate() {
            // Distances to every donor, once per row that has gaps.
            let dist: Option<Vec<Option<f64>>> = match &self.donors {
                Some((d, _)) if row.iter().any(|v| v.is_nan()) => Some(
                    d.axis_iter(Axis(0))
                        .map(|r| nan_euclidean(row, r))
                        .collect(),
                ),
                _ => None,
            };
            for j in 0..p {
                let v = row[j];
                out[[i, j]] = if !v.is_nan() {
                    v
                } else if let (Some(dist), Some((d, k))) = (&dist, &self.donors) {
                    let mut cand: Vec<(f64, usize)> = dist
                        .iter()
                        .enumerate()
                        .filter_map(|(r, dd)| dd.filter(|_| !d[[r, j]].is_nan()).map(|dd| (dd, r)))
                        .collect();
                    cand.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
                    cand.truncate(*k);
                    if cand.is_empty() {
                        self.values[j]
                    } else {
                        cand.iter().map(|&(_, r)| d[[r, j]]).sum::<f64>() / cand.len() as f64
                    }
                } else {
                    self.values[j]
                };
            }
            for (f, &j) in self.flagged.iter().enumerate() {
                out[[i, p + f]] = if row[j].is_nan() { 1.0 } else { 0.0 };
            }
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

    fn input<'a>(
        x: &'a Array2<f64>,
        y: &'a ndarray::Array1<f64>,
        names: &'a [String],
        rows: &'a [usize],
    ) -> StageInput<'a> {
        StageInput {
            x: x.view(),
            y: y.view(),
            rows,
            names,
        }
    }

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
        let mk = |rule| Fill {
            rule,
            drop_share: 1.0,
            flags: false,
        };
        let mean = mk(Rule::Mean).fit(&input(&x, &y, &names, &rows)).unwrap();
        let med = mk(Rule::Median).fit(&input(&x, &y, &names, &rows)).unwrap();
        let test = array![[f64::NAN, f64::NAN]];
        // Hand-checked: mean(1,3,5) = 3, mean(4,10) = 7; median(1,3,5) = 3, median(4,10) = 7.
        assert_eq!(mean.apply(test.view()), array![[3.0, 7.0]]);
        assert_eq!(med.apply(test.view()), array![[3.0, 7.0]]);
        let mut v = vec![5.0, 1.0, 4.0, 100.0];
        assert_eq!(median(&mut v), 4.5);
    }

    #[test]
    fn drop_rule_and_flags() {
        // Column b is missing in 2 of 4 training rows (share 0.5).
        let x = array![[1.0, f64::NAN], [2.0, 4.0], [3.0, 10.0], [5.0, f64::NAN]];
        let names = vec!["a".to_string(), "b".to_string()];
        let y = array![0.0, 0.0, 0.0, 0.0];
        let rows = [0, 1, 2, 3];
        let dropped = Fill {
            rule: Rule::Mean,
            drop_share: 0.4,
            flags: false,
        }
        .fit(&input(&x, &y, &names, &rows))
        .unwrap();
        assert_eq!(dropped.names(), &["a".to_string()]);
        let flagged = Fill {
            rule: Rule::Mean,
            drop_share: 0.5,
            flags: true,
        }
        .fit(&input(&x, &y, &names, &rows))
        .unwrap();
        assert_eq!(
            flagged.names(),
            &["a".to_string(), "b".to_string(), "b__missing".to_string()]
        );
        assert_eq!(
            flagged.apply(array![[9.0, f64::NAN]].view()),
            array![[9.0, 7.0, 1.0]]
        );
    }

    #[test]
    fn nan_euclidean_matches_the_documented_formula() {
        // scikit-learn's docs example for nan_euclidean_distances: X = [[0, 1], [1, nan]],
        // distance = sqrt(2 / 1 * (0 - 1)^2) = sqrt(2).
        let d = nan_euclidean(array![0.0, 1.0].view(), array![1.0, f64::NAN].view()).unwrap();
        assert!((d - 2f64.sqrt()).abs() < 1e-15);
        assert!(nan_euclidean(array![f64::NAN].view(), array![1.0].view()).is_none());
    }
}
