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
         dependence. A member whose pool does not hold the indicator is <em>absent</em> for it, and a member \
         whose curve equals an earlier member's (a duplicate fit: scaling does not change a tree) is counted \
         once: the band and the shares are over the distinct curves of the members that hold it. A curve is \
         flat when its range is within {} x the outcome's sd ({}); otherwise it rises or falls overall by the \
         least-squares trend of the curve over the grid, when that trend changes by more than the flat \
         tolerance across the grid and no reversal against it is larger than the tolerance; else it turns. \
         Shape: a straight line, a continuous hinge (two slopes meeting at a breakpoint) and a jump (two separate \
         lines split between neighbouring grid points) are fitted by least squares; the hinge or the jump is kept \
         only when its BIC on the grid points (the breakpoint counted as a parameter, common practice) is below \
         the line's by more than 6 (a threshold of ours: the grid points are a fitted curve, not noisy data, so this \
         is a tuning margin, not a measure of evidence) and its two segments \
         differ by more than the flat tolerance somewhere right of the breakpoint (our own rule); of the two, \
         the lower BIC wins. Otherwise the curve has no breakpoint. Tree families (trees, forests, boosting) give \
         step-shaped curves by construction, so a jump in their curve marks a split point of the model; it points to \
         a threshold in the data only where smooth families bend at the same place. A jump lies between two grid points: it is \
         placed midway and known only to that gap. The range given with a breakpoint is a {:.0}% unit-composition range: the \
         curve is recomputed from {} bootstrap resamples of units with the fitted model held fixed and its shape chosen \
         again, and the range covers the resamples that keep the same shape (their share is given). It says how \
         much the bend depends on which units are in the data, not how sure the threshold is: the model is not \
         refitted. Subgroups: k-means on each unit's mean centred curve; their number by \
         the gap statistic (Tibshirani, Walther and Hastie 2001) against curves drawn with no group structure, so \
         units whose curves differ only by degree usually stay one group, though a group whose curves spread \
         widely in amplitude can come out split in two (subgroups of one shape may be one group); a \
         unit departs when its distance from the mean centred curve exceeds the median + 3 x 1.4826 x MAD of \
         the distances. The tables are in \
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
        let _ = writeln!(h, "<p>{}</p>", shares_text(s));
        let _ = writeln!(h, "<p>{}</p>", best_text(s, sh.level));
        if s.direction == "absent" {
            h.push_str(
                "<p class=\"empty\">No subgroups: the best spec's pool does not hold this indicator.</p>\n",
            );
            continue;
        }
        let mut t = Table::new(
            "shape_clusters",
            "Subgroups of units (best spec)",
            "clusters.parquet",
            format!(
                "{} Each cluster's own shape and breakpoint are chosen on the mean curve of its units' rows, as for a member (no breakpoint for a line or a flat curve).",
                if s.k > 1 {
                    format!(
                        "k = {} by the gap statistic (mean silhouette {}, a description).",
                        s.k,
                        num(s.silhouette)
                    )
                } else {
                    "One group: the best spec's curves show no subgroup structure by the gap statistic. That is a statement \
                     about this model's curves: a model that does not capture an interaction cannot show the subgroups it \
                     would make."
                        .to_string()
                }
            ),
        )
        .cols(&[
            ("cluster", true),
            ("units", true),
            ("shape", false),
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
                escape(&c.shape),
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

/// The shares sentence of one indicator: over the distinct curves of the members holding it.
fn shares_text(s: &crate::report::shape::ShapeIndicator) -> String {
    if s.distinct == 0 {
        return format!(
            "No member's pool holds {} ({} members): no band, shares or breakpoints.",
            escape(&s.name),
            s.members
        );
    }
    let med = if s.members_bending == 0 {
        "None of the distinct curves has a breakpoint.".to_string()
    } else {
        format!(
            "{} of the {} distinct curves have a breakpoint; their median is {}.",
            s.members_bending,
            s.distinct,
            num(s.members_breakpoint)
        )
    };
    format!(
        "{} of {} members hold the indicator ({} distinct curves; a duplicate fit is counted once). Of these \
         curves {} rise overall, {} fall overall, {} are flat and {} turn. {med}",
        s.holding,
        s.members,
        s.distinct,
        share(s.rises),
        share(s.falls),
        share(s.flat),
        share(s.turns),
    )
}

/// The best spec's shape in words: no breakpoint for an absent, flat or straight curve.
fn best_text(s: &crate::report::shape::ShapeIndicator, level: f64) -> String {
    let dir = match s.direction.as_str() {
        "rises" => "rises overall",
        "falls" => "falls overall",
        "turns" => "turns (it moves against its overall trend by more than the flat tolerance)",
        d => d,
    };
    let range = || {
        format!(
            "The {:.0}% unit-composition range of the breakpoint (model held fixed) is {} to {}; {} of {} unit \
             resamples keep the {}. It says which units drive the bend, not how sure the threshold is",
            100.0 * level,
            num(s.composition_lo),
            num(s.composition_hi),
            share(s.composition_kept),
            s.composition_draws,
            escape(&s.shape)
        )
    };
    // The grid points either side of a jump.
    let gap = s
        .grid
        .windows(2)
        .find(|w| w[0] < s.breakpoint && s.breakpoint < w[1])
        .map_or((f64::NAN, f64::NAN), |w| (w[0], w[1]));
    match s.shape.as_str() {
        "absent" => "The best spec's pool does not hold the indicator: its curve cannot move (it is drawn flat), so no \
         shape, breakpoint or subgroups are given for it."
            .to_string(),
        "" => "The best spec is not among the specs drawn: no best curve.".to_string(),
        "flat" => {
            "The best spec's curve is flat (its range is within the flat tolerance): no shape or breakpoint."
                .to_string()
        }
        "line" => format!(
            "The best spec's curve {dir}; a straight line describes it best (slope {}): no breakpoint.",
            num(s.slope_left)
        ),
        "hinge" => format!(
            "The best spec's curve {dir}; it bends at {} (a continuous hinge: slope {} left of it, {} right of \
             it). {}.",
            num(s.breakpoint),
            num(s.slope_left),
            num(s.slope_right),
            range()
        ),
        _ => format!(
            "The best spec's curve {dir}; it jumps by {} between the grid points {} and {} (placed at {}; slope \
             {} left of it, {} right of it). {}.",
            num(s.jump),
            num(gap.0),
            num(gap.1),
            num(s.breakpoint),
            num(s.slope_left),
            num(s.slope_right),
            range()
        ),
    }
}
