//! The permutation null's tables on the page (when the run has a null).

use super::*;

/// Units never permuted, and the warning when too many (a rule of thumb of our own).
fn fixed_text(n: &crate::report::null::NullReport) -> String {
    let count = format!(
        "Units never permuted (no other unit observed in the same set of waves): {} of {}.",
        n.units_fixed, n.units
    );
    if n.units_fixed as f64 > crate::null::FIXED_WARN_SHARE * n.units as f64 {
        format!(
            "{count} Warning: {}",
            crate::null::fixed_warning(n.units_fixed, n.units)
        )
    } else {
        count
    }
}

pub(super) fn tables(r: &Report) -> Vec<Table> {
    let Some(n) = &r.null else {
        return Vec::new();
    };
    let mut out = Vec::new();
    let sample = if n.specs < n.specs_in_space {
        format!(
            "a seeded sample of {} of the {} specs",
            n.specs, n.specs_in_space
        )
    } else {
        format!("all {} specs", n.specs)
    };
    let mut t = Table::new(
        "null_summary",
        "Better than chance? The observed sweep against the permutation null",
        "null_summary.parquet",
        format!(
            "Each of the {} draws permutes the outcome across units (a unit's waves move together; units are exchanged \
             only with units observed in the same waves) and reruns {sample}; the observed statistics use the same specs \
             and the {} error. Held fixed in every draw: the indicators and their gaps, the folds, each unit's set of \
             waves, the weights that do not read the outcome, and the outcome's values within each wave (so per-wave \
             means and trends shared through the wave survive); weights derived from the outcome are refitted on the \
             permuted one. The null tested is therefore no within-wave, between-unit association. {} p = (1 + number of draws at least as good as observed) / (1 + {}): the +1 correction \
             counts the observed data as one permutation, so the smallest possible p is {}. A small p says the best \
             (or median) error is lower than the outcome-shuffled data give by searching the same specs; it says \
             nothing about which spec or indicator matters.{}",
            n.draws,
            n.metric,
            fixed_text(n),
            n.draws,
            num(1.0 / (1.0 + n.draws as f64)),
            if n.draws < n.draws_asked {
                format!(" Incomplete: {} of {} draws.", n.draws, n.draws_asked)
            } else {
                String::new()
            }
        ),
    )
    .cols(&[
        ("statistic", false),
        ("observed", true),
        ("null 5%", true),
        ("null median", true),
        ("null 95%", true),
        ("draws as good", true),
        ("draws", true),
        ("p", true),
    ]);
    for (name, obs, v, p) in [
        ("best", n.observed_best, &n.null_best, n.p_best),
        ("median", n.observed_median, &n.null_median, n.p_median),
    ] {
        t.push(vec![
            format!("{name} {}", n.metric),
            num(obs),
            num(crate::report::null::q(v, 0.05)),
            num(crate::report::null::q(v, 0.5)),
            num(crate::report::null::q(v, 0.95)),
            v.iter()
                .filter(|x| !x.is_finite() || **x <= obs)
                .count()
                .to_string(),
            n.draws.to_string(),
            num(p),
        ]);
    }
    out.push(t);

    let mut t = Table::new(
        "null_indicators",
        "How often each indicator would rank top by chance",
        "null_indicators.parquet",
        format!(
            "An indicator (group) is top when its native-importance rank in the best spec (lowest {} among the null's specs \
             holding native importances{}) is at most {} and its importance is above 0. That spec's kind is then fixed: in \
             each draw the top comes from the draw's best spec of the same kind, so kinds are never mixed. Chance = share \
             of the {} draws where it is top (a draw without an ok spec of that kind counts as not top). About top_k names are top in every draw, so \
             the chance rates average about top_k / (number of names): a rate for a name picked because it came out top \
             is not a p-value for it (no test here survives that selection). These rates are about each draw's single best spec; the conclusions' \
             support over each draw's good set is in the next table.",
            n.metric,
            match (&n.top_spec, &n.top_kind) {
                (Some(s), Some(k)) => format!("; observed: spec {s}, {k} importance"),
                _ => String::new(),
            },
            n.top_k,
            n.draws
        ),
    )
    .cols(&[
        ("level", false),
        ("name", false),
        ("observed rank", true),
        ("observed top", false),
        ("chance top", true),
    ]);
    for i in &n.indicators {
        t.push(vec![
            i.level.clone(),
            i.name.clone(),
            i.observed_rank.map_or("-".into(), |r| r.to_string()),
            if i.observed_top { "yes" } else { "no" }.into(),
            share(i.chance_top),
        ]);
    }
    out.push(t);
    out.push(claims_table(n));
    out
}

/// Each conclusion's support under the null.
fn claims_table(n: &crate::report::null::NullReport) -> Table {
    let c = &n.claims;
    let note = match &c.unavailable {
        Some(why) => format!("Not available for this run: {why}."),
        None => format!(
            "Each conclusion of the conclusions table, evaluated again in every draw of the null: over the draw's good set \
             ({}, over the null's specs; ranks kept for the specs within {} of each draw's best; importance kinds the draws \
             computed: {}). Observed = its support over the same rule's good set of the same specs in the observed run \
             (\"over\": that set's size; the null's specs hold {} of the report's {} good specs; the report's own support \
             over its good set is shown beside it). p = (1 + number of draws whose support is at \
             least the observed) / (1 + {}), the +1 correction as above; a draw whose support is unknown (its good set holds \
             no spec of the kind, or reaches past the kept ranks) counts as at least as high, so a claim with u unknown \
             draws cannot have p below (1 + u) / (1 + draws). Automatic conclusions (source auto) were chosen because they \
             hold in the observed good set, so their unadjusted p is optimistic; they are judged by the adjusted p. \
             Adjusted p (automatic conclusions only): the report picks them from families of candidate statements (per \
             level's primary kind: \"in the top k\" for every name top k in at least half of the good set; \"ranks above\" \
             for the first k adjacent pairs by median good rank), so every draw redoes that selection on its own good set \
             and keeps the family maximum, the largest support among the statements it picks and the family's observed \
             ones; adjusted p = (1 + number of draws whose family maximum is at least the observed support) / (1 + {}), \
             unknown draws counted as at least as high. This is the single-step max-type adjustment of Westfall and Young \
             (1993): when the outcome has no between-unit association with any indicator, the chance that any statement \
             of a family gets an adjusted p at or below 0.05 is at most about 5% (per family: the up to four families are \
             not adjusted against each other); it is never below the unadjusted p. \
             \"family max 95%\" is the support a statement needs for an adjusted p near 0.05 (over the draws whose maximum \
             is known; unknown draws raise that need). A small adjusted p rejects \"no association of the outcome with any \
             indicator\"; it does not single out the statement, e.g. when collinear names ride on a real one.{} \
             Claims listed in the config (source claim) are tested as stated, by the unadjusted p; with several claims, \
             some fall at or below 0.05 by chance. Good sets differ in size from draw to draw and from the observed one \
             (a share over 2 specs reaches 100% more easily than over 20) and are compared as they are: with no \
             association at all the observed good set is one more draw, so the test keeps its level, but it can lose power \
             where sizes differ much (a share of 100% is common over small sets). A p above 0.05 is no evidence against a claim. A conclusion that holds about as often under the null \
             (null mean near the observed support, large p) is not evidence of anything: shuffled outcomes, with no \
             between-unit association with any indicator, give it just as readily, e.g. through collinear indicators, \
             pools or models that favour some names whatever the outcome. A small p says only that the support is higher \
             than the outcome-shuffled data give; the cautions above still apply.",
            c.rule,
            c.ranks_within,
            c.kinds.join(", "),
            c.report_good_in_sample,
            c.report_good,
            n.draws,
            n.draws,
            if c.auto_not_chosen_on_sample > 0 {
                format!(
                    " {} of the tested automatic conclusions would not be picked on the good set of the null's specs in \
                     the observed run (they were picked on the report's good set): for them the adjustment follows the \
                     report's choice, not the same selection as in the draws.",
                    c.auto_not_chosen_on_sample
                )
            } else {
                String::new()
            }
        ),
    };
    let mut t = Table::new(
        "null_claims",
        "Would the conclusions hold anyway? Their support under the null",
        "null_claims.parquet",
        note,
    )
    .cols(&[
        ("source", false),
        ("statement", false),
        ("support, good set", true),
        ("observed (null's specs)", true),
        ("over", true),
        ("null mean", true),
        ("null 95%", true),
        ("draws at least", true),
        ("unknown", true),
        ("p (unadjusted)", true),
        ("family max 95%", true),
        ("p adjusted", true),
        ("not tested because", false),
    ]);
    for x in &c.claims {
        t.push(vec![
            x.source.clone(),
            x.statement.clone(),
            share(x.support_good),
            share(x.observed),
            if x.why.is_empty() {
                x.n_observed.to_string()
            } else {
                "-".into()
            },
            share(x.null_mean),
            share(x.null_q95),
            if x.why.is_empty() {
                format!("{} of {}", x.draws_at_least, x.draws)
            } else {
                "-".into()
            },
            if x.why.is_empty() {
                x.draws_unknown.to_string()
            } else {
                "-".into()
            },
            num(x.p),
            share(x.family_max_q95),
            num(x.p_adjusted),
            x.why.clone(),
        ]);
    }
    t
}
