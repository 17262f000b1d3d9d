//! Every table of the report, in page order.

use super::*;

pub(super) fn tables(r: &Report) -> Vec<Table> {
    let mut out = vec![
        good_sets_table(r),
        conclusions_table(r),
        curve_table(r),
        error_shares_table(r),
        error_by_choice_table(r),
        error_by_param_table(r),
        rank_shares_table(r),
        rank_by_choice_table(r),
        good_makeup_table(r),
        importance_table(r),
        rank_counts_table(r),
        agreement_table(r),
        stability_table(r),
        best_frequency_table(r),
    ];
    // The refit beside the stored-error stability (when the run has one).
    out.extend(super::refit::tables(r));
    out.extend(super::nested::tables(r));
    out.extend(super::null::tables(r));
    out
}

/// The three good-set definitions side by side.
fn good_sets_table(r: &Report) -> Table {
    let mut t = Table::new(
        "good_sets",
        "Good sets",
        "good_sets.parquet",
        "The three definitions of the good set side by side: the rule, its threshold, and how many ok specs meet it."
            .into(),
    )
    .cols(&[
        ("definition", false),
        ("rule", false),
        ("threshold", true),
        ("size", true),
        ("distinct fits", true),
        ("share of ok specs", true),
    ]);
    for g in &r.good_sets {
        t.push(vec![
            g.definition.clone(),
            g.rule.clone(),
            num(g.threshold),
            g.size.to_string(),
            g.distinct_fits.to_string(),
            share(g.share_of_ok),
        ]);
    }
    t
}

/// The conclusions and their support.
fn conclusions_table(r: &Report) -> Table {
    let mut t = Table::new(
        "conclusions",
        "Conclusions and their support",
        "conclusions.parquet",
        format!(
            "Plain statements with the share of specs supporting them over all ok specs and over the good set ({}); \
             the pivot is the choice whose removal would change the support over all ok specs most.",
            r.meta.good
        ),
    )
    .cols(&[
        ("source", false),
        ("statement", false),
        ("level", false),
        ("kind", false),
        ("support, all ok", true),
        ("n all", true),
        ("support, good set", true),
        ("n good", true),
        ("pivot dimension", false),
        ("pivot choice", false),
        ("support without it", true),
    ]);
    for c in &r.conclusions {
        t.push(vec![
            c.source.clone(),
            c.statement.clone(),
            c.level.clone(),
            c.kind.clone(),
            share(c.support_all),
            c.n_all.to_string(),
            share(c.support_good),
            c.n_good.to_string(),
            c.pivot_dimension.clone(),
            c.pivot_choice.clone(),
            share(c.support_without),
        ]);
    }
    t
}

/// The specification curve: every ok spec ranked, with its interval, good flags and choices.
fn curve_table(r: &Report) -> Table {
    let metric = metric_name(r);

    let mut cols: Vec<(String, bool)> = vec![
        ("rank".into(), true),
        ("spec id".into(), false),
        (metric.clone(), true),
        ("lower".into(), true),
        ("upper".into(), true),
    ];
    for d in GOOD_DEFINITIONS {
        cols.push((format!("good ({d})"), false));
    }
    for d in &r.dimensions {
        cols.push((d.dimension.clone(), false));
    }
    let mut t = Table::new(
        "curve",
        "Specification curve",
        "curve.parquet",
        format!(
            "Every ok spec ranked by {metric}, lowest first, with its {}% bootstrap interval over units (B = {}).",
            num(100.0 * r.meta.level),
            r.meta.resamples
        ),
    );
    t.columns = cols.iter().map(|(c, _)| c.clone()).collect();
    t.numeric = cols.iter().map(|(_, n)| *n).collect();
    for p in &r.curve {
        let mut row = vec![
            p.position.to_string(),
            p.spec_id.clone(),
            num(p.error),
            num(p.lower),
            num(p.upper),
        ];
        row.extend(p.good.iter().map(|g| yes(*g)));
        for (d, dim) in r.dimensions.iter().enumerate() {
            row.push(
                p.choices
                    .get(d)
                    .and_then(|&c| dim.choices.get(c))
                    .cloned()
                    .unwrap_or_default(),
            );
        }
        t.push(row);
    }
    t
}

/// Each dimension's LMG share of the error's variance.
fn error_shares_table(r: &Report) -> Table {
    let mut t = Table::new(
        "error_shares",
        "Each dimension's share of the error's variance",
        "error_shares.parquet",
        "LMG (Shapley) decomposition of the R\u{b2} of the error on all varying dimensions: each dimension's part \
         averaged over every order of entry, so it holds for unbalanced and sampled designs."
            .into(),
    )
    .cols(&[
        ("dimension", false),
        ("LMG part of R\u{b2}", true),
        ("share", true),
        ("R\u{b2} alone", true),
        ("R\u{b2} all", true),
    ]);
    for s in &r.error_shares {
        t.push(vec![
            s.dimension.clone(),
            num(s.lmg),
            share(s.share),
            num(s.r2_alone),
            num(s.r2_total),
        ]);
    }
    t
}

/// The error of the specs taking each choice.
fn error_by_choice_table(r: &Report) -> Table {
    let metric = metric_name(r);

    let mut t = Table::new(
        "error_by_choice",
        "Error by choice",
        "error_by_choice.parquet",
        format!("The {metric} of the ok specs taking each choice, every other dimension varying."),
    )
    .cols(&spread_cols(&[("dimension", false), ("choice", false)]));
    for c in &r.error_by_choice {
        let mut row = vec![c.dimension.clone(), c.choice.clone()];
        row.extend(spread_vals(&c.error));
        t.push(row);
    }
    t
}

/// The error of the specs taking each value of an option's parameter.
fn error_by_param_table(r: &Report) -> Table {
    let metric = metric_name(r);

    let mut t = Table::new(
        "error_by_param",
        "Error by parameter value",
        "error_by_param.parquet",
        format!("The {metric} of the ok specs taking each value of an option's parameter."),
    )
    .cols(&spread_cols(&[
        ("option", false),
        ("parameter", false),
        ("value", true),
    ]));
    for c in &r.error_by_param {
        let mut row = vec![c.option.clone(), c.param.clone(), num(c.value)];
        row.extend(spread_vals(&c.error));
        t.push(row);
    }
    t
}

/// The dimensions' LMG shares of each name's rank.
fn rank_shares_table(r: &Report) -> Table {
    let mut t = Table::new(
        "rank_shares",
        "Which dimensions move each rank",
        "rank_shares.parquet",
        "LMG (Shapley) parts of the R\u{b2} of each indicator's or group's importance rank on the varying dimensions, over all ok specs."
            .into(),
    )
    .cols(&[
        ("level", false),
        ("kind", false),
        ("name", false),
        ("dimension", false),
        ("LMG part of R\u{b2}", true),
        ("share", true),
        ("R\u{b2} all", true),
    ]);
    for s in &r.rank_shares {
        t.push(vec![
            s.level.clone(),
            s.kind.clone(),
            s.name.clone(),
            s.dimension.clone(),
            num(s.lmg),
            share(s.share),
            num(s.r2_total),
        ]);
    }
    t
}

/// Each name's rank among the specs taking each choice.
fn rank_by_choice_table(r: &Report) -> Table {
    let k = r.meta.top_k;

    let mut t = Table::new(
        "rank_by_choice",
        "Ranks by choice",
        "rank_by_choice.parquet",
        format!("Each name's median rank and share in the top {k} among the specs taking each choice (1 = most important)."),
    )
    .cols(&[
        ("level", false),
        ("kind", false),
        ("name", false),
        ("dimension", false),
        ("choice", false),
        ("n", true),
        ("median rank", true),
        ("share top k", true),
    ]);
    for c in &r.rank_by_choice {
        t.push(vec![
            c.level.clone(),
            c.kind.clone(),
            c.name.clone(),
            c.dimension.clone(),
            c.choice.clone(),
            c.n.to_string(),
            num(c.median_rank),
            share(c.share_top_k),
        ]);
    }
    t
}

/// The make-up of the good sets by choice.
fn good_makeup_table(r: &Report) -> Table {
    let mut t = Table::new(
        "good_makeup",
        "Make-up of the good sets",
        "good_makeup.parquet",
        "How many members of each good set take each choice, against the ok specs taking it."
            .into(),
    )
    .cols(&[
        ("definition", false),
        ("dimension", false),
        ("choice", false),
        ("in good set", true),
        ("in ok specs", true),
        ("share of good set", true),
    ]);
    for g in &r.good_makeup {
        t.push(vec![
            g.definition.clone(),
            g.dimension.clone(),
            g.choice.clone(),
            g.in_good.to_string(),
            g.in_ok.to_string(),
            share(g.share_of_good),
        ]);
    }
    t
}

/// Importance over the good set, names some good member holds first.
fn importance_table(r: &Report) -> Table {
    let k = r.meta.top_k;

    let mut t = Table::new(
        "importance",
        "Importance over the good set",
        "importance_spread.parquet",
        format!(
            "Per name and kind over the good set ({}): importance spread over the members whose pool holds the \
             name (min and max are the empirical range; members that left it out are counted apart), ranks, and the share of members (and of all ok specs) ranking it in the top {k} (top k everywhere on this page: rank at most {k} with an importance above 0, \
             so the tied zeros of a sparse model are never top). Shares count specs: specs whose fits are identical (a scaling \
             before a tree family changes nothing) count as separate members, unlike the curves below, which count a duplicate fit once. Shown here by \
             level, kind and median rank; names no good member's pool holds (n = 0) come last.",
            r.meta.good
        ),
    )
    .cols(&spread_cols(&[("level", false), ("kind", false), ("name", false)]));
    t.columns.extend(
        [
            "members out of pool",
            "median rank",
            "best rank",
            "worst rank",
            "share top k (good)",
            "share top k (all ok)",
        ]
        .map(String::from),
    );
    t.numeric.extend([true; 6]);
    // Names some good member holds first (by level, kind, median rank), then the rest.
    let mut order: Vec<&crate::report::model::ImportanceSummary> = r.importance.iter().collect();
    order.sort_by(|a, b| {
        (a.importance.n == 0)
            .cmp(&(b.importance.n == 0))
            .then_with(|| a.level.cmp(&b.level))
            .then_with(|| a.kind.cmp(&b.kind))
            .then_with(|| a.median_rank.total_cmp(&b.median_rank))
            .then_with(|| a.name.cmp(&b.name))
    });
    for i in order {
        let mut row = vec![i.level.clone(), i.kind.clone(), i.name.clone()];
        row.extend(spread_vals(&i.importance));
        row.extend([
            i.out_of_pool.to_string(),
            num(i.median_rank),
            i.best_rank.to_string(),
            i.worst_rank.to_string(),
            share(i.share_top_k),
            share(i.share_top_k_all),
        ]);
        t.push(row);
    }
    t
}

/// The rank distribution over the good set.
fn rank_counts_table(r: &Report) -> Table {
    let mut t = Table::new(
        "rank_counts",
        "Rank distribution over the good set",
        "rank_counts.parquet",
        "How many good-set members give each name each rank.".into(),
    )
    .cols(&[
        ("level", false),
        ("kind", false),
        ("name", false),
        ("rank", true),
        ("members", true),
    ]);
    for c in &r.rank_counts {
        t.push(vec![
            c.level.clone(),
            c.kind.clone(),
            c.name.clone(),
            c.rank.to_string(),
            c.count.to_string(),
        ]);
    }
    t
}

/// Rank agreement between good-set members.
fn agreement_table(r: &Report) -> Table {
    let mut t = Table::new(
        "agreement",
        "Rank agreement between good-set members",
        "agreement.parquet",
        "Kendall's tau-b between the members' importance orderings: mean and minimum over pairs (the matrix is in the Parquet file and the plot)."
            .into(),
    )
    .cols(&[
        ("level", false),
        ("kind", false),
        ("members", true),
        ("capped", false),
        ("mean tau-b", true),
        ("min tau-b", true),
    ]);
    for a in &r.agreement {
        t.push(vec![
            a.level.clone(),
            a.kind.clone(),
            a.members.len().to_string(),
            yes(a.capped),
            num(a.mean),
            num(a.min),
        ]);
    }
    t
}

/// Stability of the top names under resampling units.
fn stability_table(r: &Report) -> Table {
    let k = r.meta.top_k;

    let mut t = Table::new(
        "stability",
        "Stability under resampling units",
        "stability.parquet",
        format!(
            "Over {} resamples of units, the best spec and the good set recomputed from the stored per-unit errors: \
             how often each name stays in the top {k}. Each resample's good set uses the {} rule{}.",
            r.meta.resamples,
            if r.meta.good == "margin" { "margin" } else { "ratio" },
            if r.meta.good == "paired" {
                " (the paired rule would need a bootstrap inside every resample), so these shares are not \
                 over the paired good set the rest of this report uses"
            } else {
                ""
            }
        ),
    )
    .cols(&[
        ("level", false),
        ("kind", false),
        ("name", false),
        ("mean share top k", true),
        ("top k in most of the good set", true),
        ("top k in the best spec", true),
    ]);
    for s in &r.stability {
        t.push(vec![
            s.level.clone(),
            s.kind.clone(),
            s.name.clone(),
            share(s.mean_share_top_k),
            share(s.share_majority),
            share(s.share_in_best),
        ]);
    }
    t
}

/// How often each spec is the best over resamples.
fn best_frequency_table(r: &Report) -> Table {
    let mut t = Table::new(
        "best_frequency",
        "How often each spec is the best",
        "best_frequency.parquet",
        "Share of unit resamples in which each spec has the lowest error (specs best at least once).".into(),
    )
    .cols(&[("spec id", false), ("share of resamples", true)]);
    for b in &r.best_frequency {
        t.push(vec![b.spec_id.clone(), share(b.share)]);
    }
    t
}

/// The columns of a spread (`n`, min, quartiles, max) after `first`.
fn spread_cols(first: &[(&'static str, bool)]) -> Vec<(&'static str, bool)> {
    let mut c: Vec<(&str, bool)> = first.to_vec();
    c.extend([
        ("n", true),
        ("min", true),
        ("q1", true),
        ("median", true),
        ("q3", true),
        ("max", true),
    ]);
    c
}

/// A spread's cells, in `spread_cols` order.
fn spread_vals(s: &crate::report::model::Spread) -> Vec<String> {
    vec![
        s.n.to_string(),
        num(s.min),
        num(s.q1),
        num(s.median),
        num(s.q3),
        num(s.max),
    ]
}

/// The run's metric name, or "error" when the report has none.
fn metric_name(r: &Report) -> String {
    if r.meta.metric.is_empty() {
        "error".to_string()
    } else {
        r.meta.metric.clone()
    }
}
