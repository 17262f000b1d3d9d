//! Columns of the report's tables ([`REPORT_DIR`](super::REPORT_DIR)`/NAME.parquet`), in
//! table order. A `*_SPREAD` constant is a prefix: the table holds `n` and `{prefix}_min`,
//! `_q1`, `_median`, `_q3`, `_max` there (listed in `COLUMNS`). `curve` also has a
//! `good_{definition}` column per good-set definition and one per varying dimension after
//! `upper`.

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
    pub const COLUMNS: &[&str] = &[DEFINITION, DIMENSION, CHOICE, IN_GOOD, IN_OK, SHARE_OF_GOOD];
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
pub mod refit_stability {
    pub const LEVEL: &str = "level";
    pub const KIND: &str = "kind";
    pub const NAME: &str = "name";
    pub const RESAMPLES: &str = "resamples";
    pub const MEAN_SHARE_TOP_K: &str = "mean_share_top_k";
    pub const SHARE_MAJORITY: &str = "share_majority";
    pub const SHARE_IN_BEST: &str = "share_in_best";
    pub const STORED_MEAN_SHARE_TOP_K: &str = "stored_mean_share_top_k";
    pub const STORED_SHARE_MAJORITY: &str = "stored_share_majority";
    pub const STORED_SHARE_IN_BEST: &str = "stored_share_in_best";
    pub const SPECS: &str = "specs";
    pub const TOP_K: &str = "top_k";
    /// Every column, in table order (fixed columns only).
    pub const COLUMNS: &[&str] = &[
        LEVEL,
        KIND,
        NAME,
        RESAMPLES,
        MEAN_SHARE_TOP_K,
        SHARE_MAJORITY,
        SHARE_IN_BEST,
        STORED_MEAN_SHARE_TOP_K,
        STORED_SHARE_MAJORITY,
        STORED_SHARE_IN_BEST,
        SPECS,
        TOP_K,
    ];
}
pub mod refit_specs {
    pub const SPEC_ID: &str = "spec_id";
    pub const RUN_RANK: &str = "run_rank";
    pub const RUN_ERROR: &str = "run_error";
    pub const MEDIAN_ERROR: &str = "median_error";
    pub const SHARE_BEST: &str = "share_best";
    pub const SHARE_GOOD: &str = "share_good";
    pub const FAILED: &str = "failed";
    pub const RESAMPLES: &str = "resamples";
    pub const METRIC: &str = "metric";
    /// The refitted spec whose run fit is bit for bit this one's, if another (null if none).
    pub const SAME_FIT_AS: &str = "same_fit_as";
    /// Every column, in table order (fixed columns only).
    pub const COLUMNS: &[&str] = &[
        SPEC_ID,
        RUN_RANK,
        RUN_ERROR,
        MEDIAN_ERROR,
        SHARE_BEST,
        SHARE_GOOD,
        FAILED,
        RESAMPLES,
        METRIC,
        SAME_FIT_AS,
    ];
}
pub mod null_claims {
    pub const SOURCE: &str = "source";
    pub const STATEMENT: &str = "statement";
    pub const LEVEL: &str = "level";
    pub const KIND: &str = "kind";
    pub const SUPPORT_GOOD: &str = "support_good";
    pub const OBSERVED: &str = "observed";
    pub const N_OBSERVED: &str = "n_observed";
    pub const NULL_MEAN: &str = "null_mean";
    pub const NULL_Q95: &str = "null_q95";
    pub const DRAWS_AT_LEAST: &str = "draws_at_least";
    pub const DRAWS_UNKNOWN: &str = "draws_unknown";
    pub const DRAWS: &str = "draws";
    /// (1 + draws_at_least) / (1 + draws): the statement's own p, as if it had been fixed
    /// before the data were seen (right for listed claims; optimistic for automatic ones).
    pub const P_UNADJUSTED: &str = "p_unadjusted";
    /// Automatic conclusions: the family of statements the report picks them from (one
    /// selection rule on one level's primary importance kind); null for listed claims and
    /// untested statements.
    pub const FAMILY: &str = "family";
    /// Draws whose family maximum (the largest support of the statements the same selection
    /// picks in the draw's good set and of the family's observed statements) is at least
    /// the observed support; unknown draws included. 0 for listed claims.
    pub const FAMILY_DRAWS_AT_LEAST: &str = "family_draws_at_least";
    /// Draws whose family maximum is unknown (no good spec of the kind, or a good set past
    /// the kept ranks). 0 for listed claims.
    pub const FAMILY_DRAWS_UNKNOWN: &str = "family_draws_unknown";
    /// 95th percentile of the known family maxima: the support an automatic conclusion
    /// needs for an adjusted p near 0.05.
    pub const FAMILY_MAX_Q95: &str = "family_max_q95";
    /// (1 + family_draws_at_least) / (1 + draws): the p of an automatic conclusion adjusted
    /// for its selection (single-step max-type, the selection redone in every draw); always
    /// >= p_unadjusted. Null for listed claims and untested statements.
    pub const P_ADJUSTED: &str = "p_adjusted";
    pub const GOOD_RULE: &str = "good_rule";
    pub const NOT_TESTED: &str = "not_tested";
    /// Every column, in table order (fixed columns only).
    pub const COLUMNS: &[&str] = &[
        SOURCE,
        STATEMENT,
        LEVEL,
        KIND,
        SUPPORT_GOOD,
        OBSERVED,
        N_OBSERVED,
        NULL_MEAN,
        NULL_Q95,
        DRAWS_AT_LEAST,
        DRAWS_UNKNOWN,
        DRAWS,
        P_UNADJUSTED,
        FAMILY,
        FAMILY_DRAWS_AT_LEAST,
        FAMILY_DRAWS_UNKNOWN,
        FAMILY_MAX_Q95,
        P_ADJUSTED,
        GOOD_RULE,
        NOT_TESTED,
    ];
}
