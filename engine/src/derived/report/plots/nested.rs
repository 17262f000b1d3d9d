//! `nested.svg`: the naive best error, the nested error and the training-median baseline
//! as three bars on one error axis from zero, the outer folds' own errors as ticks on the
//! nested bar, and the gap nested - naive (the optimism of choosing the best) bracketed.

use super::*;

pub(super) fn nested(report: &Report) -> Result<Option<Plot>> {
    let Some(n) = &report.nested else {
        return Ok(None);
    };
    if !n.nested_error.is_finite() {
        return Ok(None);
    }
    let m = &n.metric;
    let rows: Vec<(&str, f64, RGBColor)> = vec![
        ("naive best", n.naive_error, POINT),
        ("nested", n.nested_error, GOOD),
        ("baseline (training median)", n.baseline_error, MUTED),
    ];
    let folds: Vec<f64> = n
        .folds
        .iter()
        .map(|f| f.outer_error)
        .filter(|v| v.is_finite())
        .collect();
    let hi = rows
        .iter()
        .map(|r| r.1)
        .chain(folds.iter().copied())
        .filter(|v| v.is_finite())
        .fold(0.0f64, f64::max)
        * 1.08;
    if hi.is_nan() || hi <= 0.0 {
        return Ok(None);
    }
    let caption = format!(
        "{m} in outcome units. Naive best: the lowest {m} of the {} specs the outer folds chose among, in the run's own folds (chosen and scored on the same folds){}. Nested: the choice \
         among {} specs repeated inside each of {} outer folds, the chosen spec refitted on the outer training units and \
         scored on the held-out units (ticks: each outer fold's own {m}). Baseline: each outer test row predicted by its \
         outer training median. Optimism of choosing the best = nested - naive = {}.",
        n.specs_swept,
        if n.naive_error.is_finite() {
            ""
        } else {
            " (not shown: the report ranks by another metric)"
        },
        n.specs_swept,
        n.outer_folds,
        num(n.optimism)
    );
    let (left, right, row_h) = (230i32, WIDTH as i32 - 40, 38i32);
    let body_h = (rows.len() as i32 * row_h + 70) as u32;
    let plot = figure(
        "nested.svg",
        "Naive best vs nested estimate vs baseline",
        &caption,
        body_h,
        |root, top, marks| {
            let y0 = top + 10;
            let y1 = y0 + rows.len() as i32 * row_h;
            let x = |v: f64| left + ((v / hi) * (right - left) as f64).round() as i32;
            marks.push((left, y0, right, y1));
            // axis and grid
            let ticks = 5;
            let lab = font_at(11.0, &MUTED, HPos::Center, VPos::Top);
            for k in 0..=ticks {
                let v = hi * k as f64 / ticks as f64;
                vline(root, x(v), y0, y1, &GRID, 1)?;
                text(root, &num(v), x(v), y1 + 6, &lab)?;
            }
            hline(root, left, right, y1, &MUTED, 1)?;
            text(
                root,
                &format!("{m} (outcome units)"),
                (left + right) / 2,
                y1 + 26,
                &font_at(12.0, &INK, HPos::Center, VPos::Top),
            )?;
            let label = font_at(12.0, &INK, HPos::Right, VPos::Center);
            let value = font_at(11.0, &INK, HPos::Left, VPos::Center);
            for (i, (name, v, col)) in rows.iter().enumerate() {
                let (ya, yb) = (y0 + i as i32 * row_h, y0 + (i as i32 + 1) * row_h);
                let yc = (ya + yb) / 2;
                text(root, name, left - 8, yc, &label)?;
                if !v.is_finite() {
                    text(root, "not comparable", left + 6, yc, &value)?;
                    continue;
                }
                rect(root, left, ya + 9, x(*v), yb - 9, col)?;
                let mut end = *v;
                if *name == "nested" {
                    for f in &folds {
                        vline(root, x(*f), ya + 4, yb - 4, &GOOD_DARK, 2)?;
                        end = end.max(*f);
                    }
                }
                text(root, &num(*v), x(end) + 6, yc, &value)?;
            }
            // bracket the optimism between the naive and nested bar ends
            if n.naive_error.is_finite() {
                let (xa, xb) = (x(n.naive_error), x(n.nested_error));
                let yb = y0 + row_h + 3;
                hline(root, xa.min(xb), xa.max(xb), yb, &INK, 1)?;
                vline(root, xa, yb - 4, yb + 4, &INK, 1)?;
                vline(root, xb, yb - 4, yb + 4, &INK, 1)?;
            }
            Ok(())
        },
    )?;
    Ok(Some(plot))
}
