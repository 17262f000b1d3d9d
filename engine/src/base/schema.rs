//! The layout of a run directory, in one place: the names of every file and folder forkmap
//! writes there, which is the contract a meta-analyst's query reads (the README's output
//! section lists the columns of each table). At the bottom of the module graph: it imports
//! nothing, and every writer and reader takes its names from here.
//!
//! ```text
//! RUN_DIR/manifest.json            identity, space, counts, lineage      (MANIFEST)
//! RUN_DIR/{specs,predictions,loadings,importance}/part-*.parquet       (TABLES)
//! RUN_DIR/null/    manifest.json, draws/, tops/, goodranks/             (NULL_DIR)
//! RUN_DIR/nested/  settings.json, fold-*.parquet                        (NESTED_DIR)
//! RUN_DIR/refit/   manifest.json, fits/, tops/                          (REFIT_DIR)
//! RUN_DIR/curves/  curves.json and the curve tables                     (CURVES_DIR)
//! RUN_DIR/report/  report.json, index.html, tables and plots            (REPORT_DIR)
//! ```

/// The run's manifest (written last, atomically: its presence marks a finished run).
pub const MANIFEST: &str = "manifest.json";
/// The sweep's tables, one folder of Parquet parts each.
pub const SPECS: &str = "specs";
pub const PREDICTIONS: &str = "predictions";
pub const LOADINGS: &str = "loadings";
pub const IMPORTANCE: &str = "importance";
pub const TABLES: &[&str] = &[SPECS, PREDICTIONS, LOADINGS, IMPORTANCE];

/// Fixed columns of the specs table ([`SPECS`]), in table order. Between `SPEC_LABEL` and
/// `STATUS` come one column per dimension (named as the dimension) and one per declared
/// parameter (`{option}_{parameter}`); between `NOTES` and `N_PREDICTIONS` the metric
/// columns (`metrics::METRIC_COLUMNS`).
pub mod specs {
    pub const SPEC_ID: &str = "spec_id";
    pub const SPEC_LABEL: &str = "spec_label";
    pub const STATUS: &str = "status";
    pub const MESSAGE: &str = "message";
    pub const NOTES: &str = "notes";
    pub const N_PREDICTIONS: &str = "n_predictions";
    pub const SECONDS: &str = "seconds";
    pub const IMPORTANCE_SECONDS: &str = "importance_seconds";
    /// The fixed columns, in table order (dimension, parameter and metric columns lie
    /// between them, as above).
    pub const COLUMNS: &[&str] = &[
        SPEC_ID,
        SPEC_LABEL,
        STATUS,
        MESSAGE,
        NOTES,
        N_PREDICTIONS,
        SECONDS,
        IMPORTANCE_SECONDS,
    ];
}

/// Columns of the predictions table ([`PREDICTIONS`]), in table order.
pub mod predictions {
    pub const SPEC_ID: &str = "spec_id";
    pub const UNIT: &str = "unit";
    pub const WAVE: &str = "wave";
    pub const OBSERVED: &str = "observed";
    pub const PREDICTED: &str = "predicted";
    pub const FOLD: &str = "fold";
    pub const REPEAT: &str = "repeat";
    /// Every column, in table order.
    pub const COLUMNS: &[&str] = &[SPEC_ID, UNIT, WAVE, OBSERVED, PREDICTED, FOLD, REPEAT];
}

/// Columns of the loadings table ([`LOADINGS`]), in table order.
pub mod loadings {
    pub const SPEC_ID: &str = "spec_id";
    pub const COMPONENT: &str = "component";
    pub const INDICATOR: &str = "indicator";
    pub const LOADING: &str = "loading";
    /// Every column, in table order.
    pub const COLUMNS: &[&str] = &[SPEC_ID, COMPONENT, INDICATOR, LOADING];
}

/// Columns of the importance table ([`IMPORTANCE`]), in table order.
pub mod importance {
    pub const SPEC_ID: &str = "spec_id";
    pub const INDICATOR: &str = "indicator";
    pub const LEVEL: &str = "level";
    pub const KIND: &str = "kind";
    pub const IMPORTANCE: &str = "importance";
    pub const SPREAD: &str = "spread";
    pub const RANK: &str = "rank";
    pub const IN_POOL: &str = "in_pool";
    /// Every column, in table order.
    pub const COLUMNS: &[&str] = &[
        SPEC_ID, INDICATOR, LEVEL, KIND, IMPORTANCE, SPREAD, RANK, IN_POOL,
    ];
}

/// The permutation null's folder (its own manifest and tables).
pub const NULL_DIR: &str = "null";
/// The nested estimate's folder.
pub const NESTED_DIR: &str = "nested";
/// The refit of the top N specs on unit subsamples (its own manifest and tables).
pub const REFIT_DIR: &str = "refit";
/// The curves' folder.
pub const CURVES_DIR: &str = "curves";
/// The report's folder.
pub const REPORT_DIR: &str = "report";
/// Everything derived from the sweep's tables, in the order a run makes them. A restart
/// or a changed identity discards them all; add a new derived folder here and nowhere
/// else.
pub const DERIVED_DIRS: &[&str] = &[NULL_DIR, NESTED_DIR, REFIT_DIR, CURVES_DIR, REPORT_DIR];

/// The null's tables inside [`NULL_DIR`] (one part per draw).
pub const NULL_DRAWS: &str = "draws";
pub const NULL_TOPS: &str = "tops";
/// The refit's tables inside [`REFIT_DIR`] (one part per subsample; `tops` is written
/// first, `fits` last, so a subsample is complete exactly when its `fits` part exists).
pub const REFIT_FITS: &str = "fits";
pub const REFIT_TOPS: &str = "tops";

/// Columns of the refit's `fits` table ([`REFIT_FITS`]), in table order: one row per
/// subsample and refitted spec.
pub mod refit_fits {
    pub const RESAMPLE: &str = "resample";
    pub const SEED: &str = "seed";
    pub const UNITS: &str = "units";
    pub const ROWS: &str = "rows";
    pub const SPEC_ID: &str = "spec_id";
    pub const RUN_RANK: &str = "run_rank";
    pub const RUN_ERROR: &str = "run_error";
    pub const METRIC: &str = "metric";
    pub const ERROR: &str = "error";
    pub const STATUS: &str = "status";
    pub const MESSAGE: &str = "message";
    pub const BEST: &str = "best";
    pub const GOOD: &str = "good";
    pub const ALL: &[&str] = &[
        RESAMPLE, SEED, UNITS, ROWS, SPEC_ID, RUN_RANK, RUN_ERROR, METRIC, ERROR, STATUS, MESSAGE,
        BEST, GOOD,
    ];
}

/// Columns of the refit's `tops` table ([`REFIT_TOPS`]), in table order: one row per
/// subsample, level, kind and name.
pub mod refit_tops {
    pub const RESAMPLE: &str = "resample";
    pub const LEVEL: &str = "level";
    pub const KIND: &str = "kind";
    pub const NAME: &str = "name";
    pub const GOOD_HOLDING: &str = "good_holding";
    pub const GOOD_TOP: &str = "good_top";
    pub const BEST_HOLDS: &str = "best_holds";
    pub const TOP_IN_BEST: &str = "top_in_best";
    pub const ALL: &[&str] = &[
        RESAMPLE,
        LEVEL,
        KIND,
        NAME,
        GOOD_HOLDING,
        GOOD_TOP,
        BEST_HOLDS,
        TOP_IN_BEST,
    ];
}

/// Per draw, the importance ranks of every spec within `[null] ranks_within` of the draw's
/// best error (what the report's claims need under the null).
pub const NULL_GOODRANKS: &str = "goodranks";
/// The null's tables, in the order a draw writes them (its `draws` file last: a draw is
/// complete exactly when that file exists).
pub const NULL_DRAW_TABLES: &[&str] = &[NULL_TOPS, NULL_GOODRANKS, NULL_DRAWS];

/// Columns of `null/goodranks` ([`NULL_GOODRANKS`]), in table order.
pub mod null_goodranks {
    /// Draw index d (0-based).
    pub const DRAW: &str = "draw";
    /// A spec of the draw whose error is within `[null] ranks_within` of the draw's best.
    pub const SPEC_ID: &str = "spec_id";
    /// The spec's error in the draw (the null's metric).
    pub const ERROR: &str = "error";
    /// `indicator` or `group`.
    pub const LEVEL: &str = "level";
    /// `permutation`, `coefficient` or `impurity` (the kinds `[null] importance` asks for).
    pub const KIND: &str = "kind";
    /// Indicator or codebook group.
    pub const NAME: &str = "name";
    /// As in the run's importance table.
    pub const IMPORTANCE: &str = "importance";
    /// Competition rank (1 = most important), as in the run's importance table.
    pub const RANK: &str = "rank";
    /// False when the spec's pool excludes the name.
    pub const IN_POOL: &str = "in_pool";
    pub const ALL: &[&str] = &[
        DRAW, SPEC_ID, ERROR, LEVEL, KIND, NAME, IMPORTANCE, RANK, IN_POOL,
    ];
}
/// The nested estimate's settings inside [`NESTED_DIR`].
pub const NESTED_SETTINGS: &str = "settings.json";
/// The curves' settings and summary inside [`CURVES_DIR`].
pub const CURVES_META: &str = "curves.json";
/// The report's marker inside [`REPORT_DIR`] (what it read and with which settings).
pub const REPORT_MARKER: &str = "report.json";

// The derived tables' columns (schema/*.rs), one module per table, each with its `COLUMNS`.
pub mod curves;
pub mod nested;
pub mod null;
pub mod report;

/// Every derived table's fixed columns, by its place in the run directory: `DIR/NAME` is
/// the file `DIR/NAME.parquet`, except `null/draws`, `null/tops` and `null/goodranks` (folders of one part per
/// draw), `refit/fits` and `refit/tops` (one part per subsample) and `nested/fold` (the files `nested/fold-OOO.parquet`). `report/curve` and
/// `nested/fold` also hold columns named at run time (see their modules).
pub const DERIVED_COLUMNS: &[(&str, &[&str])] = &[
    ("report/curve", report::curve::COLUMNS),
    ("report/error_by_choice", report::error_by_choice::COLUMNS),
    ("report/error_by_param", report::error_by_param::COLUMNS),
    ("report/error_shares", report::error_shares::COLUMNS),
    ("report/rank_by_choice", report::rank_by_choice::COLUMNS),
    ("report/rank_shares", report::rank_shares::COLUMNS),
    ("report/good_sets", report::good_sets::COLUMNS),
    ("report/good_makeup", report::good_makeup::COLUMNS),
    (
        "report/importance_spread",
        report::importance_spread::COLUMNS,
    ),
    ("report/rank_counts", report::rank_counts::COLUMNS),
    ("report/agreement", report::agreement::COLUMNS),
    ("report/conclusions", report::conclusions::COLUMNS),
    ("report/stability", report::stability::COLUMNS),
    ("report/best_frequency", report::best_frequency::COLUMNS),
    ("report/resamples", report::resamples::COLUMNS),
    ("report/null_summary", report::null_summary::COLUMNS),
    ("report/null_indicators", report::null_indicators::COLUMNS),
    ("report/null_claims", report::null_claims::COLUMNS),
    ("report/nested_summary", report::nested_summary::COLUMNS),
    ("report/nested_choices", report::nested_choices::COLUMNS),
    ("report/nested_folds", report::nested_folds::COLUMNS),
    ("curves/ice", curves::ice::COLUMNS),
    ("curves/pd", curves::pd::COLUMNS),
    ("curves/breakpoints", curves::breakpoints::COLUMNS),
    ("curves/bands", curves::bands::COLUMNS),
    ("curves/signs", curves::signs::COLUMNS),
    ("curves/observed", curves::observed::COLUMNS),
    ("curves/clusters", curves::clusters::COLUMNS),
    ("null/tops", null::tops::COLUMNS),
    ("null/draws", null::draws::COLUMNS),
    ("null/goodranks", null_goodranks::ALL),
    ("nested/fold", nested::fold::COLUMNS),
    ("refit/fits", refit_fits::ALL),
    ("refit/tops", refit_tops::ALL),
    ("report/refit_stability", report::refit_stability::COLUMNS),
    ("report/refit_specs", report::refit_specs::COLUMNS),
];

#[cfg(test)]
mod tests {
    use super::*;

    /// No two names of the run directory's top level collide.
    #[test]
    fn top_level_names_are_distinct() {
        let mut all: Vec<&str> = TABLES.iter().chain(DERIVED_DIRS).copied().collect();
        all.push(MANIFEST);
        let n = all.len();
        all.sort_unstable();
        all.dedup();
        assert_eq!(all.len(), n);
    }

    /// No table names a column twice.
    #[test]
    fn column_names_are_distinct_within_each_table() {
        let sweep: [(&str, &[&str]); 4] = [
            ("specs", specs::COLUMNS),
            ("predictions", predictions::COLUMNS),
            ("loadings", loadings::COLUMNS),
            ("importance", importance::COLUMNS),
        ];
        for (name, t) in sweep.iter().chain(DERIVED_COLUMNS) {
            let mut v = t.to_vec();
            v.sort_unstable();
            v.dedup();
            assert_eq!(v.len(), t.len(), "{name}: {t:?}");
        }
    }
}
