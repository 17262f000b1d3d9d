//! Columns of the null's per-draw tables
//! ([`NULL_DIR`](super::NULL_DIR)`/`[`NULL_DRAWS`](super::NULL_DRAWS),
//! [`NULL_TOPS`](super::NULL_TOPS)), in table order.

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
