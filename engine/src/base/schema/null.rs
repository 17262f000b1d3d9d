//! Columns of the null's per-draw tables
//! ([`NULL_DIR`](super::NULL_DIR)`/`[`NULL_DRAWS`](super::NULL_DRAWS),
//! [`NULL_TOPS`](super::NULL_TOPS)), in table order.

pub mod tops {
    /// Draw index d (0-based).
    pub const DRAW: &str = "draw";
    /// Spec id of the draw's best spec (lowest error, lowest id on ties) among the specs whose native importance is of `kind`.
    pub const SPEC: &str = "spec";
    /// `indicator` or `group`.
    pub const LEVEL: &str = "level";
    /// Native importance kind of that spec: `coefficient` or `impurity`.
    pub const KIND: &str = "kind";
    /// Indicator or codebook group.
    pub const NAME: &str = "name";
    /// Its native importance in that spec.
    pub const IMPORTANCE: &str = "importance";
    /// Competition rank (1 = most important), as in the run's importance table.
    pub const RANK: &str = "rank";
    /// rank <= `[null] top_k` and importance > 0.
    pub const TOP: &str = "top";
    /// Every column, in table order (fixed columns only).
    pub const COLUMNS: &[&str] = &[DRAW, SPEC, LEVEL, KIND, NAME, IMPORTANCE, RANK, TOP];
}
pub mod draws {
    /// Draw index d (0-based).
    pub const DRAW: &str = "draw";
    /// The draw's seed, `mix(mix(run seed, NULL_STREAM), d)`, as 16 hex digits.
    pub const SEED: &str = "seed";
    /// Error the draw ranks specs by (`mae`, `rmse`, `unit_mae`).
    pub const METRIC: &str = "metric";
    /// Lowest error over the draw's ok specs.
    pub const BEST_ERROR: &str = "best_error";
    /// First quartile of the draw's errors (numpy's linear quantile).
    pub const Q1_ERROR: &str = "q1_error";
    /// Median of the draw's errors.
    pub const MEDIAN_ERROR: &str = "median_error";
    /// Third quartile of the draw's errors.
    pub const Q3_ERROR: &str = "q3_error";
    /// Highest skill (1 - MAE / baseline MAE) over the draw's ok specs.
    pub const BEST_SKILL: &str = "best_skill";
    /// Share of the draw's specs (failed ones count as not positive) with skill > 0.
    pub const SHARE_SKILL_POSITIVE: &str = "share_skill_positive";
    /// Specs run in the draw.
    pub const SPECS: &str = "specs";
    /// Of them, ok with a finite error.
    pub const N_OK: &str = "n_ok";
    /// Spec id of the draw's best spec (lowest error, lowest id on ties).
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
