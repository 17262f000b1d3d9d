//! `error-influence.svg` and `rank-influence-LEVEL-KIND.svg`: box rows of spreads by choice, with LMG shares.

use super::*;

// ---------------------------------------------------------------------------------------
// Box rows: a label column, a value axis with quartile boxes, and an optional right panel.

pub(super) struct BoxRow {
    /// Group header shown above the row when it starts a group.
    pub(super) group: Option<String>,
    pub(super) label: String,
    pub(super) spread: Spread,
}

/// Draw rows of spreads on a shared value axis; returns the y pixel (top, bottom) of each
/// row and the x pixel range of the axis.
#[allow(clippy::too_many_arguments)]
pub(super) fn box_rows(
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

pub(super) fn error_influence(report: &Report) -> Result<Option<Plot>> {
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

pub(super) fn rank_influence(report: &Report, level: &str, kind: &str) -> Result<Option<Plot>> {
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
