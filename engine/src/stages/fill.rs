//! Gap filling, fitted on the training rows: one rule for every indicator of a spec's
//! pool. The fill runs below the pool (pool -> fill -> scale -> compress), so it sees only
//! the pool's indicators: the drop rule, the flags, kNN distances and chained regressions
//! read nothing outside the pool.
//!
//! * `mean`, `median`: the training-row mean or median of the indicator.
//! * `knn`: the mean of the k nearest training rows that have the indicator, with
//!   distances over the indicators both rows have, scaled up for the ones missing
//!   (scikit-learn's `KNNImputer` with its nan-euclidean distance:
//!   sqrt(p / present * sum of squared differences)). Distances use the raw indicator
//!   values, as in scikit-learn, so indicators on large scales weigh more. A row with no
//!   usable donor gets the training mean.
//! * `carry`: a gap takes the value of the same unit's nearest wave (ties: the earlier)
//!   among the rows being transformed together, else the training median. With grouped
//!   folds a unit's rows are all on one side, so a test row borrows only from its own
//!   unit's test rows: its fill depends on the other rows of its unit, never on another
//!   unit's rows.
//! * `chained`: start from the training means; then, `rounds` times, each column with gaps
//!   (fewest gaps first) is regressed (ridge) on the other columns over the training rows
//!   where it is observed, and its gaps are replaced by the predictions. Applied to new
//!   rows, the fitted regressions run in the same order, each row on its own (a row's fill
//!   depends on that row's values only, bit for bit).
//!
//! Every rule also takes `drop_share` (indicators missing in more than this share of the
//! training rows are dropped; default 1: keep all) and `flags` (1: append a 0/1 column
//! `NAME__missing` for each kept indicator that has gaps in the training rows).
//!
//! An indicator with no value at all in a fold's training rows has nothing to fill from:
//! it is dropped for that fold, whatever `drop_share` says (as scikit-learn's imputers
//! drop empty features), and the fit records a note naming it, which the sweep writes to
//! the spec's `notes`. Later stages match indicators by name (pools) or fit on what they
//! are given, so a column absent in one fold is absent from that fold's chain only.

use super::{present, Fitted, Stage, StageInput};
use crate::error::FitError;
use crate::space::{Choice, OptionDecl, ParamDecl, ParamKind};
use ndarray::{Array2, ArrayView1, ArrayView2, Axis, ShapeBuilder};
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
    OptionDecl {
        name: "carry",
        params: &[DROP, FLAGS],
        help: "a unit's gap from its own nearest wave; else the training median",
        weighted: true,
    },
    OptionDecl {
        name: "chained",
        params: &[
            ParamDecl {
                name: "rounds",
                kind: ParamKind::Int { min: 1, max: 100 },
                default: 5.0,
                help: "rounds over the indicators with gaps",
            },
            ParamDecl {
                name: "alpha",
                kind: ParamKind::Real {
                    min: 0.0,
                    max: 1e12,
                    open_min: true,
                },
                default: 1.0,
                help: "ridge penalty of each regression",
            },
            DROP,
            FLAGS,
        ],
        help: "chained ridge regressions (iterative imputation), seeded from the mean",
        weighted: true,
    },
];

#[derive(Clone, Copy)]
enum Rule {
    Mean,
    Median,
    Knn(usize),
    Chained {
        rounds: usize,
        alpha: f64,
    },
    /// Within-unit carry, then the training median.
    Carry,
}

/// Unit and wave position of every panel row (for within-unit carry).
#[derive(Clone)]
struct Waves {
    unit: Arc<Vec<usize>>,
    pos: Arc<Vec<f64>>,
}

impl Waves {
    fn of(panel: &crate::panel::Panel) -> Waves {
        let labels: Vec<String> = panel
            .row_wave
            .iter()
            .map(|w| w.clone().unwrap_or_default())
            .collect();
        let numeric: Option<Vec<f64>> = labels.iter().map(|l| l.parse::<f64>().ok()).collect();
        let pos = numeric.unwrap_or_else(|| {
            let mut sorted: Vec<&String> = labels.iter().collect();
            sorted.sort();
            sorted.dedup();
            labels
                .iter()
                .map(|l| sorted.iter().position(|s| *s == l).unwrap_or(0) as f64)
                .collect()
        });
        Waves {
            unit: Arc::new(panel.row_unit.clone()),
            pos: Arc::new(pos),
        }
    }
}

/// One step of a chained fill: column `col` regressed on the other kept columns.
struct ChainStep {
    col: usize,
    model: crate::models::linear::Linear,
}

impl ChainStep {
    /// The regression's prediction for one row (its column `col` ignored): the intercept
    /// plus the products summed in column order. Each row is predicted on its own, in the
    /// same order whatever the other rows of the batch are, so a row's fill never depends
    /// on which other rows have gaps (a batched matrix product sums differently for one row
    /// than for several).
    fn predict_row(&self, row: ArrayView1<f64>) -> f64 {
        let mut s = 0.0;
        let mut k = 0;
        for (c, v) in row.iter().enumerate() {
            if c != self.col {
                s += v * self.model.coef[k];
                k += 1;
            }
        }
        s + self.model.intercept
    }
}

struct Fill {
    rule: Rule,
    drop_share: f64,
    flags: bool,
    waves: Option<Waves>,
}

/// A fitted fill: kept columns, their fill values or donors, and the flag columns.
struct FittedFill {
    keep: Vec<usize>,
    /// Constant fill per kept column (also the kNN fallback).
    values: Vec<f64>,
    /// kNN donors: the training rows (kept columns only), k, and their masked forms.
    donors: Option<Donors>,
    /// Kept-column positions that get a flag column.
    flagged: Vec<usize>,
    /// Chained fill: the regressions, in the order they are applied.
    chain: Vec<ChainStep>,
    /// Within-unit carry: units and wave positions of the panel rows.
    waves: Option<Waves>,
    names: Vec<String>,
    /// Indicators dropped for having no training value.
    notes: Vec<String>,
}

pub fn build(c: &Choice) -> Result<Arc<dyn Stage>, String> {
    build_with(c, None)
}

/// The donors of a kNN fill with the masked matrices its distances need, made once at
/// fit time: d0 (gaps set to 0), d0^2 and the 0/1 present mask nd.
struct Donors {
    d: Array2<f64>,
    k: usize,
    d0: Array2<f64>,
    d0_sq: Array2<f64>,
    nd: Array2<f64>,
}

impl Donors {
    fn new(d: Array2<f64>, k: usize) -> Donors {
        let d0 = d.mapv(|v| if v.is_nan() { 0.0 } else { v });
        let nd = d.mapv(|v| if v.is_nan() { 0.0 } else { 1.0 });
        let d0_sq = &d0 * &d0;
        Donors {
            d,
            k,
            d0,
            d0_sq,
            nd,
        }
    }
}

/// Build a fill; within-unit carry needs the panel (units and waves of its rows).
pub fn build_with(
    c: &Choice,
    panel: Option<&crate::panel::Panel>,
) -> Result<Arc<dyn Stage>, String> {
    let rule = match c.option.as_str() {
        "carry" => Rule::Carry,
        "mean" => Rule::Mean,
        "median" => Rule::Median,
        "knn" => Rule::Knn(c.param("k").ok_or("knn needs k")? as usize),
        "chained" => Rule::Chained {
            rounds: c.param("rounds").ok_or("chained needs rounds")? as usize,
            alpha: c.param("alpha").ok_or("chained needs alpha")?,
        },
        o => return Err(format!("unknown fill `{o}`")),
    };
    let waves = match rule {
        Rule::Carry => Some(Waves::of(
            panel.ok_or("fill `carry` needs the panel's units and waves")?,
        )),
        _ => None,
    };
    Ok(Arc::new(Fill {
        rule,
        drop_share: c.param("drop_share").unwrap_or(1.0),
        flags: c.param("flags").unwrap_or(0.0) >= 1.0,
        waves,
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
        let mut empty = Vec::new();
        for (j, col) in input.x.axis_iter(Axis(1)).enumerate() {
            let mut p = present(col);
            let missing_share = 1.0 - p.len() as f64 / n;
            if missing_share > self.drop_share {
                continue;
            }
            if p.is_empty() {
                empty.push(input.names[j].as_str());
                continue;
            }
            let v = match self.rule {
                Rule::Median | Rule::Carry => median(&mut p),
                Rule::Mean | Rule::Knn(_) | Rule::Chained { .. } => {
                    p.iter().sum::<f64>() / p.len() as f64
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
                "the drop rule (drop_share = {}) and indicators without a training value leave no indicator",
                self.drop_share
            )));
        }
        let notes = empty
            .iter()
            .map(|name| format!("`{name}` has no value in the training rows: dropped"))
            .collect();
        let mut names: Vec<String> = keep.iter().map(|&j| input.names[j].clone()).collect();
        for &f in &flagged {
            names.push(format!("{}{FLAG_SUFFIX}", names[f]));
        }
        let donors = match self.rule {
            Rule::Knn(k) => Some(Donors::new(input.x.select(Axis(1), &keep), k)),
            _ => None,
        };
        let chain = match self.rule {
            Rule::Chained { rounds, alpha } => fit_chain(
                input.x.select(Axis(1), &keep).view(),
                &values,
                rounds,
                alpha,
            )?,
            _ => Vec::new(),
        };
        Ok(Arc::new(FittedFill {
            keep,
            values,
            donors,
            flagged,
            names,
            chain,
            waves: self.waves.clone(),
            notes,
        }))
    }
}

/// Chained fill: start from the means; then, `rounds` times, for each column with gaps in
/// ascending order of its number of gaps (scikit-learn IterativeImputer's default order),
/// regress it on the other columns over the rows where it is observed and replace its
/// gaps by the predictions.
fn fit_chain(
    x: ArrayView2<f64>,
    means: &[f64],
    rounds: usize,
    alpha: f64,
) -> Result<Vec<ChainStep>, FitError> {
    let missing: Vec<Vec<usize>> = x
        .axis_iter(Axis(1))
        .map(|c| (0..c.len()).filter(|&i| c[i].is_nan()).collect())
        .collect();
    let mut order: Vec<usize> = (0..x.ncols()).filter(|&j| !missing[j].is_empty()).collect();
    order.sort_by_key(|&j| (missing[j].len(), j));
    let mut cur = x.to_owned();
    for (j, mut col) in cur.axis_iter_mut(Axis(1)).enumerate() {
        col.mapv_inplace(|v| if v.is_nan() { means[j] } else { v });
    }
    let mut steps = Vec::new();
    for _ in 0..rounds {
        for &j in &order {
            let observed: Vec<usize> = (0..x.nrows()).filter(|&i| !x[[i, j]].is_nan()).collect();
            let others: Vec<usize> = (0..x.ncols()).filter(|&c| c != j).collect();
            if observed.len() < 2 || others.is_empty() {
                continue;
            }
            let xo = cur.select(Axis(0), &observed).select(Axis(1), &others);
            let yo: ndarray::Array1<f64> = observed.iter().map(|&i| x[[i, j]]).collect();
            let w = ndarray::Array1::ones(observed.len());
            let model = crate::models::linear::Ridge { alpha }.fit_linear(
                xo.view(),
                yo.view(),
                w.view(),
            )?;
            let step = ChainStep { col: j, model };
            for &i in &missing[j] {
                cur[[i, j]] = step.predict_row(cur.row(i));
            }
            steps.push(step);
        }
    }
    Ok(steps)
}

impl FittedFill {
    /// Apply the chained regressions to rows already filled with the means; only the
    /// cells in `gaps` change.
    fn run_chain(&self, filled: &mut Array2<f64>, gaps: &Array2<bool>) {
        for step in &self.chain {
            for i in 0..filled.nrows() {
                if gaps[[i, step.col]] {
                    filled[[i, step.col]] = step.predict_row(filled.row(i));
                }
            }
        }
    }
}

impl FittedFill {
    /// Fill each gap of a row from the nearest wave (ties: the earlier) of the same unit
    /// among the rows being transformed that have the value. With grouped folds a unit's
    /// rows are all on one side, so a test row only borrows from its own unit's test rows
    /// (indicator values, never outcomes).
    fn carry(&self, x: ArrayView2<f64>, rows: &[usize], w: &Waves) -> Array2<f64> {
        let mut out = x.to_owned();
        for i in 0..x.nrows() {
            for j in 0..x.ncols() {
                if !x[[i, j]].is_nan() {
                    continue;
                }
                let (u, at) = (w.unit[rows[i]], w.pos[rows[i]]);
                let mut best: Option<(f64, f64, f64)> = None; // (distance, position, value)
                for k in 0..x.nrows() {
                    if k == i || w.unit[rows[k]] != u || x[[k, j]].is_nan() {
                        continue;
                    }
                    let cand = ((w.pos[rows[k]] - at).abs(), w.pos[rows[k]], x[[k, j]]);
                    if best.is_none_or(|b| (cand.0, cand.1) < (b.0, b.1)) {
                        best = Some(cand);
                    }
                }
                if let Some((_, _, v)) = best {
                    out[[i, j]] = v;
                }
            }
        }
        out
    }
}

impl Fitted for FittedFill {
    fn apply_rows(&self, x: ArrayView2<f64>, rows: Option<&[usize]>) -> Array2<f64> {
        match (&self.waves, rows) {
            (Some(w), Some(rows)) if rows.len() == x.nrows() => {
                let carried = self.carry(x, rows, w);
                let mut out = self.apply(carried.view());
                // Flags mark the original gaps, carried or not.
                let p = self.keep.len();
                for (f, &j) in self.flagged.iter().enumerate() {
                    for i in 0..x.nrows() {
                        out[[i, p + f]] = if x[[i, self.keep[j]]].is_nan() {
                            1.0
                        } else {
                            0.0
                        };
                    }
                }
                out
            }
            _ => self.apply(x),
        }
    }

    fn apply(&self, x: ArrayView2<f64>) -> Array2<f64> {
        let kept = x.select(Axis(1), &self.keep);
        let p = self.keep.len();
        // Column-major, the layout the pool's selection gave the later stages when the pool
        // ran after the fill (they sum in memory order, so the layout is part of the result).
        let mut out = Array2::zeros((x.nrows(), p + self.flagged.len()).f());
        // Nan-euclidean distances of every row with gaps to every donor, by matrix
        // products over the present-value masks:
        //   sum over coordinates present in both of (a - d)^2
        //     = (a0^2) . Nd^T + Ma . (d0^2)^T - 2 a0 . d0^T,  count = Ma . Nd^T,
        // with a0, d0 the values with gaps set to 0 and Ma, Nd the 0/1 present masks.
        let dists: Option<(Vec<usize>, Array2<f64>)> = self.donors.as_ref().map(|dn| {
            let gap_rows: Vec<usize> = (0..kept.nrows())
                .filter(|&i| kept.row(i).iter().any(|v| v.is_nan()))
                .collect();
            let a = kept.select(Axis(0), &gap_rows);
            let a0 = a.mapv(|v| if v.is_nan() { 0.0 } else { v });
            let ma = a.mapv(|v| if v.is_nan() { 0.0 } else { 1.0 });
            let s = (&a0 * &a0).dot(&dn.nd.t()) + ma.dot(&dn.d0_sq.t()) - 2.0 * a0.dot(&dn.d0.t());
            let c = ma.dot(&dn.nd.t());
            let pf = p as f64;
            let dist = ndarray::Zip::from(&s).and(&c).map_collect(|s, c| {
                if *c > 0.0 {
                    (pf / c * s.max(0.0)).sqrt()
                } else {
                    f64::NAN
                }
            });
            (gap_rows, dist)
        });
        // Donors of the current gap row with a distance, by (distance, row): the `near`
        // nearest sorted at the front. A gap takes the mean of the k nearest donors that
        // have its column, summed nearest first; they are almost always among the `near`,
        // and the whole list is searched when they are not (the same donors either way).
        let mut cand: Vec<(f64, usize)> = Vec::new();
        let by_distance =
            |a: &(f64, usize), b: &(f64, usize)| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1));
        let mut gap_pos = 0usize;
        for (i, row) in kept.axis_iter(Axis(0)).enumerate() {
            let mut near = 0usize;
            let knn = match (&dists, &self.donors) {
                (Some((rows, dm)), Some(dn)) if gap_pos < rows.len() && rows[gap_pos] == i => {
                    cand.clear();
                    cand.extend(
                        dm.row(gap_pos)
                            .iter()
                            .enumerate()
                            .filter(|(_, v)| !v.is_nan())
                            .map(|(r, v)| (*v, r)),
                    );
                    gap_pos += 1;
                    near = cand.len().min(4 * dn.k + 8);
                    if near > 0 && near < cand.len() {
                        cand.select_nth_unstable_by(near - 1, by_distance);
                    }
                    cand[..near].sort_unstable_by(by_distance);
                    Some(dn)
                }
                _ => None,
            };
            for j in 0..p {
                let v = row[j];
                out[[i, j]] = if !v.is_nan() {
                    v
                } else if let Some(dn) = knn {
                    let (d, k) = (&dn.d, dn.k);
                    let mut chosen: Vec<usize> = cand[..near]
                        .iter()
                        .filter(|&&(_, r)| !d[[r, j]].is_nan())
                        .take(k)
                        .map(|&(_, r)| r)
                        .collect();
                    if chosen.len() < k && near < cand.len() {
                        let mut all: Vec<(f64, usize)> = cand
                            .iter()
                            .filter(|&&(_, r)| !d[[r, j]].is_nan())
                            .copied()
                            .collect();
                        if all.len() > k {
                            all.select_nth_unstable_by(k - 1, by_distance);
                            all.truncate(k);
                        }
                        all.sort_unstable_by(by_distance);
                        chosen = all.iter().map(|&(_, r)| r).collect();
                    }
                    if chosen.is_empty() {
                        self.values[j]
                    } else {
                        chosen.iter().map(|&r| d[[r, j]]).sum::<f64>() / chosen.len() as f64
                    }
                } else {
                    self.values[j]
                };
            }
            for (f, &j) in self.flagged.iter().enumerate() {
                out[[i, p + f]] = if row[j].is_nan() { 1.0 } else { 0.0 };
            }
        }
        if !self.chain.is_empty() {
            let gaps = kept.mapv(f64::is_nan);
            let mut filled = out.slice(ndarray::s![.., ..p]).to_owned();
            self.run_chain(&mut filled, &gaps);
            out.slice_mut(ndarray::s![.., ..p]).assign(&filled);
        }
        out
    }
    fn names(&self) -> &[String] {
        &self.names
    }
    fn notes(&self) -> Vec<String> {
        self.notes.clone()
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
            waves: None,
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
            waves: None,
        }
        .fit(&input(&x, &y, &names, &rows))
        .unwrap();
        assert_eq!(dropped.names(), &["a".to_string()]);
        let flagged = Fill {
            rule: Rule::Mean,
            drop_share: 0.5,
            flags: true,
            waves: None,
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

    /// A gap takes the k nearest donors that have its column, whether they are among the
    /// first nearest (the fast path) or further out (the full search). Worked by hand:
    /// donor r has a = r + 1; the test row has only a = 0, so donors rank by a. With b
    /// present only from donor 30 on, the two nearest with b are 30 and 31 (b = 130, 131),
    /// beyond the 4k + 8 = 16 nearest; with b present at donors 5 and 9 as well, those two.
    #[test]
    fn knn_fill_finds_donors_with_the_column_near_or_far() {
        let names = vec!["a".to_string(), "b".to_string()];
        let mk_donors = |near_b: bool| {
            Array2::from_shape_fn((40, 2), |(r, j)| match j {
                0 => r as f64 + 1.0,
                _ if r >= 30 || (near_b && (r == 5 || r == 9)) => 100.0 + r as f64,
                _ => f64::NAN,
            })
        };
        let rows: Vec<usize> = (0..40).collect();
        let y = ndarray::Array1::zeros(40);
        let stage = Fill {
            rule: Rule::Knn(2),
            drop_share: 1.0,
            flags: false,
            waves: None,
        };
        for (near_b, want) in [(false, 130.5), (true, 107.0)] {
            let x = mk_donors(near_b);
            let f = stage.fit(&input(&x, &y, &names, &rows)).unwrap();
            let out = f.apply(array![[0.0, f64::NAN]].view());
            assert_eq!(out[[0, 1]], want, "b present near: {near_b}");
            assert_eq!(out[[0, 0]], 0.0);
        }
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

#[cfg(test)]
mod chained_tests {
    use super::*;
    use ndarray::array;

    #[test]
    fn chained_fill_recovers_a_linear_relation() {
        // b = 2a + 1 exactly on the observed rows; c is unrelated noise. A small ridge
        // penalty (alpha = 1e-6) makes the regression of b on (a, c) nearly exact, so the
        // gaps of b are filled with ~2a + 1 (worked by hand: a = 3 -> 7, a = 10 -> 21),
        // where a mean fill would give mean(b) = 9.
        let x = array![
            [1.0, 3.0, 0.3],
            [2.0, 5.0, -0.1],
            [3.0, f64::NAN, 0.2],
            [4.0, 9.0, 0.0],
            [5.0, 11.0, 0.4],
            [6.0, 13.0, -0.3],
            [7.0, 15.0, 0.1],
            [8.0, 17.0, 0.2],
        ];
        let names: Vec<String> = ["a", "b", "c"].iter().map(|s| s.to_string()).collect();
        let y = ndarray::Array1::zeros(8);
        let rows: Vec<usize> = (0..8).collect();
        let stage = Fill {
            rule: Rule::Chained {
                rounds: 3,
                alpha: 1e-6,
            },
            drop_share: 1.0,
            flags: false,
            waves: None,
        };
        let f = stage
            .fit(&StageInput {
                x: x.view(),
                y: y.view(),
                rows: &rows,
                names: &names,
            })
            .unwrap();
        let out = f.apply(x.view());
        assert!((out[[2, 1]] - 7.0).abs() < 0.01, "{}", out[[2, 1]]);
        let new = f.apply(array![[10.0, f64::NAN, 0.0]].view());
        assert!((new[[0, 1]] - 21.0).abs() < 0.02, "{}", new[[0, 1]]);
        assert_eq!(new[[0, 0]], 10.0);
    }
}

#[cfg(test)]
mod chained_row_tests {
    use super::*;

    /// A row's chained fill is the same, bit for bit, whether the row is filled alone or
    /// in a batch with other rows that have gaps in the same or other columns (a batched
    /// matrix product sums a one-row batch in another order than a many-row one).
    #[test]
    fn chained_fill_of_a_row_does_not_depend_on_the_batch() {
        let (n, p) = (40, 12);
        let mut s = 7u64;
        let mut next = || {
            s = s
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (s >> 11) as f64 / (1u64 << 53) as f64
        };
        let x = Array2::from_shape_fn((n, p), |(i, j)| {
            let v = (i as f64 * 0.37 + j as f64 * 1.3).sin() * 10.0 + next();
            if (i * 5 + j * 3) % 7 == 0 {
                f64::NAN
            } else {
                v
            }
        });
        let names: Vec<String> = (0..p).map(|j| format!("x{j}")).collect();
        let y = ndarray::Array1::zeros(n);
        let rows: Vec<usize> = (0..n).collect();
        let stage = Fill {
            rule: Rule::Chained {
                rounds: 3,
                alpha: 0.5,
            },
            drop_share: 1.0,
            flags: false,
            waves: None,
        };
        let f = stage
            .fit(&StageInput {
                x: x.view(),
                y: y.view(),
                rows: &rows,
                names: &names,
            })
            .unwrap();
        let batch = f.apply(x.view());
        let mut gaps = 0;
        for i in 0..n {
            let alone = f.apply(x.slice(ndarray::s![i..i + 1, ..]));
            for j in 0..p {
                gaps += usize::from(x[[i, j]].is_nan());
                assert_eq!(
                    alone[[0, j]].to_bits(),
                    batch[[i, j]].to_bits(),
                    "row {i} column {j}: {} alone, {} in the batch",
                    alone[[0, j]],
                    batch[[i, j]]
                );
            }
        }
        assert!(gaps > 50, "{gaps} gaps");
    }
}

#[cfg(test)]
mod carry_tests {
    use super::*;
    use ndarray::array;

    #[test]
    fn carry_takes_the_units_nearest_wave_then_the_median() {
        // Rows: unit 0 waves 2019, 2021, 2024; unit 1 wave 2021. Worked by hand:
        // unit 0's gap at 2021 takes 2019's value 1 (|2021-2019| = 2 < |2024-2021| = 3);
        // unit 1 has no other wave, so it takes the training median of (1, 5) = 3.
        let x = array![[1.0], [f64::NAN], [5.0], [f64::NAN]];
        let w = Waves {
            unit: Arc::new(vec![0, 0, 0, 1]),
            pos: Arc::new(vec![2019.0, 2021.0, 2024.0, 2021.0]),
        };
        let stage = Fill {
            rule: Rule::Carry,
            drop_share: 1.0,
            flags: true,
            waves: Some(w),
        };
        let names = vec!["a".to_string()];
        let y = ndarray::Array1::zeros(4);
        let rows = [0, 1, 2, 3];
        let f = stage
            .fit(&StageInput {
                x: x.view(),
                y: y.view(),
                rows: &rows,
                names: &names,
            })
            .unwrap();
        let out = f.apply_rows(x.view(), Some(&rows));
        assert_eq!(out.column(0).to_vec(), vec![1.0, 1.0, 5.0, 3.0]);
        assert_eq!(
            out.column(1).to_vec(),
            vec![0.0, 1.0, 0.0, 1.0],
            "flags mark original gaps"
        );
        // Without row identity (new raw rows): the median.
        assert_eq!(
            f.apply(x.view()).column(0).to_vec(),
            vec![1.0, 3.0, 5.0, 3.0]
        );
    }
}
