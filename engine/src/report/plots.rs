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
//! * `agreement-LEVEL-KIND.svg`: Kendall's tau-b between good members' importance orders,
//!   in blocks of members once there are more than [`MATRIX_CELLS_MAX`].
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
// Look: colours and type.

const WIDTH: u32 = 980;
const BG: RGBColor = RGBColor(252, 251, 248);
const INK: RGBColor = RGBColor(34, 38, 46);
const MUTED: RGBColor = RGBColor(105, 110, 120);
const GRID: RGBColor = RGBColor(226, 224, 217);
const STRIPE: RGBColor = RGBColor(243, 241, 235);
const SPAN: RGBColor = RGBColor(150, 176, 201);
const POINT: RGBColor = RGBColor(28, 74, 118);
const GOOD: RGBColor = RGBColor(210, 124, 32);
const GOOD_DARK: RGBColor = RGBColor(140, 72, 8);
const LOW: RGBColor = RGBColor(246, 244, 238);
const HIGH: RGBColor = RGBColor(22, 98, 104);
const NEG: RGBColor = RGBColor(60, 90, 160);
const POS: RGBColor = RGBColor(176, 72, 40);
const FONT: &str = "sans-serif";

/// Plotters' SVG backend writes `font-size = size / 1.24`; ask for rendered pixels.
fn font(px: f64) -> TextStyle<'static> {
    TextStyle::from((FONT, px * 1.24).into_font()).color(&INK)
}

fn font_at(px: f64, color: &'static RGBColor, h: HPos, v: VPos) -> TextStyle<'static> {
    TextStyle::from((FONT, px * 1.24).into_font())
        .color(color)
        .pos(Pos::new(h, v))
}

fn bold_at(px: f64, h: HPos, v: VPos) -> TextStyle<'static> {
    TextStyle::from((FONT, px * 1.24, FontStyle::Bold).into_font())
        .color(&INK)
        .pos(Pos::new(h, v))
}

fn mix(a: &RGBColor, b: &RGBColor, t: f64) -> RGBColor {
    let t = if t.is_finite() {
        t.clamp(0.0, 1.0)
    } else {
        0.0
    };
    let c = |x: u8, y: u8| (x as f64 + (y as f64 - x as f64) * t).round() as u8;
    RGBColor(c(a.0, b.0), c(a.1, b.1), c(a.2, b.2))
}

/// Sequential scale for shares in [0, 1].
fn seq(t: f64) -> RGBColor {
    mix(&LOW, &HIGH, t.sqrt())
}

/// Diverging scale for tau in [-1, 1].
fn div(t: f64) -> RGBColor {
    if !t.is_finite() {
        return GRID;
    }
    if t >= 0.0 {
        mix(&LOW, &POS, t)
    } else {
        mix(&LOW, &NEG, -t)
    }
}

// ---------------------------------------------------------------------------------------
// Drawing plumbing.

/// A drawing failure (plotters' error as text).
struct Fail(String);

impl<E: std::error::Error> From<E> for Fail {
    fn from(e: E) -> Self {
        Fail(e.to_string())
    }
}

type R<T> = std::result::Result<T, Fail>;
type Area<'a> = DrawingArea<SVGBackend<'a>, Shift>;

/// Pixel rectangle (x0, y0, x1, y1) of a data region.
type Mark = (i32, i32, i32, i32);

fn rect(area: &Area, x0: i32, y0: i32, x1: i32, y1: i32, color: &RGBColor) -> R<()> {
    area.draw(&Rectangle::new([(x0, y0), (x1, y1)], color.filled()))?;
    Ok(())
}

fn hline(area: &Area, x0: i32, x1: i32, y: i32, color: &RGBColor, w: u32) -> R<()> {
    area.draw(&PathElement::new(
        vec![(x0, y), (x1, y)],
        color.stroke_width(w),
    ))?;
    Ok(())
}

fn vline(area: &Area, x: i32, y0: i32, y1: i32, color: &RGBColor, w: u32) -> R<()> {
    area.draw(&PathElement::new(
        vec![(x, y0), (x, y1)],
        color.stroke_width(w),
    ))?;
    Ok(())
}

fn text(area: &Area, s: &str, x: i32, y: i32, style: &TextStyle) -> R<()> {
    area.draw(&Text::new(s.to_string(), (x, y), style.clone()))?;
    Ok(())
}

/// Greedy word wrap to about `chars` characters a line.
fn wrap(s: &str, chars: usize) -> Vec<String> {
    let mut lines = Vec::new();
    let mut cur = String::new();
    for word in s.split_whitespace() {
        if !cur.is_empty() && cur.chars().count() + 1 + word.chars().count() > chars {
            lines.push(std::mem::take(&mut cur));
        }
        if !cur.is_empty() {
            cur.push(' ');
        }
        cur.push_str(word);
    }
    if !cur.is_empty() {
        lines.push(cur);
    }
    lines
}

/// A label cut to `chars` characters (with an ellipsis).
fn clip(s: &str, chars: usize) -> String {
    if s.chars().count() <= chars {
        s.to_string()
    } else {
        let mut out: String = s.chars().take(chars.saturating_sub(1)).collect();
        out.push('\u{2026}');
        out
    }
}

/// A short number for ticks and labels.
pub(crate) fn num(v: f64) -> String {
    if !v.is_finite() {
        return "NA".into();
    }
    let a = v.abs();
    if a == 0.0 {
        "0".into()
    } else if !(1e-3..1e5).contains(&a) {
        format!("{v:.2e}")
    } else {
        let digits = (3 - a.log10().floor() as i32).clamp(0, 6) as usize;
        let s = format!("{v:.digits$}");
        if s.contains('.') {
            s.trim_end_matches('0').trim_end_matches('.').to_string()
        } else {
            s
        }
    }
}

fn pct(v: f64) -> String {
    if v.is_finite() {
        format!("{:.0}%", 100.0 * v)
    } else {
        "NA".into()
    }
}

/// A padded [lo, hi] axis range over finite values (a unit range when there are none).
fn range(values: impl IntoIterator<Item = f64>) -> (f64, f64) {
    let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
    for v in values.into_iter().filter(|v| v.is_finite()) {
        lo = lo.min(v);
        hi = hi.max(v);
    }
    if !lo.is_finite() {
        return (0.0, 1.0);
    }
    let pad = if hi > lo {
        0.04 * (hi - lo)
    } else {
        0.05 * lo.abs().max(1e-9)
    };
    (lo - pad, hi + pad)
}

/// Draw one figure: background, title, body (`body_h` pixels, drawn by `body` with the top
/// of the body as its second argument), caption. Returns the SVG text.
fn figure(
    file: &str,
    title: &str,
    caption: &str,
    body_h: u32,
    body: impl FnOnce(&Area, i32, &mut Vec<Mark>) -> R<()>,
) -> Result<Plot> {
    let cap_lines = wrap(caption, 165);
    let top = 44;
    let height = top as u32 + body_h + 14 + 16 * cap_lines.len() as u32 + 8;
    let mut svg = String::new();
    let mut marks = Vec::new();
    let drawn = (|| -> R<()> {
        let root = SVGBackend::with_string(&mut svg, (WIDTH, height)).into_drawing_area();
        root.fill(&BG)?;
        text(
            &root,
            title,
            16,
            22,
            &bold_at(16.0, HPos::Left, VPos::Center),
        )?;
        body(&root, top, &mut marks)?;
        let cap = font_at(12.0, &MUTED, HPos::Left, VPos::Center);
        let y0 = top + body_h as i32 + 14;
        for (i, line) in cap_lines.iter().enumerate() {
            text(&root, line, 16, y0 + 16 * i as i32, &cap)?;
        }
        root.present()?;
        Ok(())
    })();
    drawn.map_err(|Fail(msg)| Error::Output {
        path: PathBuf::from(file),
        msg: format!("drawing the plot failed: {msg}"),
    })?;
    Ok(Plot {
        file: file.to_string(),
        title: title.to_string(),
        caption: caption.to_string(),
        svg: finish_svg(svg, title, caption, &marks),
    })
}

/// Add an accessible title and description, a class, and the data-region markers.
fn finish_svg(svg: String, title: &str, caption: &str, marks: &[Mark]) -> String {
    let Some(open_end) = svg.find('>') else {
        return svg;
    };
    let mut out = String::with_capacity(svg.len() + 512);
    let head = &svg[..open_end];
    out.push_str(head.trim_end_matches('/'));
    out.push_str(" class=\"fm-plot\" role=\"img\">\n<title>");
    out.push_str(&escape(title));
    out.push_str("</title>\n<desc>");
    out.push_str(&escape(caption));
    out.push_str("</desc>");
    let rest = &svg[open_end + 1..];
    let close = rest.rfind("</svg>").unwrap_or(rest.len());
    out.push_str(&rest[..close]);
    for (x0, y0, x1, y1) in marks {
        out.push_str(&format!(
            "<rect class=\"fm-data\" x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"none\" stroke=\"none\"/>\n",
            x0.min(x1),
            y0.min(y1),
            (x1 - x0).abs().max(1),
            (y1 - y0).abs().max(1)
        ));
    }
    out.push_str("</svg>\n");
    out
}

/// Escape text for XML/HTML content and attributes.
pub fn escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c if (c as u32) < 0x20 && c != '\n' && c != '\t' && c != '\r' => out.push('\u{fffd}'),
            c => out.push(c),
        }
    }
    out
}

/// A file-name-safe form of a level or kind name.
fn slug(s: &str) -> String {
    let out: String = s
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() {
                c.to_ascii_lowercase()
            } else {
                '-'
            }
        })
        .collect();
    if out.is_empty() {
        "x".into()
    } else {
        out
    }
}

/// What one importance kind measures, with its unit.
fn importance_unit(kind: &str) -> &'static str {
    match kind {
        "permutation" => "increase in out-of-fold MSE when permuted (outcome units squared)",
        "coefficient" => "|coefficient| x training sd of the input (outcome units)",
        "impurity" => "impurity decrease, as a share of the tree's total (no unit)",
        _ => "importance as stored in the run's importance table",
    }
}

/// The metric's name for axis labels.
fn metric_label(report: &Report) -> String {
    let m = if report.meta.metric.is_empty() {
        "error"
    } else {
        report.meta.metric.as_str()
    };
    format!("{m} (outcome units)")
}

/// Index of the good-set definition the report uses.
fn good_index(report: &Report) -> usize {
    GOOD_DEFINITIONS
        .iter()
        .position(|d| *d == report.meta.good)
        .unwrap_or(0)
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
    let mut order: Vec<usize> = (0..report.agreement.len()).collect();
    order.sort_by_key(|&i| kind_order(&report.agreement[i].level, &report.agreement[i].kind));
    for i in order {
        let a = &report.agreement[i];
        if let Some(p) = agreement(report, i, &a.level, &a.kind)? {
            plots.push(p);
        }
    }
    Ok(plots)
}

/// Write each plot as its own `.svg` file in `dir` (atomically); returns their paths.
pub fn write_all(report: &Report, dir: &Path) -> Result<Vec<PathBuf>> {
    let mut paths = Vec::new();
    for plot in render_all(report)? {
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

// ---------------------------------------------------------------------------------------
// The specification curve and its choice panel.

/// One panel row: a choice (or an option with its parameters pooled) of a dimension.
struct PanelRow {
    dim: usize,
    label: String,
    /// The dimension's choice indices this row covers.
    choices: Vec<usize>,
}

fn panel_rows(report: &Report) -> (Vec<PanelRow>, Vec<String>) {
    let mut rows = Vec::new();
    let mut pooled = Vec::new();
    for (d, dim) in report.dimensions.iter().enumerate() {
        if dim.choices.len() <= PANEL_CHOICES_MAX {
            for (c, name) in dim.choices.iter().enumerate() {
                rows.push(PanelRow {
                    dim: d,
                    label: name.clone(),
                    choices: vec![c],
                });
            }
        } else {
            pooled.push(dim.dimension.clone());
            let mut by_option: BTreeMap<String, Vec<usize>> = BTreeMap::new();
            let mut order = Vec::new();
            for (c, name) in dim.choices.iter().enumerate() {
                let option = name.split('(').next().unwrap_or(name).to_string();
                if !by_option.contains_key(&option) {
                    order.push(option.clone());
                }
                by_option.entry(option).or_default().push(c);
            }
            for option in order {
                let choices = by_option.remove(&option).unwrap_or_default();
                rows.push(PanelRow {
                    dim: d,
                    label: format!("{option} (all parameters)"),
                    choices,
                });
            }
        }
    }
    (rows, pooled)
}

fn curve(report: &Report) -> Result<Option<Plot>> {
    let pts = &report.curve;
    let n = pts.len();
    if n == 0 {
        return Ok(None);
    }
    let g = good_index(report);
    let (rows, pooled) = panel_rows(report);
    let binned = n > CURVE_COLUMNS_MAX;
    let cols = if binned {
        (n / CURVE_BIN_SPECS).clamp(1, CURVE_BINS)
    } else {
        n
    };
    // Column c holds curve positions [start(c), start(c + 1)).
    let start = |c: usize| c * n / cols;
    let row_h = 12;
    let gap = 14; // a dimension's header line
    let n_dims = report.dimensions.len();
    let panel_h = (rows.len() + 1) as i32 * row_h + n_dims as i32 * gap + 8;
    let curve_h = 330;
    let body_h = (curve_h + 26 + panel_h) as u32;
    let left = 250; // label column, shared by both panels
    let right = 24;
    let metric = metric_label(report);
    let level = report.meta.level;
    let b = report.meta.resamples;
    let good_name = GOOD_DEFINITIONS[g];
    let title = format!(
        "Specification curve: {n} ok specs ranked by {}",
        if report.meta.metric.is_empty() {
            "error"
        } else {
            &report.meta.metric
        }
    );
    let mut caption = if binned {
        format!(
            "Top: specs ranked by {metric}, lowest first, binned into {cols} columns of about {} specs each \
             (equal counts). Per column: pale area = range of the specs' errors; blue band = from the median lower \
             to the median upper bound of their {:.0}% bootstrap intervals (B = {b} resamples of units); dark line = \
             median error, amber where the column holds members of the good set ({good_name}). Below: one row per \
             choice; shading = share of the column's specs taking that choice (darker = more).",
            n / cols,
            100.0 * level
        )
    } else {
        format!(
            "Top: each ok spec's {metric}, lowest first (dot), with its {:.0}% bootstrap interval over units \
             (B = {b} resamples; vertical bar). Amber = member of the good set ({good_name}). Below: one row per \
             choice; a filled cell marks the choice the spec above it took.",
            100.0 * level
        )
    };
    if !pooled.is_empty() {
        caption.push_str(&format!(
            " Dimensions with more than {PANEL_CHOICES_MAX} choices are shown by option with their parameters \
             pooled: {}.",
            pooled.join(", ")
        ));
    }
    let (ylo, yhi) = range(pts.iter().flat_map(|p| [p.lower, p.upper, p.error]));
    let plot = figure("curve.svg", &title, &caption, body_h, |root, top, marks| {
        let area = root.clone().shrink((0, top), (WIDTH, curve_h as u32 + 26));
        let mut chart = ChartBuilder::on(&area)
            .margin_right(right)
            .margin_top(4)
            .margin_left(left - 76)
            .x_label_area_size(40)
            .y_label_area_size(76)
            .build_cartesian_2d(0.5f64..(n as f64 + 0.5), ylo..yhi)?;
        chart
            .configure_mesh()
            .disable_x_mesh()
            .light_line_style(GRID.mix(0.0))
            .bold_line_style(GRID)
            .axis_style(MUTED)
            .label_style(font(11.0))
            .axis_desc_style(font(12.0))
            .x_desc("specification rank (1 = lowest error)")
            .y_desc(metric.clone())
            .x_label_formatter(&|v| format!("{v:.0}"))
            .y_label_formatter(&|v| num(*v))
            .draw()?;
        let (xr, yr) = chart.plotting_area().get_pixel_range();
        marks.push((xr.start, yr.start, xr.end, yr.end));
        let xpix =
            |rank: f64| xr.start as f64 + (rank - 0.5) / n as f64 * (xr.end - xr.start) as f64;
        if binned {
            // Per column: range of errors, band between median bounds, median error; as
            // polygons and a line through the column centres, so no seams between columns.
            let mut range_lo = Vec::with_capacity(cols);
            let mut range_hi = Vec::with_capacity(cols);
            let mut band_lo = Vec::with_capacity(cols);
            let mut band_hi = Vec::with_capacity(cols);
            let mut mid = Vec::with_capacity(cols);
            let mut good_runs: Vec<Vec<(f64, f64)>> = Vec::new();
            let mut in_run = false;
            for c in 0..cols {
                let part = &pts[start(c)..start(c + 1)];
                if part.is_empty() {
                    continue;
                }
                let x = 0.5 * (start(c) + start(c + 1)) as f64 + 0.5;
                let errs: Vec<f64> = part.iter().map(|p| p.error).collect();
                let lows: Vec<f64> = part.iter().map(|p| p.lower).collect();
                let ups: Vec<f64> = part.iter().map(|p| p.upper).collect();
                let (emin, emax) = min_max(&errs);
                let med = median(&errs);
                range_lo.push((x, emin));
                range_hi.push((x, emax));
                band_lo.push((x, median(&lows)));
                band_hi.push((x, median(&ups)));
                mid.push((x, med));
                if part.iter().any(|p| p.good[g]) {
                    if !in_run {
                        good_runs.push(Vec::new());
                    }
                    if let Some(run) = good_runs.last_mut() {
                        run.push((x, med));
                    }
                    in_run = true;
                } else {
                    in_run = false;
                }
            }
            let poly = |lo: &[(f64, f64)], hi: &[(f64, f64)]| -> Vec<(f64, f64)> {
                lo.iter()
                    .chain(hi.iter().rev())
                    .copied()
                    .filter(|(_, y)| y.is_finite())
                    .collect()
            };
            chart.draw_series([
                Polygon::new(poly(&range_lo, &range_hi), SPAN.mix(0.35).filled()),
                Polygon::new(poly(&band_lo, &band_hi), SPAN.mix(0.9).filled()),
            ])?;
            chart.draw_series([PathElement::new(mid, POINT.stroke_width(2))])?;
            for run in good_runs {
                if run.len() == 1 {
                    chart.draw_series([Circle::new(run[0], 3, GOOD.filled())])?;
                } else {
                    chart.draw_series([PathElement::new(run, GOOD.stroke_width(3))])?;
                }
            }
        } else {
            let w = (0.3f64).min(120.0 / n as f64).max(0.15);
            chart.draw_series(pts.iter().enumerate().map(|(i, p)| {
                let x = (i + 1) as f64;
                let col = if p.good[g] { GOOD } else { SPAN };
                Rectangle::new([(x - w, p.lower), (x + w, p.upper)], col.mix(0.75).filled())
            }))?;
            let r = if n > 150 {
                1
            } else if n > 60 {
                2
            } else {
                3
            };
            chart.draw_series(pts.iter().enumerate().map(|(i, p)| {
                let col = if p.good[g] { GOOD_DARK } else { POINT };
                Circle::new(((i + 1) as f64, p.error), r, col.filled())
            }))?;
        }
        // The choice panel.
        let y0 = top + curve_h + 26;
        let label = font_at(10.5, &INK, HPos::Right, VPos::Center);
        let head = bold_at(11.0, HPos::Left, VPos::Center);
        let mut y = y0 + 4;
        // The good-set row first.
        text(
            root,
            &format!("in good set ({good_name})"),
            left - 6,
            y + row_h / 2,
            &label,
        )?;
        for c in 0..cols {
            let part = &pts[start(c)..start(c + 1)];
            if part.is_empty() {
                continue;
            }
            let share = part.iter().filter(|p| p.good[g]).count() as f64 / part.len() as f64;
            if share > 0.0 {
                let col = mix(&LOW, &GOOD, 0.25 + 0.75 * share);
                let (a, bx) = (xpix(start(c) as f64 + 0.5), xpix(start(c + 1) as f64 + 0.5));
                let a = a as i32;
                let bx = if binned { bx as i32 + 1 } else { bx as i32 };
                rect(root, a, y + 1, bx.max(a + 1), y + row_h - 1, &col)?;
            }
        }
        y += row_h;
        let panel_top = y;
        let mut last_dim = usize::MAX;
        for (ri, row) in rows.iter().enumerate() {
            if row.dim != last_dim {
                last_dim = row.dim;
                // The dimension's name on its own line above its choices.
                text(
                    root,
                    &clip(&report.dimensions[row.dim].dimension, 30),
                    16,
                    y + gap / 2 + 1,
                    &head,
                )?;
                hline(root, xr.start, xr.end, y + gap - 1, &GRID, 1)?;
                y += gap;
            }
            if ri % 2 == 0 {
                rect(root, xr.start, y, xr.end, y + row_h, &STRIPE)?;
            }
            text(root, &clip(&row.label, 36), left - 6, y + row_h / 2, &label)?;
            for c in 0..cols {
                let part = &pts[start(c)..start(c + 1)];
                if part.is_empty() {
                    continue;
                }
                let took = part
                    .iter()
                    .filter(|p| {
                        p.choices
                            .get(row.dim)
                            .is_some_and(|ch| row.choices.contains(ch))
                    })
                    .count();
                if took == 0 {
                    continue;
                }
                let share = took as f64 / part.len() as f64;
                let (a, bx) = (xpix(start(c) as f64 + 0.5), xpix(start(c + 1) as f64 + 0.5));
                let (a, bx) = if binned {
                    // One pixel of overlap so neighbouring columns leave no seam.
                    (a as i32, (bx as i32 + 1).max(a as i32 + 1))
                } else {
                    let mid = (a + bx) / 2.0;
                    let half = ((bx - a) * 0.35).max(0.5);
                    (
                        (mid - half) as i32,
                        ((mid + half) as i32).max((mid - half) as i32 + 1),
                    )
                };
                rect(root, a, y + 2, bx, y + row_h - 2, &seq(share))?;
            }
            y += row_h;
        }
        marks.push((xr.start, panel_top, xr.end, y));
        Ok(())
    })?;
    Ok(Some(plot))
}

fn min_max(v: &[f64]) -> (f64, f64) {
    v.iter()
        .filter(|x| x.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
            (a.min(x), b.max(x))
        })
}

/// Median of the finite values (NaN when there are none).
fn median(v: &[f64]) -> f64 {
    let mut s: Vec<f64> = v.iter().copied().filter(|x| x.is_finite()).collect();
    if s.is_empty() {
        return f64::NAN;
    }
    s.sort_by(f64::total_cmp);
    let m = s.len() / 2;
    if s.len() % 2 == 1 {
        s[m]
    } else {
        0.5 * (s[m - 1] + s[m])
    }
}

// ---------------------------------------------------------------------------------------
// Box rows: a label column, a value axis with quartile boxes, and an optional right panel.

struct BoxRow {
    /// Group header shown above the row when it starts a group.
    group: Option<String>,
    label: String,
    spread: Spread,
}

/// Draw rows of spreads on a shared value axis; returns the y pixel (top, bottom) of each
/// row and the x pixel range of the axis.
#[allow(clippy::too_many_arguments)]
fn box_rows(
    root: &Area,
    top: i32,
    left: i32,
    width: i32,
    rows: &[BoxRow],
    row_h: i32,
    x_desc: &str,
    marks: &mut Vec<Mark>,
) -> R<Vec<(i32, i32)>> {
    let (lo, hi) = range(rows.iter().flat_map(|r| [r.spread.min, r.spread.max]));
    let groups = rows.iter().filter(|r| r.group.is_some()).count() as i32;
    let h = rows.len() as i32 * row_h + groups * 18;
    let area = root
        .clone()
        .shrink((left, top), (width as u32, (h + 44) as u32));
    let mut chart = ChartBuilder::on(&area)
        .margin_top(0)
        .margin_right(10)
        .x_label_area_size(40)
        .build_cartesian_2d(lo..hi, 0f64..h as f64)?;
    chart
        .configure_mesh()
        .disable_y_mesh()
        .disable_y_axis()
        .light_line_style(GRID.mix(0.0))
        .bold_line_style(GRID)
        .axis_style(MUTED)
        .label_style(font(11.0))
        .axis_desc_style(font(12.0))
        .x_desc(x_desc)
        .x_label_formatter(&|v| num(*v))
        .draw()?;
    let (xr, yr) = chart.plotting_area().get_pixel_range();
    marks.push((xr.start, yr.start, xr.end, yr.end));
    let label = font_at(11.0, &INK, HPos::Right, VPos::Center);
    let head = bold_at(11.5, HPos::Left, VPos::Center);
    let mut y = 0i32; // offset from the plot area's top, in pixels
    let mut spans = Vec::with_capacity(rows.len());
    let to_y = |off: i32| h as f64 - off as f64; // chart y is bottom-up
    for (i, r) in rows.iter().enumerate() {
        if let Some(g) = &r.group {
            y += 18;
            text(root, &clip(g, 30), 12, yr.start + y - 8, &head)?;
        }
        let (ya, yb) = (yr.start + y, yr.start + y + row_h);
        if i % 2 == 0 {
            rect(root, xr.start, ya, xr.end, yb, &STRIPE)?;
        }
        text(root, &clip(&r.label, 30), left - 6, (ya + yb) / 2, &label)?;
        let s = r.spread;
        let yc = to_y(y) - row_h as f64 / 2.0;
        let q = row_h as f64 * 0.3;
        if s.min.is_finite() && s.max.is_finite() {
            chart.draw_series([PathElement::new(
                vec![(s.min, yc), (s.max, yc)],
                MUTED.stroke_width(1),
            )])?;
        }
        if s.q1.is_finite() && s.q3.is_finite() {
            chart.draw_series([Rectangle::new(
                [(s.q1, yc - q), (s.q3, yc + q)],
                SPAN.filled(),
            )])?;
        }
        if s.median.is_finite() {
            let (mx, _) = chart.backend_coord(&(s.median, yc));
            vline(root, mx, ya + 2, yb - 2, &POINT, 3)?;
        }
        spans.push((ya, yb));
        y += row_h;
    }
    Ok(spans)
}

fn error_influence(report: &Report) -> Result<Option<Plot>> {
    if report.error_by_choice.is_empty() {
        return Ok(None);
    }
    let mut order: Vec<String> = Vec::new();
    for c in &report.error_by_choice {
        if !order.contains(&c.dimension) {
            order.push(c.dimension.clone());
        }
    }
    let mut rows = Vec::new();
    for d in &order {
        let mut first = true;
        for c in report.error_by_choice.iter().filter(|c| &c.dimension == d) {
            rows.push(BoxRow {
                group: first.then(|| d.clone()),
                label: c.choice.clone(),
                spread: c.error,
            });
            first = false;
        }
    }
    let row_h = 16;
    let h = rows.len() as i32 * row_h + order.len() as i32 * 18 + 44;
    let metric = metric_label(report);
    let r2 = report
        .error_shares
        .first()
        .map(|s| s.r2_total)
        .unwrap_or(f64::NAN);
    let title = "Which choices move the error".to_string();
    let caption = format!(
        "Left: for each choice, the {metric} of the ok specs taking it while every other dimension varies: box = \
         quartiles, dark tick = median, line = range. Right: each dimension's share of the variance of the error \
         explained by all dimensions together (R\u{b2} = {}), split between dimensions by the LMG (Shapley) \
         decomposition, which averages each dimension's added R\u{b2} over every order of entry (Lindeman, Merenda \
         and Gold 1980; Groemping 2006), so it is fair to unbalanced and sampled designs. Shares sum to 100%.",
        num(r2)
    );
    let left = 260;
    let box_w = 480;
    let plot = figure(
        "error-influence.svg",
        &title,
        &caption,
        h as u32 + 24,
        |root, top, marks| {
            let spans = box_rows(root, top + 24, left, box_w, &rows, row_h, &metric, marks)?;
            // Right panel: one bar per dimension spanning its rows.
            let x0 = left + box_w + 30;
            let x1 = WIDTH as i32 - 30;
            let head = bold_at(12.0, HPos::Left, VPos::Center);
            text(root, "share of the explained variance", x0, top + 6, &head)?;
            text(
                root,
                "(LMG parts of R\u{b2}, sum 100%)",
                x0,
                top + 22,
                &font_at(11.0, &MUTED, HPos::Left, VPos::Center),
            )?;
            let small = font_at(11.0, &INK, HPos::Left, VPos::Center);
            let mut i = 0;
            let mut any = (i32::MAX, i32::MIN);
            for d in &order {
                if i >= rows.len() {
                    break;
                }
                let n = 1 + rows[i + 1..]
                    .iter()
                    .take_while(|r| r.group.is_none())
                    .count();
                let (ya, _) = spans[i];
                let (_, yb) = spans[i + n - 1];
                i += n;
                let share = report
                    .error_shares
                    .iter()
                    .find(|s| &s.dimension == d)
                    .map(|s| s.share)
                    .unwrap_or(f64::NAN);
                rect(root, x0, ya, x1, yb, &STRIPE)?;
                if share.is_finite() && share > 0.0 {
                    let w = ((x1 - x0 - 48) as f64 * share.clamp(0.0, 1.0)) as i32;
                    let ym = (ya + yb) / 2;
                    let half = ((yb - ya) / 2 - 2).clamp(3, 9);
                    rect(root, x0, ym - half, x0 + w.max(1), ym + half, &HIGH)?;
                    text(root, &pct(share), x0 + w + 4, ym, &small)?;
                } else {
                    text(root, &pct(share), x0 + 4, (ya + yb) / 2, &small)?;
                }
                any = (any.0.min(ya), any.1.max(yb));
            }
            if any.0 < any.1 {
                marks.push((x0, any.0, x1, any.1));
            }
            Ok(())
        },
    )?;
    Ok(Some(plot))
}

// ---------------------------------------------------------------------------------------
// Which choices move which conclusions.

fn rank_influence(report: &Report, level: &str, kind: &str) -> Result<Option<Plot>> {
    let shares: Vec<_> = report
        .rank_shares
        .iter()
        .filter(|s| s.level == level && s.kind == kind)
        .collect();
    if shares.is_empty() {
        return Ok(None);
    }
    let mut names = top_names(report, level, kind);
    if names.is_empty() {
        let mut all: Vec<String> = shares.iter().map(|s| s.name.clone()).collect();
        all.sort();
        all.dedup();
        names = all.into_iter().take(NAMES_MAX).collect();
    }
    let dims: Vec<String> = report
        .dimensions
        .iter()
        .map(|d| d.dimension.clone())
        .collect();
    if dims.is_empty() || names.is_empty() {
        return Ok(None);
    }
    let k = report.meta.top_k;
    let row_h = 26;
    let left = 230;
    let extra = 80; // R^2 column
    let cell_w = ((WIDTH as i32 - left - extra - 30) / dims.len() as i32).clamp(40, 150);
    let h = 40 + names.len() as i32 * row_h + 10;
    let title = format!("Which choices move which {level} ranks ({kind} importance)");
    let caption = format!(
        "One row per {level} (the {} with the best median rank over the good set), one column per dimension. \
         Cell colour and number: the dimension's LMG (Shapley) part of the variance of the {level}'s rank across \
         all ok specs, i.e. how much of the rank's movement that choice explains (darker = more). Bar inside the \
         cell: the lowest to the highest share of specs ranking the {level} in the top {k} among that dimension's \
         choices, on a 0 to 100% scale across the cell (a long bar = that choice moves it in or out of the top {k}). \
         Last column: R\u{b2} of the rank on all dimensions together. Ranks: 1 = most important.",
        names.len()
    );
    let plot = figure(
        &format!("rank-influence-{}-{}.svg", slug(level), slug(kind)),
        &title,
        &caption,
        h as u32,
        |root, top, marks| {
            let head = font_at(11.5, &INK, HPos::Center, VPos::Center);
            let label = font_at(11.0, &INK, HPos::Right, VPos::Center);
            let y0 = top + 40;
            for (j, d) in dims.iter().enumerate() {
                let cx = left + j as i32 * cell_w + cell_w / 2;
                text(root, &clip(d, (cell_w / 7) as usize), cx, top + 14, &head)?;
            }
            let rx = left + dims.len() as i32 * cell_w + extra / 2;
            text(root, "R\u{b2} (all)", rx, top + 14, &head)?;
            text(
                root,
                "dimension (LMG part of rank variance, %)",
                left + dims.len() as i32 * cell_w / 2,
                top + 30,
                &font_at(11.0, &MUTED, HPos::Center, VPos::Center),
            )?;
            for (i, name) in names.iter().enumerate() {
                let ya = y0 + i as i32 * row_h;
                text(root, &clip(name, 32), left - 8, ya + row_h / 2, &label)?;
                let mut r2 = f64::NAN;
                for (j, d) in dims.iter().enumerate() {
                    let xa = left + j as i32 * cell_w;
                    let s = shares.iter().find(|s| &s.name == name && &s.dimension == d);
                    let lmg = s.map(|s| s.lmg).unwrap_or(f64::NAN);
                    if let Some(s) = s {
                        r2 = s.r2_total;
                    }
                    let fill = if lmg.is_finite() { seq(lmg) } else { GRID };
                    rect(root, xa + 1, ya + 1, xa + cell_w - 1, ya + row_h - 1, &fill)?;
                    let tc: &'static RGBColor = if lmg.is_finite() && lmg > 0.35 {
                        &BG
                    } else {
                        &INK
                    };
                    text(
                        root,
                        &pct(lmg),
                        xa + cell_w / 2,
                        ya + row_h / 2 - 4,
                        &font_at(10.5, tc, HPos::Center, VPos::Center),
                    )?;
                    let tops: Vec<f64> = report
                        .rank_by_choice
                        .iter()
                        .filter(|r| {
                            r.level == level
                                && r.kind == kind
                                && &r.name == name
                                && &r.dimension == d
                        })
                        .map(|r| r.share_top_k)
                        .filter(|v| v.is_finite())
                        .collect();
                    if !tops.is_empty() {
                        let (a, b) = min_max(&tops);
                        let span = (cell_w - 12) as f64;
                        let xa2 = xa + 6 + (span * a.clamp(0.0, 1.0)) as i32;
                        let xb2 = xa + 6 + (span * b.clamp(0.0, 1.0)) as i32;
                        let yb = ya + row_h - 6;
                        hline(root, xa + 6, xa + cell_w - 6, yb, &GRID, 1)?;
                        rect(root, xa2, yb - 2, xb2.max(xa2 + 2), yb + 2, &GOOD)?;
                    }
                }
                text(
                    root,
                    &num(r2),
                    rx,
                    ya + row_h / 2,
                    &font_at(11.0, &INK, HPos::Center, VPos::Center),
                )?;
            }
            marks.push((
                left,
                y0,
                left + dims.len() as i32 * cell_w,
                y0 + names.len() as i32 * row_h,
            ));
            Ok(())
        },
    )?;
    Ok(Some(plot))
}

// ---------------------------------------------------------------------------------------
// The importance distribution over the good set.

fn importance(report: &Report, level: &str, kind: &str) -> Result<Option<Plot>> {
    if good_holders(report, level, kind) == 0 {
        return Ok(None);
    }
    let names = top_names(report, level, kind);
    if names.is_empty() {
        return Ok(None);
    }
    let k = report.meta.top_k;
    let good_name = &report.meta.good;
    let rows: Vec<BoxRow> = names
        .iter()
        .filter_map(|n| {
            report
                .importance
                .iter()
                .find(|i| i.level == level && i.kind == kind && &i.name == n)
        })
        .map(|i| BoxRow {
            group: None,
            label: i.name.clone(),
            spread: i.importance,
        })
        .collect();
    let row_h = 16;
    let h = rows.len() as i32 * row_h + 44 + 24;
    let title = format!("Importance over the good set: {level}s ({kind})");
    let caption = format!(
        "The {} {level}s with the best median rank over the good set ({good_name}). Left: importance over the \
         set's members: box = quartiles, dark tick = median, line = the empirical range (lowest to highest over \
         the members, the spread of importance across near-equal models in the sense of model class reliance, \
         Fisher, Rudin and Dominici 2019). Middle: rank distribution, ranks 1 to {RANKS_SHOWN} and beyond; shading \
         = share of members giving that rank. Right: share of members ranking it in the top {k} (bar) and the same \
         share over all ok specs (tick).",
        rows.len()
    );
    let left = 230;
    let box_w = 420;
    let unit = importance_unit(kind);
    let plot = figure(
        &format!("importance-{}-{}.svg", slug(level), slug(kind)),
        &title,
        &caption,
        h as u32,
        |root, top, marks| {
            let spans = box_rows(root, top + 24, left, box_w, &rows, row_h, unit, marks)?;
            let head = bold_at(11.5, HPos::Left, VPos::Center);
            // Rank distribution.
            let rx0 = left + box_w + 16;
            let cw = 12;
            text(root, "rank (1 = most important)", rx0, top + 4, &head)?;
            let small = font_at(9.5, &MUTED, HPos::Center, VPos::Center);
            for r in 0..=RANKS_SHOWN {
                let s = if r < RANKS_SHOWN {
                    format!("{}", r + 1)
                } else {
                    "+".into()
                };
                if r == 0 || (r + 1) % 3 == 0 || r == RANKS_SHOWN {
                    text(root, &s, rx0 + r as i32 * cw + cw / 2, top + 17, &small)?;
                }
            }
            for (row, &(ya, yb)) in rows.iter().zip(&spans) {
                let counts: Vec<_> = report
                    .rank_counts
                    .iter()
                    .filter(|c| c.level == level && c.kind == kind && c.name == row.label)
                    .collect();
                let total: usize = counts.iter().map(|c| c.count).sum();
                if total == 0 {
                    continue;
                }
                let mut cells = [0usize; RANKS_SHOWN + 1];
                for c in counts {
                    let idx = (c.rank.max(1) as usize - 1).min(RANKS_SHOWN);
                    cells[idx] += c.count;
                }
                for (r, &cnt) in cells.iter().enumerate() {
                    let x = rx0 + r as i32 * cw;
                    let fill = if cnt > 0 {
                        seq(cnt as f64 / total as f64)
                    } else {
                        LOW
                    };
                    rect(root, x + 1, ya + 1, x + cw - 1, yb - 1, &fill)?;
                }
            }
            let rx1 = rx0 + (RANKS_SHOWN as i32 + 1) * cw;
            if let (Some(f), Some(l)) = (spans.first(), spans.last()) {
                marks.push((rx0, f.0, rx1, l.1));
            }
            // Share top-k.
            let bx0 = rx1 + 24;
            let bx1 = WIDTH as i32 - 56;
            text(root, &format!("share in top {k}"), bx0, top + 4, &head)?;
            let label = font_at(10.5, &INK, HPos::Left, VPos::Center);
            for (row, &(ya, yb)) in rows.iter().zip(&spans) {
                let Some(i) = report
                    .importance
                    .iter()
                    .find(|i| i.level == level && i.kind == kind && i.name == row.label)
                else {
                    continue;
                };
                rect(root, bx0, ya + 1, bx1, yb - 1, &STRIPE)?;
                let w = (bx1 - bx0) as f64;
                if i.share_top_k.is_finite() && i.share_top_k > 0.0 {
                    let x = bx0 + (w * i.share_top_k.clamp(0.0, 1.0)) as i32;
                    rect(root, bx0, ya + 3, x.max(bx0 + 1), yb - 3, &HIGH)?;
                }
                if i.share_top_k_all.is_finite() {
                    let x = bx0 + (w * i.share_top_k_all.clamp(0.0, 1.0)) as i32;
                    vline(root, x, ya, yb, &GOOD, 2)?;
                }
                text(root, &pct(i.share_top_k), bx1 + 4, (ya + yb) / 2, &label)?;
            }
            if let (Some(f), Some(l)) = (spans.first(), spans.last()) {
                marks.push((bx0, f.0, bx1, l.1));
            }
            Ok(())
        },
    )?;
    Ok(Some(plot))
}

// ---------------------------------------------------------------------------------------
// Pairwise rank agreement.

fn agreement(report: &Report, idx: usize, level: &str, kind: &str) -> Result<Option<Plot>> {
    let a = &report.agreement[idx];
    let m = a.members.len();
    if m < 2 || a.matrix.len() != m * m {
        return Ok(None);
    }
    let block = m.div_ceil(MATRIX_CELLS_MAX);
    let cells = m.div_ceil(block);
    let side = 560i32;
    let cell = side as f64 / cells as f64;
    let title = format!(
        "Agreement between good-set members on the {level} order ({kind}): Kendall's tau-b, mean {}, min {}",
        num(a.mean),
        num(a.min)
    );
    let mut caption = format!(
        "Each cell compares two members of the good set ({}): Kendall's tau-b between their {kind} importance \
         orderings of the {level}s (ties handled by tau-b; 1 = same order, 0 = unrelated, -1 = reversed). \
         Members are in order of error, lowest first, along both axes. Grey = n/a (tau-b is undefined when a \
         member gives every {level} the same importance).",
        report.meta.good
    );
    if block > 1 {
        caption.push_str(&format!(
            " With {m} members, each cell is the mean tau-b over a block of up to {block} x {block} members."
        ));
    }
    if a.capped {
        caption.push_str(" The good set is larger than the matrix cap: only its members with the lowest error are shown.");
    }
    let file = if report
        .agreement
        .iter()
        .filter(|b| b.level == level && b.kind == kind)
        .count()
        > 1
    {
        format!("agreement-{}-{}-{idx}.svg", slug(level), slug(kind))
    } else {
        format!("agreement-{}-{}.svg", slug(level), slug(kind))
    };
    let plot = figure(
        &file,
        &title,
        &caption,
        side as u32 + 70,
        |root, top, marks| {
            let x0 = 150;
            let y0 = top + 20;
            for bi in 0..cells {
                for bj in 0..cells {
                    let (mut sum, mut cnt) = (0.0, 0usize);
                    for i in bi * block..((bi + 1) * block).min(m) {
                        for j in bj * block..((bj + 1) * block).min(m) {
                            let v = a.matrix[i * m + j];
                            if v.is_finite() {
                                sum += v;
                                cnt += 1;
                            }
                        }
                    }
                    let v = if cnt > 0 { sum / cnt as f64 } else { f64::NAN };
                    let xa = x0 + (bj as f64 * cell) as i32;
                    let xb = x0 + ((bj + 1) as f64 * cell) as i32;
                    let ya = y0 + (bi as f64 * cell) as i32;
                    let yb = y0 + ((bi + 1) as f64 * cell) as i32;
                    // One pixel of overlap so neighbouring cells leave no seam.
                    rect(
                        root,
                        xa,
                        ya,
                        xb.max(xa + 1) + 1,
                        yb.max(ya + 1) + 1,
                        &div(v),
                    )?;
                }
            }
            marks.push((x0, y0, x0 + side, y0 + side));
            let axis = font_at(12.0, &INK, HPos::Center, VPos::Center);
            text(
                root,
                "good-set member (1 = lowest error)",
                x0 + side / 2,
                y0 + side + 30,
                &axis,
            )?;
            let small = font_at(10.5, &MUTED, HPos::Center, VPos::Center);
            text(root, "1", x0 + (cell / 2.0) as i32, y0 + side + 12, &small)?;
            text(
                root,
                &format!("{m}"),
                x0 + side - (cell / 2.0) as i32,
                y0 + side + 12,
                &small,
            )?;
            let smr = font_at(10.5, &MUTED, HPos::Right, VPos::Center);
            text(root, "1", x0 - 6, y0 + (cell / 2.0) as i32, &smr)?;
            text(
                root,
                &format!("{m}"),
                x0 - 6,
                y0 + side - (cell / 2.0) as i32,
                &smr,
            )?;
            text(
                root,
                "good-set member",
                x0 - 40,
                y0 + side / 2,
                &font_at(12.0, &INK, HPos::Center, VPos::Center)
                    .transform(FontTransform::Rotate270),
            )?;
            // Colour key.
            let kx = x0 + side + 50;
            let kh = 240;
            let steps = 60;
            text(
                root,
                "tau-b",
                kx,
                y0 - 6,
                &bold_at(11.5, HPos::Left, VPos::Center),
            )?;
            for s in 0..steps {
                let t = 1.0 - 2.0 * s as f64 / (steps - 1) as f64;
                let ya = y0 + 6 + s * kh / steps;
                let yb = y0 + 6 + (s + 1) * kh / steps;
                rect(root, kx, ya, kx + 18, yb, &div(t))?;
            }
            let lab = font_at(10.5, &INK, HPos::Left, VPos::Center);
            for (t, s) in [(1.0, "1"), (0.0, "0"), (-1.0, "-1")] {
                let y = y0 + 6 + ((1.0 - t) / 2.0 * kh as f64) as i32;
                text(root, s, kx + 24, y, &lab)?;
            }
            let ny = y0 + kh + 24;
            rect(root, kx, ny, kx + 18, ny + 14, &GRID)?;
            text(root, "n/a", kx + 24, ny + 7, &lab)?;
            Ok(())
        },
    )?;
    Ok(Some(plot))
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;
    use crate::report::model::*;

    /// A small hand-built report with awkward names (markup characters, quotes).
    pub(crate) fn sample(n_specs: usize) -> Report {
        let dims = vec![
            DimensionChoices {
                dimension: "fill".into(),
                choices: vec!["mean".into(), "knn(k=5)".into()],
            },
            DimensionChoices {
                dimension: "model".into(),
                choices: (0..15)
                    .map(|i| format!("ridge(alpha={i})"))
                    .chain(["ols".into()])
                    .collect(),
            },
        ];
        let curve = (0..n_specs)
            .map(|i| {
                let e = 0.4 + 0.3 * (i as f64 / n_specs as f64).powi(2);
                CurvePoint {
                    spec_id: format!("{i:016x}"),
                    position: i + 1,
                    error: e,
                    lower: e - 0.03,
                    upper: e + 0.04,
                    choices: vec![i % 2, (i * 7) % 16],
                    good: [i < n_specs / 10 + 1, i < 3, i < n_specs / 5 + 1],
                }
            })
            .collect();
        let spread = |m: f64| Spread {
            n: 10,
            min: m - 0.1,
            q1: m - 0.03,
            median: m,
            q3: m + 0.04,
            max: m + 0.2,
        };
        let names = [
            "wage <gap> & \"rent\"",
            "school's_dropout",
            "clinic_visits",
            "rain",
        ];
        let mut importance = Vec::new();
        let mut rank_counts = Vec::new();
        let mut rank_shares = Vec::new();
        let mut rank_by_choice = Vec::new();
        for (i, n) in names.iter().enumerate() {
            importance.push(ImportanceSummary {
                level: "indicator".into(),
                kind: "permutation".into(),
                name: n.to_string(),
                importance: spread(1.0 / (i + 1) as f64),
                median_rank: (i + 1) as f64,
                best_rank: 1,
                worst_rank: 4,
                share_top_k: 1.0 / (i + 1) as f64,
                share_top_k_all: 0.8 / (i + 1) as f64,
            });
            for r in 1..=4u32 {
                rank_counts.push(RankCount {
                    level: "indicator".into(),
                    kind: "permutation".into(),
                    name: n.to_string(),
                    rank: r,
                    count: if r as usize == i + 1 { 7 } else { 1 },
                });
            }
            for d in &dims {
                rank_shares.push(RankShare {
                    level: "indicator".into(),
                    kind: "permutation".into(),
                    name: n.to_string(),
                    dimension: d.dimension.clone(),
                    lmg: 0.1 * (i + 1) as f64,
                    share: 0.5,
                    r2_total: 0.2 * (i + 1) as f64,
                });
                for c in &d.choices {
                    rank_by_choice.push(RankByChoice {
                        level: "indicator".into(),
                        kind: "permutation".into(),
                        name: n.to_string(),
                        dimension: d.dimension.clone(),
                        choice: c.clone(),
                        n: 5,
                        median_rank: 2.0,
                        share_top_k: (c.len() % 5) as f64 / 4.0,
                    });
                }
            }
        }
        let m = 5;
        let matrix = (0..m * m)
            .map(|ij| {
                if ij / m == ij % m {
                    1.0
                } else {
                    0.2 * ((ij % 7) as f64) - 0.4
                }
            })
            .collect();
        Report {
            meta: Meta {
                runs: vec!["runs/demo <1>".into()],
                manifest_json: "{\n  \"tool\": \"forkmap\",\n  \"note\": \"<b>&amp;\"\n}".into(),
                notes: vec!["complete: 1 of 1 run".into()],
                metric: "mae".into(),
                top_k: 3,
                good: "ratio".into(),
                ratio_eps: 0.05,
                margin: 0.02,
                margin_default: true,
                level: 0.9,
                resamples: 200,
                seed: 7,
                specs_total: n_specs + 2,
                specs_ok: n_specs,
                units: 40,
                rows: 120,
                best_spec: "0000000000000000".into(),
                best_error: 0.4,
                median_error: 0.5,
                kinds: vec![("indicator".into(), "permutation".into())],
                seconds: 0.1,
            },
            headline: vec!["Of 12 specs, 3 are <good> & \"near\" the best.".into()],
            cautions: vec!["These are associations, not causes.".into()],
            dimensions: dims.clone(),
            curve,
            error_by_choice: dims
                .iter()
                .flat_map(|d| {
                    d.choices.iter().enumerate().map(|(i, c)| ChoiceSummary {
                        dimension: d.dimension.clone(),
                        choice: c.clone(),
                        error: spread(0.45 + 0.01 * i as f64),
                    })
                })
                .collect(),
            error_by_param: vec![],
            error_shares: vec![
                Share {
                    dimension: "fill".into(),
                    lmg: 0.1,
                    share: 0.25,
                    r2_total: 0.4,
                    r2_alone: 0.12,
                },
                Share {
                    dimension: "model".into(),
                    lmg: 0.3,
                    share: 0.75,
                    r2_total: 0.4,
                    r2_alone: 0.31,
                },
            ],
            rank_by_choice,
            rank_shares,
            good_sets: vec![],
            good_makeup: vec![],
            importance,
            rank_counts,
            agreement: vec![Agreement {
                level: "indicator".into(),
                kind: "permutation".into(),
                members: (0..m).map(|i| format!("{i:016x}")).collect(),
                capped: false,
                mean: 0.3,
                min: -0.4,
                matrix,
            }],
            conclusions: vec![],
            stability: vec![],
            best_frequency: vec![],
        }
    }

    #[test]
    fn every_plot_renders_with_title_caption_and_data_marks() {
        let report = sample(40);
        let plots = render_all(&report).unwrap();
        let files: Vec<&str> = plots.iter().map(|p| p.file.as_str()).collect();
        assert_eq!(
            files,
            [
                "curve.svg",
                "error-influence.svg",
                "rank-influence-indicator-permutation.svg",
                "importance-indicator-permutation.svg",
                "agreement-indicator-permutation.svg"
            ]
        );
        for p in &plots {
            assert!(p.svg.starts_with("<svg "), "{}", p.file);
            assert!(p.svg.trim_end().ends_with("</svg>"), "{}", p.file);
            assert!(p.svg.contains("class=\"fm-plot\""), "{}", p.file);
            assert!(p.svg.contains("<title>"), "{}", p.file);
            assert!(p.svg.contains("class=\"fm-data\""), "{}", p.file);
            assert!(!p.caption.is_empty());
            assert!(
                !p.svg.contains("http://")
                    || p.svg.matches("http://").count() == p.svg.matches("xmlns").count()
            );
            assert!(!p.svg.contains("https://"), "{}", p.file);
        }
    }

    #[test]
    fn names_with_markup_are_escaped_in_svg() {
        let report = sample(12);
        for p in render_all(&report).unwrap() {
            assert!(!p.svg.contains("<gap>"), "{}", p.file);
            assert!(!p.svg.contains("& \""), "{}", p.file);
        }
        let imp = render_all(&report)
            .unwrap()
            .into_iter()
            .find(|p| p.file.starts_with("importance"))
            .unwrap();
        assert!(imp.svg.contains("wage &lt;gap&gt; &amp; &quot;rent&quot;"));
    }

    #[test]
    fn a_large_curve_is_binned_and_stays_small() {
        let report = sample(10_000);
        let plots = render_all(&report).unwrap();
        let c = &plots[0];
        assert_eq!(c.file, "curve.svg");
        assert!(
            c.caption.contains("binned into 200 columns"),
            "{}",
            c.caption
        );
        // 200 columns x (a few curve marks + 18 panel rows) at most; one element per spec
        // would be well past this.
        let rects = c.svg.matches("<rect").count();
        assert!(rects < 200 * 25, "{rects} rects");
        assert!(rects > 200, "{rects} rects");
    }

    #[test]
    fn a_small_curve_has_one_column_per_spec() {
        let report = sample(30);
        let c = &render_all(&report).unwrap()[0];
        // One interval bar and one dot per spec.
        assert_eq!(c.svg.matches("<circle").count(), 30);
        assert!(c.caption.contains("pooled: model"), "{}", c.caption);
    }

    #[test]
    fn a_kind_no_good_member_holds_has_no_importance_plot_and_says_why() {
        let mut report = sample(30);
        for i in report.importance.iter_mut() {
            i.importance = Spread {
                n: 0,
                min: f64::NAN,
                q1: f64::NAN,
                median: f64::NAN,
                q3: f64::NAN,
                max: f64::NAN,
            };
            i.median_rank = f64::NAN;
        }
        report.agreement.clear();
        let files: Vec<String> = render_all(&report)
            .unwrap()
            .into_iter()
            .map(|p| p.file)
            .collect();
        assert!(
            !files.iter().any(|f| f.starts_with("importance")),
            "{files:?}"
        );
        // The rank influence is over all ok specs, so it stays, ordered by share top k.
        assert!(files.iter().any(|f| f.starts_with("rank-influence")));
        assert_eq!(
            top_names(&report, "indicator", "permutation")[0],
            "wage <gap> & \"rent\""
        );
        let why = omitted(&report);
        assert_eq!(why.len(), 1, "{why:?}");
        assert!(why[0].contains("indicators (permutation)"), "{why:?}");
        assert!(omitted(&sample(30)).is_empty());
    }

    #[test]
    fn a_curve_past_the_column_limit_has_bins_of_five_or_more() {
        let report = sample(544);
        let c = &render_all(&report).unwrap()[0];
        assert!(
            c.caption.contains("binned into 108 columns"),
            "{}",
            c.caption
        );
        let c = &render_all(&sample(300)).unwrap()[0];
        assert_eq!(c.svg.matches("<circle").count(), 300);
    }

    #[test]
    fn indicators_and_permutation_come_first() {
        let mut report = sample(10);
        report.meta.kinds = vec![
            ("group".into(), "impurity".into()),
            ("group".into(), "permutation".into()),
            ("indicator".into(), "impurity".into()),
            ("indicator".into(), "permutation".into()),
        ];
        let k: Vec<String> = kinds(&report)
            .into_iter()
            .map(|(l, k)| format!("{l}/{k}"))
            .collect();
        assert_eq!(
            k,
            [
                "indicator/permutation",
                "indicator/impurity",
                "group/permutation",
                "group/impurity"
            ]
        );
    }

    #[test]
    fn an_empty_report_draws_nothing() {
        assert!(render_all(&Report::default()).unwrap().is_empty());
    }

    #[test]
    fn a_large_matrix_is_shown_in_blocks() {
        let mut report = sample(12);
        let m = 250;
        report.agreement[0].members = (0..m).map(|i| format!("{i}")).collect();
        report.agreement[0].matrix = vec![0.5; m * m];
        let p = render_all(&report)
            .unwrap()
            .into_iter()
            .find(|p| p.file.starts_with("agreement"))
            .unwrap();
        assert!(p.caption.contains("block of up to 3 x 3"), "{}", p.caption);
        // 84 x 84 cells plus the colour key, not 250 x 250.
        assert!(p.svg.matches("<rect").count() < 84 * 84 + 100);
    }

    #[test]
    fn numbers_are_short() {
        assert_eq!(num(0.421337), "0.4213");
        assert_eq!(num(12.5), "12.5");
        assert_eq!(num(1234.0), "1234");
        assert_eq!(num(0.0), "0");
        assert_eq!(num(f64::NAN), "NA");
        assert_eq!(num(2.5e-6), "2.50e-6");
    }

    #[test]
    fn wrap_keeps_words_whole() {
        assert_eq!(wrap("aa bb cc dd", 5), ["aa bb", "cc dd"]);
        assert_eq!(clip("abcdef", 4), "abc\u{2026}");
    }
}
