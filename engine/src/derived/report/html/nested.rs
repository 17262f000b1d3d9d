//! The page's tables of the nested estimate (report/nested.rs): the naive best, nested
//! and baseline errors with their gap, and how often each spec and option was chosen.

use super::*;

pub(super) fn tables(r: &Report) -> Vec<Table> {
    let Some(n) = &r.nested else {
        return Vec::new();
    };
    let mut out = Vec::new();
    let mut t = Table::new(
        "nested_summary",
        "Nested estimate of choosing the best",
        "nested_summary.parquet",
        format!(
            "The naive best is the lowest error, in the run's own folds, of the {} specs the outer folds chose among: chosen and \
             scored on the same folds (the best of all {} specs beside it). The nested estimate repeats the choice among those \
             specs inside each of {} outer folds (inner folds on the outer training units only), refits the chosen spec on the \
             outer training units and scores it on the held-out units, pooled over all outer test rows; its fold s.e. is the \
             standard deviation of the outer folds' errors over the square root of their number, which treats the folds as \
             independent and so understates the uncertainty. The baseline predicts each outer test row by its outer training \
             median. Optimism = nested - naive.",
            n.specs_swept, n.specs_total, n.outer_folds
        ),
    )
    .cols(&[
        ("metric", false),
        ("naive best", true),
        ("best of all specs", true),
        ("nested", true),
        ("fold s.e.", true),
        ("baseline", true),
        ("optimism", true),
        ("outer folds", true),
        ("folds without a choice", true),
    ]);
    t.push(vec![
        n.metric.clone(),
        num(n.naive_error),
        num(n.naive_all_error),
        num(n.nested_error),
        num(n.fold_se),
        num(n.baseline_error),
        num(n.optimism),
        n.outer_folds.to_string(),
        n.folds_failed.to_string(),
    ]);
    out.push(t);
    let mut t = Table::new(
        "nested_choices",
        "What the nested choice picked",
        "nested_choices.parquet",
        "How often each spec, and each option of each choice dimension, was chosen across the outer folds (share of the \
         folds with a choice). A choice picked in most folds is stable under resampling of units; a spread one is not."
            .into(),
    )
    .cols(&[
        ("dimension", false),
        ("choice", false),
        ("folds", true),
        ("share", true),
    ]);
    for c in &n.chosen {
        t.push(vec![
            c.dimension.clone(),
            c.choice.clone(),
            c.folds.to_string(),
            share(c.share),
        ]);
    }
    out.push(t);
    let mut t = Table::new(
        "nested_folds",
        "Nested estimate per outer fold",
        "nested_folds.parquet",
        "One row per outer fold (gathered from RUN_DIR/nested/fold-OOO.parquet): the chosen spec, its inner error, its error on the \
         outer test units, the baseline's on the same units."
            .into(),
    )
    .cols(&[
        ("outer fold", true),
        ("spec id", false),
        ("inner", true),
        ("outer", true),
        ("baseline", true),
        ("test rows", true),
        ("specs ok inside", true),
    ]);
    for f in &n.folds {
        t.push(vec![
            f.fold.to_string(),
            f.spec_id.clone().unwrap_or_else(|| "(none)".into()),
            num(f.inner_error),
            num(f.outer_error),
            num(f.baseline_error),
            f.n_rows.to_string(),
            format!("{} of {}", f.n_ok, f.n_specs),
        ]);
    }
    out.push(t);
    out
}
