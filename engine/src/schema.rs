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
}

/// Columns of the loadings table ([`LOADINGS`]), in table order.
pub mod loadings {
    pub const SPEC_ID: &str = "spec_id";
    pub const COMPONENT: &str = "component";
    pub const INDICATOR: &str = "indicator";
    pub const LOADING: &str = "loading";
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
}

/// The permutation null's folder (its own manifest and tables).
pub const NULL_DIR: &str = "null";
/// The nested estimate's folder.
pub const NESTED_DIR: &str = "nested";
/// The curves' folder.
pub const CURVES_DIR: &str = "curves";
/// The report's folder.
pub const REPORT_DIR: &str = "report";
/// Everything derived from the sweep's tables, in the order a run makes them. A restart
/// or a changed identity discards them all; add a new derived folder here and nowhere
/// else.
pub const DERIVED_DIRS: &[&str] = &[NULL_DIR, NESTED_DIR, CURVES_DIR, REPORT_DIR];

/// The null's tables inside [`NULL_DIR`] (one part per draw).
pub const NULL_DRAWS: &str = "draws";
pub const NULL_TOPS: &str = "tops";
/// Per draw, the importance ranks of every spec within `[null] ranks_within` of the draw's
/// best error (what the report's claims need under the null).
pub const NULL_GOODRANKS: &str = "goodranks";
/// The null's tables, in the order a draw writes them (its `draws` file last: a draw is
/// complete exactly when that file exists).
pub const NULL_DRAW_TABLES: &[&str] = &[NULL_TOPS, NULL_GOODRANKS, NULL_DRAWS];

/// Columns of `null/goodranks` ([`NULL_GOODRANKS`]), in table order.
pub mod null_goodranks {
    pub const DRAW: &str = "draw";
    pub const SPEC_ID: &str = "spec_id";
    /// The spec's error in the draw (the null's metric).
    pub const ERROR: &str = "error";
    pub const LEVEL: &str = "level";
    pub const KIND: &str = "kind";
    pub const NAME: &str = "name";
    pub const IMPORTANCE: &str = "importance";
    pub const RANK: &str = "rank";
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
        let tables: [&[&str]; 5] = [
            null_goodranks::ALL,
            &[
                specs::SPEC_ID,
                specs::SPEC_LABEL,
                specs::STATUS,
                specs::MESSAGE,
                specs::NOTES,
                specs::N_PREDICTIONS,
                specs::SECONDS,
                specs::IMPORTANCE_SECONDS,
            ],
            &[
                predictions::SPEC_ID,
                predictions::UNIT,
                predictions::WAVE,
                predictions::OBSERVED,
                predictions::PREDICTED,
                predictions::FOLD,
                predictions::REPEAT,
            ],
            &[
                loadings::SPEC_ID,
                loadings::COMPONENT,
                loadings::INDICATOR,
                loadings::LOADING,
            ],
            &[
                importance::SPEC_ID,
                importance::INDICATOR,
                importance::LEVEL,
                importance::KIND,
                importance::IMPORTANCE,
                importance::SPREAD,
                importance::RANK,
                importance::IN_POOL,
            ],
        ];
        for t in tables {
            let mut v = t.to_vec();
            v.sort_unstable();
            v.dedup();
            assert_eq!(v.len(), t.len(), "{t:?}");
        }
    }
}
