//! Choice influence, on the error and on conclusions.
//!
//! * Error by choice (every other dimension varying) and by parameter value: five-number
//!   summaries.
//! * Each dimension's share of the error's variance across specs: the LMG decomposition
//!   (Lindeman, Merenda & Gold 1980; Groemping 2006) of the R^2 of an OLS regression of
//!   the error on the dummy-coded dimensions (a dimension's levels are its choices with
//!   their parameters): each dimension's part is its increase in R^2 when added, averaged
//!   over all orderings of the dimensions. Computed from every subset's R^2 (2^d subset
//!   regressions), it does not depend on the order of the dimensions and stays right for
//!   sampled spaces, exclusions and unbalanced designs, where shares from one sequential
//!   regression or from balanced-design formulas would not. The parts sum to the R^2 of
//!   the full model; what remains (1 - R^2) is interaction between choices.
//! * The same for each indicator's (group's) rank, and by choice its median rank and
//!   share of specs where it is top-k: which choice moves it in or out of the top k.

use super::data::KindTable;
use super::model::{ChoiceSummary, DimensionChoices, ParamSummary, RankByChoice, RankShare, Share};
use super::stats::{median, spread, LmgDesign};

/// Error summaries by choice of every varying dimension.
pub fn error_by_choice(
    dims: &[DimensionChoices],
    choices: &[Vec<usize>],
    err: &[f64],
) -> Vec<ChoiceSummary> {
    let mut out = Vec::new();
    for (d, dim) in dims.iter().enumerate() {
        let mut groups: Vec<Vec<f64>> = vec![Vec::new(); dim.choices.len()];
        for (s, c) in choices.iter().enumerate() {
            groups[c[d]].push(err[s]);
        }
        for (c, g) in groups.iter().enumerate() {
            out.push(ChoiceSummary {
                dimension: dim.dimension.clone(),
                choice: dim.choices[c].clone(),
                error: spread(g),
            });
        }
    }
    out
}

/// Error summaries by value of every parameter column (specs taking that option).
pub fn error_by_param(
    params: &[(String, String, Vec<Option<f64>>)],
    err: &[f64],
) -> Vec<ParamSummary> {
    let mut out = Vec::new();
    for (opt, name, vals) in params {
        let mut distinct: Vec<f64> = vals.iter().flatten().copied().collect();
        distinct.sort_by(f64::total_cmp);
        distinct.dedup();
        if distinct.len() < 2 {
            continue;
        }
        for v in distinct {
            let g: Vec<f64> = vals
                .iter()
                .zip(err)
                .filter(|(x, _)| **x == Some(v))
                .map(|(_, e)| *e)
                .collect();
            out.push(ParamSummary {
                option: opt.clone(),
                param: name.clone(),
                value: v,
                error: spread(&g),
            });
        }
    }
    out
}

/// Levels per factor for the rows `rows` (indices into `choices`).
fn levels(choices: &[Vec<usize>], rows: &[usize], n_dims: usize) -> Vec<Vec<usize>> {
    (0..n_dims)
        .map(|d| rows.iter().map(|&s| choices[s][d]).collect())
        .collect()
}

/// LMG shares of the error over the varying dimensions.
pub fn error_shares(dims: &[DimensionChoices], choices: &[Vec<usize>], err: &[f64]) -> Vec<Share> {
    let rows: Vec<usize> = (0..err.len()).collect();
    let design = LmgDesign::new(&levels(choices, &rows, dims.len()));
    let r = design.decompose(err);
    dims.iter()
        .enumerate()
        .map(|(d, dim)| Share {
            dimension: dim.dimension.clone(),
            lmg: r.parts.get(d).copied().unwrap_or(0.0),
            share: if r.r2_total > 0.0 {
                r.parts.get(d).copied().unwrap_or(0.0) / r.r2_total
            } else {
                0.0
            },
            r2_total: r.r2_total,
            r2_alone: r.alone.get(d).copied().unwrap_or(0.0),
        })
        .collect()
}

/// Rank by choice and LMG shares of the rank, for every name of one kind table.
/// `choices` is indexed by spec (RunTables order).
pub fn rank_influence(
    kt: &KindTable,
    dims: &[DimensionChoices],
    choices: &[Vec<usize>],
    top_k: usize,
) -> (Vec<RankByChoice>, Vec<RankShare>) {
    let design = LmgDesign::new(&levels(choices, &kt.specs, dims.len()));
    let mut by_choice = Vec::new();
    let mut shares = Vec::new();
    for (j, name) in kt.names.iter().enumerate() {
        let ranks: Vec<f64> = (0..kt.specs.len())
            .map(|i| f64::from(kt.rank(i, j)))
            .collect();
        for (d, dim) in dims.iter().enumerate() {
            // (rank, top k) of each holding spec, by the option it took.
            let mut groups: Vec<Vec<(f64, bool)>> = vec![Vec::new(); dim.choices.len()];
            for (i, &s) in kt.specs.iter().enumerate() {
                groups[choices[s][d]].push((ranks[i], kt.is_top(i, j, top_k)));
            }
            for (c, g) in groups.iter().enumerate() {
                if g.is_empty() {
                    continue;
                }
                by_choice.push(RankByChoice {
                    level: kt.level.clone(),
                    kind: kt.kind.clone(),
                    name: name.clone(),
                    dimension: dim.dimension.clone(),
                    choice: dim.choices[c].clone(),
                    n: g.len(),
                    median_rank: median(&g.iter().map(|x| x.0).collect::<Vec<f64>>()),
                    share_top_k: g.iter().filter(|x| x.1).count() as f64 / g.len() as f64,
                });
            }
        }
        let r = design.decompose(&ranks);
        for (d, dim) in dims.iter().enumerate() {
            let part = r.parts.get(d).copied().unwrap_or(0.0);
            shares.push(RankShare {
                level: kt.level.clone(),
                kind: kt.kind.clone(),
                name: name.clone(),
                dimension: dim.dimension.clone(),
                lmg: part,
                share: if r.r2_total > 0.0 {
                    part / r.r2_total
                } else {
                    0.0
                },
                r2_total: r.r2_total,
            });
        }
    }
    (by_choice, shares)
}
