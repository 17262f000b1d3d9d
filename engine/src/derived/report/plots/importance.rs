//! `importance-LEVEL-KIND.svg`: the importance distribution over the good set.

use super::*;

// ---------------------------------------------------------------------------------------
// The importance distribution over the good set.

pub(super) fn importance(report: &Report, level: &str, kind: &str) -> Result<Option<Plot>> {
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
