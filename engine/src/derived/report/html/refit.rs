//! The refit of the top N specs on unit subsamples on the page (when the run has one),
//! right after the stored-error stability it stands beside.

use super::*;

pub(super) fn tables(r: &Report) -> Vec<Table> {
    let Some(f) = &r.refit else {
        return Vec::new();
    };
    let mut out = Vec::new();
    let incomplete = if f.resamples < f.resamples_asked {
        format!(
            " Incomplete: {} of {} subsamples.",
            f.resamples, f.resamples_asked
        )
    } else {
        String::new()
    };
    let mut t = Table::new(
        "refit_stability",
        "Stability when the top specs are refitted on unit subsamples",
        "refit_stability.parquet",
        format!(
            "The run's top {n} specs by {m} (ties by spec id) were refitted on each of {b} unit subsamples: {scheme} \
             ({kept} of {units} units each). Every fit of a subsample saw only that subsample's training rows. In each \
             subsample the best spec and the good set ({rule}{note}) are recomputed among those {n} specs only, not over \
             the whole space, so these shares describe the top {n} alone. Refit: share of each subsample's good specs \
             (holding the kind) where the name is in the top {k}, averaged over the subsamples; the share of subsamples \
             where that holds for at least half of the good specs; the share where the subsample's best ranks it in the \
             top {k}. Stored: the same three numbers from the stability table above (units resampled, stored per-unit \
             errors reweighted, nothing refitted, over every ok spec). The {n} specs were chosen on all units, and each \
             subsample keeps {kept} of the same {units}: the shares show how much these specs' conclusions depend on which \
             units are in, leaning toward the chosen specs; they are not a replication on other units. Specs with identical \
             fits (e.g. a scaling before a tree family) each count, so such a fit counts twice, and the lower id wins a tie for best.{incomplete}",
            n = f.specs,
            m = f.metric,
            b = f.resamples,
            scheme = f.scheme,
            kept = f.units_kept,
            units = f.units,
            rule = f.rule,
            note = f
                .rule_note
                .as_ref()
                .map_or(String::new(), |n| format!("; {n}")),
            k = f.top_k,
        ),
    )
    .cols(&[
        ("level", false),
        ("kind", false),
        ("name", false),
        ("refit: mean share top k", true),
        ("refit: top k in most good specs", true),
        ("refit: top k in the best", true),
        ("stored: mean share top k", true),
        ("stored: top k in most good specs", true),
        ("stored: top k in the best", true),
    ]);
    for s in &f.names {
        t.push(vec![
            s.level.clone(),
            s.kind.clone(),
            s.name.clone(),
            share(s.mean_share_top_k),
            share(s.share_majority),
            share(s.share_in_best),
            share(s.stored_mean_share_top_k),
            share(s.stored_share_majority),
            share(s.stored_share_in_best),
        ]);
    }
    out.push(t);

    let mut t = Table::new(
        "refit_specs",
        "The refitted specs over the subsamples",
        "refit_specs.parquet",
        format!(
            "Each of the run's top {} specs: its rank and {} in the run, its median {} refitted over the {} subsamples, \
             and how often it is the subsample's best and in its good set (among the {} refitted specs). The refit error \
             comes from fewer training units and new folds, and the run error is the one the specs were chosen by: their \
             gap mixes both and is not the optimism of choosing (the nested estimate measures that). Same fit as: the spec whose \
             run fit is bit for bit this one's (e.g. a scaling before a tree family): two specs, one fit, and a tie for \
             best goes to the lower id.",
            f.specs, f.metric, f.metric, f.resamples, f.specs
        ),
    )
    .cols(&[
        ("spec id", false),
        ("run rank", true),
        ("run error", true),
        ("median refit error", true),
        ("best", true),
        ("good", true),
        ("failed", true),
        ("same fit as", false),
    ]);
    for s in &f.specs_table {
        t.push(vec![
            s.spec_id.clone(),
            s.run_rank.to_string(),
            num(s.run_error),
            num(s.median_error),
            share(s.share_best),
            share(s.share_good),
            s.failed.to_string(),
            s.same_fit_as.clone().unwrap_or_default(),
        ]);
    }
    out.push(t);
    out
}
