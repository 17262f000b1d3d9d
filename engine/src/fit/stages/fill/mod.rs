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

use super::{present, Fitted, Stage, StageInput, StageOption};
use crate::decl::{Choice, OptionDecl, ParamDecl, ParamKind, Registered};
use crate::error::FitError;
pub use crate::metrics::median;
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

pub const OPTIONS: &[StageOption] = &[
    Registered {
        decl: OptionDecl {
            name: "mean",
            params: &[DROP, FLAGS],
            help: "training-row mean of the indicator",
            weighted: true,
            excludes: &[],
        },
        build: |c, p| make(c, p, Rule::Mean),
    },
    Registered {
        decl: OptionDecl {
            name: "median",
            params: &[DROP, FLAGS],
            help: "training-row median of the indicator",
            weighted: true,
            excludes: &[],
        },
        build: |c, p| make(c, p, Rule::Median),
    },
    Registered {
        decl: OptionDecl {
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
            excludes: &[],
        },
        build: |c, p| make(c, p, Rule::Knn(c.param("k").ok_or("knn needs k")? as usize)),
    },
    Registered {
        decl: OptionDecl {
            name: "carry",
            params: &[DROP, FLAGS],
            help: "a unit's gap from its own nearest wave; else the training median",
            weighted: true,
            excludes: &[],
        },
        build: |c, p| make(c, p, Rule::Carry),
    },
    Registered {
        decl: OptionDecl {
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
            excludes: &[],
        },
        build: |c, p| {
            make(
                c,
                p,
                Rule::Chained {
                    rounds: c.param("rounds").ok_or("chained needs rounds")? as usize,
                    alpha: c.param("alpha").ok_or("chained needs alpha")?,
                },
            )
        },
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
    (crate::decl::lookup(OPTIONS, crate::decl::Dim::Fill, &c.option)?)(c, panel)
}

/// A fill of one rule with the parameters every rule shares.
fn make(
    c: &Choice,
    panel: Option<&crate::panel::Panel>,
    rule: Rule,
) -> Result<Arc<dyn Stage>, String> {
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
    fn reads_outcome(&self) -> bool {
        false
    }
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
mod tests;
