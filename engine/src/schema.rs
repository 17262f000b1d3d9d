//! The layout of a run directory, in one place: the names of every file and folder forkmap
//! writes there, which is the contract a meta-analyst's query reads (the README's output
//! section lists the columns of each table). At the bottom of the module graph: it imports
//! nothing, and every writer and reader takes its names from here.
//!
//! ```text
//! RUN_DIR/manifest.json            identity, space, counts, lineage      (MANIFEST)
//! RUN_DIR/{specs,predictions,loadings,importance}/part-*.parquet       (TABLES)
//! RUN_DIR/null/    manifest.json, draws/, tops/                         (NULL_DIR)
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
/// The nested estimate's settings inside [`NESTED_DIR`].
pub const NESTED_SETTINGS: &str = "settings.json";
/// The curves' settings and summary inside [`CURVES_DIR`].
pub const CURVES_META: &str = "curves.json";
/// The report's marker inside [`REPORT_DIR`] (what it read and with which settings).
pub const REPORT_MARKER: &str = "report.json";

/// Columns of the report's tables ([`REPORT_DIR`]`/NAME.parquet`), in table order. A `*_SPREAD` constant is a prefix: the table holds `n` and `{prefix}_min`, `_q1`, `_median`, `_q3`, `_max` there (listed in `COLUMNS`). `curve` also has a `good_{definition}` column per good-set definition and one per varying dimension after `upper`.
pub mod report {
    pub mod curve {
        pub const SPEC_ID: &str = "spec_id";
        pub const POSITION: &str = "position";
        pub const ERROR: &str = "error";
        pub const LOWER: &str = "lower";
        pub const UPPER: &str = "upper";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[SPEC_ID, POSITION, ERROR, LOWER, UPPER];
    }
    pub mod error_by_choice {
        pub const DIMENSION: &str = "dimension";
        pub const CHOICE: &str = "choice";
        pub const ERROR_SPREAD: &str = "error";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[
            DIMENSION,
            CHOICE,
            "n",
            "error_min",
            "error_q1",
            "error_median",
            "error_q3",
            "error_max",
        ];
    }
    pub mod error_by_param {
        pub const OPTION: &str = "option";
        pub const PARAM: &str = "param";
        pub const VALUE: &str = "value";
        pub const ERROR_SPREAD: &str = "error";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[
            OPTION,
            PARAM,
            VALUE,
            "n",
            "error_min",
            "error_q1",
            "error_median",
            "error_q3",
            "error_max",
        ];
    }
    pub mod error_shares {
        pub const DIMENSION: &str = "dimension";
        pub const LMG: &str = "lmg";
        pub const SHARE: &str = "share";
        pub const R2_ALONE: &str = "r2_alone";
        pub const R2_TOTAL: &str = "r2_total";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[DIMENSION, LMG, SHARE, R2_ALONE, R2_TOTAL];
    }
    pub mod rank_by_choice {
        pub const LEVEL: &str = "level";
        pub const KIND: &str = "kind";
        pub const NAME: &str = "name";
        pub const DIMENSION: &str = "dimension";
        pub const CHOICE: &str = "choice";
        pub const N: &str = "n";
        pub const MEDIAN_RANK: &str = "median_rank";
        pub const SHARE_TOP_K: &str = "share_top_k";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[
            LEVEL,
            KIND,
            NAME,
            DIMENSION,
            CHOICE,
            N,
            MEDIAN_RANK,
            SHARE_TOP_K,
        ];
    }
    pub mod rank_shares {
        pub const LEVEL: &str = "level";
        pub const KIND: &str = "kind";
        pub const NAME: &str = "name";
        pub const DIMENSION: &str = "dimension";
        pub const LMG: &str = "lmg";
        pub const SHARE: &str = "share";
        pub const R2_TOTAL: &str = "r2_total";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[LEVEL, KIND, NAME, DIMENSION, LMG, SHARE, R2_TOTAL];
    }
    pub mod good_sets {
        pub const DEFINITION: &str = "definition";
        pub const RULE: &str = "rule";
        pub const THRESHOLD: &str = "threshold";
        pub const SIZE: &str = "size";
        pub const DISTINCT_FITS: &str = "distinct_fits";
        pub const SHARE_OF_OK: &str = "share_of_ok";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[
            DEFINITION,
            RULE,
            THRESHOLD,
            SIZE,
            DISTINCT_FITS,
            SHARE_OF_OK,
        ];
    }
    pub mod good_makeup {
        pub const DEFINITION: &str = "definition";
        pub const DIMENSION: &str = "dimension";
        pub const CHOICE: &str = "choice";
        pub const IN_GOOD: &str = "in_good";
        pub const IN_OK: &str = "in_ok";
        pub const SHARE_OF_GOOD: &str = "share_of_good";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] =
            &[DEFINITION, DIMENSION, CHOICE, IN_GOOD, IN_OK, SHARE_OF_GOOD];
    }
    pub mod importance_spread {
        pub const LEVEL: &str = "level";
        pub const KIND: &str = "kind";
        pub const NAME: &str = "name";
        pub const IMPORTANCE_SPREAD: &str = "importance";
        pub const OUT_OF_POOL: &str = "out_of_pool";
        pub const MEDIAN_RANK: &str = "median_rank";
        pub const BEST_RANK: &str = "best_rank";
        pub const WORST_RANK: &str = "worst_rank";
        pub const SHARE_TOP_K: &str = "share_top_k";
        pub const SHARE_TOP_K_ALL: &str = "share_top_k_all";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[
            LEVEL,
            KIND,
            NAME,
            "n",
            "importance_min",
            "importance_q1",
            "importance_median",
            "importance_q3",
            "importance_max",
            OUT_OF_POOL,
            MEDIAN_RANK,
            BEST_RANK,
            WORST_RANK,
            SHARE_TOP_K,
            SHARE_TOP_K_ALL,
        ];
    }
    pub mod rank_counts {
        pub const LEVEL: &str = "level";
        pub const KIND: &str = "kind";
        pub const NAME: &str = "name";
        pub const RANK: &str = "rank";
        pub const COUNT: &str = "count";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[LEVEL, KIND, NAME, RANK, COUNT];
    }
    pub mod agreement {
        pub const LEVEL: &str = "level";
        pub const KIND: &str = "kind";
        pub const SPEC_A: &str = "spec_a";
        pub const SPEC_B: &str = "spec_b";
        pub const TAU_B: &str = "tau_b";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[LEVEL, KIND, SPEC_A, SPEC_B, TAU_B];
    }
    pub mod conclusions {
        pub const SOURCE: &str = "source";
        pub const STATEMENT: &str = "statement";
        pub const LEVEL: &str = "level";
        pub const KIND: &str = "kind";
        pub const SUPPORT_ALL: &str = "support_all";
        pub const N_ALL: &str = "n_all";
        pub const SUPPORT_GOOD: &str = "support_good";
        pub const N_GOOD: &str = "n_good";
        pub const PIVOT_DIMENSION: &str = "pivot_dimension";
        pub const PIVOT_CHOICE: &str = "pivot_choice";
        pub const SUPPORT_WITHOUT_PIVOT: &str = "support_without_pivot";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[
            SOURCE,
            STATEMENT,
            LEVEL,
            KIND,
            SUPPORT_ALL,
            N_ALL,
            SUPPORT_GOOD,
            N_GOOD,
            PIVOT_DIMENSION,
            PIVOT_CHOICE,
            SUPPORT_WITHOUT_PIVOT,
        ];
    }
    pub mod stability {
        pub const LEVEL: &str = "level";
        pub const KIND: &str = "kind";
        pub const NAME: &str = "name";
        pub const MEAN_SHARE_TOP_K: &str = "mean_share_top_k";
        pub const SHARE_MAJORITY: &str = "share_majority";
        pub const SHARE_IN_BEST: &str = "share_in_best";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[
            LEVEL,
            KIND,
            NAME,
            MEAN_SHARE_TOP_K,
            SHARE_MAJORITY,
            SHARE_IN_BEST,
        ];
    }
    pub mod best_frequency {
        pub const SPEC_ID: &str = "spec_id";
        pub const SHARE: &str = "share";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[SPEC_ID, SHARE];
    }
    pub mod resamples {
        pub const RESAMPLE: &str = "resample";
        pub const DRAW: &str = "draw";
        pub const UNIT: &str = "unit";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[RESAMPLE, DRAW, UNIT];
    }
    pub mod null_summary {
        pub const STATISTIC: &str = "statistic";
        pub const METRIC: &str = "metric";
        pub const OBSERVED: &str = "observed";
        pub const NULL_Q05: &str = "null_q05";
        pub const NULL_MEDIAN: &str = "null_median";
        pub const NULL_Q95: &str = "null_q95";
        pub const DRAWS_AS_GOOD: &str = "draws_as_good";
        pub const DRAWS: &str = "draws";
        pub const SPECS: &str = "specs";
        pub const P: &str = "p";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[
            STATISTIC,
            METRIC,
            OBSERVED,
            NULL_Q05,
            NULL_MEDIAN,
            NULL_Q95,
            DRAWS_AS_GOOD,
            DRAWS,
            SPECS,
            P,
        ];
    }
    pub mod null_indicators {
        pub const LEVEL: &str = "level";
        pub const NAME: &str = "name";
        pub const KIND: &str = "kind";
        pub const OBSERVED_RANK: &str = "observed_rank";
        pub const OBSERVED_TOP: &str = "observed_top";
        pub const CHANCE_TOP: &str = "chance_top";
        pub const DRAWS: &str = "draws";
        pub const TOP_K: &str = "top_k";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[
            LEVEL,
            NAME,
            KIND,
            OBSERVED_RANK,
            OBSERVED_TOP,
            CHANCE_TOP,
            DRAWS,
            TOP_K,
        ];
    }
    pub mod nested_summary {
        pub const METRIC: &str = "metric";
        pub const NAIVE_ERROR: &str = "naive_error";
        pub const NAIVE_ALL_ERROR: &str = "naive_all_error";
        pub const FOLD_SE: &str = "fold_se";
        pub const NAIVE_SPEC_ID: &str = "naive_spec_id";
        pub const NESTED_ERROR: &str = "nested_error";
        pub const BASELINE_ERROR: &str = "baseline_error";
        pub const OPTIMISM: &str = "optimism";
        pub const OUTER_FOLDS: &str = "outer_folds";
        pub const FOLDS_FAILED: &str = "folds_failed";
        pub const SPECS_SWEPT: &str = "specs_swept";
        pub const SPECS_TOTAL: &str = "specs_total";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[
            METRIC,
            NAIVE_ERROR,
            NAIVE_ALL_ERROR,
            FOLD_SE,
            NAIVE_SPEC_ID,
            NESTED_ERROR,
            BASELINE_ERROR,
            OPTIMISM,
            OUTER_FOLDS,
            FOLDS_FAILED,
            SPECS_SWEPT,
            SPECS_TOTAL,
        ];
    }
    pub mod nested_choices {
        pub const DIMENSION: &str = "dimension";
        pub const CHOICE: &str = "choice";
        pub const FOLDS: &str = "folds";
        pub const SHARE: &str = "share";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[DIMENSION, CHOICE, FOLDS, SHARE];
    }
    pub mod nested_folds {
        pub const OUTER_FOLD: &str = "outer_fold";
        pub const SPEC_ID: &str = "spec_id";
        pub const INNER_ERROR: &str = "inner_error";
        pub const OUTER_ERROR: &str = "outer_error";
        pub const BASELINE_ERROR: &str = "baseline_error";
        pub const N_ROWS: &str = "n_rows";
        pub const N_OK: &str = "n_ok";
        pub const N_SPECS: &str = "n_specs";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[
            OUTER_FOLD,
            SPEC_ID,
            INNER_ERROR,
            OUTER_ERROR,
            BASELINE_ERROR,
            N_ROWS,
            N_OK,
            N_SPECS,
        ];
    }
}

/// Columns of the curves' tables ([`CURVES_DIR`]`/NAME.parquet`), in table order.
pub mod curves {
    pub mod ice {
        pub const SPEC_ID: &str = "spec_id";
        pub const INDICATOR: &str = "indicator";
        pub const UNIT: &str = "unit";
        pub const WAVE: &str = "wave";
        pub const GRID_INDEX: &str = "grid_index";
        pub const GRID_VALUE: &str = "grid_value";
        pub const PREDICTION: &str = "prediction";
        pub const CENTRED: &str = "centred";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[
            SPEC_ID, INDICATOR, UNIT, WAVE, GRID_INDEX, GRID_VALUE, PREDICTION, CENTRED,
        ];
    }
    pub mod pd {
        pub const SPEC_ID: &str = "spec_id";
        pub const INDICATOR: &str = "indicator";
        pub const GRID_INDEX: &str = "grid_index";
        pub const GRID_VALUE: &str = "grid_value";
        pub const PD: &str = "pd";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[SPEC_ID, INDICATOR, GRID_INDEX, GRID_VALUE, PD];
    }
    pub mod breakpoints {
        pub const SPEC_ID: &str = "spec_id";
        pub const INDICATOR: &str = "indicator";
        pub const DIRECTION: &str = "direction";
        pub const SHAPE: &str = "shape";
        pub const BREAKPOINT: &str = "breakpoint";
        pub const JUMP: &str = "jump";
        pub const COMPOSITION_LO: &str = "composition_lo";
        pub const COMPOSITION_HI: &str = "composition_hi";
        pub const COMPOSITION_DRAWS: &str = "composition_draws";
        pub const COMPOSITION_KEPT: &str = "composition_kept";
        pub const SLOPE_LEFT: &str = "slope_left";
        pub const SLOPE_RIGHT: &str = "slope_right";
        pub const SSE: &str = "sse";
        pub const BIC_LINE: &str = "bic_line";
        pub const BIC_HINGE: &str = "bic_hinge";
        pub const BIC_JUMP: &str = "bic_jump";
        pub const SAME_AS: &str = "same_as";
        pub const FLAT_TOLERANCE: &str = "flat_tolerance";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[
            SPEC_ID,
            INDICATOR,
            DIRECTION,
            SHAPE,
            BREAKPOINT,
            JUMP,
            COMPOSITION_LO,
            COMPOSITION_HI,
            COMPOSITION_DRAWS,
            COMPOSITION_KEPT,
            SLOPE_LEFT,
            SLOPE_RIGHT,
            SSE,
            BIC_LINE,
            BIC_HINGE,
            BIC_JUMP,
            SAME_AS,
            FLAT_TOLERANCE,
        ];
    }
    pub mod bands {
        pub const INDICATOR: &str = "indicator";
        pub const GRID_INDEX: &str = "grid_index";
        pub const GRID_VALUE: &str = "grid_value";
        pub const MEMBERS: &str = "members";
        pub const HOLDING: &str = "holding";
        pub const DISTINCT: &str = "distinct";
        pub const PD_MEDIAN: &str = "pd_median";
        pub const PD_LO: &str = "pd_lo";
        pub const PD_HI: &str = "pd_hi";
        pub const LEVEL: &str = "level";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[
            INDICATOR, GRID_INDEX, GRID_VALUE, MEMBERS, HOLDING, DISTINCT, PD_MEDIAN, PD_LO, PD_HI,
            LEVEL,
        ];
    }
    pub mod signs {
        pub const INDICATOR: &str = "indicator";
        pub const MEMBERS: &str = "members";
        pub const HOLDING: &str = "holding";
        pub const DISTINCT: &str = "distinct";
        pub const RISES: &str = "rises";
        pub const FALLS: &str = "falls";
        pub const FLAT: &str = "flat";
        pub const TURNS: &str = "turns";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[
            INDICATOR, MEMBERS, HOLDING, DISTINCT, RISES, FALLS, FLAT, TURNS,
        ];
    }
    pub mod observed {
        pub const INDICATOR: &str = "indicator";
        pub const UNIT: &str = "unit";
        pub const WAVE: &str = "wave";
        pub const VALUE: &str = "value";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[INDICATOR, UNIT, WAVE, VALUE];
    }
    pub mod clusters {
        pub const SPEC_ID: &str = "spec_id";
        pub const INDICATOR: &str = "indicator";
        pub const UNIT: &str = "unit";
        pub const CLUSTER: &str = "cluster";
        pub const K: &str = "k";
        pub const SILHOUETTE: &str = "silhouette";
        pub const CLUSTER_SHAPE: &str = "cluster_shape";
        pub const CLUSTER_BREAKPOINT: &str = "cluster_breakpoint";
        pub const CLUSTER_JUMP: &str = "cluster_jump";
        pub const CLUSTER_SLOPE_LEFT: &str = "cluster_slope_left";
        pub const CLUSTER_SLOPE_RIGHT: &str = "cluster_slope_right";
        pub const DISTANCE: &str = "distance";
        pub const BOUND: &str = "bound";
        pub const DEPARTS: &str = "departs";
        pub const GAP: &str = "gap";
        pub const GAP_SE: &str = "gap_se";
        pub const GAP_NEXT: &str = "gap_next";
        pub const GAP_NEXT_SE: &str = "gap_next_se";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[
            SPEC_ID,
            INDICATOR,
            UNIT,
            CLUSTER,
            K,
            SILHOUETTE,
            CLUSTER_SHAPE,
            CLUSTER_BREAKPOINT,
            CLUSTER_JUMP,
            CLUSTER_SLOPE_LEFT,
            CLUSTER_SLOPE_RIGHT,
            DISTANCE,
            BOUND,
            DEPARTS,
            GAP,
            GAP_SE,
            GAP_NEXT,
            GAP_NEXT_SE,
        ];
    }
}

/// Columns of the null's per-draw tables ([`NULL_DIR`]`/`[`NULL_DRAWS`], [`NULL_TOPS`]), in table order.
pub mod null {
    pub mod tops {
        pub const DRAW: &str = "draw";
        pub const SPEC: &str = "spec";
        pub const LEVEL: &str = "level";
        pub const KIND: &str = "kind";
        pub const NAME: &str = "name";
        pub const IMPORTANCE: &str = "importance";
        pub const RANK: &str = "rank";
        pub const TOP: &str = "top";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[DRAW, SPEC, LEVEL, KIND, NAME, IMPORTANCE, RANK, TOP];
    }
    pub mod draws {
        pub const DRAW: &str = "draw";
        pub const SEED: &str = "seed";
        pub const METRIC: &str = "metric";
        pub const BEST_ERROR: &str = "best_error";
        pub const Q1_ERROR: &str = "q1_error";
        pub const MEDIAN_ERROR: &str = "median_error";
        pub const Q3_ERROR: &str = "q3_error";
        pub const BEST_SKILL: &str = "best_skill";
        pub const SHARE_SKILL_POSITIVE: &str = "share_skill_positive";
        pub const SPECS: &str = "specs";
        pub const N_OK: &str = "n_ok";
        pub const BEST_SPEC: &str = "best_spec";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[
            DRAW,
            SEED,
            METRIC,
            BEST_ERROR,
            Q1_ERROR,
            MEDIAN_ERROR,
            Q3_ERROR,
            BEST_SKILL,
            SHARE_SKILL_POSITIVE,
            SPECS,
            N_OK,
            BEST_SPEC,
        ];
    }
}

/// Columns of the nested estimate's per-fold tables ([`NESTED_DIR`]`/fold-OOO.parquet`), in table order; between `spec_id` and `inner_error` come one column per dimension (the chosen spec's options).
pub mod nested {
    pub mod fold {
        pub const OUTER_FOLD: &str = "outer_fold";
        pub const SPEC_ID: &str = "spec_id";
        pub const INNER_ERROR: &str = "inner_error";
        pub const OUTER_ERROR: &str = "outer_error";
        pub const BASELINE_ERROR: &str = "baseline_error";
        pub const N_ROWS: &str = "n_rows";
        pub const N_UNITS: &str = "n_units";
        pub const N_SPECS: &str = "n_specs";
        pub const N_OK: &str = "n_ok";
        pub const METRIC: &str = "metric";
        pub const MESSAGE: &str = "message";
        /// Every column, in table order (fixed columns only).
        pub const COLUMNS: &[&str] = &[
            OUTER_FOLD,
            SPEC_ID,
            INNER_ERROR,
            OUTER_ERROR,
            BASELINE_ERROR,
            N_ROWS,
            N_UNITS,
            N_SPECS,
            N_OK,
            METRIC,
            MESSAGE,
        ];
    }
}

/// Every derived table's fixed columns, by its place in the run directory: `DIR/NAME` is
/// the file `DIR/NAME.parquet`, except `null/draws` and `null/tops` (folders of one part per
/// draw) and `nested/fold` (the files `nested/fold-OOO.parquet`). `report/curve` and
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
    ("nested/fold", nested::fold::COLUMNS),
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
