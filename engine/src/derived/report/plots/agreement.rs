//! `agreement-LEVEL-KIND.svg`: pairwise rank agreement (Kendall's tau-b) between good members.

use super::*;

// ---------------------------------------------------------------------------------------
// Pairwise rank agreement.

pub(super) fn agreement(
    report: &Report,
    idx: usize,
    level: &str,
    kind: &str,
) -> Result<Option<Plot>> {
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
