//! `shape-INDICATOR.svg`: the shape of one indicator's association over the curves'
//! members (RUN_DIR/curves/): the band of partial dependence (median and quantiles across
//! distinct curves of the members holding the indicator per grid point), the best spec's
//! partial dependence, its breakpoint (hinge or jump, when it has one) with the
//! unit-composition range, and a rug of the observed values; beside it the shares of those
//! curves that rise, fall, are flat or turn.

use super::*;
use crate::report::shape::{Shape, ShapeIndicator};

/// Colours of the four directions (rises, falls, flat, turns).
const DIRS: [(&str, RGBColor); 4] = [
    ("rises", POS),
    ("falls", NEG),
    ("flat", MUTED),
    ("turns", GOOD),
];

/// One plot per indicator of the run's curves (none without curves).
pub fn shape_plots(report: &Report) -> Result<Vec<Plot>> {
    let Some(sh) = &report.shape else {
        return Ok(Vec::new());
    };
    sh.indicators
        .iter()
        .filter(|s| !s.grid.is_empty() && s.distinct > 0)
        .map(|s| one(sh, s))
        .collect()
}

/// File name of an indicator's plot.
pub fn shape_file(name: &str) -> String {
    format!("shape-{}.svg", slug(name))
}

fn one(sh: &Shape, s: &ShapeIndicator) -> Result<Plot> {
    let title = format!("The shape of the association: {}", s.name);
    let caption = format!(
        "Partial dependence of the prediction on {} (outcome units) over a grid of {} observed quantiles of the \
         indicator, each spec fitted on all rows. Shaded band: the {:.0}% range of the {} distinct curves of the members ({}) per \
         grid point; dashed line: their median; dark line: the best spec's curve. Orange line and shading: the best \
         spec's breakpoint (only when a hinge or jump beats a straight line) and its {:.0}% unit-composition range \
         over {} unit resamples with the model held fixed (not how sure the threshold is). Ticks below the axis: \
         observed values. Right: share of the distinct curves that rise or fall overall, are flat (range within \
         {} of the outcome's sd) or turn. An association in the model, not a causal effect.",
        s.name,
        s.grid.len(),
        100.0 * sh.level,
        s.distinct,
        sh.rule,
        100.0 * sh.level,
        sh.resamples,
        num(sh.flat_share)
    );
    let (x0, x1) = (78, 650);
    let ph = 210;
    figure(
        &shape_file(&s.name),
        &title,
        &caption,
        300,
        |root, top, marks| {
            let (y0, y1) = (top + 20, top + 20 + ph);
            let (gx0, gx1) = range(s.grid.iter().copied().chain(s.observed.iter().copied()));
            let (vy0, vy1) = range(
                s.lo.iter()
                    .chain(&s.hi)
                    .chain(&s.median)
                    .chain(&s.best_pd)
                    .copied(),
            );
            let px = |v: f64| x0 + ((v - gx0) / (gx1 - gx0) * (x1 - x0) as f64).round() as i32;
            let py = |v: f64| y1 - ((v - vy0) / (vy1 - vy0) * (y1 - y0) as f64).round() as i32;
            rect(root, x0, y0, x1, y1, &STRIPE)?;
            // Axes: five ticks each.
            let tick = font_at(10.0, &MUTED, HPos::Right, VPos::Center);
            let tick_x = font_at(10.0, &MUTED, HPos::Center, VPos::Top);
            for i in 0..=4 {
                let v = vy0 + (vy1 - vy0) * i as f64 / 4.0;
                hline(root, x0, x1, py(v), &GRID, 1)?;
                text(root, &num(v), x0 - 6, py(v), &tick)?;
                let g = gx0 + (gx1 - gx0) * i as f64 / 4.0;
                text(root, &num(g), px(g), y1 + 22, &tick_x)?;
            }
            let lab = font_at(11.0, &INK, HPos::Center, VPos::Center);
            text(
                root,
                &format!("{} (observed units)", clip(&s.name, 50)),
                (x0 + x1) / 2,
                y1 + 44,
                &lab,
            )?;
            text(
                root,
                "prediction (outcome units)",
                16,
                top + 6,
                &font_at(11.0, &INK, HPos::Left, VPos::Center),
            )?;
            // Breakpoint interval (behind the curves).
            // Only a hinge or a jump has a breakpoint (flat, absent and straight curves none).
            let bends = s.shape == "hinge" || s.shape == "jump";
            let finite = |v: f64| bends && v.is_finite();
            if finite(s.composition_lo) && finite(s.composition_hi) {
                let (a, b) = (px(s.composition_lo).max(x0), px(s.composition_hi).min(x1));
                if b >= a {
                    rect(root, a, y0, b.max(a + 1), y1, &mix(&BG, &GOOD, 0.25))?;
                }
            }
            // Band.
            let mut poly: Vec<(i32, i32)> = s
                .grid
                .iter()
                .zip(&s.hi)
                .map(|(&g, &v)| (px(g), py(v)))
                .collect();
            poly.extend(
                s.grid
                    .iter()
                    .zip(&s.lo)
                    .rev()
                    .map(|(&g, &v)| (px(g), py(v))),
            );
            if poly.iter().all(|&(a, b)| a > i32::MIN && b > i32::MIN) {
                root.draw(&Polygon::new(poly, mix(&BG, &SPAN, 0.7).filled()))?;
            }
            // Median (dashed: short segments) and the best spec's curve.
            let med: Vec<(i32, i32)> = s
                .grid
                .iter()
                .zip(&s.median)
                .map(|(&g, &v)| (px(g), py(v)))
                .collect();
            for w in med.windows(2) {
                let (a, b) = (w[0], w[1]);
                let n = (((b.0 - a.0).pow(2) + (b.1 - a.1).pow(2)) as f64).sqrt() / 6.0;
                let n = n.max(1.0) as i32;
                for k in (0..n).step_by(2) {
                    let t0 = k as f64 / n as f64;
                    let t1 = ((k + 1) as f64 / n as f64).min(1.0);
                    let at = |t: f64| {
                        (
                            a.0 + ((b.0 - a.0) as f64 * t) as i32,
                            a.1 + ((b.1 - a.1) as f64 * t) as i32,
                        )
                    };
                    root.draw(&PathElement::new(
                        vec![at(t0), at(t1)],
                        POINT.stroke_width(2),
                    ))?;
                }
            }
            if s.best_pd.len() == s.grid.len() {
                let best: Vec<(i32, i32)> = s
                    .grid
                    .iter()
                    .zip(&s.best_pd)
                    .map(|(&g, &v)| (px(g), py(v)))
                    .collect();
                root.draw(&PathElement::new(best, INK.stroke_width(2)))?;
            }
            if finite(s.breakpoint) {
                vline(root, px(s.breakpoint), y0, y1, &GOOD_DARK, 2)?;
            }
            marks.push((x0, y0, x1, y1));
            // Rug.
            for &v in &s.observed {
                vline(root, px(v), y1 + 3, y1 + 12, &POINT, 1)?;
            }
            marks.push((x0, y1 + 3, x1, y1 + 12));
            // Direction shares.
            let bx0 = 700;
            let bx1 = WIDTH as i32 - 70;
            let head = bold_at(11.5, HPos::Left, VPos::Center);
            text(
                root,
                &format!("direction of {} distinct curves", s.distinct),
                bx0,
                y0 + 6,
                &head,
            )?;
            let label = font_at(11.0, &INK, HPos::Left, VPos::Center);
            let shares = [s.rises, s.falls, s.flat, s.turns];
            for (i, ((name, colr), &v)) in DIRS.iter().zip(&shares).enumerate() {
                let ya = y0 + 22 + i as i32 * 24;
                rect(root, bx0 + 46, ya, bx1, ya + 16, &LOW)?;
                let w = ((bx1 - bx0 - 46) as f64
                    * if v.is_finite() {
                        v.clamp(0.0, 1.0)
                    } else {
                        0.0
                    }) as i32;
                if w > 0 {
                    rect(root, bx0 + 46, ya, bx0 + 46 + w, ya + 16, colr)?;
                }
                text(root, name, bx0, ya + 8, &label)?;
                text(root, &pct(v), bx1 + 6, ya + 8, &label)?;
            }
            marks.push((bx0 + 46, y0 + 22, bx1, y0 + 22 + 4 * 24 - 8));
            // Best spec's hinge in words.
            let small = font_at(11.0, &INK, HPos::Left, VPos::Center);
            let lines = [
                format!("best spec: {}, {}", s.direction, s.shape),
                if bends {
                    format!(
                        "breakpoint {} [{}, {}]",
                        num(s.breakpoint),
                        num(s.composition_lo),
                        num(s.composition_hi)
                    )
                } else {
                    "breakpoint: none".to_string()
                },
                if bends {
                    format!(
                        "slope {} left, {} right",
                        num(s.slope_left),
                        num(s.slope_right)
                    )
                } else {
                    String::new()
                },
                format!(
                    "{} of {} members hold it; {} distinct",
                    s.holding, s.members, s.distinct
                ),
                if s.shape == "absent" {
                    "subgroups: none (not in the best spec's pool)".to_string()
                } else if s.k > 1 {
                    format!("subgroups: {} (silhouette {})", s.k, num(s.silhouette))
                } else {
                    "subgroups: one (gap statistic)".to_string()
                },
                format!("departing units: {}", s.departing.len()),
            ];
            for (i, l) in lines.iter().enumerate() {
                text(root, l, bx0, y0 + 130 + i as i32 * 17, &small)?;
            }
            Ok(())
        },
    )
}
