//! The report's SVG plots, drawn with plotters' SVG backend (no font file needed: the
//! backend writes `<text>` elements and the browser lays them out; plotters' own text
//! measure is only used for tick-label spacing).
//!
//! Plots (each a pure function of the [`Report`]; a plot with no data is left out):
//!
//! * `curve.svg`: every ok spec ranked by error with its bootstrap interval, and beneath it
//!   one row per choice marking which choice each spec took. Past [`CURVE_COLUMNS_MAX`]
//!   specs the ranks are binned into up to [`CURVE_BINS`] equal-count columns of at least
//!   [`CURVE_BIN_SPECS`] specs: each column shows
//!   the range of its errors, the band between its median lower and median upper bound,
//!   its median error, and per choice the share of its specs taking that choice.
//! * `error-influence.svg`: per dimension and choice, the error's spread (quartile box,
//!   median, range) with the rest varying, and each dimension's LMG share of R^2.
//! * `rank-influence-LEVEL-KIND.svg`: for the names with the best median rank, each
//!   dimension's LMG part of the variance of the name's rank, and the range of the name's
//!   top-k share across that dimension's choices.
//! * `importance-LEVEL-KIND.svg`: per name over the good set: importance spread (quartile
//!   box, median, empirical range), rank distribution, share top-k.
//! * `nested.svg`: naive best vs nested error vs baseline (report/nested.rs; only when
//!   the run has a nested estimate).
//! * `agreement-LEVEL-KIND.svg`: Kendall's tau-b between good members' importance orders,
//!   in blocks of members once there are more than [`MATRIX_CELLS_MAX`].
//!
//! * `shape-INDICATOR.svg` (with curves in the run): see [`shape`]; shown in the page's
//!   own section on the shape of associations.
//!
//! Every plot has a title, axis labels with units and a caption (drawn in the SVG, and kept
//! in [`Plot`] for the page). Each plot also carries invisible `<rect class="fm-data">`
//! markers over its data regions, which the browser test crops to.

use super::model::{Report, Spread, GOOD_DEFINITIONS};
use crate::error::{Error, Result};
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

mod agreement;
mod curve;
mod draw;
mod importance;
mod influence;
mod nested;
mod null;
pub(crate) mod shape;
#[cfg(test)]
pub(crate) mod tests;

use agreement::agreement;
use curve::curve;
use draw::*;
pub(crate) use draw::{escape, num};
use importance::importance;
use influence::{box_rows, error_influence, rank_influence, BoxRow};

/// Most curve columns drawn one spec per column; past it ranks are binned.
pub const CURVE_COLUMNS_MAX: usize = 300;
/// Most equal-count rank bins for a large curve (at least [`CURVE_BIN_SPECS`] specs each,
/// so a bin's shares mean something).
pub const CURVE_BINS: usize = 200;
/// Fewest specs per bin of a binned curve (a few bins may hold fewer when specs run short).
pub const CURVE_BIN_SPECS: usize = 5;
/// A dimension with more choices than this is shown by option (parameters pooled).
pub const PANEL_CHOICES_MAX: usize = 12;
/// Most names shown in the per-name plots (the best by median rank over the good set).
pub const NAMES_MAX: usize = 25;
/// Most cells per side of the agreement matrix; larger sets are shown in blocks.
pub const MATRIX_CELLS_MAX: usize = 100;
/// Ranks shown one by one in the rank distribution (the rest pooled in one column).
const RANKS_SHOWN: usize = 12;

/// One rendered plot.
#[derive(Debug, Clone)]
pub struct Plot {
    /// File name beside index.html, e.g. `curve.svg`.
    pub file: String,
    pub title: String,
    pub caption: String,
    /// The whole SVG document (no XML declaration, so it can be inlined in HTML).
    pub svg: String,
}

// ---------------------------------------------------------------------------------------
// Entry points.

/// Render every plot the report has data for, in page order.
pub fn render_all(report: &Report) -> Result<Vec<Plot>> {
    let mut plots = Vec::new();
    if let Some(p) = curve(report)? {
        plots.push(p);
    }
    if let Some(p) = error_influence(report)? {
        plots.push(p);
    }
    for (level, kind) in kinds(report) {
        if let Some(p) = rank_influence(report, &level, &kind)? {
            plots.push(p);
        }
        if let Some(p) = importance(report, &level, &kind)? {
            plots.push(p);
        }
    }
    if let Some(p) = null::null_best(report)? {
        plots.push(p);
    }
    let mut order: Vec<usize> = (0..report.agreement.len()).collect();
    order.sort_by_key(|&i| kind_order(&report.agreement[i].level, &report.agreement[i].kind));
    for i in order {
        let a = &report.agreement[i];
        if let Some(p) = agreement(report, i, &a.level, &a.kind)? {
            plots.push(p);
        }
    }
    if let Some(p) = nested::nested(report)? {
        plots.push(p);
    }
    Ok(plots)
}

/// Write each plot as its own `.svg` file in `dir` (atomically); returns their paths.
pub fn write_all(report: &Report, dir: &Path) -> Result<Vec<PathBuf>> {
    let mut paths = Vec::new();
    for plot in render_all(report)?
        .into_iter()
        .chain(shape::shape_plots(report)?)
    {
        let path = dir.join(&plot.file);
        let mut doc = String::from("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n");
        doc.push_str(&plot.svg);
        crate::sink::write_bytes_atomic(&path, doc.as_bytes())?;
        paths.push(path);
    }
    Ok(paths)
}

/// The (level, kind) pairs with importance data in page order: indicators before groups,
/// permutation before the native kinds, otherwise as the report lists them.
fn kinds(report: &Report) -> Vec<(String, String)> {
    let mut out: Vec<(String, String)> = Vec::new();
    for k in report.meta.kinds.iter().cloned().chain(
        report
            .importance
            .iter()
            .map(|i| (i.level.clone(), i.kind.clone())),
    ) {
        if !out.contains(&k) {
            out.push(k);
        }
    }
    out.sort_by_key(|(level, kind)| kind_order(level, kind));
    out
}

/// Sort key of a (level, kind) in page order (a stable sort keeps the rest as listed).
fn kind_order(level: &str, kind: &str) -> (u8, u8) {
    (
        u8::from(level != "indicator"),
        u8::from(kind != "permutation"),
    )
}

/// The names of one (level, kind) in display order: the names some good member holds, best
/// median rank over the good set first; when no good member holds the kind, by their share
/// in the top k over all ok specs.
fn top_names(report: &Report, level: &str, kind: &str) -> Vec<String> {
    let rows: Vec<_> = report
        .importance
        .iter()
        .filter(|i| i.level == level && i.kind == kind)
        .collect();
    let mut held: Vec<(f64, &str)> = rows
        .iter()
        .filter(|i| i.importance.n > 0)
        .map(|i| (i.median_rank, i.name.as_str()))
        .collect();
    if held.is_empty() {
        held = rows
            .iter()
            .map(|i| (-i.share_top_k_all, i.name.as_str()))
            .collect();
    }
    held.sort_by(|a, b| a.0.total_cmp(&b.0).then_with(|| a.1.cmp(b.1)));
    held.dedup_by(|a, b| a.1 == b.1);
    held.into_iter()
        .take(NAMES_MAX)
        .map(|(_, n)| n.to_string())
        .collect()
}

/// Members of the good set holding a (level, kind): the most over its names.
fn good_holders(report: &Report, level: &str, kind: &str) -> usize {
    report
        .importance
        .iter()
        .filter(|i| i.level == level && i.kind == kind)
        .map(|i| i.importance.n)
        .max()
        .unwrap_or(0)
}

/// Why plots the reader might look for are not drawn (one sentence each).
pub fn omitted(report: &Report) -> Vec<String> {
    let mut out = Vec::new();
    if report.curve.is_empty() {
        out.push("No specification curve or influence plots: the runs hold no ok spec.".into());
        return out;
    }
    let good = &report.meta.good;
    for (level, kind) in kinds(report) {
        let n = good_holders(report, &level, &kind);
        if n == 0 {
            out.push(format!(
                "No importance or agreement plot for {level}s ({kind}): no member of the good set ({good}) \
                 reports this kind (a native kind comes only from the model families that have it)."
            ));
        } else if n == 1
            && !report
                .agreement
                .iter()
                .any(|a| a.level == level && a.kind == kind)
        {
            out.push(format!(
                "No agreement plot for {level}s ({kind}): only one member of the good set ({good}) reports this kind."
            ));
        }
    }
    out
}
