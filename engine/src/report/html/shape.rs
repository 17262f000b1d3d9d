//! The page's section on the shape of associations, from the run's curves (RUN_DIR/curves/,
//! read into [`Report::shape`]): the methods in brief, the caution, then per indicator its
//! plot, the sign shares, the best spec's breakpoint, and the subgroups of units.

use super::*;
use crate::report::plots::shape::{shape_file, shape_plots};

/// Units listed per cluster before "and N more".
const UNITS_SHOWN: usize = 30;

/// Append `<section id="shape">` when the report has curves.
pub(super) fn section(report: &Report, h: &mut String) {
    let Some(sh) = &report.shape else {
        return;
    };
    h.push_str("<section id=\"shape\">\n<h2>The shape of an association</h2>\n");
    let _ = writeln!(
        h,
        "<p class=\"about\">Curves of {} member spec(s) ({}), on {}. \
         Each member is fitted on all rows; for every row the indicator is set to each point of a grid of its \
         {} observed quantiles and the prediction is made through the whole pipeline (pool, fill, scale, \
         compression, model, back-transform): these are the individual curves (ICE), their mean the partial \
         dependence. A curve is flat when its range is within {} x the outcome's sd ({}); otherwise it rises or \
         falls when its end differs from its start beyond that, else it turns. The breakpoint is that of a hinge, the best fit of a \
         continuous two-segment line by least squares (searched over the inner grid), with a {:.0}% percentile \
         interval from {} bootstrap resamples of units (the fit is not redone per resample: the interval is \
         about which units drive the shape). Subgroups: k-means on each unit's mean centred curve, k = 2 to 4 by \
         the largest mean silhouette, kept only if it reaches 0.5 (a rule of common practice), else one group; a \
         unit departs when its distance from the mean centred curve exceeds the median + 3 x 1.4826 x MAD of \
         the distances. A continuous hinge fitted to a curve with a jump (trees, forests and boosting give steps) \
         starts its ramp before the jump: read the breakpoint beside the plot. The tables are in \
         <code>curves/</code> beside the run's tables.</p>",
        sh.members,
        escape(&sh.rule),
        if sh.indicators_by == "listed" {
            format!("{} listed indicators", sh.indicators.len())
        } else {
            format!(
                "the top {} indicators by mean {} importance over the good set",
                sh.indicators.len(),
                escape(&sh.indicators_by)
            )
        },
        sh.grid,
        num(sh.flat_share),
        num(sh.flat_tolerance),
        100.0 * sh.level,
        sh.resamples
    );
    h.push_str(
        "<p class=\"notes\">These curves show how each model's prediction moves with an indicator, the rest of \
         the row held as observed: an association in the fitted model, not a causal effect of changing the \
         indicator, and not a statement about any person. Collinear indicators share their association, so a \
         curve can be flat only because another indicator carries it.</p>\n",
    );
    let plots = match shape_plots(report) {
        Ok(p) => p,
        Err(e) => {
            let _ = writeln!(
                h,
                "<p class=\"omitted\">The shape plots failed: {}</p>",
                escape(&e.to_string())
            );
            Vec::new()
        }
    };
    for (i, s) in sh.indicators.iter().enumerate() {
        let _ = writeln!(h, "<h3>{}</h3>", escape(&s.name));
        if let Some(p) = plots.iter().find(|p| p.file == shape_file(&s.name)) {
            let _ = writeln!(h, "<figure id=\"{}\">", escape(&anchor(&p.file)));
            h.push_str(
                &p.svg
                    .replacen(" xmlns=\"http://www.w3.org/2000/svg\"", "", 1),
            );
            let _ = writeln!(
                h,
                "<figcaption>{} &middot; also saved as <code>report/{}</code></figcaption>\n</figure>",
                escape(&p.title),
                escape(&p.file)
            );
        }
        let best = if s.direction == "flat" {
            "The best spec's curve is flat (its range is within the flat tolerance, or its pool does not hold \
             the indicator): no breakpoint is given for it"
                .to_string()
        } else {
            format!(
                "The best spec's curve {}; its hinge breakpoint is {} ({:.0}% interval over unit resamples with \
                 the model held fixed: {} to {}, {} resamples fitted; it says which units drive the bend, not how \
                 sure the threshold is), slope {} left of it and {} right of it",
                escape(&s.direction),
                num(s.breakpoint),
                100.0 * sh.level,
                num(s.breakpoint_lo),
                num(s.breakpoint_hi),
                s.draws,
                num(s.slope_left),
                num(s.slope_right),
            )
        };
        let _ = writeln!(
            h,
            "<p>Over {} members the curve rises in {}, falls in {}, is flat in {} and turns in {}. {best}; the \
             members' median breakpoint is {}.</p>",
            s.members,
            share(s.rises),
            share(s.falls),
            share(s.flat),
            share(s.turns),
            num(s.members_breakpoint)
        );
        let mut t = Table::new(
            "shape_clusters",
            "Subgroups of units (best spec)",
            "clusters.parquet",
            format!(
                "k = {} (mean silhouette {}); each cluster's own breakpoint is fitted to the mean curve of its units' rows.",
                s.k.max(1),
                num(s.silhouette)
            ),
        )
        .cols(&[
            ("cluster", true),
            ("units", true),
            ("breakpoint", true),
            ("slope left", true),
            ("slope right", true),
            ("its units", false),
        ]);
        for c in &s.clusters {
            let mut names = c
                .units
                .iter()
                .take(UNITS_SHOWN)
                .cloned()
                .collect::<Vec<_>>()
                .join(", ");
            if c.units.len() > UNITS_SHOWN {
                names.push_str(&format!(" and {} more", c.units.len() - UNITS_SHOWN));
            }
            t.push(vec![
                c.cluster.to_string(),
                c.units.len().to_string(),
                num(c.breakpoint),
                num(c.slope_left),
                num(c.slope_right),
                names,
            ]);
        }
        // One clusters table per indicator: give each its own anchor.
        let mut one = String::new();
        t.render(&mut one);
        h.push_str(&one.replacen(
            "id=\"table-shape_clusters\"",
            &format!("id=\"table-shape-clusters-{i}\""),
            1,
        ));
        if s.departing.is_empty() {
            let _ = writeln!(
                h,
                "<p class=\"empty\">No unit's curve departs from the mean beyond the bound ({}).</p>",
                num(s.bound)
            );
        } else {
            let list: Vec<String> = s
                .departing
                .iter()
                .map(|(u, d)| format!("{} ({})", escape(u), num(*d)))
                .collect();
            let _ = writeln!(
                h,
                "<p>Units whose curve departs from the mean beyond the bound {} (distance in brackets): {}.</p>",
                num(s.bound),
                list.join(", ")
            );
        }
    }
    h.push_str("</section>\n");
}
