//! The headline: a few plain sentences for the top of the page and the terminal, built
//! only from the other sections.

use super::model::Report;

fn pct(x: f64) -> String {
    if x.is_nan() {
        "n/a".into()
    } else {
        format!("{:.0}%", 100.0 * x)
    }
}

/// Sentences from a report whose other sections are filled in. `primary` names the
/// (level, kind) pairs whose top names are quoted, indicator level first.
pub fn headline(r: &Report, primary: &[(String, String)]) -> Vec<String> {
    let m = &r.meta;
    let mut out = Vec::new();
    let failed = m.specs_total.saturating_sub(m.specs_ok);
    out.push(format!(
        "{} specs were read: {} ran to completion{}.",
        m.specs_total,
        m.specs_ok,
        if failed > 0 {
            format!(", {failed} failed or are missing")
        } else {
            String::new()
        }
    ));
    if m.specs_ok == 0 {
        out.push("No spec ran to completion: there is nothing to compare.".into());
        return out;
    }
    let sizes: Vec<String> = r
        .good_sets
        .iter()
        .map(|g| {
            let distinct = if g.distinct_fits < g.size {
                format!(", {} distinct fits", g.distinct_fits)
            } else {
                String::new()
            };
            format!(
                "{} by the {} rule{distinct} ({})",
                g.size, g.definition, g.rule
            )
        })
        .collect();
    out.push(format!("Good specs: {}.", sizes.join("; ")));
    out.push(format!(
        "The best {} is {:.4} (spec {}); the median over all ok specs is {:.4}.",
        m.metric, m.best_error, m.best_spec, m.median_error
    ));
    for (level, kind) in primary {
        let mut tops: Vec<&super::model::ImportanceSummary> = r
            .importance
            .iter()
            .filter(|s| &s.level == level && &s.kind == kind && s.share_top_k >= 0.5)
            .collect();
        tops.sort_by(|a, b| {
            b.share_top_k
                .total_cmp(&a.share_top_k)
                .then(a.name.cmp(&b.name))
        });
        let what = if level == "group" {
            "groups"
        } else {
            "indicators"
        };
        if tops.is_empty() {
            out.push(format!(
                "No {} is in the top {} of at least half the good specs ({kind} importance).",
                &what[..what.len() - 1],
                m.top_k
            ));
        } else {
            let list: Vec<String> = tops
                .iter()
                .take(5)
                .map(|s| format!("{} ({})", s.name, pct(s.share_top_k)))
                .collect();
            out.push(format!(
                "Top-{} {what} across the good set ({kind} importance; share of good specs): {}.",
                m.top_k,
                list.join(", ")
            ));
        }
    }
    if let Some(s) = r
        .error_shares
        .iter()
        .max_by(|a, b| a.lmg.total_cmp(&b.lmg))
        .filter(|s| s.r2_total > 0.0)
    {
        out.push(format!(
            "The choice that moves the {} most is {} ({} of the variance across specs; the dimensions together explain {}, the rest is how choices combine).",
            m.metric,
            s.dimension,
            pct(s.lmg),
            pct(s.r2_total)
        ));
    }
    // The dimension with the largest mean share of the top names' rank variance.
    if let Some((level, kind)) = primary.first() {
        let tops: Vec<&str> = r
            .importance
            .iter()
            .filter(|s| &s.level == level && &s.kind == kind && s.share_top_k >= 0.5)
            .map(|s| s.name.as_str())
            .collect();
        let mut by_dim: std::collections::BTreeMap<&str, (f64, usize)> = Default::default();
        for s in r
            .rank_shares
            .iter()
            .filter(|s| &s.level == level && &s.kind == kind && tops.contains(&s.name.as_str()))
        {
            let e = by_dim.entry(s.dimension.as_str()).or_default();
            e.0 += s.lmg;
            e.1 += 1;
        }
        if let Some((d, (sum, n))) = by_dim
            .iter()
            .max_by(|a, b| (a.1 .0 / a.1 .1 as f64).total_cmp(&(b.1 .0 / b.1 .1 as f64)))
        {
            if *sum > 0.0 {
                out.push(format!(
                    "The choice that moves the top indicators' ranks most is {d} (on average {} of their rank variance).",
                    pct(sum / *n as f64)
                ));
            }
        }
    }
    out.push(
        "These are associations in observational unit-level data, not causes, and say nothing about individuals: read the cautions below."
            .into(),
    );
    out
}
