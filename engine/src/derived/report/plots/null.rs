//! `null-best.svg`: the permutation null's best error per draw as a histogram, with the
//! observed best (over the same specs) marked.

use super::*;

pub(super) fn null_best(report: &Report) -> Result<Option<Plot>> {
    let Some(n) = &report.null else {
        return Ok(None);
    };
    let vals: Vec<f64> = n
        .null_best
        .iter()
        .copied()
        .filter(|v| v.is_finite())
        .collect();
    if vals.is_empty() || !n.observed_best.is_finite() {
        return Ok(None);
    }
    let (lo, hi) = range(vals.iter().copied().chain([n.observed_best]));
    let bins = ((vals.len() as f64).sqrt().ceil() as usize).clamp(5, 30);
    let w = (hi - lo) / bins as f64;
    let mut counts = vec![0usize; bins];
    for v in &vals {
        let b = (((v - lo) / w).floor().max(0.0) as usize).min(bins - 1);
        counts[b] += 1;
    }
    let cmax = counts.iter().copied().max().unwrap_or(1).max(1);
    let title = format!("Best {} under the permutation null", n.metric);
    let caption = format!(
        "Bars: the best (lowest) {m} over {s} specs in each of {d} draws whose outcome was shuffled across units \
         (a unit's waves together). Orange line: the observed best {m} over the same specs ({o}). \
         p = (1 + draws at or left of the line) / (1 + {d}) = {p}.",
        m = n.metric,
        s = n.specs,
        d = n.draws,
        o = num(n.observed_best),
        p = num(n.p_best)
    );
    let body_h = 230;
    let plot = figure(
        "null-best.svg",
        &title,
        &caption,
        body_h,
        |root, top, marks| {
            let (x0, x1) = (70, WIDTH as i32 - 40);
            let (y0, y1) = (top + 14, top + body_h as i32 - 40);
            let sx = |v: f64| x0 + ((v - lo) / (hi - lo) * (x1 - x0) as f64) as i32;
            let sy = |c: usize| y1 - ((c as f64 / cmax as f64) * (y1 - y0) as f64) as i32;
            rect(root, x0, y0, x1, y1, &STRIPE)?;
            for c in 0..=cmax {
                if cmax <= 10 || c % cmax.div_ceil(5) == 0 {
                    hline(root, x0, x1, sy(c), &GRID, 1)?;
                    let lab = font_at(10.0, &MUTED, HPos::Right, VPos::Center);
                    text(root, &c.to_string(), x0 - 6, sy(c), &lab)?;
                }
            }
            for (b, &c) in counts.iter().enumerate() {
                if c == 0 {
                    continue;
                }
                let a = sx(lo + b as f64 * w);
                let z = sx(lo + (b + 1) as f64 * w);
                rect(root, a + 1, sy(c), (z - 1).max(a + 2), y1, &SPAN)?;
            }
            marks.push((x0, y0, x1, y1));
            let ox = sx(n.observed_best);
            vline(root, ox, y0 - 6, y1, &GOOD, 3)?;
            let lab = bold_at(11.0, HPos::Left, VPos::Center);
            text(root, "observed", (ox + 5).min(x1 - 60), y0 - 2, &lab)?;
            let tick = font_at(10.0, &MUTED, HPos::Center, VPos::Top);
            for i in 0..=4 {
                let v = lo + (hi - lo) * i as f64 / 4.0;
                text(root, &num(v), sx(v), y1 + 6, &tick)?;
            }
            let axis = font_at(11.0, &INK, HPos::Center, VPos::Top);
            text(
                root,
                &format!("best {} of a draw (lower is better)", n.metric),
                (x0 + x1) / 2,
                y1 + 22,
                &axis,
            )?;
            let ylab = font_at(11.0, &INK, HPos::Left, VPos::Center);
            text(root, "draws", 16, y0 - 2, &ylab)?;
            Ok(())
        },
    )?;
    Ok(Some(plot))
}
