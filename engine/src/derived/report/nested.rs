//! The report's nested-estimate section (issue 18): reads RUN_DIR/nested/ one-way (the
//! tables `forkmap run` wrote under `[nested]`) and sets the naive best error (the report's
//! best spec, chosen and scored on the same folds) beside the nested error (the choice
//! repeated inside outer folds, scored on units it never saw) and the training-median
//! baseline on the same outer test rows. The gap nested - naive is the optimism of
//! picking the best. Also: how often each spec and each option is chosen across the
//! outer folds.
//!
//! Tables written to report/: `nested_summary.parquet` (one row),
//! `nested_choices.parquet` (one row per chosen spec and per dimension and option) and
//! `nested_folds.parquet` (the outer folds' rows gathered).

use super::model::Report;
use crate::error::Result;
use crate::nested::table::{read_folds, FoldRow, NESTED_DIR};
use crate::results::RunSet;
use crate::schema::report as columns;
use crate::sink::Cols;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

/// How often one spec or option was chosen.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Chosen {
    /// `spec` for a whole spec, otherwise the choice dimension.
    pub dimension: String,
    /// The spec id or the option label.
    pub choice: String,
    /// Outer folds that chose it, and their share of the folds with a choice.
    pub folds: usize,
    pub share: f64,
}

/// The nested estimate as the report shows it.
#[derive(Debug, Clone, Default)]
pub struct NestedReport {
    /// Metric the nested choice was made and scored by.
    pub metric: String,
    pub outer_folds: usize,
    /// Outer folds in which no spec could be chosen or refitted.
    pub folds_failed: usize,
    /// Specs swept inside each outer training set, and in the run the report reads.
    pub specs_swept: usize,
    pub specs_total: usize,
    /// The naive best error: the lowest error, in the run's own cross-validation, over the
    /// same specs the nested estimate chose among (over all specs when their ids are not
    /// known); NaN when the report ranks by another metric.
    pub naive_error: f64,
    /// The report's best error over all specs (context; equals `naive_error` when every
    /// spec was swept).
    pub naive_all_error: f64,
    /// Standard error of the nested error from its spread across outer folds (the sd of
    /// the folds' errors / sqrt(folds)): a rough scale for the optimism.
    pub fold_se: f64,
    pub naive_spec: String,
    /// Pooled outer error of the chosen specs, and of the training-median baseline.
    pub nested_error: f64,
    pub baseline_error: f64,
    /// nested - naive (the optimism of choosing the best).
    pub optimism: f64,
    pub chosen: Vec<Chosen>,
    pub folds: Vec<FoldRow>,
}

/// Read the nested tables of the whole-space run of `set` that has them; `None` when none
/// has them complete. Shards hold only the outer folds dealt to them and a run stopped
/// mid-estimate holds some of its folds: neither is the estimate, so the section is left
/// out and `notes` says why and what completes it.
pub fn load(
    set: &RunSet,
    report: &Report,
    notes: &mut Vec<String>,
) -> Result<Option<NestedReport>> {
    let mut in_shards = 0;
    for d in &set.dirs {
        let dir = d.path.join(NESTED_DIR);
        if !dir.is_dir() {
            continue;
        }
        if d.shard.is_some() {
            in_shards += crate::nested::table::done_folds(&dir)?.len();
            continue;
        }
        let folds = read_folds(&dir)?;
        if folds.is_empty() {
            continue;
        }
        let asked = std::fs::read_to_string(dir.join("settings.json"))
            .ok()
            .and_then(|t| serde_json::from_str::<serde_json::Value>(&t).ok())
            .and_then(|v| v["outer_folds"].as_u64())
            .map(|k| k as usize);
        if let Some(k) = asked.filter(|&k| folds.len() < k) {
            notes.push(format!(
                "The nested estimate is unfinished ({} of {k} outer folds in {}): its section is left out; rerun the same `forkmap run` to finish it.",
                folds.len(),
                dir.display()
            ));
            return Ok(None);
        }
        let mut n = summarise(folds, report);
        match_sample(&mut n, &dir, report);
        return Ok(Some(n));
    }
    if in_shards > 0 {
        notes.push(format!(
            "The nested estimate's outer folds are spread over the shards ({in_shards} done): `forkmap gather` joins them; its section is left out here."
        ));
    }
    Ok(None)
}

/// The section from the fold rows and the report's best error.
pub fn summarise(folds: Vec<FoldRow>, report: &Report) -> NestedReport {
    let metric = folds.first().map(|f| f.metric.clone()).unwrap_or_default();
    let results: Vec<_> = folds.iter().map(|f| f.as_result()).collect();
    let (nested_error, baseline_error) = crate::nested::pooled(&results, &metric);
    let same = metric == report.meta.metric;
    let naive_error = if same {
        report.meta.best_error
    } else {
        f64::NAN
    };
    let with: Vec<&FoldRow> = folds.iter().filter(|f| f.spec_id.is_some()).collect();
    let mut counts: BTreeMap<(String, String), usize> = BTreeMap::new();
    for f in &with {
        if let Some(id) = &f.spec_id {
            *counts.entry(("spec".into(), id.clone())).or_default() += 1;
        }
        for (d, o) in &f.choices {
            *counts.entry((d.clone(), o.clone())).or_default() += 1;
        }
    }
    let n = with.len().max(1) as f64;
    let mut chosen: Vec<Chosen> = counts
        .into_iter()
        .map(|((dimension, choice), k)| Chosen {
            dimension,
            choice,
            folds: k,
            share: k as f64 / n,
        })
        .collect();
    // specs first, then dimensions in registry order; most chosen first within each
    let order = |d: &str| {
        crate::space::DIMENSIONS
            .iter()
            .position(|x| *x == d)
            .map_or(0, |i| i + 1)
    };
    chosen.sort_by(|a, b| {
        order(&a.dimension)
            .cmp(&order(&b.dimension))
            .then(b.folds.cmp(&a.folds))
            .then(a.choice.cmp(&b.choice))
    });
    NestedReport {
        outer_folds: folds.len(),
        folds_failed: folds.iter().filter(|f| !f.outer_error.is_finite()).count(),
        specs_swept: folds.first().map_or(0, |f| f.n_specs),
        specs_total: report.meta.specs_total,
        naive_spec: if same {
            report.meta.best_spec.clone()
        } else {
            String::new()
        },
        optimism: nested_error - naive_error,
        naive_error,
        naive_all_error: naive_error,
        fold_se: fold_se(&folds),
        nested_error,
        baseline_error,
        metric,
        chosen,
        folds,
    }
}

/// sd of the finite outer-fold errors / sqrt(their count); NaN with fewer than two.
fn fold_se(folds: &[FoldRow]) -> f64 {
    let e: Vec<f64> = folds
        .iter()
        .map(|f| f.outer_error)
        .filter(|v| v.is_finite())
        .collect();
    if e.len() < 2 {
        return f64::NAN;
    }
    let m = e.iter().sum::<f64>() / e.len() as f64;
    let var = e.iter().map(|v| (v - m) * (v - m)).sum::<f64>() / (e.len() - 1) as f64;
    (var / e.len() as f64).sqrt()
}

/// Match the naive best to the specs the nested estimate chose among (their ids from
/// `settings.json`), so that the optimism is the selection's and not the sample size's.
fn match_sample(n: &mut NestedReport, dir: &Path, report: &Report) {
    if !n.naive_error.is_finite() {
        return;
    }
    let Some(ids) = std::fs::read_to_string(dir.join("settings.json"))
        .ok()
        .and_then(|t| serde_json::from_str::<serde_json::Value>(&t).ok())
        .and_then(|v| v["spec_ids"].as_array().cloned())
    else {
        return;
    };
    let ids: std::collections::HashSet<&str> = ids.iter().filter_map(|v| v.as_str()).collect();
    let best = report
        .curve
        .iter()
        .filter(|c| ids.contains(c.spec_id.as_str()) && c.error.is_finite())
        .min_by(|a, b| a.error.total_cmp(&b.error).then(a.spec_id.cmp(&b.spec_id)));
    if let Some(b) = best {
        n.naive_error = b.error;
        n.naive_spec = b.spec_id.clone();
        n.optimism = n.nested_error - b.error;
    }
}

/// The headline sentence.
pub fn headline(n: &NestedReport) -> String {
    let m = &n.metric;
    if !n.nested_error.is_finite() {
        return format!(
            "Nested estimate: {} of {} outer folds could not choose or refit a spec, so there is no nested {m} (see nested/).",
            n.folds_failed, n.outer_folds
        );
    }
    let beats = if n.nested_error < n.baseline_error {
        "beats"
    } else {
        "does not beat"
    };
    let sampled = n.specs_swept < n.specs_total;
    let among = if sampled {
        format!(
            " (among a seeded sample of {} of the {} specs)",
            n.specs_swept, n.specs_total
        )
    } else {
        String::new()
    };
    let best_of = if sampled && n.naive_all_error != n.naive_error {
        format!(
            "the best of those {} specs has {m} {:.4} in the run's own folds (the best of all {}: {:.4})",
            n.specs_swept, n.naive_error, n.specs_total, n.naive_all_error
        )
    } else {
        format!("the best spec's {m} is {:.4}", n.naive_error)
    };
    let se = if n.fold_se.is_finite() {
        format!(
            " (its fold-to-fold standard error is about {:.2})",
            n.fold_se
        )
    } else {
        String::new()
    };
    if n.naive_error.is_finite() {
        // The gap against its own noise: the fold s.e. treats the outer folds as
        // independent (they share training units), so it understates; a gap within two of
        // them is not told apart from none by one outer partition.
        let gap = if n.fold_se.is_finite() && n.optimism.abs() < 2.0 * n.fold_se {
            format!(
                "The nested error and the naive best differ by {:+.2} {m}, within two fold-to-fold standard errors, so one outer partition cannot tell the optimism of choosing the best from none (more outer partitions would)",
                n.optimism
            )
        } else if n.optimism >= 0.0 {
            format!(
                "Choosing the best spec is optimistic by about {:.2} {m}",
                n.optimism
            )
        } else {
            format!(
                "The nested error is below the naive best by {:.2} {m} (no optimism shown)",
                -n.optimism
            )
        };
        format!(
            "{gap}: {best_of}, and repeating the choice{among} inside {} outer folds and scoring it on units the choice never saw gives {:.4}{se}, which {beats} the training-median baseline ({:.4}).",
            n.outer_folds, n.nested_error, n.baseline_error
        )
    } else {
        format!(
            "Nested estimate ({m}, not the report's metric): choosing the best inside {} outer folds and scoring it on unseen units gives {:.4}, which {beats} the training-median baseline ({:.4}).",
            n.outer_folds, n.nested_error, n.baseline_error
        )
    }
}

/// Write the section's tables into the report folder `dir`.
pub fn write_tables(n: &NestedReport, dir: &Path) -> Result<Vec<PathBuf>> {
    let mut out = Vec::new();
    out.push(
        Cols::default()
            .s(columns::nested_summary::METRIC, [&n.metric])
            .of(columns::nested_summary::NAIVE_ERROR, [n.naive_error])
            .of(
                columns::nested_summary::NAIVE_ALL_ERROR,
                [n.naive_all_error],
            )
            .of(columns::nested_summary::FOLD_SE, [n.fold_se])
            .os(
                columns::nested_summary::NAIVE_SPEC_ID,
                [(!n.naive_spec.is_empty()).then(|| n.naive_spec.clone())],
            )
            .of(columns::nested_summary::NESTED_ERROR, [n.nested_error])
            .of(columns::nested_summary::BASELINE_ERROR, [n.baseline_error])
            .of(columns::nested_summary::OPTIMISM, [n.optimism])
            .i(columns::nested_summary::OUTER_FOLDS, [n.outer_folds as i64])
            .i(
                columns::nested_summary::FOLDS_FAILED,
                [n.folds_failed as i64],
            )
            .i(columns::nested_summary::SPECS_SWEPT, [n.specs_swept as i64])
            .i(columns::nested_summary::SPECS_TOTAL, [n.specs_total as i64])
            .write(dir, "nested_summary")?,
    );
    let c = &n.chosen;
    out.push(
        Cols::default()
            .s(
                columns::nested_choices::DIMENSION,
                c.iter().map(|x| &x.dimension),
            )
            .s(columns::nested_choices::CHOICE, c.iter().map(|x| &x.choice))
            .i(
                columns::nested_choices::FOLDS,
                c.iter().map(|x| x.folds as i64),
            )
            .f(columns::nested_choices::SHARE, c.iter().map(|x| x.share))
            .write(dir, "nested_choices")?,
    );
    let f = &n.folds;
    out.push(
        Cols::default()
            .i(
                columns::nested_folds::OUTER_FOLD,
                f.iter().map(|x| x.fold as i64),
            )
            .os(
                columns::nested_folds::SPEC_ID,
                f.iter().map(|x| x.spec_id.clone()),
            )
            .of(
                columns::nested_folds::INNER_ERROR,
                f.iter().map(|x| x.inner_error),
            )
            .of(
                columns::nested_folds::OUTER_ERROR,
                f.iter().map(|x| x.outer_error),
            )
            .of(
                columns::nested_folds::BASELINE_ERROR,
                f.iter().map(|x| x.baseline_error),
            )
            .i(
                columns::nested_folds::N_ROWS,
                f.iter().map(|x| x.n_rows as i64),
            )
            .i(columns::nested_folds::N_OK, f.iter().map(|x| x.n_ok as i64))
            .i(
                columns::nested_folds::N_SPECS,
                f.iter().map(|x| x.n_specs as i64),
            )
            .write(dir, "nested_folds")?,
    );
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn row(fold: usize, id: Option<&str>, outer: f64, base: f64, n: usize) -> FoldRow {
        FoldRow {
            fold,
            spec_id: id.map(String::from),
            choices: id
                .map(|i| vec![("model".to_string(), format!("m-{i}"))])
                .unwrap_or_default(),
            inner_error: outer - 0.1,
            outer_error: outer,
            baseline_error: base,
            n_rows: n,
            n_units: n,
            n_specs: 8,
            n_ok: 8,
            metric: "mae".into(),
            message: None,
        }
    }

    /// By hand: folds of 2, 3 and 5 rows with outer MAE 1, 2, 3 pool to
    /// (2 + 6 + 15) / 10 = 2.3; baselines 4, 4, 5 pool to (8 + 12 + 25) / 10 = 4.5; with a
    /// report best of 2.0 the optimism is 0.3. Spec `a` was chosen in 2 of 3 folds.
    #[test]
    fn summary_pools_rows_and_counts_choices() {
        let mut r = crate::report::plots::tests::sample(40);
        r.meta.best_error = 2.0;
        let folds = vec![
            row(0, Some("a"), 1.0, 4.0, 2),
            row(1, Some("b"), 2.0, 4.0, 3),
            row(2, Some("a"), 3.0, 5.0, 5),
        ];
        let n = summarise(folds, &r);
        assert!((n.nested_error - 2.3).abs() < 1e-12, "{}", n.nested_error);
        assert!((n.baseline_error - 4.5).abs() < 1e-12);
        assert!((n.optimism - 0.3).abs() < 1e-12);
        let a = n
            .chosen
            .iter()
            .find(|c| c.dimension == "spec" && c.choice == "a")
            .expect("a");
        assert_eq!(a.folds, 2);
        assert!((a.share - 2.0 / 3.0).abs() < 1e-12);
        assert!(n
            .chosen
            .iter()
            .any(|c| c.dimension == "model" && c.choice == "m-b"));
        // Outer errors 1, 2, 3: fold s.e. = 1 / sqrt(3) = 0.577, so a gap of 0.3 is within
        // two of them: no optimism claimed.
        assert!(
            (n.fold_se - 1.0 / 3f64.sqrt()).abs() < 1e-12,
            "{}",
            n.fold_se
        );
        let h = headline(&n);
        assert!(
            h.contains("differ by +0.30 mae, within two fold-to-fold standard errors")
                && !h.contains("optimistic by")
                && h.contains("beats"),
            "{h}"
        );
        let mut far = n.clone();
        far.fold_se = 0.1;
        let h = headline(&far);
        assert!(h.contains("optimistic by about 0.30 mae"), "{h}");
        far.optimism = -0.3;
        let h = headline(&far);
        assert!(
            h.contains("below the naive best by 0.30 mae") && !h.contains("optimistic by"),
            "{h}"
        );
        // The section's plot and page tables.
        r.nested = Some(n);
        let plots = crate::report::plots::render_all(&r).expect("plots");
        let p = plots
            .iter()
            .find(|p| p.file == "nested.svg")
            .expect("nested.svg");
        assert!(p.svg.contains("class=\"fm-data\"") && p.svg.contains("<title>"));
        let page = crate::report::html::render(&r, &plots);
        assert!(page.contains("table-nested_summary") && page.contains("table-nested_choices"));
        // A fold without a choice leaves no pooled estimate (not a silently smaller one).
        let n = summarise(
            vec![
                row(0, Some("a"), 1.0, 4.0, 2),
                row(1, None, f64::NAN, 4.0, 3),
            ],
            &r,
        );
        assert!(n.nested_error.is_nan() && n.folds_failed == 1);
        assert!(headline(&n).contains("1 of 2 outer folds"));
    }
}
