//! `curve.svg`: the specification curve and its choice panel.

use super::*;
use crate::report::model::CurvePoint;
use plotters::coord::types::RangedCoordf64;

// ---------------------------------------------------------------------------------------
// The specification curve and its choice panel.

/// One panel row: a choice (or an option with its parameters pooled) of a dimension.
pub(super) struct PanelRow {
    dim: usize,
    label: String,
    /// The dimension's choice indices this row covers.
    choices: Vec<usize>,
}

pub(super) fn panel_rows(report: &Report) -> (Vec<PanelRow>, Vec<String>) {
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

/// Where the curve and its panel go: columns (one per spec, or equal-count bins past
/// `CURVE_COLUMNS_MAX`), row heights and margins, in pixels.
struct Layout {
    /// Ok specs.
    n: usize,
    binned: bool,
    /// Columns of the curve and the panel.
    cols: usize,
    row_h: i32,
    /// A dimension's header line.
    gap: i32,
    curve_h: i32,
    /// The label column, shared by both panels.
    left: i32,
    right: i32,
}

impl Layout {
    fn new(n: usize) -> Layout {
        let binned = n > CURVE_COLUMNS_MAX;
        let cols = if binned {
            (n / CURVE_BIN_SPECS).clamp(1, CURVE_BINS)
        } else {
            n
        };
        Layout {
            n,
            binned,
            cols,
            row_h: 12,
            gap: 14,
            curve_h: 330,
            left: 250,
            right: 24,
        }
    }

    /// Column c holds curve positions [start(c), start(c + 1)).
    fn start(&self, c: usize) -> usize {
        c * self.n / self.cols
    }

    /// The pixel x of a rank, on the plotting area's pixel range `xr`.
    fn xpix(&self, xr: &std::ops::Range<i32>, rank: f64) -> f64 {
        xr.start as f64 + (rank - 0.5) / self.n as f64 * (xr.end - xr.start) as f64
    }
}

pub(super) fn curve(report: &Report) -> Result<Option<Plot>> {
    let pts = &report.curve;
    let n = pts.len();
    if n == 0 {
        return Ok(None);
    }
    let g = good_index(report);
    let (rows, pooled) = panel_rows(report);
    let lay = Layout::new(n);
    let n_dims = report.dimensions.len();
    let panel_h = (rows.len() + 1) as i32 * lay.row_h + n_dims as i32 * lay.gap + 8;
    let body_h = (lay.curve_h + 26 + panel_h) as u32;
    let (title, caption) = title_and_caption(report, &lay, &pooled);
    let plot = figure("curve.svg", &title, &caption, body_h, |root, top, marks| {
        let xr = draw_curve(root, top, marks, report, &lay, g)?;
        draw_panel(root, top, marks, report, &rows, &lay, &xr)
    })?;
    Ok(Some(plot))
}

fn title_and_caption(report: &Report, lay: &Layout, pooled: &[String]) -> (String, String) {
    let (n, cols) = (lay.n, lay.cols);
    let metric = metric_label(report);
    let level = report.meta.level;
    let b = report.meta.resamples;
    let good_name = GOOD_DEFINITIONS[good_index(report)];
    let title = format!(
        "Specification curve: {n} ok specs ranked by {}",
        if report.meta.metric.is_empty() {
            "error"
        } else {
            &report.meta.metric
        }
    );
    let mut caption = if lay.binned {
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
    (title, caption)
}

type Chart<'a, 'b> = ChartContext<'a, SVGBackend<'b>, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

/// The curve's axes and its data (bins or one interval and dot per spec); returns the
/// plotting area's pixel x range, which the panel below shares.
fn draw_curve(
    root: &Area,
    top: i32,
    marks: &mut Vec<Mark>,
    report: &Report,
    lay: &Layout,
    g: usize,
) -> R<std::ops::Range<i32>> {
    let pts = &report.curve;
    let n = lay.n;
    let (ylo, yhi) = range(pts.iter().flat_map(|p| [p.lower, p.upper, p.error]));
    let area = root
        .clone()
        .shrink((0, top), (WIDTH, lay.curve_h as u32 + 26));
    let mut chart = ChartBuilder::on(&area)
        .margin_right(lay.right)
        .margin_top(4)
        .margin_left(lay.left - 76)
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
        .y_desc(metric_label(report))
        .x_label_formatter(&|v| format!("{v:.0}"))
        .y_label_formatter(&|v| num(*v))
        .draw()?;
    let (xr, yr) = chart.plotting_area().get_pixel_range();
    marks.push((xr.start, yr.start, xr.end, yr.end));
    if lay.binned {
        draw_bins(&mut chart, pts, lay, g)?;
    } else {
        draw_specs(&mut chart, pts, g)?;
    }
    Ok(xr)
}

/// Per column: range of errors, band between median bounds, median error; as polygons and
/// a line through the column centres, so no seams between columns.
fn draw_bins(chart: &mut Chart, pts: &[CurvePoint], lay: &Layout, g: usize) -> R<()> {
    let cols = lay.cols;
    let mut range_lo = Vec::with_capacity(cols);
    let mut range_hi = Vec::with_capacity(cols);
    let mut band_lo = Vec::with_capacity(cols);
    let mut band_hi = Vec::with_capacity(cols);
    let mut mid = Vec::with_capacity(cols);
    let mut good_runs: Vec<Vec<(f64, f64)>> = Vec::new();
    let mut in_run = false;
    for c in 0..cols {
        let part = &pts[lay.start(c)..lay.start(c + 1)];
        if part.is_empty() {
            continue;
        }
        let x = 0.5 * (lay.start(c) + lay.start(c + 1)) as f64 + 0.5;
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
    Ok(())
}

/// One interval bar and one dot per spec.
fn draw_specs(chart: &mut Chart, pts: &[CurvePoint], g: usize) -> R<()> {
    let n = pts.len();
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
    Ok(())
}

/// The choice panel below the curve: the good-set row, then per dimension its name and one
/// row per panel row, each column shaded by the share of its specs taking the choice.
fn draw_panel(
    root: &Area,
    top: i32,
    marks: &mut Vec<Mark>,
    report: &Report,
    rows: &[PanelRow],
    lay: &Layout,
    xr: &std::ops::Range<i32>,
) -> R<()> {
    let g = good_index(report);
    let (row_h, gap) = (lay.row_h, lay.gap);
    let y0 = top + lay.curve_h + 26;
    let label = font_at(10.5, &INK, HPos::Right, VPos::Center);
    let head = bold_at(11.0, HPos::Left, VPos::Center);
    let mut y = y0 + 4;
    draw_good_row(root, report, lay, xr, g, y, &label)?;
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
        text(
            root,
            &clip(&row.label, 36),
            lay.left - 6,
            y + row_h / 2,
            &label,
        )?;
        draw_choice_row(root, &report.curve, row, lay, xr, y)?;
        y += row_h;
    }
    marks.push((xr.start, panel_top, xr.end, y));
    Ok(())
}

/// The panel's first row: each column's share of good-set members.
fn draw_good_row(
    root: &Area,
    report: &Report,
    lay: &Layout,
    xr: &std::ops::Range<i32>,
    g: usize,
    y: i32,
    label: &TextStyle,
) -> R<()> {
    let pts = &report.curve;
    let row_h = lay.row_h;
    text(
        root,
        &format!("in good set ({})", GOOD_DEFINITIONS[g]),
        lay.left - 6,
        y + row_h / 2,
        label,
    )?;
    for c in 0..lay.cols {
        let part = &pts[lay.start(c)..lay.start(c + 1)];
        if part.is_empty() {
            continue;
        }
        let share = part.iter().filter(|p| p.good[g]).count() as f64 / part.len() as f64;
        if share > 0.0 {
            let col = mix(&LOW, &GOOD, 0.25 + 0.75 * share);
            let (a, bx) = (
                lay.xpix(xr, lay.start(c) as f64 + 0.5),
                lay.xpix(xr, lay.start(c + 1) as f64 + 0.5),
            );
            let a = a as i32;
            let bx = if lay.binned { bx as i32 + 1 } else { bx as i32 };
            rect(root, a, y + 1, bx.max(a + 1), y + row_h - 1, &col)?;
        }
    }
    Ok(())
}

/// One panel row's cells: per column, the share of its specs taking the row's choices.
fn draw_choice_row(
    root: &Area,
    pts: &[CurvePoint],
    row: &PanelRow,
    lay: &Layout,
    xr: &std::ops::Range<i32>,
    y: i32,
) -> R<()> {
    for c in 0..lay.cols {
        let part = &pts[lay.start(c)..lay.start(c + 1)];
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
        let (a, bx) = (
            lay.xpix(xr, lay.start(c) as f64 + 0.5),
            lay.xpix(xr, lay.start(c + 1) as f64 + 0.5),
        );
        let (a, bx) = if lay.binned {
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
        rect(root, a, y + 2, bx, y + lay.row_h - 2, &seq(share))?;
    }
    Ok(())
}
